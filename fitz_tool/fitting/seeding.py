"""Starting values for a fit of any circuit expression, taken from the data, and a global search.

Three stages, cheapest first (``fitting.fit`` calls them in this order and stops as soon as the fit is good):

1. :func:`data_seed` reads values off the measurement by each element's place in the tree: series
   resistance from the smallest Re Z, shunt (loss) resistance from the largest Re Z, inductance from
   X / w where the part is inductive (high-frequency asymptote for a series inductor, low-frequency one for an
   inductor inside a parallel group), capacitance from -1 / (w X) where it is capacitive, a constant phase
   element from the slope of ln|Z| against ln f at the end of the sweep where it dominates. A missing
   inductance or capacitance is completed from a zero crossing of X with w0^2 = 1 / (L C) (common practice),
   or placed a decade beyond the sweep when there is none.
2. :func:`refine_by_scans`: one-dimensional scans of each parameter over its data-derived range (all points
   evaluated at once), repeated, keeping every improvement.
3. :func:`global_search`: a scrambled Sobol sample of the data-derived box in log-parameter space, the best
   distinct points polished by a bounded trust-region least-squares fit; the best result wins.

Internal coordinates are log10 of the SI value, except a constant phase element's exponent n (linear).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Protocol

import numpy as np
from scipy.optimize import least_squares

from ..circuit import Circuit, DataFeatures, Element, Node, Parallel
from ..measurement import Measurement

__all__ = ["Objective", "search_ranges", "data_seed", "refine_by_scans", "global_search", "SEARCH_DECADES"]

#: Decades beyond the data-derived scale that the search box spans on each side.
SEARCH_DECADES = 3.0


class Objective(Protocol):
    """What the search needs from a fit problem (internal coordinates, see module docstring)."""

    def residual(self, x: np.ndarray) -> np.ndarray: ...

    def jacobian(self, x: np.ndarray) -> np.ndarray: ...

    def batch_cost(self, points: np.ndarray) -> np.ndarray: ...


def _features(m: Measurement) -> DataFeatures:
    return DataFeatures(m.omega, m.impedance)


def search_ranges(circuit: Circuit, m: Measurement) -> dict[str, tuple[float, float]]:
    """Data-derived search range (SI) of each parameter: each kind's data scale, +/- SEARCH_DECADES
    (exponents over their own range)."""
    features, widen = _features(m), 10.0**SEARCH_DECADES
    ranges = {}
    for e in circuit.elements:
        scale = e.record.search_scale(features)
        for spec in e.record.parameters:
            low, high = scale[spec.suffix]
            ranges[e.name + spec.suffix] = (low, high) if spec.exponent else (low / widen, high * widen)
    return ranges


def _roles(node: Node, inside_parallel: bool = False, parent: str = "root") -> dict[str, tuple[bool, str]]:
    """Element name -> (inside a parallel group anywhere above, kind of the immediate parent)."""
    if isinstance(node, Element):
        return {node.name: (inside_parallel, parent)}
    here = "parallel" if isinstance(node, Parallel) else "series"
    roles = {}
    for child in node.children:
        roles.update(_roles(child, inside_parallel or isinstance(node, Parallel), here))
    return roles


def data_seed(circuit: Circuit, m: Measurement) -> dict[str, float]:
    """Starting values (SI) read off the measurement for every parameter of ``circuit``.

    Each element's kind gives the rule (the registry's ``seed``), told whether the element sits in a shunt
    position (a resistor directly in a parallel group; any other kind anywhere inside one) and how many
    elements of its kind share that position; missing reactances are completed from a resonance.
    """
    features = _features(m)
    roles = _roles(circuit.tree)
    by_position: dict[tuple[str, bool], list[Element]] = {}
    for e in circuit.elements:
        inside, parent = roles[e.name]
        shunt = parent == "parallel" if e.record.shunt_only_in_parallel else inside
        by_position.setdefault((e.kind, shunt), []).append(e)
    seed: dict[str, float] = {}
    for (_kind, shunt), elements in by_position.items():
        for e in elements:
            for suffix, value in e.record.seed(features, shunt, len(elements)).items():
                seed[e.name + suffix] = float(value)
    _complete_reactances(seed, circuit, m)
    return seed


def _complete_reactances(seed: dict[str, float], circuit: Circuit, m: Measurement) -> None:
    """Fill a missing inductive or capacitive value from a zero crossing of X (w0^2 = 1/(L C)), else put the
    resonance beyond the sweep, else take the middle of the kind's data scale."""
    w, x = m.omega, m.impedance.imag
    crossings = np.flatnonzero(np.sign(x[:-1]) != np.sign(x[1:]))
    w0 = float(np.sqrt(w[crossings[0]] * w[crossings[0] + 1])) if crossings.size else None
    reactive = {s: [e for e in circuit.elements if e.record.reactance_sign == s] for s in (1, -1)}
    known = {s: [seed[e.name] for e in reactive[s] if np.isfinite(seed[e.name])] for s in (1, -1)}
    features = _features(m)
    for sign in (1, -1):
        for e in reactive[sign]:
            if np.isfinite(seed[e.name]):
                continue
            if known[-sign]:
                partner = float(np.median(known[-sign]))
                wr = w0 if w0 is not None else (w[-1] * 10 if sign > 0 else w[0] / 10)
                seed[e.name] = 1 / (wr**2 * partner)
            else:
                seed[e.name] = float(np.sqrt(np.prod(e.record.search_scale(features)[""])))


