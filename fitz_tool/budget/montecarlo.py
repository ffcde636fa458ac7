"""Monte Carlo check of a first-order budget (JCGM 101:2008, "GUM Supplement 1").

Each draw takes every type B input from its rectangular distribution (one value for the whole sweep),
applies the offsets to the measured data, and refits from the nominal solution (Levenberg-Marquardt on the
same weighted residual, exact Jacobian); the noise (type A) enters as a draw from the fit's covariance, as
a multivariate t-distribution with ``nu_A`` degrees of freedom when the noise level was estimated
(JCGM 101 6.4.9), a normal one when the stated sigmas were trusted. Design values are recomputed on every
drawn fit. Per value: standard deviation of the draws and the probabilistically symmetric 95.45 % coverage
interval (JCGM 101 7.7), and its width relative to the width of ``y +/- U``.

Agreement. JCGM 101 section 8 validates a first-order budget when the ends of ``y +/- U`` and of the Monte
Carlo interval differ by less than a numerical tolerance; with the few thousand draws a bench run affords,
the Monte Carlo's own scatter (relative standard deviation of a standard deviation about
``1 / sqrt(2 (M - 1))``) is the larger term, so ``u`` is said to agree when ``|u_MC / u_c - 1|`` is within
twice that scatter, or within 5 %, whichever is larger. The interval ends are compared in words (a
budget dominated by a rectangular input has a 95.45 % interval narrower than +/- 2 u_c).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np
from scipy.optimize import least_squares

from ..derived import design_values
from ..exceptions import InputError
from ..fitting.problem import FitProblem
from ..progress import bar as progress_bar
from ..results import FitResult
from ..units import format_to_resolution
from .combination import Budget, BudgetEntry, MonteCarloCheck, design_items, with_internal

__all__ = ["monte_carlo_check", "MIN_DRAWS"]

#: Fewest draws accepted.
MIN_DRAWS = 20


def _noise_draws(result: FitResult, problem: FitProblem, draws: int, rng: np.random.Generator
                 ) -> tuple[np.ndarray, bool]:
    """(draws, k) SI offsets of the free parameters from the fit's covariance; False when none."""
    k = len(problem.free)
    if result.covariance is None:
        return np.zeros((draws, k)), False
    names = list(result.correlation_names)
    index = [names.index(n) if n in names else -1 for n in problem.free]
    cov = np.asarray(result.covariance, dtype=float)
    if not np.all(np.isfinite(cov)):
        return np.zeros((draws, k)), False
    z = rng.multivariate_normal(np.zeros(len(names)), cov, size=draws, method="eigh")
    if not result.measurement.sigma_absolute and result.degrees_of_freedom > 0:
        nu = result.degrees_of_freedom
        z = z * np.sqrt(nu / rng.chisquare(nu, size=draws))[:, None]
    out = np.zeros((draws, k))
    for j, i in enumerate(index):
        if i >= 0:
            out[:, j] = z[:, i]
    return out, True


def _check(entry: BudgetEntry, samples: np.ndarray, draws: int) -> MonteCarloCheck | None:
    good = samples[np.isfinite(samples)]
    if good.size < max(MIN_DRAWS, 0.9 * draws) or entry.u_combined is None:
        return None
    u = float(np.std(good, ddof=1))
    low, high = (float(q) for q in np.quantile(good, [0.5 - 0.9545 / 2, 0.5 + 0.9545 / 2]))
    scatter = 1 / math.sqrt(2 * (good.size - 1))
    ratio = u / entry.u_combined if entry.u_combined > 0 else math.inf
    agrees = abs(ratio - 1) <= max(2 * scatter, 0.05)
    width = (high - low) / (2 * entry.expanded) if entry.expanded else math.inf
    def show(v: float) -> str:
        if entry.unit == "deg":
            return f"{format_to_resolution(v, '', u)} deg"
        return format_to_resolution(v, entry.unit, u)

    ends = (f"[{show(low)}, {show(high)}] against y +/- U = [{show(entry.value - entry.expanded)}, "
            f"{show(entry.value + entry.expanded)}]")
    note = (f"Monte Carlo ({good.size} draws): u = {ratio:.3f} x the first-order u_c "
            f"({'agrees' if agrees else 'DIFFERS'}; the draws' own scatter is about {scatter * 100:.0f} %); "
            f"its 95.45 % interval {ends}, {width:.2f} x the width")
    if agrees and abs(width - 1) > max(0.1, 2 * scatter):
        note += (" (narrower: a rectangular input dominates and k = 2 is conservative)" if width < 1 else
                 " (wider: the distribution has long tails; use the Monte Carlo interval)")
    if not agrees:
        note += "; the first-order budget is not adequate here, use the Monte Carlo figures"
    return MonteCarloCheck(int(good.size), u, low, high, bool(agrees), note, float(width))


def monte_carlo_check(budget: Budget, result: FitResult, problem: FitProblem, x0: np.ndarray,
                      at: Sequence[float], draws: int, seed: int | None = 0) -> Budget:
    """The budget with a Monte Carlo check attached to every entry (see the module docstring)."""
    if draws < MIN_DRAWS:
        raise InputError(f"Monte Carlo check with {draws} draws: use at least {MIN_DRAWS} (a few thousand "
                         "for a stable 95 % interval)")
    rng = np.random.default_rng(seed)
    m = result.measurement
    offsets = np.column_stack([rng.uniform(-s.limit, s.limit, draws) for s in budget.sources]) \
        if budget.sources else np.zeros((draws, 0))
    noise, _ = _noise_draws(result, problem, draws, rng)
    par: dict[str, list[float]] = {n: [] for n in budget.parameters}
    des: dict[str, list[float]] = {n: [] for n in budget.design}
    with progress_bar("Monte Carlo check", draws, "draw") as bar:
        for j in range(draws):
            bar.update()
            x = x0
            if budget.sources:
                shift = sum(s.shift(t) for s, t in zip(budget.sources, offsets[j], strict=True))
                drawn = dataclasses.replace(problem, impedance=m.impedance * np.exp(shift))
                with np.errstate(all="ignore"):
                    fitted = least_squares(drawn.residual, x0, jac=drawn.jacobian, method="lm", xtol=1e-12,
                                           ftol=1e-12)
                x = fitted.x if fitted.success else np.full_like(x0, np.nan)
            extra = {n: float(noise[j, i]) for i, n in enumerate(problem.free)}
            if not np.all(np.isfinite(x)):
                for store in (par, des):
                    for n in store:
                        store[n].append(math.nan)
                continue
            drawn_result = with_internal(result, problem, x, extra)
            for n in par:
                par[n].append(drawn_result.parameters[n].value)
            # a noise draw can take a parameter past 0 (a large standard error): no circuit, no design values
            physical = all(problem.exponent[i] or drawn_result.parameters[n].value > 0
                           for i, n in enumerate(problem.free))
            items = design_items(design_values(drawn_result, at)) if des and physical else {}
            for n in des:
                des[n].append(items[n].value if n in items else math.nan)

    def attach(entries: dict[str, BudgetEntry], store: dict[str, list[float]]) -> dict[str, BudgetEntry]:
        return {n: dataclasses.replace(e, monte_carlo=_check(e, np.array(store[n]), draws))
                for n, e in entries.items()}

    return dataclasses.replace(budget, parameters=attach(budget.parameters, par),
                               design=attach(budget.design, des), monte_carlo_draws=draws)
