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
from scipy.stats import qmc

from ..circuit import Circuit, Element, Node, Parallel
from ..measurement import Measurement

__all__ = ["Objective", "search_ranges", "data_seed", "refine_by_scans", "global_search"]

#: Decades beyond the data-derived scale that the search box spans on each side.
SEARCH_DECADES = 3.0
#: Range of a constant phase element's exponent searched (0 < n <= 1 is its definition).
EXPONENT_RANGE = (0.3, 1.0)


class Objective(Protocol):
    """What the search needs from a fit problem (internal coordinates, see module docstring)."""

    def residual(self, x: np.ndarray) -> np.ndarray: ...

    def jacobian(self, x: np.ndarray) -> np.ndarray: ...

    def batch_cost(self, points: np.ndarray) -> np.ndarray: ...


def _scales(m: Measurement) -> dict[str, tuple[float, float]]:
    """Range of |Z| (ohm), |Z|/w (H) and 1/(w |Z|) (F) over the sweep."""
    mag, w = np.abs(m.impedance), m.omega
    return {"R": (mag.min(), mag.max()), "L": ((mag / w).min(), (mag / w).max()),
            "C": ((1 / (w * mag)).min(), (1 / (w * mag)).max())}


def search_ranges(circuit: Circuit, m: Measurement) -> dict[str, tuple[float, float]]:
    """Data-derived search range (SI) of each parameter: the scale seen in the data, +/- SEARCH_DECADES."""
    scales, widen = _scales(m), 10.0**SEARCH_DECADES
    ranges = {}
    for e in circuit.elements:
        if e.kind == "P":
            mag, w = np.abs(m.impedance), m.omega
            q = np.concatenate([1 / (mag * w**n) for n in EXPONENT_RANGE])
            ranges[e.name + "_Q"] = (q.min() / widen, q.max() * widen)
            ranges[e.name + "_n"] = EXPONENT_RANGE
        else:
            low, high = scales[e.kind]
            ranges[e.name] = (low / widen, high * widen)
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


def _power_law_exponent(m: Measurement, at_low_end: bool) -> float:
    """-d ln|Z| / d ln w over the first (or last) fifth of the sweep, clipped to EXPONENT_RANGE."""
    k = max(2, len(m) // 5)
    sl = slice(0, k) if at_low_end else slice(-k, None)
    slope = np.polyfit(np.log(m.omega[sl]), np.log(np.abs(m.impedance[sl])), 1)[0] if len(m) > 1 else -1.0
    return float(np.clip(-slope, *EXPONENT_RANGE))


def data_seed(circuit: Circuit, m: Measurement) -> dict[str, float]:
    """Starting values (SI) read off the measurement for every parameter of ``circuit`` (rules above)."""
    w, z = m.omega, m.impedance
    x, mag = z.imag, np.abs(z)
    roles = _roles(circuit.tree)
    positive_r = z.real[z.real > 0]
    r_small = float(positive_r.min()) if positive_r.size else 1e-3 * mag.min()
    r_large = float(positive_r.max()) if positive_r.size else mag.max()
    inductive, capacitive = np.flatnonzero(x > 0), np.flatnonzero(x < 0)
    by_kind: dict[tuple[str, bool], list[str]] = {}
    for e in circuit.elements:
        inside, parent = roles[e.name]
        shunt = parent == "parallel" if e.kind == "R" else inside
        by_kind.setdefault((e.kind, shunt), []).append(e.name)

    seed: dict[str, float] = {}
    for (kind, shunt), names in by_kind.items():
        share = len(names)
        if kind == "R":
            value = r_large / share if shunt else r_small / share
        elif kind == "L" and inductive.size:
            i = inductive[0] if shunt else inductive[-1]
            value = x[i] / w[i] / share
        elif kind == "C" and capacitive.size:
            i = capacitive[-1] if shunt else capacitive[0]
            value = -share / (w[i] * x[i])
        else:
            value = np.nan  # completed below
        for name in names:
            if kind == "P":
                n = _power_law_exponent(m, at_low_end=not shunt)
                i = -1 if shunt else 0
                seed[name + "_n"] = n
                seed[name + "_Q"] = float(1 / (mag[i] * w[i] ** n))
            else:
                seed[name] = float(value)
    _complete_reactances(seed, circuit, m)
    return seed


def _complete_reactances(seed: dict[str, float], circuit: Circuit, m: Measurement) -> None:
    """Fill missing L or C from a zero crossing of X (w0^2 = 1/(L C)), else put resonance beyond the sweep."""
    w, x = m.omega, m.impedance.imag
    crossings = np.flatnonzero(np.sign(x[:-1]) != np.sign(x[1:]))
    w0 = float(np.sqrt(w[crossings[0]] * w[crossings[0] + 1])) if crossings.size else None
    names = {k: [e.name for e in circuit.elements if e.kind == k] for k in "LC"}
    known = {k: [seed[n] for n in names[k] if np.isfinite(seed[n])] for k in "LC"}
    scales = _scales(m)
    for kind, other in (("L", "C"), ("C", "L")):
        for name in names[kind]:
            if np.isfinite(seed[name]):
                continue
            if known[other]:
                partner = float(np.median(known[other]))
                wr = w0 if w0 is not None else (w[-1] * 10 if kind == "L" else w[0] / 10)
                seed[name] = 1 / (wr**2 * partner)
            else:
                seed[name] = float(np.sqrt(np.prod(scales[kind])))


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
                  samples: int | None = None, polish: int = 8, seed: int = 0) -> np.ndarray:
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
