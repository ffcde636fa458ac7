"""Profile-likelihood intervals for parameters where the first-order (linear) standard error is not trusted.

For parameter ``i`` the profile is ``chi2_p(t) = min over the other parameters of chi2`` with parameter
``i`` held at ``t`` (internal coordinate: log10 of the SI value, or the exponent n itself). The 68 %
interval is the set where ``chi2_p(t) - chi2_min <= scale``, ``scale`` being the reduced chi-square when
the noise level is estimated from the residuals and 1 when the sigmas are absolute (the same scale as the
covariance). For a model linear in its parameters this reproduces +/- the standard error exactly; for a
nonlinear one it follows the likelihood where the linear approximation fails: asymmetric intervals, an
interval that reaches a physical limit (a resistance consistent with 0), a likelihood that is flat to a
bound. Method: profile likelihood confidence intervals (Venzon and Moolgavkar, Appl. Statist. 37 (1988)
87; Bates and Watts, "Nonlinear Regression Analysis and Its Applications", Wiley 1988, ch. 6; from memory).

Each edge is found by stepping away from the estimate (doubling steps up to ``MAX_STEP``, each inner fit
started from the optimum of the nearest profile point, and a point above the threshold checked again from
the fit's own optimum) until the profile rises above the threshold or the parameter reaches its bound, then
by Brent's root finding on the bracket. An edge that reaches the bound is *open*: the data do not limit the
parameter on that side.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from scipy.optimize import brentq, least_squares

from ..units import format_quantity, format_to_resolution

__all__ = ["Profiled", "ProfileInterval", "profile_interval", "interval_in_si", "judge_interval",
           "DEFAULT_STEP", "SYMMETRY_LIMIT", "UNDETERMINED_LIMIT", "APPROXIMATE_LIMIT"]

#: Relative standard error above which a parameter counts as not determined by the data.
UNDETERMINED_LIMIT = 1.0
#: Relative first-order standard error above which the linear approximation is not trusted.
APPROXIMATE_LIMIT = 0.3
#: Largest ratio of the two half-widths of a profile interval still reported as a symmetric stderr.
SYMMETRY_LIMIT = 1.25
#: First step (internal units: decades, or n) when no usable first-order standard error is known.
DEFAULT_STEP = 0.05
#: Largest step (internal units), so that each inner fit starts close to the previous optimum.
MAX_STEP = 0.5
#: Relative accuracy of an interval edge (of its distance from the estimate).
EDGE_TOLERANCE = 1e-3


class Profiled(Protocol):
    """What the profile needs from a fit problem (internal coordinates)."""

    def residual(self, x: np.ndarray) -> np.ndarray: ...

    def jacobian(self, x: np.ndarray) -> np.ndarray: ...


@dataclass(frozen=True)
class ProfileInterval:
    """A profile-likelihood interval in internal coordinates.

    ``low`` / ``high`` are the edges; ``open_low`` / ``open_high`` are True when the profile stays below
    the threshold up to the bound (the edge is then the bound itself). ``better_chi_square`` is the lowest
    chi-square met on the way when it is below the fit's (the fit stopped short of the optimum), else None;
    ``better_point`` is where it was met (internal coordinates of all parameters).
    """

    low: float
    high: float
    open_low: bool
    open_high: bool
    evaluations: int
    better_chi_square: float | None = None
    better_point: np.ndarray | None = None


class _Profile:
    """chi2 with coordinate ``index`` held at ``t``, minimised over the others (warm-started)."""

    def __init__(self, problem: Profiled, x_hat: np.ndarray, index: int, b_lo: np.ndarray,
                 b_hi: np.ndarray, on_fit: Callable[[], object] | None = None) -> None:
        self.problem, self.index, self.on_fit = problem, index, on_fit
        self.others = np.arange(x_hat.size) != index
        span = b_hi - b_lo
        self.lo, self.hi = b_lo[self.others] + 1e-9 * span[self.others], b_hi[self.others] - 1e-9 * span[
            self.others]
        self.start = x_hat[self.others].copy()
        self.x_hat = x_hat
        self.lowest, self.lowest_at = np.inf, x_hat
        self.evaluations = 0
        self.memory: list[tuple[float, np.ndarray]] = [(float(x_hat[index]), self.start.copy())]

    def _full(self, y: np.ndarray, t: float) -> np.ndarray:
        x = self.x_hat.copy()
        x[self.others] = y
        x[self.index] = t
        return x

    def _inner(self, t: float, start: np.ndarray) -> tuple[np.ndarray, float]:
        self.evaluations += 1
        if self.on_fit is not None:
            self.on_fit()
        out = least_squares(lambda y: self.problem.residual(self._full(y, t)),
                            np.clip(start, self.lo, self.hi),
                            jac=lambda y: self.problem.jacobian(self._full(y, t))[:, self.others],
                            bounds=(self.lo, self.hi), method="trf", x_scale="jac")
        return out.x, 2.0 * float(out.cost)

    def chi2(self, t: float, threshold: float) -> float:
        """Profile chi-square at ``t``; a value above ``threshold`` is checked from a second start."""
        if not self.others.any():
            self.evaluations += 1
            y = self.start
            value = float(np.sum(self.problem.residual(self._full(y, t)) ** 2))
        else:
            # warm start from the inner optimum of the nearest profile point already evaluated
            y, value = self._inner(t, min(self.memory, key=lambda item: abs(item[0] - t))[1])
            if value > threshold:
                y2, value2 = self._inner(t, self.start)
                if value2 < value:
                    y, value = y2, value2
            self.memory.append((t, y))
        if value < self.lowest:
            self.lowest, self.lowest_at = value, self._full(y, t)
        return value


def _edge(profile: _Profile, x0: float, direction: float, bound: float, step: float, chi2_min: float,
          threshold: float) -> tuple[float, bool]:
    """Edge of the interval on one side: (edge, open)."""

    def excess(t: float) -> float:
        return profile.chi2(t, chi2_min + threshold) - chi2_min - threshold

    inner, reach = x0, abs(bound - x0)
    if reach <= 0:
        return bound, True
    offset = min(step, reach)  # distance from the estimate
    while True:
        t = x0 + direction * offset
        g = excess(t)
        if g >= 0:
            a, b = sorted((inner, t))  # excess(inner) < 0 (at the estimate: -threshold)
            return float(brentq(excess, a, b, xtol=max(EDGE_TOLERANCE * abs(t - x0), 1e-12))), False
        if offset >= reach:
            return bound, True
        inner, offset = t, min(offset + min(offset, MAX_STEP), reach)  # doubling, then steps of MAX_STEP


def profile_interval(problem: Profiled, x_hat: np.ndarray, index: int, bounds: tuple[np.ndarray, np.ndarray],
                     chi2_min: float, threshold: float, step: float | None = None,
                     on_fit: Callable[[], object] | None = None) -> ProfileInterval:
    """Profile-likelihood interval of coordinate ``index`` where ``chi2_p - chi2_min <= threshold``.

    Parameters
    ----------
    problem : Profiled
        Residual and Jacobian in internal coordinates.
    x_hat : numpy.ndarray
        The fitted internal coordinates (log10 of SI values, or exponents).
    index : int
        Which coordinate to profile.
    bounds : tuple of numpy.ndarray
        Hard lower and upper bounds of all coordinates (internal units).
    chi2_min : float
        Chi-square at ``x_hat`` (dimensionless).
    threshold : float
        Rise of chi-square that marks the edge: the reduced chi-square for a 68 % interval with the noise
        level estimated from the residuals, 1 with absolute sigmas (times 4 for 2 sigma, 25 for 5 sigma).
    step : float, optional
        First step from the estimate (internal units), e.g. the first-order standard error; default
        ``DEFAULT_STEP``.
    on_fit : callable, optional
        Called with no argument as each inner fit starts (e.g. a progress bar's ``update``).

    Returns
    -------
    ProfileInterval
        Edges in internal coordinates and whether each reached the bound.
    """
    x_hat = np.asarray(x_hat, dtype=float)
    b_lo, b_hi = (np.asarray(b, dtype=float) for b in bounds)
    profile = _Profile(problem, x_hat, index, b_lo, b_hi, on_fit)
    if step is None or not np.isfinite(step) or step <= 0:
        step = DEFAULT_STEP
    step = min(max(step, 1e-8), MAX_STEP)
    x0 = float(x_hat[index])
    low, open_low = _edge(profile, x0, -1.0, float(b_lo[index]), step, chi2_min, threshold)
    high, open_high = _edge(profile, x0, +1.0, float(b_hi[index]), step, chi2_min, threshold)
    if profile.lowest < chi2_min * (1 - 1e-6):
        return ProfileInterval(low, high, open_low, open_high, profile.evaluations, profile.lowest,
                               profile.lowest_at)
    return ProfileInterval(low, high, open_low, open_high, profile.evaluations)


def interval_in_si(interval: ProfileInterval, exponent: bool, user_bounded: bool) -> tuple[float, float]:
    """Interval edges in SI units; an open edge at a default bound of a log-scaled value is 0 or infinity."""
    def si(t: float) -> float:
        return float(t) if exponent else float(10.0**t)
    low = 0.0 if interval.open_low and not (exponent or user_bounded) else si(interval.low)
    high = math.inf if interval.open_high and not (exponent or user_bounded) else si(interval.high)
    return low, high


def judge_interval(name: str, value: float, unit: str, edges: tuple[float, float], interval: ProfileInterval,
           f_text: str) -> tuple[float | None, str, str]:
    """(stderr or None, stderr_note, flag) of a profiled parameter with SI ``value`` and ``edges``.

    Open edge: no stderr, "not determined". Closed and symmetric within ``SYMMETRY_LIMIT``: stderr is half
    the width (flagged above ``APPROXIMATE_LIMIT`` / ``UNDETERMINED_LIMIT`` of the value). Closed and
    asymmetric: no stderr, the interval in words.
    """
    low, high = edges
    fmt = lambda v: format_quantity(v, unit)  # noqa: E731
    if interval.open_low or interval.open_high:
        if interval.open_low and interval.open_high:
            text = f"any value from {fmt(low)} to {fmt(high)} fits"
        elif interval.open_low:
            text = f"consistent with {'0' if low == 0 else fmt(low)} up to {fmt(high)}"
        else:
            text = f"at least {fmt(low)}" + ("" if math.isinf(high) else f" (up to the bound {fmt(high)})")
        return None, f"not determined: {text} (68 % profile likelihood)", (
            f"{name} is not determined by the data: {text} (68 % profile-likelihood interval); its effect is "
            f"too small within {f_text} or taken over by other parameters; fix it or use a simpler model")
    down, up = value - low, high - value
    resolution = min([d for d in (down, up) if d > 0], default=0.5 * (high - low))
    ends = [format_to_resolution(v, unit, resolution) for v in (low, high)]  # digits the width supports
    width = f"{ends[0]} - {ends[1]}"
    if min(up, down) > 0 and max(up, down) <= SYMMETRY_LIMIT * min(up, down):
        stderr = 0.5 * (high - low)
        if stderr > UNDETERMINED_LIMIT * abs(value):
            return stderr, "", (f"{name} is not determined by the data (68 % profile-likelihood interval "
                                f"{width}, {stderr / abs(value):.0%} of its value): its effect is too small "
                                f"within {f_text}; fix it or use a simpler model")
        if stderr > APPROXIMATE_LIMIT * abs(value):
            return stderr, "", (f"{name} is poorly determined (standard error {stderr / abs(value):.0%} of "
                                f"its value, from the 68 % profile-likelihood interval {width})")
        return stderr, "", ""
    what = "not determined" if high - low > 2 * UNDETERMINED_LIMIT * abs(value) else "poorly determined"
    rel = f"-{down / abs(value):.0%} / +{up / abs(value):.0%}" if value else ""
    return None, f"asymmetric uncertainty: 68 % interval {width} (profile likelihood)", (
        f"{name} is {what}: its 68 % profile-likelihood interval {width} is asymmetric about the estimate "
        f"({rel}), so no symmetric standard error is given")
