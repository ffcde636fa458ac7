"""Judging a finished fit: values and standard errors in SI, correlations, quality measures, flags in words.

The local fit works in internal coordinates (log10 of the SI value, or a constant phase element's exponent
n itself); :func:`assess` converts its result to SI (``ParameterEstimate``, covariance, correlated
``uncertainties`` values), says where a standard error is missing and why, and flags a parameter at a
bound, a parameter the data do not determine, correlations near 1, and residuals with systematic structure.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import lmfit
import numpy as np
from uncertainties import covariance_matrix

from .measurement import Measurement
from .results import FitResult, ParameterEstimate
from .units import format_quantity

if TYPE_CHECKING:
    from .fitting import FitProblem

__all__ = ["assess", "residual_structure", "weighting_description", "CORRELATION_LIMIT", "UNDETERMINED_LIMIT",
           "APPROXIMATE_LIMIT", "AT_BOUND_TOLERANCE"]

def weighting_description(m: Measurement) -> str:
    """How the residuals were weighted, in words (for the result)."""
    if m.sigma_lnmag is None and m.sigma_phase is None:
        return ("proportional: equal weights on ln|Z| and phase (rad), noise level estimated from the "
                "residuals")
    kind = "absolute (covariance not rescaled)" if m.sigma_absolute else \
        "relative (noise level estimated from the residuals)"
    return f"per-point sigmas of ln|Z| and phase, {kind}"



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


def assess(problem: FitProblem, m: Measurement, out: lmfit.minimizer.MinimizerResult,
            hard_bounds: tuple[np.ndarray, np.ndarray], scale_covar: bool, stage: str) -> FitResult:
    circuit, free = problem.circuit, problem.free
    x = np.array([p.value for p in out.params.values()])
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
        weighting=weighting_description(m), uvars=uvars or None)
