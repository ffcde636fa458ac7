"""Complex nonlinear least-squares fit of a circuit to a measurement (lmfit, Levenberg-Marquardt).

Residual (complex nonlinear least squares on the log of Z, common practice): for each point the real part
``ln|Z_model| - ln|Z_meas|`` divided by ``sigma_lnmag`` and the wrapped phase difference
``angle(Z_model / Z_meas)`` (rad) divided by ``sigma_phase``, stacked ``[real..., imag...]``. Without
per-point sigmas both parts get weight 1 (proportional weighting: relative |Z| error of 1 % weighs like a
phase error of 0.01 rad). Parameters are fitted as log10 of their SI value (a constant phase element's
exponent n linearly, 0 < n <= 1), inside bounds that keep them physical, with the exact Jacobian
``d ln Z / d log10 p = ln(10) p (dZ/dp) / Z``.

``scale_covar`` is True (noise level estimated from the residuals) unless the measurement's sigmas are
absolute. Information criteria (n = 2 * points residual entries, k free parameters): with absolute sigmas
``AIC = chi2 + 2k``, ``BIC = chi2 + k ln n``; otherwise the Gaussian-likelihood forms with the noise level
estimated, ``AIC = n ln(chi2/n) + 2k``, ``BIC = n ln(chi2/n) + k ln n`` (as lmfit reports them).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import lmfit
import numpy as np
from uncertainties import covariance_matrix

from .circuit import Circuit
from .exceptions import FitError, InputError
from .measurement import Measurement
from .presets import resolve_model
from .results import FitResult, ParameterEstimate
from .seeding import data_seed, global_search, refine_by_scans, search_ranges
from .units import format_quantity

__all__ = ["fit", "FitProblem", "BOUND_DECADES"]

_LN10 = float(np.log(10.0))
#: Decades beyond the search box that the hard bounds of a log-scaled parameter allow.
BOUND_DECADES = 6.0
#: Bounds of a constant phase element's exponent.
EXPONENT_BOUNDS = (1e-3, 1.0)


@dataclass(frozen=True)
class FitProblem:
    """The weighted log-impedance residual of ``circuit`` against a measurement, in internal coordinates.

    ``x[i]`` is log10 of parameter ``free[i]`` in SI units, or the value itself where ``exponent[i]``.
    """

    circuit: Circuit
    frequency: np.ndarray
    impedance: np.ndarray
    weight_lnmag: np.ndarray
    weight_phase: np.ndarray
    free: tuple[str, ...]
    exponent: np.ndarray
    fixed: Mapping[str, float]

    def values(self, x: np.ndarray) -> dict[str, float | np.ndarray]:
        """SI values of all parameters; ``x`` may be (k,) or, for batches, (K, k) (values then (K, 1))."""
        x = np.asarray(x, dtype=float)
        values: dict[str, float | np.ndarray] = dict(self.fixed)
        for i, name in enumerate(self.free):
            xi = x[..., i] if x.ndim == 1 else x[:, i : i + 1]
            values[name] = xi if self.exponent[i] else 10.0**xi
        return values

    def _weighted(self, z_model: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        ratio = z_model / self.impedance
        return np.log(np.abs(ratio)) * self.weight_lnmag, np.angle(ratio) * self.weight_phase

    def residual(self, x: np.ndarray) -> np.ndarray:
        """Stacked weighted residual [ln|Zm/Z| / sigma_lnmag, angle(Zm/Z) / sigma_phase] (length 2M)."""
        with np.errstate(all="ignore"):
            re, im = self._weighted(self.circuit.impedance(self.frequency, self.values(x)))
        return np.nan_to_num(np.concatenate([re, im]), nan=1e6, posinf=1e6, neginf=-1e6)

    def jacobian(self, x: np.ndarray) -> np.ndarray:
        """Exact Jacobian of :meth:`residual` with respect to the internal coordinates, shape (2M, k)."""
        values = self.values(x)
        with np.errstate(all="ignore"):
            z, grads = self.circuit.impedance_gradient(self.frequency, values)
            columns = []
            for i, name in enumerate(self.free):
                g = grads[name] / z * (1.0 if self.exponent[i] else _LN10 * values[name])
                columns.append(np.concatenate([g.real * self.weight_lnmag, g.imag * self.weight_phase]))
        return np.nan_to_num(np.column_stack(columns))

    def batch_cost(self, points: np.ndarray) -> np.ndarray:
        """Sum of squared residuals for each row of ``points`` (K, k), evaluated at once (inf if invalid)."""
        with np.errstate(all="ignore"):
            z = self.circuit.impedance(self.frequency, self.values(np.atleast_2d(points)))
            re, im = self._weighted(np.atleast_2d(z))
            cost = np.sum(re**2 + im**2, axis=-1)
        return np.where(np.isfinite(cost), cost, np.inf)


def _check_names(circuit: Circuit, given: Mapping, what: str) -> None:
    unknown = [name for name in given if name not in circuit.parameter_names]
    if unknown:
        raise InputError(f"{what} for unknown parameter{'s' if len(unknown) > 1 else ''} "
                         f"{', '.join(map(repr, unknown))}: the model {circuit.expression!r} has "
                         f"{', '.join(circuit.parameter_names)}")


def _internal(circuit: Circuit, name: str, value: float, what: str) -> float:
    """SI value -> internal coordinate, refusing values outside the parameter's physical range."""
    value = float(value)
    if circuit.parameter_is_exponent(name):
        if not 0 < value <= 1:
            raise InputError(f"{what} {name}={value:g}: a constant phase exponent must be in (0, 1]")
        return value
    if not (np.isfinite(value) and value > 0):
        raise InputError(f"{what} {name}={value:g}: must be a positive number in SI units")
    return float(np.log10(value))


