"""The resonance-aware global stage: starting points placed at every resonance the data show.

A narrow, under-sampled resonance (a high-Q choke, a trap, a low-ESR capacitor) leaves a cost surface with
one valley per sampling interval: a model whose resonance sits one interval away from the true one flips the
sign of the reactance at one point and stays there, whatever the local method. So starting points are put
into the interval where the data show the resonance and its neighbours: every sign change of the reactance
X between two samples, and every sampled extremum of |Z| (peak or dip). Within each interval, several
resonance frequencies w0 are tried; each is imposed on every inductive-capacitive pair of the circuit by
moving one of the two so that w0^2 = 1 / (L C) (common practice, no source), the other parameters kept.
The candidates are ranked by cost at once, and the best distinct ones are polished by local fits.
"""

from __future__ import annotations

import numpy as np

from .problem import FitProblem

__all__ = ["resonance_intervals", "resonance_starts", "MAX_INTERVALS"]

#: At most this many data intervals are seeded (those with the largest phase jumps first).
MAX_INTERVALS = 6
#: Positions tried inside each interval, as fractions of its width in log frequency.
_FRACTIONS = (0.1, 0.3, 0.5, 0.7, 0.9)


def resonance_intervals(frequency: np.ndarray, impedance: np.ndarray) -> list[tuple[float, float]]:
    """Frequency intervals (Hz) that hold a resonance of the data: X changes sign between two samples, or
    |Z| has a sampled extremum (then both intervals beside the extreme sample). Sorted by frequency."""
    x, mag, phase = impedance.imag, np.abs(impedance), np.angle(impedance)
    scored: dict[int, float] = {}
    for k in np.flatnonzero(np.sign(x[:-1]) * np.sign(x[1:]) < 0):
        scored[int(k)] = max(scored.get(int(k), 0.0), abs(phase[k + 1] - phase[k]))
    inner = np.arange(1, mag.size - 1)
    extreme = inner[((mag[inner] > mag[inner - 1]) & (mag[inner] > mag[inner + 1]))
                    | ((mag[inner] < mag[inner - 1]) & (mag[inner] < mag[inner + 1]))]
    for k in extreme:
        height = abs(np.log(mag[k] ** 2 / (mag[k - 1] * mag[k + 1])))
        for j in (int(k) - 1, int(k)):
            scored[j] = max(scored.get(j, 0.0), height)
    chosen = sorted(scored, key=lambda j: -scored[j])[:MAX_INTERVALS]
    return [(float(frequency[j]), float(frequency[j + 1])) for j in sorted(chosen)]


def _reactive_pairs(problem: FitProblem) -> list[tuple[int | None, int | None, str, str]]:
    """(index of L in x or None if fixed, index of C or None, L name, C name) for every L-C pair."""
    circuit = problem.circuit
    index = {name: i for i, name in enumerate(problem.free)}
    by_sign: dict[int, list[str]] = {1: [], -1: []}
    for e in circuit.elements:
        sign = e.record.reactance_sign
        if sign and len(e.parameters) == 1:
            by_sign[sign].append(e.name)
    return [(index.get(l_name), index.get(c_name), l_name, c_name)
            for l_name in by_sign[1] for c_name in by_sign[-1]
            if l_name in index or c_name in index]


def resonance_starts(problem: FitProblem, base: np.ndarray,
                     intervals: list[tuple[float, float]]) -> np.ndarray:
    """Candidate starting points (K, k) in internal coordinates: ``base`` with one L-C pair moved so that
    the pair resonates at each trial frequency of each interval (see the module docstring)."""
    pairs = _reactive_pairs(problem)
    values = problem.values(base)
    starts = []
    for f_low, f_high in intervals:
        for fraction in _FRACTIONS:
            log_w0 = np.log10(2 * np.pi) + np.log10(f_low) + fraction * np.log10(f_high / f_low)
            for i_l, i_c, l_name, c_name in pairs:
                log_l, log_c = np.log10(values[l_name]), np.log10(values[c_name])
                if i_c is not None:  # keep L, move C
                    x = base.copy()
                    x[i_c] = -2 * log_w0 - log_l
                    starts.append(x)
                if i_l is not None:  # keep C, move L
                    x = base.copy()
                    x[i_l] = -2 * log_w0 - log_c
                    starts.append(x)
    return np.array(starts).reshape(-1, base.size)
