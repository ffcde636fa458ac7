"""Circuit-simulator text exports whose cells are complex numbers: finding the table and reading the cells.

Two layouts are recognized before the plain delimited reader is tried:

* **Tab-delimited complex cells**: a header such as ``Freq.<TAB>V(n001)/I(V1)`` and rows whose first cell
  is the frequency and whose other cells are complex, in polar form ``(-1.2345e+001dB,-4.5e+001°)``
  (magnitude in dB re 1 SI unit or linear, phase in degrees; the degree sign in any encoding) or cartesian
  form ``1.0e+000,2.0e-001`` (a comma inside the tab-delimited cell; ``1,5`` alone is a decimal comma).
  ``Step Information`` lines between sweeps are counted: one is noted, several (a stepped sweep) are
  refused, since each step is another part.
* **ngspice ``print`` output**: a header ``Index  frequency  v(a) ...`` (dashed rules and title lines around
  it, repeated on every page) and rows ``index<TAB>frequency<TAB>re,<TAB>im``. Each vector may come in its
  own block of pages (the index restarts at 0); blocks are joined by index.

``find_simulator_table`` returns None for any other text, so the plain reader sees it unchanged.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..exceptions import InputError

__all__ = ["ComplexTable", "parse_complex_cell", "find_simulator_table"]

_NUM = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_POLAR = re.compile(rf"\(\s*({_NUM})\s*(dB)?\s*,\s*({_NUM})\s*(?:Â?°|deg)?\s*\)", re.IGNORECASE)
_CARTESIAN = re.compile(rf"({_NUM})\s*,\s*({_NUM})")
_DB_ONLY = re.compile(rf"\(?\s*{_NUM}\s*dB\s*\)?", re.IGNORECASE)
_NUMBER = re.compile(_NUM)
_DECIMAL_COMMA = re.compile(r"[+-]?\d+,\d*(?:[eE][+-]?\d+)?")
_STEP = re.compile(r"^\s*Step Information\b", re.IGNORECASE)
_PRINT_HEADER = re.compile(r"^\s*Index\s+(\S.*)$")


@dataclass(frozen=True)
class ComplexTable:
    """A simulator table: frequency and complex columns, values as read (SI units of the simulator).

    Attributes
    ----------
    layout : str
        The layout in words.
    frequency_header : str
        Header of the frequency column.
    headers : tuple of str
        Names of the complex columns (``"V(n001)/I(V1)"``, ``"v(a)"``).
    frequency : ndarray of float
        Frequency in Hz (NaN where missing).
    columns : tuple of ndarray of complex
        One array per header (NaN where missing).
    lines : tuple of int
        1-based line of each row (for ngspice print: the line of the first vector's row).
    notes : tuple of str
        Skipped lines and cell forms, in words.
    """

    layout: str
    frequency_header: str
    headers: tuple[str, ...]
    frequency: np.ndarray
    columns: tuple[np.ndarray, ...]
    lines: tuple[int, ...]
    notes: tuple[str, ...]


def parse_complex_cell(cell: str) -> tuple[complex, str] | None:
    """A complex cell as (value, form); None when the cell is not complex.

    ``form`` is ``"polar dB"`` (|x| = 10^(dB/20), phase in deg), ``"polar"`` (linear magnitude, phase in
    deg) or ``"cartesian"`` (re, im). A value in dB is of a quantity in its SI unit, so an impedance cell of
    0 dB is 1 ohm (common practice, no source).
    """
    text = cell.strip()
    match = _POLAR.fullmatch(text)
    if match:
        magnitude = float(match.group(1))
        if match.group(2):
            magnitude = 10.0 ** (magnitude / 20.0)
        return magnitude * np.exp(1j * np.radians(float(match.group(3)))), ("polar dB" if match.group(2)
                                                                            else "polar")
    match = _CARTESIAN.fullmatch(text)
    if match and not _DECIMAL_COMMA.fullmatch(text):  # "1,5" is a decimal comma, not 1 + 5j
        return complex(float(match.group(1)), float(match.group(2))), "cartesian"
    return None


_FORM_WORDS = {"polar dB": "polar (dB, deg): |x| = 10^(dB/20), phase in deg",
               "polar": "polar (magnitude, deg)", "cartesian": "cartesian (re, im)"}


def _tab_table(lines: list[str], where: str) -> ComplexTable | None:
    first = None
    for k, line in enumerate(lines):
        cells = line.strip().split("\t")
        if len(cells) >= 2 and _NUMBER.fullmatch(cells[0].strip()):
            rest = [c.strip() for c in cells[1:]]
            if all(parse_complex_cell(c) for c in rest):
                first = k
                break
            if all(_DB_ONLY.fullmatch(c) for c in rest):
                raise InputError(f"{where}: line {k + 1}: the cells hold a magnitude in dB and no phase, "
                                 f"which is not enough for impedance; export magnitude and phase (polar) "
                                 f"or real and imaginary parts (cartesian)")
    if first is None:
        return None
    above = [k for k in range(first) if lines[k].strip() and not _STEP.match(lines[k])]
    if not above:
        raise InputError(f"{where}: no header line above the first row (line {first + 1}); add one naming "
                         f"the columns, e.g. Freq.<TAB>V(a)/I(V1)")
    header = [c.strip() for c in lines[above[-1]].strip().split("\t")]
    width = len(lines[first].strip().split("\t"))
    if len(header) != width:
        raise InputError(f"{where}: line {above[-1] + 1} (taken as the header) has {len(header)} column(s) "
                         f"but the data below has {width}")
    steps = [k + 1 for k, line in enumerate(lines) if _STEP.match(line)]
    if len(steps) > 1:
        raise InputError(f"{where}: {len(steps)} stepped sweeps (Step Information at lines "
                         f"{', '.join(map(str, steps[:5]))}); each step is another part: export one step "
                         f"per file")
    freq, values, numbers, forms = [], [[] for _ in header[1:]], [], set()
    for k in range(first, len(lines)):
        line = lines[k].strip()
        if not line or _STEP.match(line):
            continue
        cells = [c.strip() for c in line.split("\t")]
        if len(cells) != width:
            raise InputError(f"{where}: line {k + 1} has {len(cells)} cells but the header has {width}")
        if not _NUMBER.fullmatch(cells[0]):
            raise InputError(f"{where}: line {k + 1}, column {header[0]!r}: {cells[0]!r} is not a number")
        freq.append(float(cells[0]))
        for j, cell in enumerate(cells[1:]):
            parsed = parse_complex_cell(cell)
            if parsed is None:
                raise InputError(f"{where}: line {k + 1}, column {header[j + 1]!r}: {cell!r} is not a "
                                 f"complex number (polar '(dB,deg°)' or cartesian 're,im')")
            values[j].append(parsed[0])
            forms.add(parsed[1])
        numbers.append(k + 1)
    notes = [f"cells in {' and '.join(_FORM_WORDS[f] for f in sorted(forms))}"]
    if above[-1]:
        notes.insert(0, f"skipped {above[-1]} line(s) above the header (line {above[-1] + 1})")
    if steps:
        notes.append(f"one sweep (Step Information at line {steps[0]})")
    return ComplexTable(layout="tab-delimited simulator export with complex cells",
                        frequency_header=header[0], headers=tuple(header[1:]), frequency=np.asarray(freq),
                        columns=tuple(np.asarray(v, dtype=complex) for v in values),
                        lines=tuple(numbers), notes=tuple(notes))


def _print_values(tokens: list[str]) -> list[complex | float] | None:
    """Cells after index and frequency: ``re,`` ``im`` pairs (complex) or reals (float); None otherwise."""
    out, k = [], 0
    while k < len(tokens):
        token = tokens[k]
        if token.endswith(",") and k + 1 < len(tokens) and _NUMBER.fullmatch(token[:-1]) \
                and _NUMBER.fullmatch(tokens[k + 1]):
            out.append(complex(float(token[:-1]), float(tokens[k + 1])))
            k += 2
        elif _NUMBER.fullmatch(token):
            out.append(float(token))
            k += 1
        else:
            return None
    return out


def _print_table(lines: list[str], where: str) -> ComplexTable | None:
    if not any(_PRINT_HEADER.match(line) for line in lines):
        return None
    names: list[str] | None = None
    data: dict[str, dict[int, complex | float]] = {}
    frequency: dict[int, float] = {}
    first_line: dict[int, int] = {}
    scale, skipped = "", 0
    for k, line in enumerate(lines):
        header = _PRINT_HEADER.match(line)
        tokens = line.split()
        if header:
            scale, *names = header.group(1).split()
            continue
        values = _print_values(tokens[2:]) if len(tokens) >= 3 and tokens[0].isdigit() else None
        if names is None or values is None or not _NUMBER.fullmatch(tokens[1]):
            skipped += bool(line.strip())
            continue
        if len(values) != len(names):
            raise InputError(f"{where}: line {k + 1}: {len(values)} value(s) for the {len(names)} vector(s) "
                             f"named in the header above ({', '.join(names)})")
        index = int(tokens[0])
        frequency.setdefault(index, float(tokens[1]))
        first_line.setdefault(index, k + 1)
        for name, value in zip(names, values, strict=True):
            data.setdefault(name, {})[index] = value
    if not data:
        return None
    indices = sorted(frequency)
    for name, column in data.items():
        if sorted(column) != indices:
            raise InputError(f"{where}: vector {name!r} has {len(column)} rows but the print output has "
                             f"{len(indices)} indices; print the vectors of one analysis together")
    real = [n for n, c in data.items() if any(isinstance(v, float) for v in c.values())]
    if real:
        raise InputError(f"{where}: ngspice print vector(s) {', '.join(real)} hold real values; print the "
                         f"complex vectors themselves (e.g. print v(a) i(vsense)), not mag() or ph()")
    return ComplexTable(layout="ngspice print output", frequency_header=scale, headers=tuple(data),
                        frequency=np.asarray([frequency[i] for i in indices]),
                        columns=tuple(np.asarray([c[i] for i in indices], dtype=complex)
                                      for c in data.values()),
                        lines=tuple(first_line[i] for i in indices),
                        notes=(f"skipped {skipped} title, rule or repeated-header line(s)",
                               "cells in cartesian (re, im)"))


def find_simulator_table(text: str, where: str) -> ComplexTable | None:
    """The complex table of a simulator export (see the module docstring), or None for other text."""
    lines = text.splitlines()
    return _print_table(lines, where) or _tab_table(lines, where)
