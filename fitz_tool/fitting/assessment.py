"""Judging a finished fit: values and uncertainties in SI, correlations, quality measures, flags in words.

The local fit works in internal coordinates (log10 of the SI value, or a constant phase element's exponent
n itself); :func:`assess` converts its result to SI (``ParameterEstimate``, covariance, correlated
``uncertainties`` values), says where a standard error is missing and why, and flags a parameter at a
bound, a parameter the data do not determine, correlations near 1, and residuals with systematic structure.

Honest uncertainties: the first-order standard error (from the Jacobian at the optimum) is trusted only
where the linear approximation holds. A parameter at a bound, without a first-order error, with a relative
error above ``APPROXIMATE_LIMIT``, an exponent within ``NEAR_BOUND_ERRORS`` errors of its bound, or a
correlation above ``CORRELATION_LIMIT`` with a relative error above ``LINEAR_LIMIT`` (below it the model is
linear to a part in 10^4 over +/- one error, however correlated, so first order holds; common practice, no
source) gets a 68 % profile-likelihood interval instead (see
:mod:`fitz_tool.profile`). Its ``stderr`` is then half the interval's width when the interval is symmetric
within ``SYMMETRY_LIMIT``, and None otherwise, with the interval in ``ParameterEstimate.interval`` and the
reason in ``stderr_note``; such a parameter leaves the covariance (and ``uvars``), so that propagation to
design values says what it leaves out rather than using a first-order error that does not hold.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from uncertainties import correlated_values, covariance_matrix

from ..measurement import Measurement
from ..progress import bar as progress_bar
from ..results import FitResult, ParameterEstimate
from ..units import format_quantity, format_to_resolution
from .local import AT_BOUND_TOLERANCE
from .profile import (
    APPROXIMATE_LIMIT,
    SYMMETRY_LIMIT,
    UNDETERMINED_LIMIT,
    interval_in_si,
    judge_interval,
    profile_interval,
)

if TYPE_CHECKING:
    from ..circuit import Circuit
    from .local import LocalFit
    from .problem import FitProblem

__all__ = ["assess", "residual_structure", "weighting_description", "CORRELATION_LIMIT", "LINEAR_LIMIT",
           "UNDETERMINED_LIMIT", "APPROXIMATE_LIMIT", "AT_BOUND_TOLERANCE", "SYMMETRY_LIMIT",
           "NEAR_BOUND_ERRORS", "INTERVAL_MODES"]

#: |correlation| above which a pair is flagged (and both get a profile interval unless well determined).
CORRELATION_LIMIT = 0.99
#: Relative standard error below which a correlated parameter keeps its first-order error.
LINEAR_LIMIT = 1e-3
#: Distance (internal units: decades, or n) from a bound that counts as sitting on it.
#: An exponent within this many first-order errors of its bound gets a profile interval.
NEAR_BOUND_ERRORS = 3.0
#: Which parameters get a profile interval: those flagged above, every free one, or none.
INTERVAL_MODES = ("flagged", "all", "none")


def weighting_description(m: Measurement) -> str:
    """How the residuals were weighted, in words (for the result)."""
    if m.sigma_lnmag is None and m.sigma_phase is None:
        return ("proportional: equal weights on ln|Z| and phase (rad), noise level estimated from the "
                "residuals")
    kind = "absolute (covariance not rescaled)" if m.sigma_absolute else \
        "relative (noise level estimated from the residuals)"
    return f"per-point sigmas of ln|Z| and phase, {kind}"


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


def _first_order(out: LocalFit, circuit: Circuit, free: tuple[str, ...],
                 skip: set[str]) -> tuple[dict, dict[str, float]]:
    """SI ``uncertainties`` values and internal-coordinate standard errors of the fit (first order)."""
    uvars_internal = out.uvars
    uvars, se_internal = {}, {}
    for i, name in enumerate(free):
        stderr = out.stderr[i]
        if name in skip or f"p{i}" not in uvars_internal or stderr is None or not np.isfinite(stderr):
            continue
        u = uvars_internal[f"p{i}"]
        uvars[name] = u if circuit.parameter_is_exponent(name) else 10.0**u
        se_internal[name] = float(stderr)
    return uvars, se_internal


def _needs_profile(name: str, i: int, x: np.ndarray, bounds: tuple[np.ndarray, np.ndarray], exponent: bool,
                   se_internal: dict[str, float], uvars: dict, at_bound: dict, correlated: set[str]) -> bool:
    """Whether the first-order error of ``name`` is not trustworthy (module docstring)."""
    if name in at_bound or name not in uvars:
        return True
    value, stderr = uvars[name].nominal_value, uvars[name].std_dev
    if name in correlated and stderr > LINEAR_LIMIT * abs(value):
        return True
    if stderr > APPROXIMATE_LIMIT * abs(value):
        return True
    distance = min(x[i] - bounds[0][i], bounds[1][i] - x[i])
    return exponent and distance < NEAR_BOUND_ERRORS * se_internal[name]


@dataclass(frozen=True)
class _Context:
    """What judging one free parameter needs (internal coordinates, first-order errors, the fit)."""

    problem: FitProblem
    x: np.ndarray
    bounds: tuple[np.ndarray, np.ndarray]
    chi2: float
    threshold: float | None  # chi-square rise of a 68 % interval; None: no noise level, no profile
    uvars: dict
    se_internal: dict[str, float]
    at_bound: dict[str, str]
    correlated: set[str]
    note: str
    f_text: str
    intervals: str
    user_bounded: frozenset[str]
    scale_covar: bool
    better: list[tuple[float, np.ndarray]]  # (chi-square, internal point) met by a profile below the fit's


def _first_order_flag(name: str, value: float, stderr: float | None, f_text: str) -> str:
    if stderr is not None and stderr > UNDETERMINED_LIMIT * abs(value):
        return (f"{name} is not determined by the data (standard error {stderr / abs(value):.0%} of its "
                f"value): its effect is too small within {f_text}, e.g. a resonance or corner outside the "
                "sweep; fix it or use a simpler model")
    if stderr is not None and stderr > APPROXIMATE_LIMIT * abs(value):
        return (f"{name} is poorly determined (standard error {stderr / abs(value):.0%} of its value): the "
                "first-order error is only approximate and the true interval is asymmetric")
    return ""


def _estimate(c: _Context, i: int, name: str, value: float) -> tuple[ParameterEstimate, list[str]]:
    """The estimate of free parameter ``name`` (index ``i``) with its honest uncertainty, and its flags."""
    circuit = c.problem.circuit
    unit, exponent = circuit.parameter_unit(name), circuit.parameter_is_exponent(name)
    stderr = float(c.uvars[name].std_dev) if name in c.uvars else None
    why = "" if stderr is not None else c.note if name not in c.at_bound or c.threshold is None else \
        f"at the {c.at_bound[name]} bound: no standard error there"
    flag, flags = _first_order_flag(name, value, stderr, c.f_text), []
    edges, interval_note = None, ""
    wanted = c.intervals == "all" or (c.intervals == "flagged" and _needs_profile(
        name, i, c.x, c.bounds, exponent, c.se_internal, c.uvars, c.at_bound, c.correlated))
    if wanted and c.threshold is not None:
        try:
            with progress_bar(f"interval of {name}", None, " fits") as bar:
                profiled = profile_interval(c.problem, c.x, i, c.bounds, c.chi2, c.threshold,
                                            c.se_internal.get(name), on_fit=bar.update)
        except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
            interval_note = f"profile likelihood failed: {exc}"
        else:
            edges = interval_in_si(profiled, exponent, name in c.user_bounded)
            stderr, why, flag = judge_interval(name, value, unit, edges, profiled, c.f_text)
            rise = "the reduced chi-square" if c.scale_covar else "1"
            interval_note = (f"68 % profile-likelihood interval (chi-square rise of {rise}, "
                             f"{profiled.evaluations} profile fits)")
            if profiled.better_chi_square is not None:
                c.better.append((profiled.better_chi_square, profiled.better_point))
                flags.append(f"the profile of {name} met a lower chi-square "
                             f"({profiled.better_chi_square:.6g} < {c.chi2:.6g}): the fit stopped short "
                             "of the optimum; try guesses")
    if name in c.at_bound:
        side = c.at_bound[name]
        where = f"{name} sits at its {side} bound ({format_quantity(value, unit)})"
        if name in c.user_bounded:
            inside = "" if edges is None else (f" (68 % profile-likelihood interval within the bounds: "
                                               f"{format_quantity(edges[0], unit)} - "
                                               f"{format_quantity(edges[1], unit)})")
            flag = f"{where}: the data push it against the bound you gave{inside}; widen the bound"
            stderr, why = None, f"at the {side} bound you gave: no standard error there"
        elif edges is not None:
            # a closed, symmetric interval leaves ``why`` empty (the stderr stands): name the interval instead
            half = (edges[1] - edges[0]) / 2
            detail = why or ("68 % profile-likelihood interval "
                             + " - ".join(format_to_resolution(v, unit, half) for v in edges))
            flag = f"{where}: {detail}; fix it or use a simpler model"
            why = f"at the {side} bound, {why}" if why else ""
        else:
            flag = (f"{where}: the data do not hold it inside the allowed range; fix it, bound it, or "
                    "widen the sweep")
    if flag:
        flags.insert(0, flag)
    return ParameterEstimate(name, value, stderr, unit, at_bound=c.at_bound.get(name), stderr_note=why,
                             interval=edges, interval_note=interval_note), flags


def _correlations(uvars: dict, names: list[str]) -> tuple[np.ndarray | None, np.ndarray | None]:
    """SI covariance and correlation matrices of ``uvars`` (ordered as ``names``), or None."""
    if not names:
        return None, None
    covariance = np.array(covariance_matrix([uvars[n] for n in names]), dtype=float)
    sd = np.sqrt(np.diag(covariance))
    with np.errstate(all="ignore"):
        return covariance, covariance / np.outer(sd, sd)


def assess(problem: FitProblem, m: Measurement, out: LocalFit,
           hard_bounds: tuple[np.ndarray, np.ndarray], scale_covar: bool, stage: str, *,
           intervals: str = "flagged", user_bounded: frozenset[str] = frozenset(),
           refit: Callable[[np.ndarray], LocalFit] | None = None) -> FitResult:
    """Turn a local fit (internal coordinates) into a :class:`FitResult` in SI with honest uncertainties.

    Parameters
    ----------
    problem : FitProblem
        The fitted residual (internal coordinates).
    m : Measurement
        The measurement fitted.
    out : LocalFit
        The local fit's result (parameters ``p0, p1, ...`` in internal coordinates).
    hard_bounds : tuple of numpy.ndarray
        Lower and upper bounds of the internal coordinates.
    scale_covar : bool
        Whether the covariance is rescaled by the reduced chi-square (noise level from the residuals).
    stage : str
        How the fit was reached, in words (goes into the message).
    intervals : {"flagged", "all", "none"}
        Which free parameters get a profile-likelihood interval.
    user_bounded : frozenset of str
        Names whose bounds the user gave (an open interval edge is then the bound, not 0 or infinity).
    refit : callable, optional
        Local fit from an internal point. When a profile meets a lower chi-square than the fit's (the fit
        stopped in a poorer basin), the fit is repeated from there once and that result is assessed instead.
    """
    circuit, free = problem.circuit, problem.free
    x = out.x
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

    no_noise_level = scale_covar and dof <= 0
    uvars, se_internal = _first_order(out, circuit, free, set(free) if no_noise_level else set(at_bound))
    with_errors = [n for n in free if n in uvars]
    if no_noise_level:
        note = "no degrees of freedom left to estimate the noise level"
    elif not out.errorbars:
        note = ("covariance could not be computed: the Jacobian is singular at the optimum, so the data "
                "do not separate every parameter")
    else:
        note = "covariance could not be computed for this parameter"
    if len(with_errors) < len(free) - len(at_bound):
        flags.append(f"standard errors missing: {note}")
    covariance, correlation = _correlations(uvars, with_errors)
    correlated, correlation_flags = set(), []
    for i, j in zip(*np.triu_indices(len(with_errors), 1), strict=True):
        if abs(correlation[i, j]) > CORRELATION_LIMIT:
            correlated |= {with_errors[i], with_errors[j]}
            correlation_flags.append(f"{with_errors[i]} and {with_errors[j]} are correlated "
                                     f"({correlation[i, j]:+.3f}): the data fix mainly a combination of "
                                     "the two")

    context = _Context(problem, x, hard_bounds, chi2, None if no_noise_level else chi2 / dof if scale_covar
                       else 1.0, uvars, se_internal, at_bound, correlated, note,
                       f"{format_quantity(m.frequency[0], 'Hz')} - {format_quantity(m.frequency[-1], 'Hz')}",
                       intervals, user_bounded, scale_covar, [])
    parameters: dict[str, ParameterEstimate] = {}
    for name in circuit.parameter_names:
        if name in problem.fixed:
            parameters[name] = ParameterEstimate(name, float(problem.fixed[name]), None,
                                                 circuit.parameter_unit(name), vary=False,
                                                 stderr_note="fixed by user")
            continue
        parameters[name], found = _estimate(context, free.index(name), name, float(values[name]))
        flags += found
    if context.better and refit is not None:
        trial = refit(min(context.better, key=lambda item: item[0])[1])
        if trial.chisqr < chi2 * (1 - 1e-9):
            stage = f"{stage}; re-fitted from a better point met by the profile likelihood"
            return assess(problem, m, trial, hard_bounds, scale_covar, stage, intervals=intervals,
                          user_bounded=user_bounded)

    # Parameters whose first-order error was replaced keep their correlations with a rescaled variance;
    # those left without a standard error leave the covariance and the uvars.
    kept = [n for n in with_errors if parameters[n].stderr is not None]
    scale = np.array([parameters[n].stderr / uvars[n].std_dev for n in kept])
    if kept != with_errors or not np.all(scale == 1.0):
        index = [with_errors.index(n) for n in kept]
        covariance = covariance[np.ix_(index, index)] * np.outer(scale, scale) if kept else None
        correlation = correlation[np.ix_(index, index)] if kept else None
        nominal = [uvars[n].nominal_value for n in kept]
        uvars = dict(zip(kept, correlated_values(nominal, covariance), strict=True)) if kept else {}
        with_errors = kept
    flags += correlation_flags
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
        weighting=weighting_description(m), uvars=uvars or None)
