"""One local fit: Levenberg-Marquardt with the exact Jacobian, then a bounded trust-region method if needed.

scipy's ``least_squares`` runs MINPACK's Levenberg-Marquardt (``method="lm"``, unbounded) first; when it
stops outside or near the hard bounds, or does not converge within its budget, the bounded trust-region
reflective method (``method="trf"``) continues from the better point. The covariance of the internal
coordinates is the inverse of J^T J at the optimum (Gauss-Newton, common practice), scaled by the reduced
chi-square when the noise level is estimated from the residuals; a coordinate within ``AT_BOUND_TOLERANCE``
of a hard bound is held there (its column is left out), so the others' errors are conditional on that bound.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from .problem import FitProblem

__all__ = ["LocalFit", "local_fit", "AT_BOUND_TOLERANCE"]

#: Distance (internal coordinates) from a hard bound within which a coordinate counts as at that bound.
AT_BOUND_TOLERANCE = 1e-3
#: Singular values of J below this fraction of the largest mark directions the data do not determine.
_SINGULAR = 1e-10
#: Distance from the bounds below which the unbounded method's answer is handed to the bounded one.
_NEAR_BOUND = 0.05


@dataclass(frozen=True)
class LocalFit:
    """What a local fit found, in internal coordinates.

    ``chisqr`` is the sum of squared weighted residuals, ``residual`` the residual vector at ``x``;
    ``covariance`` (k x k, internal coordinates, NaN rows for coordinates without an error) is None with
    ``errorbars`` False when no coordinate has an error; ``stderr`` has NaN where none is available.
    """

    x: np.ndarray
    chisqr: float
    residual: np.ndarray
    success: bool
    message: str
    nfev: int
    covariance: np.ndarray | None
    stderr: np.ndarray
    errorbars: bool

    @property
    def uvars(self) -> dict:
        """Correlated ``uncertainties`` values of the coordinates, keyed ``p0, p1, ...`` (empty without
        error bars; coordinates without a finite error are left out)."""
        if not self.errorbars or self.covariance is None:
            return {}
        from uncertainties import correlated_values

        ok = np.flatnonzero(np.isfinite(self.stderr))
        values = correlated_values(self.x[ok], self.covariance[np.ix_(ok, ok)])
        return {f"p{i}": v for i, v in zip(ok, values, strict=True)}


def _covariance(problem: FitProblem, x: np.ndarray, chisqr: float, bounds, scale: bool):
    """Covariance (internal coordinates) from the singular value decomposition of J: the inverse of J^T J
    over the directions the data determine. A coordinate with a share in a direction the data do not
    determine (singular value below ``_SINGULAR`` of the largest) gets no error (NaN), nor does one at a
    bound; the others keep theirs."""
    k = x.size
    stderr = np.full(k, np.nan)
    covariance = np.full((k, k), np.nan)
    free = np.flatnonzero(np.minimum(x - bounds[0], bounds[1] - x) >= AT_BOUND_TOLERANCE)
    if not free.size:
        return None, stderr, False
    with np.errstate(all="ignore"):
        jac = problem.jacobian(x)[:, free]
        if not np.all(np.isfinite(jac)):
            return None, stderr, False
        _, s, vt = np.linalg.svd(jac, full_matrices=False)
    kept = s > _SINGULAR * s.max() if s.size and s.max() > 0 else np.zeros(s.size, dtype=bool)
    null = vt[~kept]
    determined = np.all(np.abs(null) < 1e-6, axis=0) if null.size else np.ones(free.size, dtype=bool)
    inner = (vt[kept].T / s[kept] ** 2) @ vt[kept]
    dof = problem.residual(x).size - k
    if scale:
        inner = inner * (chisqr / dof if dof > 0 else np.nan)
    use = free[determined]
    covariance[np.ix_(use, use)] = inner[np.ix_(determined, determined)]
    diagonal = np.diag(covariance)[use]
    good = np.isfinite(diagonal) & (diagonal > 0)
    stderr[use[good]] = np.sqrt(diagonal[good])
    ok = bool(np.isfinite(stderr).any())
    return (covariance if ok else None), stderr, ok


def _run(problem: FitProblem, start: np.ndarray, bounds, method: str, max_nfev: int):
    kwargs = {"bounds": bounds} if method == "trf" else {}
    with np.errstate(all="ignore"):
        return least_squares(problem.residual, start, jac=problem.jacobian, method=method,
                             max_nfev=max_nfev, x_scale=1.0, **kwargs)


def local_fit(problem: FitProblem, x0: np.ndarray, b_lo: np.ndarray, b_hi: np.ndarray,
              scale_covar: bool) -> LocalFit:
    """One local fit from ``x0`` inside the hard bounds ``[b_lo, b_hi]`` (internal coordinates)."""
    span = b_hi - b_lo
    start = np.clip(np.asarray(x0, dtype=float), b_lo + 1e-6 * span, b_hi - 1e-6 * span)
    budget = 100 * (start.size + 1)
    out = _run(problem, start, (b_lo, b_hi), "lm", budget)
    inside = np.all(np.minimum(out.x - b_lo, b_hi - out.x) > _NEAR_BOUND)
    nfev = int(out.nfev)
    if not (out.success and inside and np.all(np.isfinite(out.x))):
        restart = np.clip(out.x, b_lo + 1e-6 * span, b_hi - 1e-6 * span) if np.all(np.isfinite(out.x)) \
            else start
        trial = _run(problem, restart, (b_lo, b_hi), "trf", budget)
        nfev += int(trial.nfev)
        if not inside or not out.success or 2 * trial.cost <= 2 * out.cost:
            out = trial
    x = np.clip(out.x, b_lo, b_hi)
    residual = problem.residual(x)
    chisqr = float(residual @ residual)
    covariance, stderr, errorbars = _covariance(problem, x, chisqr, (b_lo, b_hi), scale_covar)
    return LocalFit(x, chisqr, residual, bool(out.success), str(out.message), nfev, covariance, stderr,
                    errorbars)
