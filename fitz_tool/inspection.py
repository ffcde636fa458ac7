"""A first look at a measurement: range, where it is inductive or capacitive, apparent resonances.

A point is *inductive* when the phase of Z is above +``RESISTIVE_DEG``, *capacitive* below -``RESISTIVE_DEG``,
else *resistive* (|X| < tan(10 deg) R = 0.18 R). An apparent resonance is a change from inductive to
capacitive or back (resistive points in between allowed, so noise around 0 deg does not count); its frequency
is where the phase crosses 0 deg, interpolated linearly in frequency on Im Z (series) or Im(1/Z) (parallel),
the middle crossing when noise makes several. From capacitive to inductive with rising frequency is a series
resonance (|Z| minimum); from inductive to capacitive a parallel resonance (|Z| maximum) (Foster's reactance
theorem; common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .exceptions import InputError
from .kramers_kronig import KramersKronigResult, lin_kk
from .measurement import Measurement
from .reflection import ReflectionSummary, reflection_summary
from .units import format_quantity, with_symbols

__all__ = ["RESISTIVE_DEG", "Band", "Resonance", "InspectionSummary", "summarize", "format_summary",
           "measurement_table", "character_sentence", "kramers_kronig_sentence",
           "kramers_kronig_advice"]

#: Phase (deg) within which a point counts as resistive.
RESISTIVE_DEG = 10.0


@dataclass(frozen=True)
class Band:
    """A run of neighbouring points of one character; ``kind`` is inductive, capacitive or resistive.

    ``f_low`` and ``f_high`` (Hz) are the first and last measured frequencies of the run.
    """

    kind: str
    f_low: float
    f_high: float
    points: int


@dataclass(frozen=True)
class Resonance:
    """An apparent resonance: phase zero crossing at ``frequency`` (Hz) with |Z| ``magnitude`` (ohm) there.

    ``kind`` is ``"series"`` (|Z| minimum) or ``"parallel"`` (|Z| maximum); ``extremum`` says which.
    """

    frequency: float
    magnitude: float
    kind: str
    extremum: str


@dataclass(frozen=True)
class InspectionSummary:
    """Summary of a measurement (frequencies in Hz, impedances in ohm)."""

    points: int
    f_min: float
    f_max: float
    z_min: float
    f_at_z_min: float
    z_max: float
    f_at_z_max: float
    bands: tuple[Band, ...]
    resonances: tuple[Resonance, ...]
    kramers_kronig: KramersKronigResult | None = None
    kramers_kronig_skipped: str = ""
    reflection: ReflectionSummary | None = None
    kramers_kronig_advice: str = ""


def _classes(phase_deg: np.ndarray) -> np.ndarray:
    return np.where(phase_deg > RESISTIVE_DEG, 1, np.where(phase_deg < -RESISTIVE_DEG, -1, 0))


def _bands(f: np.ndarray, cls: np.ndarray) -> tuple[Band, ...]:
    names = {1: "inductive", -1: "capacitive", 0: "resistive"}
    edges = np.flatnonzero(np.diff(cls)) + 1
    starts = np.concatenate([[0], edges])
    stops = np.concatenate([edges, [f.size]])
    return tuple(Band(names[int(cls[a])], float(f[a]), float(f[b - 1]), int(b - a))
                 for a, b in zip(starts, stops, strict=True))


def _crossing(f: np.ndarray, z: np.ndarray, a: int, b: int, series: bool) -> tuple[float, float]:
    """Zero crossing of the phase between points a < b: (frequency, |Z|).

    Interpolated linearly in frequency on the quantity that is smooth there: the reactance Im Z at a series
    resonance, the susceptance Im(1/Z) at a parallel one.
    """
    x = z.imag if series else (1 / z).imag
    sign = np.sign(x[a:b + 1])
    cross = [a + k for k in range(b - a) if sign[k] != sign[k + 1] or sign[k] == 0]
    k = cross[len(cross) // 2]
    t = 0.0 if x[k] == x[k + 1] else x[k] / (x[k] - x[k + 1])
    mag = np.abs(z)
    logz = np.log(mag[k]) + t * (np.log(mag[k + 1]) - np.log(mag[k]))
    return float(f[k] + t * (f[k + 1] - f[k])), float(np.exp(logz))


def summarize(measurement: Measurement) -> InspectionSummary:
    """Points, ranges, inductive/capacitive bands, apparent resonances and a Lin-KK check of a measurement.

    The Lin-KK check (``kramers_kronig.lin_kk``, a few ms; a long sweep is checked on an evenly spaced
    subset, said in its sentence) is skipped with the reason recorded when the
    measurement is too short for it.

    Parameters
    ----------
    measurement : Measurement
        Frequency in Hz, impedance in ohm.

    Returns
    -------
    InspectionSummary
    """
    f, mag, phase = measurement.frequency, measurement.magnitude, measurement.phase_deg
    cls = _classes(phase)
    reactive = np.flatnonzero(cls != 0)
    resonances = []
    for a, b in zip(reactive[:-1], reactive[1:], strict=True):
        if cls[a] != cls[b]:
            series = bool(cls[a] < cls[b])
            frequency, magnitude = _crossing(f, measurement.impedance, int(a), int(b), series)
            resonances.append(Resonance(frequency, magnitude, "series" if series else "parallel",
                                        "minimum" if series else "maximum"))
    low, high = int(np.argmin(mag)), int(np.argmax(mag))
    try:
        kk, skipped = lin_kk(measurement), ""
    except InputError as error:
        kk, skipped = None, str(error)
    reflection = reflection_summary(measurement)
    return InspectionSummary(points=len(measurement), f_min=float(f[0]), f_max=float(f[-1]),
                             z_min=float(mag[low]), f_at_z_min=float(f[low]), z_max=float(mag[high]),
                             f_at_z_max=float(f[high]), bands=_bands(f, cls), resonances=tuple(resonances),
                             kramers_kronig=kk, kramers_kronig_skipped=skipped, reflection=reflection,
                             kramers_kronig_advice=kramers_kronig_advice(kk, reflection, len(resonances)))


def character_sentence(summary: InspectionSummary) -> str:
    """Where the part is inductive or capacitive, in one phrase: ``"inductive from 1.000 kHz to 9.80 MHz,
    capacitive above"``.

    Resistive runs between two reactive runs are the neighbourhood of a resonance (or noise inside one
    character) and are absorbed; the change of character is placed at the apparent resonance. A resistive run
    at either end of the sweep is named as such.
    """
    bands = list(summary.bands)
    kept = [b for i, b in enumerate(bands)
            if b.kind != "resistive" or i == 0 or i == len(bands) - 1]
    merged: list[list] = []
    for band in kept:
        if merged and merged[-1][0] == band.kind:
            merged[-1][2] = band.f_high
        else:
            merged.append([band.kind, band.f_low, band.f_high])
    if not merged:
        return "no points"
    if len(merged) == 1:
        kind = merged[0][0]
        if kind == "resistive":
            return f"nearly resistive throughout (|phase| < {RESISTIVE_DEG:g} deg)"
        return f"{kind} throughout"
    resonances = iter(summary.resonances)
    starts = [merged[0][1]]
    for before, after in zip(merged[:-1], merged[1:], strict=True):
        if before[0] != "resistive" and after[0] != "resistive":
            starts.append(next(resonances).frequency)
        else:
            starts.append(after[1])
    words = {"resistive": f"nearly resistive (|phase| < {RESISTIVE_DEG:g} deg)"}
    q = format_quantity
    parts = [f"{words.get(kind, kind)} from {q(starts[i], 'Hz')} to {q(starts[i + 1], 'Hz')}"
             for i, (kind, _, _) in enumerate(merged[:-1])]
    parts.append(f"{words.get(merged[-1][0], merged[-1][0])} above")
    return ", ".join(parts)


def kramers_kronig_advice(kk: KramersKronigResult | None, reflection: ReflectionSummary | None,
                          resonances: int) -> str:
    """For a Lin-KK test that failed: is the test's basis too small for this response, or are the data
    inconsistent? ``""`` when the test passed or did not run.

    The Lin-KK elements R / (1 + j w tau) have real poles; fitted to Z or to Y they follow one resonance
    (a series one in Z, a parallel one in Y) but not a series and a parallel one together, and nothing
    without loss. So excess residuals say little when the data are lossless (Foster's theorem is checked
    instead, ``reflection.py``) or hold two or more resonances; otherwise they point at the measurement.
    """
    if kk is None or kk.consistent:
        return ""
    if reflection is not None and reflection.lossless:
        verdict = ("consistent by Foster's reactance theorem" if reflection.foster_ok else
                   "inconsistent: a lossless reflection that turns anticlockwise")
        return (f"the test's basis is too small for this response (a lossless reflection has no loss for "
                f"its elements to follow); {verdict}")
    if resonances >= 2:
        return (f"the test's basis is too small for this response ({resonances} resonances: its elements "
                f"follow one, in Z or in Y); the residual is not evidence against the data")
    return ("the data look inconsistent: check for channel delay, drift or fixture effects (ferrite beads "
            "are hard for this check, so it may be the check's own limit)")


def kramers_kronig_sentence(summary: InspectionSummary) -> str:
    """The Kramers-Kronig check as one sentence: the verdict and the residual against the noise."""
    kk = summary.kramers_kronig
    if kk is None:
        return f"not run ({summary.kramers_kronig_skipped})"
    rms = f"{100 * kk.rms_residual:#.2g}".rstrip(".") + " % of |Z|"
    noise = (" (" + f"{100 * kk.noise_level:#.2g}".rstrip(".") + " %)") if np.isfinite(kk.noise_level) else ""
    checked = f" ({kk.decimation})" if kk.decimation else ""
    if kk.consistent:
        return f"consistent with a causal, linear part: residual {rms}, at the noise level{noise}{checked}"
    advice = summary.kramers_kronig_advice or kramers_kronig_advice(kk, summary.reflection,
                                                                    len(summary.resonances))
    return f"residual {rms}, above the noise level{noise}{checked}: {advice}"


def format_summary(summary: InspectionSummary, measurement: Measurement, verbose: bool = False) -> str:
    """The summary as terminal text (engineering notation, unit symbols), with the provenance steps and
    warnings. ``verbose`` adds the figures behind the Kramers-Kronig verdict (basis size, mu, limit)."""
    from .outputs.wording import describe_form

    q = format_quantity
    p = measurement.provenance
    lines = [f"read as   {describe_form(measurement)}",
             f"points    {summary.points}",
             f"range     {q(summary.f_min, 'Hz')} to {q(summary.f_max, 'Hz')}",
             f"|Z|       smallest measured {q(summary.z_min, 'ohm')} (at {q(summary.f_at_z_min, 'Hz')}), "
             f"largest measured {q(summary.z_max, 'ohm')} (at {q(summary.f_at_z_max, 'Hz')})",
             f"character {character_sentence(summary)}",
             f"  by run of points (|phase| < {RESISTIVE_DEG:g} deg counts as resistive):"]
    for band in summary.bands:
        lines.append(f"  {band.kind:<10} {q(band.f_low, 'Hz')} to {q(band.f_high, 'Hz')} "
                     f"({band.points} points)")
    if summary.resonances:
        lines.append("apparent resonances (phase crosses 0 deg; |Z| there interpolated between points)")
        for r in summary.resonances:
            peak = "interpolated peak" if r.extremum == "maximum" else "interpolated dip"
            lines.append(f"  {r.kind:<8} at {q(r.frequency, 'Hz')}, {peak} |Z| {q(r.magnitude, 'ohm')}")
    else:
        lines.append("apparent resonances: none in the measured range")
    if summary.reflection is not None:
        lines.append(f"S11       {summary.reflection.note}")
    lines.append(f"Kramers-Kronig (Lin-KK): {kramers_kronig_sentence(summary)}")
    if verbose and summary.kramers_kronig is not None:
        kk = summary.kramers_kronig
        lines.append(f"  detail: {kk.note}")
        lines.append(f"  basis: {kk.n_elements} elements, mu = {kk.mu:.2f}, fitted as {kk.representation}")
    if p.steps:
        lines.append("steps")
        lines += [f"  - {step}" for step in p.steps]
    if p.warnings:
        lines.append("warnings")
        lines += [f"  ! {warning}" for warning in p.warnings]
    return "\n".join([f"file      {p.source or '(built in code)'}"] + [with_symbols(x) for x in lines])


def measurement_table(measurement: Measurement) -> pd.DataFrame:
    """The normalized impedance table: frequency (Hz), R, X, |Z| (ohm) and phase (deg) per point."""
    return pd.DataFrame({
        "frequency_hz": measurement.frequency,
        "z_real_ohm": measurement.resistance,
        "z_imag_ohm": measurement.reactance,
        "z_magnitude_ohm": measurement.magnitude,
        "z_phase_deg": measurement.phase_deg,
    })