def _boxes(circuit: Circuit, m: Measurement, free: tuple[str, ...],
           bounds: Mapping[str, tuple[float, float]]):
    """Search box and hard bounds (internal coordinates) of the free parameters."""
    ranges = search_ranges(circuit, m)
    lo, hi, b_lo, b_hi = (np.empty(len(free)) for _ in range(4))
    for i, name in enumerate(free):
        if circuit.parameter_is_exponent(name):
            lo[i], hi[i] = ranges[name]
            b_lo[i], b_hi[i] = EXPONENT_BOUNDS
        else:
            lo[i], hi[i] = np.log10(ranges[name])
            b_lo[i], b_hi[i] = lo[i] - BOUND_DECADES, hi[i] + BOUND_DECADES
        if name in bounds:
            low, high = bounds[name]
            b_lo[i], b_hi[i] = (_internal(circuit, name, v, "bound") for v in (low, high))
            if not b_lo[i] < b_hi[i]:
                raise InputError(f"bound {name}={low:g}:{high:g}: the lower limit must be below the upper")
            lo[i], hi[i] = max(lo[i], b_lo[i]), min(hi[i], b_hi[i])
            if not lo[i] < hi[i]:
                lo[i], hi[i] = b_lo[i], b_hi[i]
    return lo, hi, b_lo, b_hi


def _local_fit(problem: FitProblem, x0: np.ndarray, b_lo: np.ndarray, b_hi: np.ndarray,
               scale_covar: bool) -> lmfit.minimizer.MinimizerResult:
    """One local fit from ``x0`` with the exact Jacobian.

    Levenberg-Marquardt (lmfit ``leastsq``) first; when it stops near a bound or does not converge within
    its budget, the bounded trust-region method (lmfit ``least_squares``), which handles active bounds
    directly, continues from where it stopped.
    """
    span = b_hi - b_lo
    k = len(x0)

    def run(start: np.ndarray, method: str) -> lmfit.minimizer.MinimizerResult:
        params = lmfit.Parameters()
        for i, x in enumerate(np.clip(start, b_lo + 1e-6 * span, b_hi - 1e-6 * span)):
            params.add(f"p{i}", value=float(x), min=float(b_lo[i]), max=float(b_hi[i]))
        keys = list(params)

        def vector(p: lmfit.Parameters) -> np.ndarray:
            return np.array([p[key].value for key in keys])

        return lmfit.minimize(lambda p: problem.residual(vector(p)), params, method=method,
                              Dfun=lambda p: problem.jacobian(vector(p)), scale_covar=scale_covar,
                              max_nfev=100 * (k + 1))

    out = run(x0, "leastsq")
    x = _vector(out)
    if out.success and np.all(np.minimum(x - b_lo, b_hi - x) > 0.05):
        return out
    trial = run(x, "least_squares")
    return trial if trial.chisqr <= out.chisqr or not out.success else out


