"""Complex nonlinear least-squares fit of a circuit to a measurement (Levenberg-Marquardt, scipy).

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
estimated, ``AIC = n ln(chi2/n) + 2k``, ``BIC = n ln(chi2/n) + k ln n`` (common practice). The result
is judged and converted to SI in :mod:`fitz_tool.assessment`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from ..circuit import Circuit
from ..exceptions import FitError, InputError
from ..measurement import Measurement
from ..presets import resolve_model
from ..results import FitResult
from .assessment import INTERVAL_MODES, assess, residual_structure
from .local import LocalFit, local_fit
from .noise import NoiseModel, estimate_noise
from .problem import FitProblem, decimated, problem_for
from .resonances import resonance_intervals, resonance_starts
from .scatter import FAR_ABOVE_SCATTER, scatter_sigma
from .seeding import data_seed, global_search, refine_by_scans, search_ranges
from .work import DEFAULT_MAX_EVALUATIONS, DEFAULT_MAX_TIME, work_budget

__all__ = ["fit", "search", "judge", "with_noise_model", "Searched", "BOUND_DECADES", "SCATTER_FLAG",
           "far_above_scatter", "NOISE_SHAPES"]

#: How the per-point noise is modelled when no uncertainty is stated: estimated from the data (the
#: reader's terms, chosen by BIC, :mod:`fitz_tool.fitting.noise`) or the reader's single shape only.
NOISE_SHAPES = ("estimate", "single")

#: Opening words of the flag for residuals far above the data's own scatter.
SCATTER_FLAG = "residuals far above the noise"
#: Points the global stages rank candidates on (the polish always uses every point).
SEARCH_POINTS = 400
#: Resonance-seeded candidates polished by a local fit.
RESONANCE_POLISH = 4
#: Decades beyond the search box that the hard bounds of a log-scaled parameter allow.
BOUND_DECADES = 6.0


def _check_names(circuit: Circuit, given: Mapping, what: str) -> None:
    unknown = [name for name in given if name not in circuit.parameter_names]
    if unknown:
        raise InputError(f"{what} for unknown parameter{'s' if len(unknown) > 1 else ''} "
                         f"{', '.join(map(repr, unknown))}: the model {circuit.expression!r} has "
                         f"{', '.join(circuit.parameter_names)}")


def _internal(circuit: Circuit, name: str, value: float, what: str) -> float:
    """SI value -> internal coordinate, refusing values outside the parameter's physical range."""
    value = float(value)
    spec = circuit.parameter_spec(name)
    if spec.exponent:
        low, high = spec.bounds
        if not low <= value <= high:
            raise InputError(f"{what} {name}={value:g}: this exponent must be in [{low:g}, {high:g}]")
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
        spec = circuit.parameter_spec(name)
        if spec.exponent:
            lo[i], hi[i] = ranges[name]
            b_lo[i], b_hi[i] = spec.bounds
        else:
            lo[i], hi[i] = np.log10(ranges[name])
            b_lo[i], b_hi[i] = lo[i] - BOUND_DECADES, hi[i] + BOUND_DECADES
        if name in bounds:
            low, high = bounds[name]
            default_low = min(b_lo[i], np.log10(high) - BOUND_DECADES) if high > 0 else b_lo[i]
            b_lo[i], b_hi[i] = (_internal(circuit, name, v, "bound")
                                if not (v == 0 and not spec.exponent) else default_low
                                for v in (low, high))  # a lower bound of 0: as low as the fit goes
            if not b_lo[i] < b_hi[i]:
                raise InputError(f"bound {name}={low:g}:{high:g}: the lower limit must be below the upper")
            lo[i], hi[i] = max(lo[i], b_lo[i]), min(hi[i], b_hi[i])
            if not lo[i] < hi[i]:
                lo[i], hi[i] = b_lo[i], b_hi[i]
    return lo, hi, b_lo, b_hi


