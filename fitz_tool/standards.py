"""Fixture standards checked before use: are they the right way round, and is the part between them?

Open/short compensation is only meaningful when the short is "more short" and the open "more open" than the
part in its fixture. For one-port compensation that is |Z_short| < |Z_measured| < |Z_open| at each frequency;
for two-port de-embedding the same ordering of the matrices (``fixtures.py``). A standard that fails it at
most frequencies is wrong (swapped, from another fixture, or not a standard at all) and the compensation is
refused; a failure at a minority of points is kept and counted in a warning naming the frequencies, because
it also happens legitimately near a resonance of the part with the fixture (a capacitor's series resonance
with the leads: |Z_measured| dips below |Z_short| there, and the compensation is still exact).

Thresholds (our choice): standards are swapped when the "short" is larger than the "open" at more than half
of the points; the part is refused when it is outside the standards at more than ``MAX_OUTSIDE_FRACTION`` of
the points.
"""

from __future__ import annotations

import numpy as np

from .exceptions import InputError
from .units import format_quantity

__all__ = ["MAX_OUTSIDE_FRACTION", "frequency_runs", "check_swapped", "check_between"]

#: Largest fraction of points at which the part may lie outside its standards before compensation is refused.
MAX_OUTSIDE_FRACTION = 0.25


def frequency_runs(frequency: np.ndarray, mask: np.ndarray, limit: int = 3) -> str:
    """The frequencies where ``mask`` holds, as runs of neighbouring points: ``"1 MHz to 3 MHz, 7 MHz"``."""
    index = np.flatnonzero(mask)
    if index.size == 0:
        return "none"
    breaks = np.flatnonzero(np.diff(index) > 1)
    starts = np.concatenate([[index[0]], index[breaks + 1]])
    stops = np.concatenate([index[breaks], [index[-1]]])
    runs = [format_quantity(frequency[a], "Hz") if a == b else
            f"{format_quantity(frequency[a], 'Hz')} to {format_quantity(frequency[b], 'Hz')}"
            for a, b in zip(starts, stops, strict=True)]
    more = f" and {len(runs) - limit} more range(s)" if len(runs) > limit else ""
    return ", ".join(runs[:limit]) + more


def check_swapped(frequency: np.ndarray, short_size: np.ndarray, open_size: np.ndarray,
                  names: tuple[str, str], quantity: str = "|Z|") -> None:
    """Raise when the short standard is larger than the open at more than half of the points.

    ``short_size`` and ``open_size`` are comparable sizes per point (|Z| for one-port standards, a matrix
    norm for two-port ones); ``names`` are the open's and short's labels.
    """
    swapped = short_size > open_size
    if swapped.sum() * 2 > swapped.size:
        raise InputError(f"the open {names[0]} and short {names[1]} look swapped: {quantity} of the short "
                         f"exceeds the open's at {int(swapped.sum())} of {swapped.size} points "
                         f"({frequency_runs(frequency, swapped)}); pass the open-circuit file to --open and "
                         f"the short-circuit file to --short")


def check_between(frequency: np.ndarray, below_short: np.ndarray, above_open: np.ndarray, where: str,
                  quantity: str = "|Z|") -> str | None:
    """Refuse, warn or pass: is the part between its standards?

    Parameters
    ----------
    frequency : ndarray
        Frequencies in Hz.
    below_short, above_open : ndarray of bool
        Points where the part is smaller than the short standard / larger than the open one (all False for
        a standard not given).
    where : str
        The measurement's name for messages.

    Returns
    -------
    str or None
        A warning counting the outside points (kept), or None when all are between.

    Raises
    ------
    InputError
        The part is outside the standards at more than ``MAX_OUTSIDE_FRACTION`` of the points.
    """
    outside = below_short | above_open
    n, bad = outside.size, int(outside.sum())
    if bad == 0:
        return None
    parts = []
    if below_short.any():
        parts.append(f"{quantity} below the short's at {frequency_runs(frequency, below_short)}")
    if above_open.any():
        parts.append(f"{quantity} above the open's at {frequency_runs(frequency, above_open)}")
    detail = "; ".join(parts)
    if bad > MAX_OUTSIDE_FRACTION * n:
        raise InputError(f"{where}: the part is not between the open and short standards at {bad} of {n} "
                         f"points ({detail}); check that the standards were measured in this fixture and "
                         f"given the right way round")
    return (f"the part is outside its open/short standards at {bad} of {n} points ({detail}); kept "
            f"(expected near a resonance of the part with the fixture, else check the standards)")