def _problem(circuit: Circuit, m: Measurement, free: tuple[str, ...],
             fixed: Mapping[str, float]) -> FitProblem:
    ones = np.ones(len(m))
    return FitProblem(
        circuit=circuit, frequency=m.frequency, impedance=m.impedance,
        weight_lnmag=ones if m.sigma_lnmag is None else 1.0 / m.sigma_lnmag,
        weight_phase=ones if m.sigma_phase is None else 1.0 / m.sigma_phase,
        free=free, exponent=np.array([circuit.parameter_is_exponent(n) for n in free], dtype=bool),
        fixed=dict(fixed))


def _weighting(m: Measurement) -> str:
    if m.sigma_lnmag is None and m.sigma_phase is None:
        return ("proportional: equal weights on ln|Z| and phase (rad), noise level estimated from the "
                "residuals")
    kind = "absolute (covariance not rescaled)" if m.sigma_absolute else \
        "relative (noise level estimated from the residuals)"
    return f"per-point sigmas of ln|Z| and phase, {kind}"


def fit(measurement: Measurement, model: str | Circuit, *, fixed: Mapping[str, float] | None = None,
        guesses: Mapping[str, float] | None = None,
        bounds: Mapping[str, tuple[float, float]] | None = None) -> FitResult:
    """Fit a circuit to a measurement with no starting values needed.

    Parameters
    ----------
    measurement : Measurement
        Impedance (ohm) over frequency (Hz), with optional per-point sigmas.
    model : str or Circuit
        Circuit expression (``"Rs + L1 || Cp"``), preset name, or a parsed Circuit.
    fixed : mapping, optional
        Parameter name -> value held fixed (SI units).
    guesses : mapping, optional
        Parameter name -> starting value (SI units), replacing the data-derived seed for that parameter.
    bounds : mapping, optional
        Parameter name -> (low, high) in SI units.

    Returns
    -------
    FitResult
        Values and standard errors in SI units, correlations, quality measures and flags in words.

    Raises
    ------
    ModelSyntaxError
        The expression does not parse.
    InputError
        A fixed value, guess or bound names an unknown parameter or is outside its physical range.
    FitError
        More free parameters than residual entries (2 per point), or nothing left to fit.
    """
    circuit = model if isinstance(model, Circuit) else Circuit.parse(resolve_model(model))
    fixed, guesses, bounds = dict(fixed or {}), dict(guesses or {}), dict(bounds or {})
    for given, what in ((fixed, "fixed value"), (guesses, "guess"), (bounds, "bound")):
        _check_names(circuit, given, what)
    for name, value in fixed.items():
        _internal(circuit, name, value, "fixed value")
    free = tuple(n for n in circuit.parameter_names if n not in fixed)
    n_points = len(measurement)
    if not free:
        raise FitError(f"every parameter of {circuit.expression!r} is fixed: nothing to fit")
    if len(free) > 2 * n_points:
        raise FitError(f"model {circuit.expression!r} has {len(free)} free parameters but {n_points} "
                       f"point{'s' if n_points != 1 else ''} give only {2 * n_points} residuals: "
                       "use a simpler model, fix parameters or measure more points")

    problem = _problem(circuit, measurement, free, fixed)
    lo, hi, b_lo, b_hi = _boxes(circuit, measurement, free, bounds)
    seed = data_seed(circuit, measurement)
    seed.update({k: float(v) for k, v in guesses.items()})
    x0 = np.array([_internal(circuit, n, seed[n], "guess") for n in free])
    for i, name in enumerate(free):
        if name in guesses and not b_lo[i] <= x0[i] <= b_hi[i]:
            raise InputError(f"guess {name}={guesses[name]:g} lies outside its bounds")
    scale_covar = not measurement.sigma_absolute
    out, stage = _local_fit(problem, x0, b_lo, b_hi, scale_covar), "from the data-derived seed"
    scan = np.array([n not in guesses for n in free])
    if not _converged_well(problem, out) and scan.any():
        x0[scan] = refine_by_scans(_Subproblem(problem, x0, scan), x0[scan], lo[scan], hi[scan])
        trial = _local_fit(problem, x0, b_lo, b_hi, scale_covar)
        if trial.chisqr < out.chisqr:
            out, stage = trial, "from the data-derived seed refined by parameter scans"
    if not _converged_well(problem, out):
        x_global = global_search(problem, lo, hi, b_lo, b_hi, starts=[x0, _vector(out)])
        trial = _local_fit(problem, x_global, b_lo, b_hi, scale_covar)
        if trial.chisqr < out.chisqr * (1 - 1e-9):
            out, stage = trial, "after a global search (the seeded fit left structured residuals)"
        else:
            stage = "from the data-derived seed (a global search found nothing better)"
    return _assess(problem, measurement, out, (b_lo, b_hi), scale_covar, stage)