def fit(measurement: Measurement, model: str | Circuit, *, fixed: Mapping[str, float] | None = None,
        guesses: Mapping[str, float] | None = None,
        bounds: Mapping[str, tuple[float, float]] | None = None, intervals: str = "flagged",
        noise_shape: str = "estimate", max_time: float | None = DEFAULT_MAX_TIME,
        max_evaluations: int | None = DEFAULT_MAX_EVALUATIONS) -> FitResult:
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
    intervals : {"flagged", "all", "none"}
        Which free parameters get a 68 % profile-likelihood interval: those whose first-order standard
        error is not trusted (at a bound, none, above 30 % of the value, correlation near 1; see
        :mod:`fitz_tool.assessment`), every one, or none (first-order errors only).
    noise_shape : {"estimate", "single"}
        Without stated uncertainties: a noise model from the data (relative part plus channel floors, kept
        only when the likelihood supports it, :mod:`fitz_tool.fitting.noise`), or the reader's single
        shape (relative to |Z| for text files, additive in S for Touchstone).
    max_time, max_evaluations : float, int or None
        Work budget of the whole fit: wall-clock seconds and model evaluations (impedance values at one
        frequency), see :mod:`fitz_tool.fitting.work`; None for no limit.

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
    WorkLimitError
        The work budget ran out; the message says what to reduce.
    """
    if intervals not in INTERVAL_MODES:
        raise InputError(f"intervals={intervals!r}: use one of {', '.join(INTERVAL_MODES)}")
    check_noise_shape(noise_shape)
    with work_budget(max_time, max_evaluations):
        found = search(measurement, model, fixed=fixed, guesses=guesses, bounds=bounds)
        return judge(with_noise_model(found) if noise_shape == "estimate" else found, intervals)


def check_noise_shape(noise_shape: str) -> None:
    """Refuse a noise shape not in ``NOISE_SHAPES``."""
    if noise_shape not in NOISE_SHAPES:
        raise InputError(f"noise shape {noise_shape!r}: use one of {', '.join(NOISE_SHAPES)}")


def with_noise_model(searched: Searched) -> Searched:
    """The search with its noise model from the data (and refitted with it when one is chosen over the
    single shape); unchanged when the measurement has no noise terms or states absolute uncertainties."""
    found = estimate_noise(searched.problem, searched.measurement, searched.out, searched.bounds)
    if found is None:
        return searched
    problem, out, measurement, model = found
    return replace(searched, problem=problem, out=out, measurement=measurement, noise=model)


def search(measurement: Measurement, model: str | Circuit, *, fixed: Mapping[str, float] | None = None,
           guesses: Mapping[str, float] | None = None,
           bounds: Mapping[str, tuple[float, float]] | None = None) -> Searched:
    """The search half of :func:`fit` (same arguments but ``intervals``): the best local fit, not yet
    judged. :func:`judge` turns it into a FitResult; model selection judges only the candidates in play."""
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

    problem = problem_for(circuit, measurement, free, fixed)
    lo, hi, b_lo, b_hi = _boxes(circuit, measurement, free, bounds)
    seed = data_seed(circuit, measurement)
    seed.update({k: float(v) for k, v in guesses.items()})
    x0 = np.array([_internal(circuit, n, seed[n], "guess") for n in free])
    for i, name in enumerate(free):
        if name in guesses and not b_lo[i] <= x0[i] <= b_hi[i]:
            raise InputError(f"guess {name}={guesses[name]:g} lies outside its bounds")
    scale_covar = not measurement.sigma_absolute
    out, stage = _search(problem, x0, (lo, hi), (b_lo, b_hi), scale_covar,
                         np.array([n not in guesses for n in free]))
    return Searched(problem, measurement, out, (b_lo, b_hi), scale_covar, stage, frozenset(bounds))


@dataclass(frozen=True)
class Searched:
    """A finished search, not yet judged: what :func:`judge` needs (internal coordinates)."""

    problem: FitProblem
    measurement: Measurement
    out: LocalFit
    bounds: tuple[np.ndarray, np.ndarray]
    scale_covar: bool
    stage: str
    user_bounded: frozenset[str]
    noise: NoiseModel | None = None

    @property
    def chi_square(self) -> float:
        return self.out.chisqr


def judge(searched: Searched, intervals: str = "flagged") -> FitResult:
    """Judge a finished search: SI values, errors, profile intervals as ``intervals`` says, flags."""
    s, (b_lo, b_hi) = searched, searched.bounds
    problem = s.problem
    result = assess(problem, s.measurement, s.out, s.bounds, s.scale_covar, s.stage, intervals=intervals,
                    user_bounded=s.user_bounded,
                    refit=lambda x: local_fit(problem, x, b_lo, b_hi, s.scale_covar))
    if s.noise is not None:
        result = replace(result, noise_model=s.noise.words())
    extra = list(problem.circuit.notes)
    ratio = far_above_scatter(problem, result.chi_square, _scatter(problem))
    if ratio is not None:
        extra.append(f"{SCATTER_FLAG}: the residuals are {ratio:.0f} times the point-to-point scatter of the "
                     "data; the fit may have stopped at a local minimum, or the model misses part of the "
                     "response, and the uncertainties shown do not cover that")
    return replace(result, flags=result.flags + tuple(extra)) if extra else result


def _scatter(problem: FitProblem) -> float | None:
    """Point-to-point scatter of the weighted data (see :mod:`fitz_tool.fitting.scatter`)."""
    return scatter_sigma(np.log(np.abs(problem.impedance)) * problem.weight_lnmag,
                         np.unwrap(np.angle(problem.impedance)) * problem.weight_phase)


def far_above_scatter(problem: FitProblem, chi_square: float, scatter: float | None) -> float | None:
    """Residual RMS / data scatter when it exceeds FAR_ABOVE_SCATTER (the fit misses the data), else None."""
    if scatter is None:
        return None
    rms = float(np.sqrt(chi_square / (2 * problem.frequency.size)))
    floor = 1e-7 * float(np.median(np.concatenate([problem.weight_lnmag, problem.weight_phase])))
    ratio = rms / max(scatter, floor)
    return ratio if ratio > FAR_ABOVE_SCATTER else None


def _converged_well(problem: FitProblem, out: LocalFit, scatter: float | None) -> bool:
    """Accept a fit when it succeeded, its residuals look like noise and stay near the data's scatter."""
    if not out.success:
        return False
    m = problem.frequency.size
    return (residual_structure(out.residual[:m], out.residual[m:]) is None
            and far_above_scatter(problem, out.chisqr, scatter) is None)


