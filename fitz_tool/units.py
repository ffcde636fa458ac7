"""SI prefixes at the edges: parsing user values and displaying results in engineering notation.

Inside fitz_tool every number is in SI base units (Hz, ohm, H, F, s, rad).
"""

from __future__ import annotations

import math
import re
import unicodedata

from .exceptions import InputError

__all__ = [
    "SI_PREFIXES", "prefix_factor", "parse_quantity", "format_quantity", "format_relative",
    "format_to_resolution", "HEADER_BASES", "read_unit",
    "format_interval", "with_symbols", "to_ascii", "for_terminal",
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


#: SI prefixes by power of ten, as engineering notation writes them (BIPM SI brochure, 9th edition).
ENG_PREFIXES = {-30: "q", -27: "r", -24: "y", -21: "z", -18: "a", -15: "f", -12: "p", -9: "n", -6: "u",
                -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T", 15: "P", 18: "E", 21: "Z", 24: "Y",
                27: "R", 30: "Q"}


def _eng(value: float, unit: str, places: int | None) -> str:
    """Engineering notation, ``"1.50 uH"``: the rule of matplotlib's ``EngFormatter`` (the test checks the two
    agree), written here because importing matplotlib costs a command-line call more than the fit itself."""
    fmt = "g" if places is None else f".{places:d}f"
    magnitude = abs(value)
    power = int(math.floor(math.log10(magnitude) / 3) * 3) if magnitude != 0 else 0
    power = min(max(power, min(ENG_PREFIXES)), max(ENG_PREFIXES))
    mantissa = (value if magnitude != 0 else 0.0) / 10.0**power
    if abs(float(format(mantissa, fmt))) >= 1000 and power < max(ENG_PREFIXES):
        mantissa, power = mantissa / 1000, power + 3  # 999.96 rounds to 1000: write 1.000 k
    prefix = ENG_PREFIXES[power]
    return f"{mantissa:{fmt}}" + (f" {prefix}{unit}" if unit or prefix else "")


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


#: Pure numbers below this magnitude are written with a power of ten that is a multiple of 3
#: (``"18.955e-6"``), not with a run of leading zeros (``"0.000018955"``).
PLAIN_SMALLEST = 1e-3


def _plain(value: float, resolution: float | None) -> str:
    """A pure number: down to two significant digits of ``resolution``, else four.

    Plain digits from 1e-3 up; a smaller number keeps the same digits with a power of ten that is a multiple
    of 3, ``"18.955e-6"``.
    """
    if value != 0 and abs(value) < PLAIN_SMALLEST:
        exponent = _prefix_exponent(value)
        scale = 10.0**exponent
        scaled_res = None if resolution is None else resolution / scale
        mantissa = _plain(value / scale, scaled_res)
        if abs(float(mantissa)) >= 1000:  # rounding carried into the next power (999.96e-6 -> 1.000e-3)
            return _plain(float(mantissa) * scale, resolution)
        return f"{mantissa}e{exponent}"
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


# --- unit words in file headers -------------------------------------------------------------------------

#: Base units a header may state, in the spelling the readers use, with the amplitude convention allowed.
#: ``dBV``/``dBA`` are levels in dB re 1 (prefixed) volt or ampere rms, ``dBm`` a power level in dB re 1 mW.
HEADER_BASES = ("Hz", "rad/s", "deg", "rad", "V", "A", "dBV", "dBA", "dBm", "ohm", "dBohm", "dB", "", "F",
                "H", "%")
_CONVENTION_WORD = r"(?P<conv>rms|eff|peak[\s-]*to[\s-]*peak|pk[\s-]*pk|p[\s-]*p|pp|ptp|peak|pk)"
_CONV_FRONT = re.compile(rf"^(?i:{_CONVENTION_WORD})(?:\s+|-|(?=[A-Za-z\u00b5\u03bc]))(?P<rest>.+)$")
_CONV_BACK = re.compile(rf"^(?P<rest>.+?)[\s-]*(?i:{_CONVENTION_WORD})$")
_CONVENTION_OF = {"rms": "rms", "eff": "rms", "pp": "pp", "ptp": "pp", "peak": "peak", "pk": "peak"}
_LONG_PREFIX = {"kilo": "k", "mega": "M", "giga": "G", "milli": "m", "micro": "u", "nano": "n", "pico": "p"}
_WORD_BASES = {"hz": "Hz", "hertz": "Hz", "rad/s": "rad/s", "rad/sec": "rad/s", "rads": "rad/s",
               "ohm": "ohm", "ohms": "ohm", "\u03c9": "ohm", "v": "V", "volt": "V", "volts": "V", "a": "A",
               "amp": "A", "amps": "A", "ampere": "A", "amperes": "A", "farad": "F", "farads": "F",
               "henry": "H", "henrys": "H", "henries": "H"}
_UNPREFIXED = {"deg": "deg", "degree": "deg", "degrees": "deg", "\u00b0": "deg", "rad": "rad",
               "radian": "rad", "radians": "rad", "%": "%", "v/v": "", "db": "dB", "dbc": "dB"}
_DB = re.compile(r"(?i)^db\s*(?:\(\s*)?(?P<ref>[a-z\u00b5\u03bc\u03c9\u2126]*)(?:\s*\))?$")


def _convention(word: str) -> str:
    word = re.sub(r"[\s-]", "", word.lower())
    return "pp" if word.startswith(("peakto", "pkpk", "pp", "ptp")) or word == "pp" else _CONVENTION_OF[word]


def _prefixed(text: str) -> tuple[str, str] | None:
    """``"kHz"`` -> ("k", "Hz"); ``"MOhm"`` -> ("M", "ohm"); None when not a prefixed base unit."""
    for long, short in _LONG_PREFIX.items():
        if text.lower().startswith(long) and len(text) > len(long):
            rest = text[len(long):]
            rest = "ohm" if long == "kilo" and rest.lower() == "hm" else rest  # "kilohm"
            base = _prefixed_base(rest)
            return (short, base) if base else None
    if text in ("F", "H"):
        return "", text
    if text.lower().startswith("meg") and _prefixed_base(text[3:]) not in (None, "V", "A"):
        return "M", _prefixed_base(text[3:]) or ""
    if text.lower() in _WORD_BASES:
        return "", _WORD_BASES[text.lower()]
    prefix, rest = text[:1], text[1:]
    if prefix not in SI_PREFIXES or not rest:
        return None
    if rest in ("F", "H"):
        return prefix, rest
    base = _prefixed_base(rest)
    if base is None:
        return None
    if base == "Hz" and prefix == "m" and rest == "hz":
        prefix = "M"  # all-lowercase "mhz" (as in freq_mhz) means megahertz; "mHz" stays milli
    return prefix, base


def _prefixed_base(text: str) -> str | None:
    return _WORD_BASES.get(text.lower())


def read_unit(text: str) -> tuple[str, str, str | None] | None:
    """Read a unit as headers write it; None when it is not one fitz_tool understands.

    Understood: any SI prefix (``u``, ``µ`` and ``μ`` micro; ``m`` milli, ``M``/``meg`` mega; also spelled
    out, ``kilo``...) on Hz, rad/s, V, A, ohm (``Ω``), F, H (also spelled out: hertz, volt, ampere, farad,
    henry); deg (``°``), rad, %, ``V/V``; dB (a ratio),
    dBV/dBmV/dBuV and dBA/dBmA/dBuA (levels re 1 V or 1 A rms, or re the stated convention), dBm (power re
    1 mW), dBOhm (|Z| re 1 ohm); an amplitude convention (rms, pk/peak, pp/p-p/pk-pk/peak-to-peak) before or
    after a voltage or current unit, or alone. Brackets inside (``mV(rms)``) are read as spaces. In capitals,
    ``M`` on V, A or ohm (``MV``, ``MA``, ``MOHM``) is refused: milli and mega cannot be told apart.

    Returns
    -------
    tuple or None
        ``(prefix, base, convention)`` with ``base`` one of ``HEADER_BASES`` (``""`` a linear ratio or a
        convention alone); for dBV/dBA the prefix is that of the reference (``dBmV`` -> ``"m"``).
    """
    compact = unicodedata.normalize("NFKC", text).replace("\u2126", "\u03a9")
    compact = re.sub(r"[()\[\]{}]", " ", compact)
    compact = re.sub(r"[\s_]+", " ", compact).strip()
    if not compact:
        return None
    convention = None
    for pattern in (_CONV_BACK, _CONV_FRONT):
        match = pattern.match(compact)
        if match and match.group("rest").strip():
            rest = match.group("rest").strip()
            if pattern is _CONV_BACK and re.fullmatch(r"(?i)dB[a-z]*", compact) and len(rest) < 2:
                continue
            convention, compact = _convention(match.group("conv")), rest
            break
    if re.fullmatch(rf"(?i){_CONVENTION_WORD}", compact) and convention is None:
        return "", "", _convention(compact)
    compact = compact.replace(" ", "")
    db = _DB.match(compact)
    if db:
        ref = db.group("ref")
        if ref == "" or ref.lower() == "c":
            return ("", "dB", None) if convention is None else None
        if ref.lower() in ("ohm", "ohms", "\u03c9"):
            return ("", "dBohm", None) if convention is None else None
        if ref in ("m", "mW"):
            return ("", "dBm", None) if convention is None else None
        prefixed = _prefixed(ref)
        if prefixed and prefixed[1] in ("V", "A"):
            return prefixed[0], "dB" + prefixed[1], convention or "rms"
        return None
    lower = compact.lower()
    if lower in _UNPREFIXED:
        return ("", _UNPREFIXED[lower], None) if convention is None else None
    prefixed = _prefixed(compact)
    if prefixed is None:
        return None
    prefix, base = prefixed
    if convention is not None and base not in ("V", "A"):
        return None
    if (prefix == "M" and base in ("V", "A", "ohm") and compact.isascii() and compact.isupper()
            and not compact.startswith("MEG")):
        return None  # "MV", "MOHM" in capitals: milli or mega cannot be told, so refused, never guessed
    return prefix, base, convention

# --- display: intervals and unit symbols ------------------------------------------------------------


def format_interval(low: float, high: float, unit: str, resolution: float | None = None) -> str:
    """Both ends of an interval with one SI prefix: ``"999.35 to 1000.51 nH"``, never ``"999.35 nH to
    1.00051 uH"``.

    The prefix is the one engineering notation gives the end of larger magnitude; the ends show digits
    down to two significant digits of ``resolution`` (default: a tenth of the width).
    """
    if not (math.isfinite(low) and math.isfinite(high)):
        return f"{format_quantity(low, unit)} to {format_quantity(high, unit)}"
    width = abs(high - low)
    if resolution is None or not (math.isfinite(resolution) and resolution > 0):
        resolution = width / 10 if width > 0 else abs(high) * 1e-4 or 1.0
    if unit == "":
        return f"{_plain(low, resolution)} to {_plain(high, resolution)}"
    big = max(abs(low), abs(high))
    if big == 0:
        return f"0 to 0 {unit}"
    last = _decade(resolution) - 1
    exponent = _prefix_exponent(round(big / 10.0**last) * 10.0**last)
    exponent = min(max(exponent, -15), 12)
    prefix = {-15: "f", -12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}[exponent]
    places = min(max(0, exponent - last), 9)
    ends = [f"{v / 10.0**exponent:.{places}f}".replace("-0." + "0" * places, "0." + "0" * places)
            if places else f"{v / 10.0**exponent:.0f}" for v in (low, high)]
    return f"{ends[0]} to {ends[1]} {prefix}{unit}"


_OHM_AFTER_NUMBER = re.compile(r"(?<=\d)( ?)([fpnumkMGT]?)ohms?\b")
_MICRO_AFTER_NUMBER = re.compile(r"(?<=\d )u(?=(?:[A-Za-z\u03a9]{1,2})?\b)")


def with_symbols(text: str) -> str:
    """Unit symbols in display text: ``"17.9 mohm"`` -> ``"17.9 m\u03a9"``, ``"22 uH"`` -> ``"22 \u00b5H"``,
    ``"+/-"`` -> ``"\u00b1"``.

    Only a unit that follows a number is changed, so words ("ohm" in a column header) stay as they are.
    """
    text = _OHM_AFTER_NUMBER.sub(lambda m: f"{m.group(1)}{m.group(2)}\u03a9", text)
    text = _MICRO_AFTER_NUMBER.sub("\u00b5", text)
    return text.replace("+/-", "\u00b1")


_ASCII = {"\u03a9": "ohm", "\u2126": "ohm", "\u00b5": "u", "\u03bc": "u", "\u00b1": "+/-", "\u00b0": " deg",
          "\u2212": "-", "\u2013": "-", "\u2014": "-", "\u00d7": "x", "\u2264": "<=", "\u2265": ">=",
          "\u2248": "~", "\u00b2": "^2", "\u00b3": "^3", "\u2192": "->"}


def to_ascii(text: str) -> str:
    """The ASCII spelling of display text (``\u03a9`` -> ``ohm``, ``\u00b5`` -> ``u``, ``\u00b1`` ->
    ``+/-``); any other character outside ASCII becomes ``?``."""
    for symbol, spelled in _ASCII.items():
        text = text.replace(symbol, spelled)
    return text.encode("ascii", errors="replace").decode("ascii")


def for_terminal(text: str, encoding: str | None) -> str:
    """``text`` as it is when ``encoding`` can show it, else its :func:`to_ascii` spelling."""
    try:
        text.encode(encoding or "ascii")
    except (UnicodeEncodeError, LookupError):
        return to_ascii(text)
    return text
