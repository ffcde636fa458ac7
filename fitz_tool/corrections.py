"""Corrections between the instrument and the part: channel skew, then open/short(/load) fixture compensation.

Order. Skew belongs to the instrument (its two channels), the fixture sits between instrument and part, so
the skew is removed first, from the part's measurement and from every standard (they come from the same
bench and channels), and the fixture is removed second.

Channel skew (e^{+j w t}, Z = V / I). A current channel that lags the voltage channel by ``dt`` seconds
records I e^{-j w dt}, so the measured Z_m = Z e^{+j w dt}: the phase reads 2 pi f dt too high. The
correction is Z = Z_m e^{-j 2 pi f dt}; ``dt > 0`` means the current channel is the later one ("current
channel delay relative to the voltage channel"). It changes no magnitude and shifts ln Z by a known
constant, so the sigmas are unchanged.

Fixture. Open/short compensation models the fixture as a series impedance Zs (nearer the instrument) and a
shunt admittance Yo across the part's terminals, so Z_m = Zs + 1 / (Yo + 1/Z_dut). The short standard
(Z_dut = 0) measures Zs; the open (Z_dut -> infinity) measures Zo = Zs + 1/Yo. Inverting::

    Z_dut = (Z_m - Zs) / (1 - (Z_m - Zs) Yo),      Yo = 1 / (Zo - Zs)

With only a short, Yo = 0 (Z_dut = Z_m - Zs); with only an open, Zs = 0. Any linear fixture (any two-port,
e.g. a shunt before a series element, or a length of line) maps Z_dut to Z_m by a bilinear (Moebius) map.
Its inverse vanishes at Zs and has its pole at Zo, so it is the open/short result times a constant; a load
standard of known value Z_std, measured as Zl, fixes the constant::

    Z_dut = Z_std * OS(Z_m) / OS(Zl)  =  Z_std (Zo - Zl)(Z_m - Zs) / ((Zl - Zs)(Zo - Z_m))

where OS() is the open/short formula above (derived here from the cross-ratio of the map; checked against
scikit-rf cascades in ``tests/test_corrections.py``). Open/short alone is exact only for the series-then-
shunt fixture; open/short/load is exact for any linear fixture.

Standards on another grid. The short is interpolated as Zs, the open as its admittance 1/Zo and the load
as Zl, real and imaginary parts linearly in frequency (not log|Z| and phase): exact for the short of a
lumped fixture (Zs = R + j w L), and for the open up to the small product Zs Yo (1/Zo = G + j w C for a
lumped shunt), with no trouble where Zs passes through zero. Measurement frequencies outside a standard's
range are refused.

Noise. The standards' own noise is neglected (they are usually averaged). The part's sigmas in ln Z are
multiplied by |d ln Z_dut / d ln Z_m| = |Z_m / ((Z_m - Zs)(1 - (Z_m - Zs) Yo))| (the load scaling adds no
factor). A measurement without sigmas (equal weights in ln Z_m) gets that factor as relative sigmas.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from .exceptions import InputError
from .measurement import Measurement
from .standards import check_between, check_swapped
from .units import format_quantity

__all__ = ["Corrections", "apply_corrections", "remove_skew", "compensate_fixture"]

#: Largest usable |d ln Z_dut / d ln Z_m|: beyond it the part is indistinguishable from a standard.
MAX_AMPLIFICATION = 1e6


@dataclass(frozen=True)
class Corrections:
    """What to remove from a measurement.

    Attributes
    ----------
    skew : float or None
        Current channel delay relative to the voltage channel, in s (positive: current is later).
    open, short, load : Measurement or None
        Fixture standards measured in the same form (and on the same bench) as the part.
    load_value : float, complex or None
        Known impedance of the load standard in ohm (needed with ``load``).
    """

    skew: float | None = None
    open: Measurement | None = None
    short: Measurement | None = None
    load: Measurement | None = None
    load_value: float | complex | None = None

    @property
    def is_empty(self) -> bool:
        """True when nothing is to be corrected."""
        return all(v is None for v in (self.skew, self.open, self.short, self.load, self.load_value))


def remove_skew(measurement: Measurement, skew: float) -> Measurement:
    """Remove a current-channel delay ``skew`` (s): Z = Z_m exp(-j 2 pi f skew); sigmas unchanged."""
    if not np.isfinite(skew):
        raise InputError(f"skew {skew!r} s must be a finite number of seconds")
    turn = 2 * np.pi * measurement.frequency[-1] * skew
    warning = None
    if abs(turn) > np.pi / 2:
        warning = (f"skew {format_quantity(skew, 's')} turns the phase by {np.degrees(turn):.0f} deg at "
                   f"{format_quantity(measurement.frequency[-1], 'Hz')}: check it is in seconds")
    return measurement.replace(
        step=f"removed channel skew: current channel delay {format_quantity(skew, 's')} relative to the "
             f"voltage channel, Z multiplied by exp(-j 2 pi f dt)",
        warning=warning,
        impedance=measurement.impedance * np.exp(-1j * measurement.omega * skew),
    )


def _on_grid(standard: Measurement, values: np.ndarray, frequency: np.ndarray, role: str) -> np.ndarray:
    """``values`` of a standard on the measurement grid (real and imaginary parts linear in frequency)."""
    f_std = standard.frequency
    if f_std.shape == frequency.shape and np.allclose(f_std, frequency, rtol=1e-9, atol=0.0):
        return values
    low, high = f_std[0] * (1 - 1e-9), f_std[-1] * (1 + 1e-9)
    if frequency[0] < low or frequency[-1] > high:
        name = standard.provenance.source or f"{role} standard"
        raise InputError(f"{name}: the {role} standard covers {format_quantity(f_std[0], 'Hz')} to "
                         f"{format_quantity(f_std[-1], 'Hz')} but the measurement spans "
                         f"{format_quantity(frequency[0], 'Hz')} to {format_quantity(frequency[-1], 'Hz')}; "
                         f"measure the standard over the whole range")
    return np.interp(frequency, f_std, values.real) + 1j * np.interp(frequency, f_std, values.imag)


def _name(standard: Measurement) -> str:
    return repr(standard.provenance.source) if standard.provenance.source else "standard"


def _label(standard: Measurement, role: str) -> str:
    return f"{role} {standard.provenance.source!r}" if standard.provenance.source else role


def compensate_fixture(measurement: Measurement, open: Measurement | None = None,
                       short: Measurement | None = None, load: Measurement | None = None,
                       load_value: float | complex | None = None) -> Measurement:
    """Remove a fixture with open/short(/load) standards (formulas and assumptions in the module docstring).

    Parameters
    ----------
    measurement : Measurement
        The part measured in the fixture (impedance in ohm).
    open, short : Measurement or None
        Open- and short-circuit standards; at least one is needed.
    load : Measurement or None
        Load standard (needs ``open``, ``short`` and ``load_value``).
    load_value : float, complex or None
        Known impedance of the load standard in ohm.

    Returns
    -------
    Measurement
        The part's impedance with the fixture removed, sigmas carried through, steps recorded.
    """
    if load is not None and (open is None or short is None):
        raise InputError("--load needs both --open and --short standards")
    if open is None and short is None:
        raise InputError("fixture compensation needs an open and/or a short standard")
    if (load is None) != (load_value is None):
        raise InputError("--load FILE and --load-value OHMS go together")
    f = measurement.frequency
    zm = measurement.impedance
    zs = _on_grid(short, short.impedance, f, "short") if short is not None else np.zeros_like(zm)
    with np.errstate(divide="ignore", invalid="ignore"):
        yo = np.zeros_like(zm)
        zo = np.full_like(zm, np.inf)
        if open is not None:
            zo = 1 / _on_grid(open, 1 / open.impedance, f, "open")
            yo = 1 / (zo - zs)
    where = measurement.provenance.source or "measurement"
    if open is not None and short is not None:
        check_swapped(f, np.abs(zs), np.abs(zo), (_name(open), _name(short)))
    outside = check_between(f, np.abs(zm) < np.abs(zs) if short is not None else np.zeros(f.shape, bool),
                            np.abs(zm) > np.abs(zo), where)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = zm - zs
        zdut = u / (1 - u * yo)
        amplification = np.abs(zm / (u * (1 - u * yo)))
    parts = [_label(s, r) for s, r in ((open, "open"), (short, "short")) if s is not None]
    formula = {(True, True): "Z = (Zm - Zs) / (1 - (Zm - Zs) Yo), Yo = 1/(Zo - Zs)",
               (True, False): "Z = Zm Zo / (Zo - Zm)", (False, True): "Z = Zm - Zs"}
    which = (open is not None, short is not None)
    step = f"fixture compensation from {' and '.join(parts)}: {formula[which]}"
    if load is not None:
        value = complex(load_value)
        if value == 0 or not np.isfinite(value):
            raise InputError(f"--load-value {load_value!r}: the load standard needs a finite, non-zero "
                             f"impedance")
        with np.errstate(divide="ignore", invalid="ignore"):
            ul = _on_grid(load, load.impedance, f, "load") - zs
            zdut = zdut * value * (1 - ul * yo) / ul
        shown = format_quantity(value.real, "ohm") if value.imag == 0 else f"{value:g} ohm"
        step += (f"; scaled by the {_label(load, 'load')} of known value {shown} "
                 f"(Z = Zstd OS(Zm) / OS(Zl))")
    grids = [s for s in (open, short, load) if s is not None
             and not (s.frequency.shape == f.shape and np.allclose(s.frequency, f, rtol=1e-9, atol=0.0))]
    if grids:
        step += f"; {len(grids)} standard(s) interpolated onto the measurement's {len(f)} points"
    usable = (np.isfinite(zdut) & (zdut != 0) & np.isfinite(amplification)
              & (amplification <= MAX_AMPLIFICATION))
    if not np.any(usable):
        raise InputError(f"{where}: the part is indistinguishable "
                         f"from the standards at every frequency; check the standards")

    had_sigma = measurement.sigma_lnmag is not None or measurement.sigma_phase is not None
    provenance = measurement.provenance.with_step(step).with_step(
        "sigmas multiplied by |d ln Zdut / d ln Zm| (standards' own noise neglected)" if had_sigma else
        "relative sigmas set to |d ln Zdut / d ln Zm| (equal weights in ln Zm before compensation)")
    provenance = provenance.with_step(
        "standards checked: " + ("short below the open, " if open is not None and short is not None else "")
        + ("part between them at every point" if outside is None else "see warnings"), warning=outside)
    if not np.all(usable):
        provenance = provenance.with_step(
            f"kept {int(usable.sum())} of {len(f)} points after compensation",
            warning=f"dropped {int(np.sum(~usable))} point(s) where the part is indistinguishable from a "
                    f"standard (compensation singular)")

    def scaled(sigma: np.ndarray | None) -> np.ndarray:
        return (amplification if sigma is None else sigma * amplification)[usable]

    terms = tuple(dataclasses.replace(t, coefficient=(amplification**2 * t.column(np.abs(zm)))[usable],
                                      on_model=False) for t in measurement.noise_terms)
    return measurement.replace(
        provenance=provenance,
        frequency=f[usable],
        impedance=zdut[usable],
        sigma_lnmag=scaled(measurement.sigma_lnmag),
        sigma_phase=scaled(measurement.sigma_phase),
        noise_terms=terms,
    )


def apply_corrections(measurement: Measurement, corrections: Corrections) -> Measurement:
    """Apply skew (to the part and the standards), then fixture compensation; no-op when nothing is set.

    Parameters
    ----------
    measurement : Measurement
        The part as read from its bench file.
    corrections : Corrections
        What to remove (see ``Corrections``).

    Returns
    -------
    Measurement
        The corrected measurement (the same object when ``corrections`` is empty), every step recorded.
    """
    if corrections.is_empty:
        return measurement
    standards = {"open": corrections.open, "short": corrections.short, "load": corrections.load}
    if corrections.skew is not None:
        measurement = remove_skew(measurement, corrections.skew)
        standards = {k: None if s is None else remove_skew(s, corrections.skew) for k, s in standards.items()}
        if any(s is not None for s in standards.values()):
            measurement = measurement.replace(step="the same skew removed from the fixture standards")
    if any(s is not None for s in standards.values()) or corrections.load_value is not None:
        measurement = compensate_fixture(measurement, load_value=corrections.load_value, **standards)
    return measurement
