"""Design values of a fitted model: self-resonances, and L or C, ESR, |Z|, phase, Q, D at a frequency.

Every value carries a first-order standard uncertainty propagated with the parameter correlations,
``var(q) = J C J^T`` with ``J = dq/dp`` exact (from ``Circuit.impedance_gradient``) and ``C`` the fit's
covariance in SI units (or the covariance of ``result.uvars`` when the fit gives only those). Relations used
(common practice, e^{+jwt} convention, Z = R + jX):

- inductive (X >= 0): effective inductance ``L_eff = X / w``
- capacitive (X < 0): effective capacitance ``C_eff = -1 / (w X)``
- ``ESR = R``, ``Q = |X| / R``, dissipation factor ``D = R / |X| = 1 / Q``
- self-resonance: a frequency where the model's X crosses zero; rising X (series resonance, |Z| minimum),
  falling X (parallel resonance, |Z| maximum). Its uncertainty follows from the implicit function theorem,
  ``df0/dp = -(dG/dp) / (dG/df)``, with G = X for a series and G = Im Y for a parallel resonance.
- resonator Q of each self-resonance from the phase slope, ``Q = (f0 / 2) |d phase / df|`` at f0 (common
  practice; for a series R-L-C it is (1/R) sqrt(L/C), for a parallel tank R sqrt(C/L)), its half-power
  bandwidth f0 / Q; its uncertainty by central differences over the parameters (f0 re-found each time).
- within half a bandwidth of a resonance, L_eff, C_eff, Q = |X|/R and D are "undefined at resonance"
  (the reactance passes through zero there); ESR, |Z| and phase keep their values.
- a value that depends (relative sensitivity above ``DEPENDS``) on a parameter the fit could not determine
  (at a bound, or no bounded error) is "undetermined", never a number with a confident error.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from .exceptions import InputError
from .results import FitResult

__all__ = ["DerivedValue", "Resonance", "OperatingPoint", "DesignValues", "design_values",
           "parameter_covariance", "frequency_derivative", "DEPENDS"]

#: How far beyond each end of the sweep (factor in frequency) extrapolated resonances are searched.
EXTRAPOLATION_FACTOR = 1e3
#: Relative sensitivity |d ln q / d ln p| above which a value counts as built from parameter p.
DEPENDS = 1e-3
#: Values that lose their meaning where the reactance passes through zero.
_REACTIVE_VALUES = ("L_eff", "C_eff", "Q", "D")


@dataclass(frozen=True)
class DerivedValue:
    """One design value in SI units; ``stderr`` None with ``note`` saying why."""

    name: str
    label: str
    value: float
    stderr: float | None
    unit: str
    note: str = ""


@dataclass(frozen=True)
class Resonance:
    """A self-resonant frequency of the model (Hz).

    ``kind`` is ``"series"`` (X rises through zero: |Z| minimum) or ``"parallel"`` (X falls through zero:
    |Z| maximum); ``in_sweep`` is False for an extrapolated resonance outside the measured range;
    ``quality`` is the resonator Q from the phase slope (see the module docstring), or None.
    """

    frequency: DerivedValue
    kind: str
    in_sweep: bool
    quality: DerivedValue | None = None

    @property
    def bandwidth(self) -> float | None:
        """Half-power bandwidth f0 / Q in Hz, or None without a finite positive Q."""
        q = self.quality
        if q is None or not (math.isfinite(q.value) and q.value > 0):
            return None
        return self.frequency.value / q.value


@dataclass(frozen=True)
class OperatingPoint:
    """Design values at one operating frequency (Hz); ``character`` is ``"inductive"`` or ``"capacitive"``."""

    frequency: float
    character: str
    in_sweep: bool
    values: dict[str, DerivedValue]


@dataclass(frozen=True)
class DesignValues:
    """Resonances of the model and the values at each requested operating frequency."""

    resonances: tuple[Resonance, ...]
    resonance_note: str
    points: tuple[OperatingPoint, ...]
    uncertainty_note: str

    @property
    def srf_in_sweep(self) -> tuple[Resonance, ...]:
        return tuple(r for r in self.resonances if r.in_sweep)


def parameter_covariance(result: FitResult) -> tuple[tuple[str, ...], np.ndarray | None, str]:
    """Names, SI covariance of the free parameters, and a note: why it is None, or what it leaves out.

    Uses ``result.covariance`` (ordered as ``result.correlation_names``) or else the covariance of
    ``result.uvars``.
    """
    free = tuple(n for n, p in result.parameters.items() if p.vary)
    if not free:
        return (), None, "no uncertainty: all parameters fixed by the user"
    names: tuple[str, ...] = ()
    covariance = None
    if result.covariance is not None:
        names = tuple(result.correlation_names)
        covariance = np.asarray(result.covariance, dtype=float)
    elif result.uvars:
        from uncertainties import covariance_matrix

        names = tuple(n for n in free if n in result.uvars)
        if names:
            covariance = np.array(covariance_matrix([result.uvars[n] for n in names]), dtype=float)
    if covariance is not None:
        missing = [n for n in free if n not in names]
        partial = (f"first-order propagation with correlations; leaves out {', '.join(missing)} "
                   "(no standard error from the fit)") if missing else ""
        return names, covariance, partial
    notes = sorted({p.stderr_note for p in result.parameters.values() if p.vary and p.stderr_note})
    reason = "; ".join(notes) if notes else "the fit gave no covariance"
    return free, None, f"no uncertainty: {reason}"


def frequency_derivative(result: FitResult, frequency: np.ndarray | float) -> np.ndarray:
    """dZ/df (ohm/Hz) of the model, exact.

    Each element's impedance depends on w only through the products w L, w C and w^n Q, so
    ``w dZ/dw = sum_L L dZ/dL + sum_C C dZ/dC + sum_P n Q dZ/dQ`` (Euler's relation for these homogeneous
    forms; common practice, no source); each kind's weights come from the registry.
    """
    f = np.atleast_1d(np.asarray(frequency, dtype=float))
    values = result.values
    _, gradient = result.circuit.impedance_gradient(f, values)
    return _euler_derivative(result, f, gradient)


def _euler_derivative(result: FitResult, f: np.ndarray, gradient: dict[str, np.ndarray]) -> np.ndarray:
    """dZ/df (ohm/Hz) from the parameter gradient of Z at ``f`` (Hz), by the relation above."""
    return _euler_derivative_at(result.circuit, result.values, f, gradient)


def _euler_derivative_at(circuit, values: dict[str, float], f: np.ndarray,
                         gradient: dict[str, np.ndarray]) -> np.ndarray:
    """dZ/df (ohm/Hz) of ``circuit`` at parameter ``values`` from its parameter gradient at ``f`` (Hz)."""
    total = np.zeros(f.shape, dtype=complex)
    for element in circuit.elements:
        own = {spec.suffix: values[element.name + spec.suffix] for spec in element.record.parameters}
        for suffix, weight in element.record.frequency_weights(own).items():
            name = element.name + suffix
            total += weight * values[name] * gradient[name]
    return total / f


@dataclass(frozen=True)
class _Propagation:
    """What first-order propagation needs: the covariance (SI, ordered as ``names``, or None), why it is
    None or what it leaves out (``note``), and the free parameters without a standard error (``left_out``)."""

    names: tuple[str, ...]
    covariance: np.ndarray | None
    note: str
    left_out: tuple[str, ...]
    values: dict[str, float]
    undetermined: dict[str, str]

    def built_from_undetermined(self, gradient: dict[str, float], value: float) -> str:
        """Why a value with ``gradient`` is undetermined (it moves with a parameter the data do not fix),
        or "" when it is not."""
        if not (math.isfinite(value) and value != 0):
            return ""
        hits = [f"{n} ({why})" for n, why in self.undetermined.items()
                if abs(gradient.get(n, 0.0) * self.values[n] / value) > DEPENDS]
        return f"undetermined: built from {', '.join(hits)}" if hits else ""

    def stderr(self, gradient: dict[str, float]) -> tuple[float | None, str]:
        """Standard uncertainty of a value with ``gradient`` {parameter: d value / d parameter}, and a note
        when it is None.

        A value that moves only with parameters left out of the covariance gets None rather than 0.
        """
        if self.covariance is None:
            return None, self.note
        j = np.array([gradient.get(n, 0.0) for n in self.names], dtype=float)
        variance = max(float(j @ self.covariance @ j) if j.size else 0.0, 0.0)
        hidden = [n for n in self.left_out if gradient.get(n, 0.0) != 0]
        if variance == 0 and hidden:
            return None, f"depends only on {', '.join(hidden)}, which has no standard error from the fit"
        return math.sqrt(variance), ""


def _value(name, label, value, gradient, propagation: _Propagation, unit, note=None) -> DerivedValue:
    if not math.isfinite(value):
        return DerivedValue(name, label, float(value), None, unit, note or "not finite for this model")
    undetermined = propagation.built_from_undetermined(gradient, value)
    if undetermined:
        return DerivedValue(name, label, math.nan, None, unit, undetermined)
    stderr, why = propagation.stderr(gradient)
    return DerivedValue(name, label, float(value), stderr, unit, "" if stderr is not None else note or why)


def _operating_point(result: FitResult, f: float, propagation: _Propagation,
                     resonances: Sequence[Resonance] = ()) -> OperatingPoint:
    z, grads = result.circuit.impedance_gradient(np.array([f]), result.values)
    z = complex(z[0])
    dz = {n: complex(g[0]) for n, g in grads.items()}
    r, x, w = z.real, z.imag, 2 * math.pi * f
    mag = abs(z)
    d_r = {n: g.real for n, g in dz.items()}
    d_x = {n: g.imag for n, g in dz.items()}
    out: dict[str, DerivedValue] = {}

    def add(name, label, value, grad, unit, why=None):
        out[name] = _value(name, label, value, grad, propagation, unit, why)

    inductive = x >= 0
    if inductive:
        add("L_eff", "effective inductance", x / w, {n: d_x[n] / w for n in dz}, "H")
    else:
        add("C_eff", "effective capacitance", -1 / (w * x), {n: d_x[n] / (w * x * x) for n in dz}, "F")
    add("ESR", "equivalent series resistance", r, d_r, "ohm")
    add("abs_Z", "impedance magnitude |Z|", mag, {n: (r * d_r[n] + x * d_x[n]) / mag for n in dz}, "ohm")
    add("phase", "phase of Z", math.degrees(math.atan2(x, r)),
        {n: math.degrees((r * d_x[n] - x * d_r[n]) / mag**2) for n in dz}, "deg")
    s = 1.0 if inductive else -1.0
    if r > 0 and x != 0:
        add("Q", "quality factor Q = |X|/R", abs(x) / r,
            {n: s * d_x[n] / r - abs(x) * d_r[n] / r**2 for n in dz}, "")
        add("D", "dissipation factor D = R/|X|", r / abs(x),
            {n: d_r[n] / abs(x) - r * s * d_x[n] / x**2 for n in dz}, "")
    else:
        why = "model has no loss at this frequency (R <= 0)" if x != 0 else "model is purely resistive here"
        q_value, d_value = (math.inf, 0.0) if x != 0 else (0.0, math.inf)
        add("Q", "quality factor Q = |X|/R", q_value, {}, "", why)
        add("D", "dissipation factor D = R/|X|", d_value, {}, "", why)
    for res in resonances:
        width = res.bandwidth
        if width is not None and abs(f - res.frequency.value) < width / 2:
            why = (f"undefined at resonance: {f:.4g} Hz lies within half a bandwidth ({width:.3g} Hz) of "
                   f"the {res.kind} self-resonance at {res.frequency.value:.6g} Hz")
            for key in _REACTIVE_VALUES:
                if key in out:
                    out[key] = DerivedValue(key, out[key].label, math.nan, None, out[key].unit, why)
    f_meas = result.measurement.frequency
    in_sweep = bool(f_meas[0] <= f <= f_meas[-1])
    return OperatingPoint(float(f), "inductive" if inductive else "capacitive", in_sweep, out)


def _find_resonances(result: FitResult, propagation: _Propagation) -> list[Resonance]:
    f_meas = result.measurement.frequency
    low, high = f_meas[0] / EXTRAPOLATION_FACTOR, f_meas[-1] * EXTRAPOLATION_FACTOR
    grid = np.geomspace(low, high, 4000)
    values = result.values

    def impedance_at(log_f: float) -> complex:
        with np.errstate(all="ignore"):
            return complex(result.circuit.impedance(np.array([math.exp(log_f)]), values)[0])

    def reactance(log_f: float) -> float:
        x = impedance_at(log_f).imag
        return x if math.isfinite(x) else 0.0  # on a pole of Z (lossless loop): X changes sign

    x = result.circuit.impedance(grid, values).imag
    found: list[Resonance] = []
    for k in np.nonzero(np.sign(x[:-1]) * np.sign(x[1:]) < 0)[0]:
        log_f0 = brentq(reactance, math.log(grid[k]), math.log(grid[k + 1]), xtol=1e-15, rtol=1e-15)
        for _ in range(4):  # on the pole itself (Z infinite): its neighbour is finite
            if cmath.isfinite(impedance_at(log_f0)):
                break
            log_f0 = math.nextafter(log_f0, math.inf)
        f0 = math.exp(log_f0)
        kind = "series" if x[k + 1] > x[k] else "parallel"
        z, grads = result.circuit.impedance_gradient(np.array([f0]), values)
        dz_df = complex(_euler_derivative(result, np.array([f0]), grads)[0])
        z0 = complex(z[0])
        if kind == "series":  # G = X
            d_g = {n: complex(g[0]).imag for n, g in grads.items()}
            d_g_df = dz_df.imag
        else:  # G = Im Y = Im(1/Z); dY = -dZ / Z^2
            d_g = {n: (-complex(g[0]) / z0**2).imag for n, g in grads.items()}
            d_g_df = (-dz_df / z0**2).imag
        in_sweep = bool(f_meas[0] <= f0 <= f_meas[-1])
        label = f"{kind} self-resonance" + ("" if in_sweep else " (extrapolated outside the sweep)")
        df0 = {n: -v / d_g_df for n, v in d_g.items()} if d_g_df != 0 else None
        if df0 is not None:
            value = _value("SRF", label, f0, df0, propagation, "Hz")
        else:
            value = DerivedValue("SRF", label, f0, None, "Hz",
                                 "reactance does not change with frequency here")
        found.append(Resonance(value, kind, in_sweep, _resonator_q(result, f0, df0, label, propagation)))
    return found


def _phase_slope_q(result: FitResult, values: dict[str, float], f0: float) -> float:
    """(f0 / 2) |d phase / df| at f0 for parameter ``values`` (phase of Z in rad)."""
    z = complex(result.circuit.impedance(np.array([f0]), values)[0])
    _, grads = result.circuit.impedance_gradient(np.array([f0]), values)
    dz_df = complex(_euler_derivative_at(result.circuit, values, np.array([f0]), grads)[0])
    return float(f0 / 2 * abs((dz_df / z).imag))


def _resonator_q(result: FitResult, f0: float, df0: dict[str, float] | None, label: str,
                 propagation: _Propagation) -> DerivedValue:
    """Resonator Q of the resonance at f0 with its first-order uncertainty.

    Q depends on the parameters directly and through f0: dQ/dp = dQ/dp|f0 + (dQ/df0) (df0/dp), with df0/dp
    from the implicit function theorem (``df0``) and the two partial derivatives by central differences.
    """
    name, what = "Q_resonator", f"resonator Q of the {label} (f0 / bandwidth)"
    values = dict(result.values)
    z0 = complex(result.circuit.impedance(np.array([f0]), values)[0])
    if not abs(z0.imag) <= 1e-6 * abs(z0.real):  # X changes sign through a pole: a loop with no loss
        return DerivedValue(name, what, math.inf, None, "",
                            "no loss in the model's resonating loop, so the resonance has no finite width")
    q = _phase_slope_q(result, values, f0)
    gradient: dict[str, float] = {}
    if df0 is not None:
        h = 1e-6 * f0
        dq_df = (_phase_slope_q(result, values, f0 + h) - _phase_slope_q(result, values, f0 - h)) / (2 * h)
        for pname in propagation.names or tuple(values):
            step = 1e-6 * values[pname] if values[pname] != 0 else 1e-12
            up, down = dict(values), dict(values)
            up[pname], down[pname] = values[pname] + step, values[pname] - step
            direct = (_phase_slope_q(result, up, f0) - _phase_slope_q(result, down, f0)) / (2 * step)
            gradient[pname] = direct + dq_df * df0.get(pname, 0.0)
    return _value(name, what, q, gradient, propagation, "")


def design_values(result: FitResult, at: Sequence[float] = ()) -> DesignValues:
    """Self-resonances of the fitted model and the design values at each operating frequency.

    Parameters
    ----------
    result : FitResult
        The fit; values in SI, covariance (or ``uvars``) in SI.
    at : sequence of float
        Operating frequencies in Hz. Frequencies outside the sweep are computed from the model and marked
        ``in_sweep=False`` (extrapolated).

    Returns
    -------
    DesignValues
        Resonances within the sweep and up to a factor ``EXTRAPOLATION_FACTOR`` beyond each end, and per
        operating frequency ``L_eff`` [H] or ``C_eff`` [F], ``ESR`` [ohm], ``abs_Z`` [ohm], ``phase`` [deg],
        ``Q`` and ``D`` [1], each with a first-order standard uncertainty.
    """
    for f in at:
        if not (math.isfinite(f) and f > 0):
            raise InputError(f"operating frequency {f!r} Hz: give a frequency above 0, e.g. --at 100k")
    names, covariance, note = parameter_covariance(result)
    if covariance is not None and len(names) != covariance.shape[0]:
        covariance, note = None, "no uncertainty: covariance does not match the parameter list"
    elif covariance is not None and not np.all(np.isfinite(covariance)):
        covariance, note = None, "no uncertainty: the fit's covariance is not finite"
    left_out = tuple(n for n, p in result.parameters.items() if p.vary and n not in names)
    undetermined = {n: p.undetermined for n, p in result.parameters.items() if p.vary and p.undetermined}
    propagation = _Propagation(tuple(names), covariance, note, left_out, dict(result.values), undetermined)
    resonances = tuple(_find_resonances(result, propagation))
    points = tuple(_operating_point(result, float(f), propagation, resonances) for f in at)
    if any(r.in_sweep for r in resonances):
        resonance_note = ""
    elif resonances:
        resonance_note = "none in the sweep; the model resonates outside it (extrapolated)"
    else:
        resonance_note = (f"none in the sweep (and none within a factor {EXTRAPOLATION_FACTOR:g} "
                          "beyond its ends)")
    uncertainty_note = note or "first-order propagation with parameter correlations (J C J^T)"
    return DesignValues(resonances, resonance_note, points, uncertainty_note)
