"""Where values enter: the ranges a bench measurement can have, and limits that keep hostile input cheap.

Every number from a file or an option is checked once, where it enters, against these ranges; outside them
the tool refuses with one line instead of overflowing, dividing by zero or running for minutes later on.
The ranges are deliberately wide (many decades beyond any bench instrument, common practice, no source):
they exist to stop nonsense, not to judge a measurement.
"""

from __future__ import annotations

import math
import re

from .exceptions import InputError, ModelSyntaxError

__all__ = [
    "MIN_FREQUENCY", "MAX_FREQUENCY", "MIN_IMPEDANCE", "MAX_IMPEDANCE", "MIN_RESISTANCE", "MAX_RESISTANCE",
    "MAX_SKEW", "OVERFLOW_MARKER", "MAX_LINE_LENGTH", "MAX_EXPRESSION_LENGTH", "MAX_DEPTH",
    "MAX_EXPRESSION_DEPTH", "MAX_ELEMENTS", "is_no_reading",
    "no_reading_as_nan", "check_line_lengths", "check_frequency", "check_resistance", "check_skew",
    "check_expression",
]

#: Frequencies in Hz: 1 uHz (below the slowest impedance spectroscopy) to 10 THz (beyond any VNA).
MIN_FREQUENCY = 1e-6
MAX_FREQUENCY = 1e13
#: |Z| in ohm a reader may hand on: 1e-15 ohm to 1e18 ohm (a 1 fF capacitor at 1 uHz is 1.6e20; nobody
#: measures that; a superconducting short is not a bench part).
MIN_IMPEDANCE = 1e-15
MAX_IMPEDANCE = 1e18
#: Resistances given as options (shunt, reference, load): 1 nohm to 1 Tohm.
MIN_RESISTANCE = 1e-9
MAX_RESISTANCE = 1e12
#: Largest channel skew in s accepted by --skew (a bench delay is ns to ms).
MAX_SKEW = 1.0
#: Instruments write 9.9E37 (SCPI "overflow") or 9.91E37 ("not a number") where they have no reading;
#: any cell at or beyond this magnitude is counted as no reading (SCPI-99 vol. 1, 7.2.1.5, from memory).
OVERFLOW_MARKER = 9.9e37
#: Longest line of a bench file in characters (a sweep row is well under 1,000; the csv module stops at
#: 131,072 per field).
MAX_LINE_LENGTH = 100_000
#: Circuit expressions: characters, nesting depth of parentheses, number of elements. A fit's work grows
#: with the parameter count; beyond these the fit runs for minutes and the data cannot support the model.
#: The grammar enforces depth and element count too (``circuit.tree`` reads them from here); they are
#: checked here before parsing so that the refusal never repeats a long expression.
MAX_EXPRESSION_LENGTH = 1_000
MAX_DEPTH = 20
MAX_EXPRESSION_DEPTH = MAX_DEPTH
MAX_ELEMENTS = 40

_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_]*")


def is_no_reading(value: float) -> bool:
    """True for an instrument's no-reading value: NaN, +/-inf, or a magnitude at or above 9.9E37."""
    return not math.isfinite(value) or abs(value) >= OVERFLOW_MARKER


def no_reading_as_nan(value: float) -> float:
    """A cell's value, or NaN (counted as a missing reading by the readers) for an instrument's no-reading."""
    return math.nan if is_no_reading(value) else value


def check_line_lengths(text: str, where: str) -> None:
    """Refuse a file with a line longer than MAX_LINE_LENGTH characters (naming the line)."""
    if len(text) <= MAX_LINE_LENGTH:
        return

    for number, line in enumerate(text.splitlines(), 1):
        if len(line) > MAX_LINE_LENGTH:
            raise InputError(f"{where}: line {number} is {len(line)} characters long; the limit is "
                             f"{MAX_LINE_LENGTH:,} (a bench export has short rows): is this the right file?")


def _check_range(value: float, low: float, high: float, unit: str, what: str, hint: str) -> float:
    if not math.isfinite(value) or not low <= value <= high:
        raise InputError(f"{what} {value:g} {unit}: outside {low:g} {unit} .. "
                         f"{high:g} {unit}; {hint}")
    return value


def check_frequency(value: float, what: str) -> float:
    """A frequency in Hz inside [MIN_FREQUENCY, MAX_FREQUENCY], else InputError naming ``what``."""
    return _check_range(value, MIN_FREQUENCY, MAX_FREQUENCY, "Hz", what,
                        "give a frequency with an SI prefix, e.g. 100k")


def check_resistance(value: float, what: str) -> float:
    """A resistance in ohm inside [MIN_RESISTANCE, MAX_RESISTANCE], else InputError naming ``what``."""
    return _check_range(value, MIN_RESISTANCE, MAX_RESISTANCE, "ohm", what,
                        "give the resistance in ohm with an SI prefix, e.g. 100m")


def check_skew(value: float, what: str = "--skew") -> float:
    """A channel delay in s with |value| <= MAX_SKEW."""
    if not math.isfinite(value) or abs(value) > MAX_SKEW:
        raise InputError(f"{what} {value!r} s: a channel delay is below {MAX_SKEW:g} s in size, e.g. 5n")
    return value


def check_expression(expression: str) -> None:
    """Refuse, before parsing, an expression too long, too deeply nested or with too many elements.

    The refusal never repeats a long expression: it says how long, how deep or how many, and the limit.
    """
    if len(expression) > MAX_EXPRESSION_LENGTH:
        raise ModelSyntaxError(f"circuit expression is {len(expression)} characters long; the limit is "
                               f"{MAX_EXPRESSION_LENGTH} (a model the data can support is far shorter)")
    depth = deepest = 0
    for char in expression:
        if char == "(":
            depth += 1
            deepest = max(deepest, depth)
        elif char == ")":
            depth -= 1
    if deepest > MAX_DEPTH:
        raise ModelSyntaxError(f"circuit expression nests parentheses {deepest} deep; the limit is "
                               f"{MAX_DEPTH}: remove redundant parentheses")
    elements = len(_NAME.findall(expression))
    if elements > MAX_ELEMENTS:
        raise ModelSyntaxError(f"circuit expression has {elements} elements; the limit is {MAX_ELEMENTS} "
                               f"(each adds parameters the data must determine): use a smaller model")