def refine_by_scans(objective: Objective, x0: np.ndarray, lower: np.ndarray, upper: np.ndarray,
                    sweeps: int = 2, points: int = 25) -> np.ndarray:
    """Coordinate scans: each parameter over [lower, upper], others held, best kept; ``sweeps`` rounds."""
    x = np.array(x0, dtype=float)
    best = float(objective.batch_cost(x[None, :])[0])
    for _ in range(sweeps):
        for i in range(x.size):
            trial = np.repeat(x[None, :], points, axis=0)
            trial[:, i] = np.linspace(lower[i], upper[i], points)
            cost = objective.batch_cost(trial)
            j = int(np.argmin(cost))
            if cost[j] < best:
                best, x = float(cost[j]), trial[j]
    return x


def global_search(objective: Objective, lower: np.ndarray, upper: np.ndarray,
                  bound_low: np.ndarray, bound_high: np.ndarray, starts: Sequence[np.ndarray] = (),
                  samples: int | None = None, polish: int = 4, seed: int = 0) -> np.ndarray:
    """Best point found by polishing the best distinct points of a Sobol sample of the box.

    Parameters
    ----------
    objective : Objective
        The fit problem.
    lower, upper : ndarray
        Search box in internal coordinates (data-derived).
    bound_low, bound_high : ndarray
        Hard bounds of the fit in internal coordinates (the polish stays inside them).
    starts : sequence of ndarray
        Extra starting points polished as well (e.g. the data seed).
    samples : int, optional
        Sobol sample size (a power of two); default 256 per free parameter, at most 4096.
    polish : int
        How many of the best distinct sample points are polished.
    seed : int
        Scrambling seed, so results are reproducible.
    """
    k = lower.size
    n = samples or int(min(4096, 2 ** np.ceil(np.log2(256 * k))))
    from scipy.stats import qmc  # scipy.stats is slow to import: only when a global search runs

    unit = qmc.Sobol(k, scramble=True, seed=seed).random(n)
    points = lower + unit * (upper - lower)
    cost = objective.batch_cost(points)
    order = np.argsort(cost)
    chosen: list[np.ndarray] = []
    for j in order:
        if len(chosen) >= polish or not np.isfinite(cost[j]):
            break
        if all(np.max(np.abs(points[j] - c)) > 0.5 for c in chosen):
            chosen.append(points[j])
    best_x, best_cost = None, np.inf
    for start in [*starts, *chosen]:
        x0 = np.clip(start, bound_low + 1e-9, bound_high - 1e-9)
        try:
            out = least_squares(objective.residual, x0, jac=objective.jacobian,
                                bounds=(bound_low, bound_high), method="trf", max_nfev=60 * k)
        except (ValueError, FloatingPointError):
            continue
        if np.isfinite(out.cost) and out.cost < best_cost:
            best_x, best_cost = out.x, out.cost
    return best_x if best_x is not None else np.asarray(starts[0] if starts else points[order[0]])
