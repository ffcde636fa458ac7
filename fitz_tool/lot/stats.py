"""Lot statistics: count, mean, standard deviation, min/max per quantity; yield and Cp/Cpk per spec.

Process capability (common practice, no source): ``Cp = (USL - LSL) / (6 s)`` and
``Cpk = min(USL - mean, mean - LSL) / (3 s)`` with ``s`` the sample standard deviation (ddof = 1) of the
parts that gave a value; for a one-sided limit Cp is undefined and Cpk uses the one side. Yield is the share
of the parts with a result whose verdict is ``pass``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .spec import Spec

__all__ = ["QuantityStats", "SpecStats", "LotStats", "lot_statistics"]


@dataclass(frozen=True)
class QuantityStats:
    """Spread of one quantity over the parts (SI); NaN where fewer than two values make it undefined."""

    name: str
    count: int
    mean: float
    std: float
    minimum: float
    maximum: float


@dataclass(frozen=True)
class SpecStats:
    """Verdict counts, yield (0..1) and capability of one spec; Cp/Cpk NaN when undefined."""

    spec: Spec
    count: int
    passed: int
    failed: int
    marginal: int
    yield_fraction: float
    cp: float
    cpk: float


@dataclass(frozen=True)
class LotStats:
    """The lot in numbers: files, results, errors, verdict counts, per-quantity and per-spec statistics."""

    files: int
    ok: int
    errors: int
    verdicts: dict[str, int]
    yield_fraction: float
    quantities: tuple[QuantityStats, ...]
    specs: tuple[SpecStats, ...]


def quantity_columns(table: pd.DataFrame) -> list[str]:
    """The value columns of a lot table (those with a ``_stderr`` twin)."""
    return [c for c in table.columns if f"{c}_stderr" in table.columns]


def _stats(name: str, values: np.ndarray) -> QuantityStats:
    values = values[np.isfinite(values)]
    n = int(values.size)
    if n == 0:
        return QuantityStats(name, 0, math.nan, math.nan, math.nan, math.nan)
    std = float(np.std(values, ddof=1)) if n > 1 else math.nan
    return QuantityStats(name, n, float(np.mean(values)), std, float(values.min()), float(values.max()))


def _capability(spec: Spec, q: QuantityStats) -> tuple[float, float]:
    if q.count < 2 or not q.std > 0:
        return math.nan, math.nan
    cp = (spec.high - spec.low) / (6 * q.std) if math.isfinite(spec.high - spec.low) else math.nan
    sides = [s for s in ((spec.high - q.mean), (q.mean - spec.low)) if math.isfinite(s)]
    return cp, min(sides) / (3 * q.std)


def lot_statistics(table: pd.DataFrame, specs: Sequence[Spec] = ()) -> LotStats:
    """Statistics of a lot table (see :func:`fitz_tool.lot.lot_table`) over its ``ok`` rows."""
    ok = table[table["status"] == "ok"]
    quantities = tuple(_stats(c, pd.to_numeric(ok[c], errors="coerce").to_numpy(dtype=float))
                       for c in quantity_columns(table))
    by_name = {q.name: q for q in quantities}
    spec_stats = []
    for spec in specs:
        column = ok[spec.column] if spec.column in ok else pd.Series(dtype=str)
        q = by_name.get(spec.name) or _stats(spec.name, np.array([]))
        counts = {v: int((column == v).sum()) for v in ("pass", "fail", "marginal")}
        n = len(column)
        cp, cpk = _capability(spec, q)
        spec_stats.append(SpecStats(spec, n, counts["pass"], counts["fail"], counts["marginal"],
                                    counts["pass"] / n if n else math.nan, cp, cpk))
    verdicts = {v: int((table["verdict"] == v).sum()) for v in ("pass", "fail", "marginal", "error")}
    n_ok = len(ok)
    return LotStats(files=len(table), ok=n_ok, errors=len(table) - n_ok, verdicts=verdicts,
                    yield_fraction=verdicts["pass"] / n_ok if n_ok and specs else math.nan,
                    quantities=quantities, specs=tuple(spec_stats))