def _search(problem: FitProblem, x0: np.ndarray, box: tuple[np.ndarray, np.ndarray],
            bounds: tuple[np.ndarray, np.ndarray], scale_covar: bool, scan: np.ndarray):
    """The best local fit found from the seed and the global stages, and a sentence on how it was reached.

    A sweep of more than ``SEARCH_POINTS`` points is searched on a decimated copy (evenly spaced points plus
    every point beside a resonance, :func:`fitz_tool.fitting.problem.decimated`); the winner is then
    polished on every point, so the work of the search does not grow with the file.
    """
    coarse = decimated(problem, SEARCH_POINTS)
    out, stage = _stages(coarse, x0, box, bounds, scale_covar, scan)
    if coarse is problem:
        return out, stage
    return (local_fit(problem, out.x, bounds[0], bounds[1], scale_covar),
            f"{stage}, searched on {coarse.frequency.size} of {problem.frequency.size} points and polished "
            "on all")


def _stages(problem: FitProblem, x0: np.ndarray, box: tuple[np.ndarray, np.ndarray],
            bounds: tuple[np.ndarray, np.ndarray], scale_covar: bool, scan: np.ndarray):
    """The fit from the seed, then cheaper-first global stages until the residuals look like noise.

    Stages: the seeded local fit; coordinate scans of the parameters without a user guess; starting points at
    every resonance the data show (:mod:`fitz_tool.fitting.resonances`); a Sobol global search.
    """
    (lo, hi), (b_lo, b_hi) = box, bounds
    scatter = _scatter(problem)

    def local(x):
        return local_fit(problem, x, b_lo, b_hi, scale_covar)

    out, stage = local(x0), "from the data-derived seed"
    if _converged_well(problem, out, scatter):
        return out, stage
    if scan.any():
        x = x0.copy()
        x[scan] = refine_by_scans(_Subproblem(problem, x0, scan), x0[scan], lo[scan], hi[scan])
        trial = local(x)
        if trial.chisqr < out.chisqr:
            out, stage = trial, "from the data-derived seed refined by parameter scans"
        if _converged_well(problem, out, scatter):
            return out, stage
    intervals = resonance_intervals(problem.frequency, problem.impedance)
    if intervals:
        candidates = np.vstack([resonance_starts(problem, base, intervals) for base in (x0, out.x)])
        for x in _best_distinct(problem, candidates, RESONANCE_POLISH):
            trial = local(x)
            if trial.chisqr < out.chisqr * (1 - 1e-9):
                out, stage = trial, "from starting points at the resonances seen in the data"
        if _converged_well(problem, out, scatter):
            return out, stage
    x_global = global_search(problem, lo, hi, b_lo, b_hi, starts=[x0, out.x])
    trial = local(x_global)
    if trial.chisqr < out.chisqr * (1 - 1e-9):
        return trial, "after a global search (the seeded fit left residuals above the noise)"
    return out, f"{stage} (a global search found nothing better)"


def _best_distinct(problem: FitProblem, candidates: np.ndarray, count: int) -> list[np.ndarray]:
    """The ``count`` lowest-cost candidates that differ from each other by more than 0.01 decade."""
    cost = problem.batch_cost(candidates)
    chosen: list[np.ndarray] = []
    for j in np.argsort(cost):
        if len(chosen) >= count or not np.isfinite(cost[j]):
            break
        if all(np.max(np.abs(candidates[j] - c)) > 0.01 for c in chosen):
            chosen.append(candidates[j])
    return chosen


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