def _vector(out: lmfit.minimizer.MinimizerResult) -> np.ndarray:
    return np.array([p.value for p in out.params.values()])


def _converged_well(problem: FitProblem, out: lmfit.minimizer.MinimizerResult) -> bool:
    """Accept the seeded fit when it succeeded and its residuals look like noise."""
    if not out.success:
        return False
    m = problem.frequency.size
    return residual_structure(out.residual[:m], out.residual[m:]) is None


@dataclass(frozen=True)
class _Subproblem:
    """Batch cost over a subset of the coordinates (the others held at ``base``), for the scans."""

    problem: FitProblem
    base: np.ndarray
    mask: np.ndarray

    def batch_cost(self, points: np.ndarray) -> np.ndarray:
        full = np.repeat(self.base[None, :], len(points), axis=0)
        full[:, self.mask] = points
        return self.problem.batch_cost(full)


# ---------------------------------------------------------------------------------------------------------
# Judging the result: values in SI, honest standard errors, flags in words.

#: |correlation| above which a pair is flagged.
CORRELATION_LIMIT = 0.99
#: Relative standard error above which a parameter counts as not determined by the data.
UNDETERMINED_LIMIT = 1.0
#: Relative standard error above which the first-order error is flagged as only approximate.
APPROXIMATE_LIMIT = 0.3
#: Distance (internal units: decades, or n) from a bound that counts as sitting on it.
AT_BOUND_TOLERANCE = 1e-3


def residual_structure(real: np.ndarray, imag: np.ndarray) -> str | None:
    """Describe systematic structure in the residuals against frequency, or None if they look like noise.

    Test: lag-1 autocorrelation ``r1 = sum(e_i e_(i+1)) / sum(e_i^2)`` of each part in frequency order; white
    noise gives r1 ~ N(0, 1/M), so ``r1 > 4 / sqrt(M)`` is structure (a mean offset counts too: no mean is
    removed). Residuals below 1e-9 (exact data) and series under 10 points are not judged.
    """
    m = real.size
    if m < 10:
        return None
    found = []
    for part, e in (("ln|Z|", real), ("phase", imag)):
        power = float(np.dot(e, e))
        if power <= m * 1e-18:
            continue
        r1 = float(np.dot(e[:-1], e[1:]) / power)
        if r1 > 4 / np.sqrt(m):
            found.append(f"{part} {r1:.2f}")
    if not found:
        return None
    return (f"residuals show systematic structure against frequency (lag-1 autocorrelation "
            f"{', '.join(found)}; noise would stay below {4 / np.sqrt(m):.2f}): the model does not fully "
            "describe the part")


