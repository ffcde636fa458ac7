"""SI prefixes at the edges: parsing user values and displaying results in engineering notation.

Inside fitz_tool every number is in SI base units (Hz, ohm, H, F, s, rad).
"""

from __future__ import annotations

import math
import re

from matplotlib.ticker import EngFormatter

from .exceptions import InputError

__all__ = [
    "SI_PREFIXES", "prefix_factor", "parse_quantity", "format_quantity", "format_relative",
    "format_to_resolution",
]

#: Multipliers of the SI prefixes (both "u" and the micro sign are accepted for 1e-6).
SI_PREFIXES: dict[str, float] = {
    "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "\u00b5": 1e-6, "\u03bc": 1e-6,
    "m": 1e-3, "": 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9, "T": 1e12,
}

_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_QUANTITY = re.compile(rf"^\s*({_NUMBER})\s*([mM][eE][gG]|[fpnu\u00b5\u03bcmkKMGT]?)\s*([A-Za-z\u03a9]*)\s*$")


def prefix_factor(prefix: str) -> float:
    """Multiplier of an SI prefix (``"k"`` -> 1e3); raises KeyError for an unknown prefix."""
    if prefix.lower() == "meg":
        return 1e6
    return SI_PREFIXES[prefix]


def parse_quantity(text: str, unit: str = "", what: str = "value") -> float:
    """Parse ``"100k"``, ``"2.2uH"``, ``"1.5 MHz"``, ``"0.1"`` or ``"100m"`` into an SI float.

    ``m`` is milli and ``M`` mega (``meg`` is also mega). A trailing unit, if present, must equal ``unit``
    (case-insensitive; ``ohm``/``Ohm``/the ohm sign all accepted for ohm).
    """
    match = _QUANTITY.match(str(text))
    if not match:
        raise InputError(f"cannot read {what} {text!r}: give a number with an optional SI prefix, e.g. 100k")
    number, prefix, trailing = match.groups()
    if trailing:
        if trailing.lower() in ("ohm", "ohms", "\u03c9") and unit == "ohm":
            pass
        elif not unit or trailing.lower() != unit.lower():
            # a unit where none is expected, or another unit than the one expected ("100 mV" for ohm)
            raise InputError(f"cannot read {what} {text!r}: unit {trailing!r} is not {unit or 'expected'}")
    return float(number) * prefix_factor(prefix)


def _eng(value: float, unit: str, places: int | None) -> str:
    text = EngFormatter(unit=unit, places=places, sep=" ", usetex=False, useMathText=False)(value)
    return text.replace("\u00b5", "u").replace("\u2212", "-")


def format_relative(stderr: float, value: float) -> str:
    """Relative uncertainty as a percentage with two significant digits, e.g. ``"0.14 %"``."""
    rel = abs(stderr / value) * 100 if value != 0 else math.inf
    if not math.isfinite(rel):
        return "inf %"
    return f"{rel:.2g} %" if rel < 100 else f"{rel:.0f} %"


def format_quantity(value: float, unit: str = "", stderr: float | None = None) -> str:
    """Engineering notation with unit and relative uncertainty: ``"22.07 uH +/- 0.14 %"``.

    The value shows no more digits than its uncertainty supports (two significant digits of the
    uncertainty); with no uncertainty it shows four significant digits and nothing else. A pure number
    (``unit=""``: Q, D, a constant phase exponent) is written in plain digits, ``"0.8734 +/- 0.24 %"``,
    not with a prefix (``"873.4 m"``).
    """
    if value is None or not math.isfinite(value):
        return f"{value} {unit}".strip()
    if unit == "":
        if stderr is None or not math.isfinite(stderr) or stderr <= 0:
            return _plain(value, None)
        return f"{_plain(value, stderr)} +/- {format_relative(stderr, value)}"
    if value == 0:
        return _eng(0.0, unit, 0) + ("" if stderr is None else f" +/- {_eng(stderr, unit, 2)}")
    if stderr is None or not math.isfinite(stderr) or stderr <= 0:
        rounded = float(f"{value:.4g}")  # round first: 999.96 becomes 1000, shown as 1.000 k
        return _eng(rounded, unit, max(0, 4 - (_decade(rounded) - _prefix_exponent(rounded) + 1)))
    return f"{format_to_resolution(value, unit, stderr)} +/- {format_relative(stderr, value)}"


def _plain(value: float, resolution: float | None) -> str:
    """A pure number in plain digits: down to two significant digits of ``resolution``, else four."""
    if resolution is None or not (math.isfinite(resolution) and resolution > 0):
        return f"{value:.4g}"
    return f"{value:.{min(max(0, 1 - _decade(resolution)), 12)}f}"


def _decade(value: float) -> int:
    return math.floor(math.log10(abs(value)))


def _prefix_exponent(value: float) -> int:
    """Exponent of the SI prefix engineering notation uses for ``value`` (a multiple of 3)."""
    return 3 * math.floor(_decade(value) / 3)


def format_to_resolution(value: float, unit: str, resolution: float) -> str:
    """Engineering notation showing ``value`` down to two significant digits of ``resolution``.

    Used for a value whose uncertainty is stated elsewhere, e.g. the ends of an interval. The value is
    rounded to that resolution before the prefix is chosen, so a carry into the next prefix keeps its digits.
    A pure number (``unit=""``) is written in plain digits, as in :func:`format_quantity`.
    """
    if unit == "" and math.isfinite(value):
        return _plain(value, resolution)
    if value == 0 or not math.isfinite(value) or not (math.isfinite(resolution) and resolution > 0):
        return format_quantity(value, unit)
    last = _decade(resolution) - 1  # decade of the last digit shown
    rounded = round(value / 10.0**last) * 10.0**last
    if rounded == 0:
        return _eng(0.0, unit, 0)
    return _eng(rounded, unit, min(max(0, _prefix_exponent(rounded) - last), 9))
