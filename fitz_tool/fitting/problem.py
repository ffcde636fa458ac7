"""The fit problem: the weighted log-impedance residual of a circuit against a measurement.

Residual (complex nonlinear least squares on the log of Z, common practice): per point the real part
``ln|Z_model / Z_meas|`` divided by ``sigma_lnmag`` and the wrapped phase ``angle(Z_model / Z_meas)`` (rad)
divided by ``sigma_phase``, stacked ``[real..., imag...]``. Internal coordinates are log10 of the SI value,
or the value itself for a constant phase exponent; the exact Jacobian is
``d ln Z / d log10 p = ln(10) p (dZ/dp) / Z``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..circuit import Circuit
from ..measurement import Measurement
from .work import charge

__all__ = ["FitProblem", "problem_for", "decimated", "BATCH_ELEMENTS"]

_LN10 = float(np.log(10.0))
#: Largest number of complex values (candidates x points) a batch evaluation holds at once (bounds memory).
BATCH_ELEMENTS = 2_000_000


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
        charge(self.frequency.size)
        with np.errstate(all="ignore"):
            re, im = self._weighted(self.circuit.impedance(self.frequency, self.values(x)))
        return np.nan_to_num(np.concatenate([re, im]), nan=1e6, posinf=1e6, neginf=-1e6)

    def jacobian(self, x: np.ndarray) -> np.ndarray:
        """Exact Jacobian of :meth:`residual` with respect to the internal coordinates, shape (2M, k)."""
        charge(self.frequency.size * max(1, len(self.free)))
        values = self.values(x)
        with np.errstate(all="ignore"):
            z, grads = self.circuit.impedance_gradient(self.frequency, values)
            columns = []
            for i, name in enumerate(self.free):
                g = grads[name] / z * (1.0 if self.exponent[i] else _LN10 * values[name])
                columns.append(np.concatenate([g.real * self.weight_lnmag, g.imag * self.weight_phase]))
        return np.nan_to_num(np.column_stack(columns))

    def batch_cost(self, points: np.ndarray) -> np.ndarray:
        """Sum of squared residuals for each row of ``points`` (K, k), in chunks of at most
        ``BATCH_ELEMENTS`` complex values (inf where the model is not finite)."""
        points = np.atleast_2d(points)
        step = max(1, BATCH_ELEMENTS // max(1, self.frequency.size))
        cost = np.empty(len(points))
        with np.errstate(all="ignore"):
            for start in range(0, len(points), step):
                chunk = points[start:start + step]
                charge(len(chunk) * self.frequency.size)
                z = self.circuit.impedance(self.frequency, self.values(chunk))
                re, im = self._weighted(np.atleast_2d(z))
                cost[start:start + step] = np.sum(re**2 + im**2, axis=-1)
        return np.where(np.isfinite(cost), cost, np.inf)



def problem_for(circuit: Circuit, m: Measurement, free: tuple[str, ...],
               fixed: Mapping[str, float]) -> FitProblem:
    """The fit problem of ``circuit`` against ``m``: ``free`` parameters varied, the rest ``fixed`` (SI)."""
    ones = np.ones(len(m))
    return FitProblem(
        circuit=circuit, frequency=m.frequency, impedance=m.impedance,
        weight_lnmag=ones if m.sigma_lnmag is None else 1.0 / m.sigma_lnmag,
        weight_phase=ones if m.sigma_phase is None else 1.0 / m.sigma_phase,
        free=free, exponent=np.array([circuit.parameter_is_exponent(n) for n in free], dtype=bool),
        fixed=dict(fixed))


def decimated(problem: FitProblem, points: int) -> FitProblem:
    """The same problem on at most about ``points`` points: evenly spaced indices plus both neighbours of
    every sign change of X and every sampled |Z| extremum, so that narrow resonances keep their samples."""
    n = problem.frequency.size
    if n <= points:
        return problem
    z = problem.impedance
    x, mag = z.imag, np.abs(z)
    keep = set(np.linspace(0, n - 1, points).round().astype(int).tolist())
    crossings = np.flatnonzero(np.sign(x[:-1]) * np.sign(x[1:]) < 0)
    inner = np.arange(1, n - 1)
    extrema = inner[((mag[inner] > mag[inner - 1]) & (mag[inner] > mag[inner + 1]))
                    | ((mag[inner] < mag[inner - 1]) & (mag[inner] < mag[inner + 1]))]
    if crossings.size + extrema.size <= points:  # noise makes many tiny extrema: then trust the even spacing
        for k in np.concatenate([crossings, crossings + 1, extrema - 1, extrema, extrema + 1]):
            keep.add(int(k))
    index = np.array(sorted(keep))
    return FitProblem(problem.circuit, problem.frequency[index], problem.impedance[index],
                      problem.weight_lnmag[index], problem.weight_phase[index], problem.free,
                      problem.exponent, problem.fixed)