def _assess(problem: FitProblem, m: Measurement, out: lmfit.minimizer.MinimizerResult,
            hard_bounds: tuple[np.ndarray, np.ndarray], scale_covar: bool, stage: str) -> FitResult:
    circuit, free = problem.circuit, problem.free
    x = _vector(out)
    values = problem.values(x)
    n_res, k = 2 * len(m), len(free)
    dof = n_res - k
    chi2 = float(out.chisqr)
    flags: list[str] = []
    if not out.success:
        flags.append(f"the fit did not converge: {out.message}")

    at_bound: dict[str, str] = {}
    for i, name in enumerate(free):
        for side, limit in (("lower", hard_bounds[0][i]), ("upper", hard_bounds[1][i])):
            if abs(x[i] - limit) < AT_BOUND_TOLERANCE:
                at_bound[name] = side
                flags.append(f"{name} sits at its {side} bound "
                             f"({format_quantity(float(values[name]), circuit.parameter_unit(name))}): "
                             "the data do not hold it inside the allowed range; fix it, bound it, or widen "
                             "the sweep")

    uvars_internal = getattr(out, "uvars", None) or {}
    with_errors = [name for i, name in enumerate(free) if name not in at_bound and f"p{i}" in uvars_internal
                   and out.params[f"p{i}"].stderr is not None and np.isfinite(out.params[f"p{i}"].stderr)]
    if scale_covar and dof <= 0:
        note = "no degrees of freedom left to estimate the noise level"
        with_errors = []
    elif not out.errorbars:
        note = ("covariance could not be computed: the Jacobian is singular at the optimum, so the data "
                "do not separate every parameter")
    else:
        note = "covariance could not be computed for this parameter"
    if len(with_errors) < len(free) - len(at_bound):
        flags.append(f"standard errors missing: {note}")

    uvars = {}
    for name in with_errors:
        u = uvars_internal[f"p{free.index(name)}"]
        uvars[name] = u if circuit.parameter_is_exponent(name) else 10.0**u
    covariance = np.array(covariance_matrix([uvars[n] for n in with_errors]), dtype=float) if uvars else None
    correlation = None
    if covariance is not None:
        sd = np.sqrt(np.diag(covariance))
        with np.errstate(all="ignore"):
            correlation = covariance / np.outer(sd, sd)

    parameters: dict[str, ParameterEstimate] = {}
    f_text = f"{format_quantity(m.frequency[0], 'Hz')} - {format_quantity(m.frequency[-1], 'Hz')}"
    for name in circuit.parameter_names:
        unit = circuit.parameter_unit(name)
        if name in problem.fixed:
            parameters[name] = ParameterEstimate(name, float(problem.fixed[name]), None, unit, vary=False,
                                                 stderr_note="fixed by user")
            continue
        value = float(values[name])
        if name in uvars:
            stderr = float(uvars[name].std_dev)
            parameters[name] = ParameterEstimate(name, value, stderr, unit)
            if stderr > UNDETERMINED_LIMIT * abs(value):
                flags.append(f"{name} is not determined by the data (standard error "
                             f"{stderr / abs(value):.0%} of its value): its effect is too small within "
                             f"{f_text}, e.g. a resonance or corner outside the sweep; fix it or use a "
                             "simpler model")
            elif stderr > APPROXIMATE_LIMIT * abs(value):
                flags.append(f"{name} is poorly determined (standard error {stderr / abs(value):.0%} of its "
                             "value): the first-order error is only approximate and the true interval is "
                             "asymmetric")
            continue
        why = note if name not in at_bound or dof <= 0 else \
            f"at the {at_bound[name]} bound: no standard error there"
        parameters[name] = ParameterEstimate(name, value, None, unit, at_bound=at_bound.get(name),
                                             stderr_note=why)

    if correlation is not None:
        for i in range(len(with_errors)):
            for j in range(i + 1, len(with_errors)):
                if abs(correlation[i, j]) > CORRELATION_LIMIT:
                    flags.append(f"{with_errors[i]} and {with_errors[j]} are correlated "
                                 f"({correlation[i, j]:+.3f}): the data fix mainly a combination of the two")
    structure = residual_structure(out.residual[: len(m)], out.residual[len(m):])
    if structure:
        flags.append(structure)
    reduced = chi2 / dof if dof > 0 else float("nan")
    if m.sigma_absolute and dof > 0 and reduced > 1 + 5 * np.sqrt(2 / dof):
        flags.append(f"reduced chi-square {reduced:.3g} is well above 1: the stated uncertainties are too "
                     "small or the model does not describe the part")

    if m.sigma_absolute:
        aic, bic = chi2 + 2 * k, chi2 + k * np.log(n_res)
    else:
        base = n_res * np.log(max(chi2, 1e-300) / n_res)
        aic, bic = base + 2 * k, base + k * np.log(n_res)
    return FitResult(
        circuit=circuit, measurement=m, parameters=parameters, correlation_names=tuple(with_errors),
        correlation=correlation, covariance=covariance, chi_square=chi2, reduced_chi_square=reduced,
        aic=float(aic), bic=float(bic), n_points=len(m), n_free=k, success=bool(out.success),
        message=f"{out.message} ({stage}, {out.nfev} evaluations)", flags=tuple(flags),
        weighting=_weighting(m), uvars=uvars or None)
