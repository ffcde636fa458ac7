"""What a reflection measurement is, in the terms of S11: lossless, a pure delay, and Foster's theorem.

For reflection data (``touchstone_s11``) S11 = (Z - Z0) / (Z + Z0) is rebuilt from the impedance and the
file's reference Z0 (the inverse of the reader's conversion). Three facts of the trade (common practice,
no source):

* |S11| = 1 means no power is absorbed: a short, an open or a pure reactance; there is no resistance to fit.
  Here: 1 - |S11| < ``LOSSLESS_TOLERANCE`` at every point.
* A short or open behind a lossless line is a pure delay: S11 = -/+ exp(-j w tau) with tau the round-trip
  delay, so the unwrapped phase of S11 is a straight line in frequency. Here: lossless, and the phase
  within ``DELAY_TOLERANCE_DEG`` (RMS) of its least-squares line.
* Foster's reactance theorem: the reactance of a lossless passive one-port rises with frequency, so S11
  turns clockwise (its phase falls) at every step. A lossless file that turns the other way by more than
  three times the step noise (estimated from second differences) is not a passive response (calibration,
  port extension). This replaces the Lin-KK test for lossless data, whose
  basis of R / (1 + j w tau) elements needs loss to follow.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .measurement import Measurement
from .units import format_quantity

__all__ = ["LOSSLESS_TOLERANCE", "DELAY_TOLERANCE_DEG", "ReflectionSummary", "reflection_summary"]

#: 1 - |S11| below this at every point counts as a lossless reflection (about 0.09 dB return loss).
LOSSLESS_TOLERANCE = 0.01

#: RMS departure (deg) of the S11 phase from a straight line in frequency still called a pure delay.
DELAY_TOLERANCE_DEG = 1.0


@dataclass(frozen=True)
class ReflectionSummary:
    """S11 facts of a reflection measurement.

    Attributes
    ----------
    lossless : bool
        1 - |S11| < ``LOSSLESS_TOLERANCE`` at every point.
    max_loss : float
        Largest 1 - |S11| (dimensionless).
    delay : float or None
        Round-trip delay tau in s when the data are a pure delay, else None.
    termination : str
        ``"short"``, ``"open"`` or ``""``: what sits behind the delay (phase at 0 Hz near 180 or 0 deg).
    foster_ok : bool
        S11 turns clockwise at every frequency step (meaningful for lossless data).
    anticlockwise_steps : int
        Number of steps where the phase of S11 rises.
    note : str
        One line in words.
    """

    lossless: bool
    max_loss: float
    delay: float | None
    termination: str
    foster_ok: bool
    anticlockwise_steps: int
    note: str


def _reference(measurement: Measurement) -> float | None:
    text = measurement.provenance.columns.get("reference", "")
    match = re.fullmatch(r"\s*([0-9.eE+-]+)\s*ohm\s*", text)
    return float(match.group(1)) if match else None


def _step_noise(phase: np.ndarray) -> float:
    """Standard deviation (rad) of the noise in one phase step, from second differences.

    For white phase noise sigma, a second difference has standard deviation sigma sqrt 6 and a step sigma
    sqrt 2; the median absolute second difference is 0.6745 sigma sqrt 6 (common practice, no source).
    Smooth curvature barely moves the median.
    """
    if phase.size < 4:
        return 0.0
    sigma = float(np.median(np.abs(np.diff(phase, 2)))) / (0.6745 * np.sqrt(6))
    return sigma * np.sqrt(2)


def reflection_summary(measurement: Measurement) -> ReflectionSummary | None:
    """S11 facts of a reflection measurement, or None for other forms (or a reference not known)."""
    z0 = _reference(measurement) if measurement.provenance.form == "touchstone_s11" else None
    if z0 is None or len(measurement) < 3:
        return None
    z, f = measurement.impedance, measurement.frequency
    s11 = (z - z0) / (z + z0)
    loss = 1 - np.abs(s11)
    lossless = bool(np.all(loss < LOSSLESS_TOLERANCE))
    phase = np.unwrap(np.angle(s11))
    steps = np.diff(phase)
    anticlockwise = int(np.sum(steps > 3 * _step_noise(phase)))
    delay, termination = None, ""
    if lossless:
        slope, intercept = np.polyfit(f, phase, 1)
        rms = float(np.degrees(np.sqrt(np.mean((phase - (slope * f + intercept)) ** 2))))
        if slope < 0 and rms < DELAY_TOLERANCE_DEG:
            delay = float(-slope / (2 * np.pi))
            at_zero = np.degrees(np.angle(np.exp(1j * intercept)))
            termination = "short" if abs(abs(at_zero) - 180) < 10 else "open" if abs(at_zero) < 10 else ""
    if not lossless:
        note = f"absorbs power: 1 - |S11| from {loss.min():.3g} to {loss.max():.3g}"
    else:
        note = f"lossless reflection: |S11| = 1 within {100 * LOSSLESS_TOLERANCE:g} % at every point"
        if delay is not None:
            behind = f"{termination} behind a lossless line" if termination else "a lossless line"
            note += (f"; a pure delay (S11 phase linear in frequency): round trip "
                     f"{format_quantity(delay, 's')}, {behind}")
        if anticlockwise == 0:
            note += "; Foster's reactance theorem holds (S11 turns clockwise at every step)"
        else:
            note += (f"; S11 turns anticlockwise at {anticlockwise} of {steps.size} steps, which no lossless "
                     f"passive part does (check the calibration and port extension)")
    return ReflectionSummary(lossless=lossless, max_loss=float(loss.max()), delay=delay,
                             termination=termination, foster_ok=anticlockwise == 0,
                             anticlockwise_steps=anticlockwise, note=note)
