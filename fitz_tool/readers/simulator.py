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

A third layout comes through the plain delimited reader: **real columns named after ngspice vectors**
(``vector_table``), such as ``wrdata`` output with ``set wr_vecnames`` or a CSV of ``vm(dut) vp(dut) ...``.
The columns of each vector are joined into one complex column: magnitude and phase (``vm``/``vp``,
``mag()``/``ph()``/``cph()``), dB and phase (``vdb``, ``db()``; |x| = 10^(dB/20)), real and imaginary
(``vr``/``vi``, ``real()``/``imag()``, ``re()``/``im()``), or a bare ``v(x)``/``i(x)``/``@r1[i]`` twice in a
row (``wrdata`` writes real and imaginary parts under one name). ``im(vsense)``, ``ip(vsense)``,
``ir``/``ii``/``idb`` of a bare source name are the SPICE ``.print`` names of the current through a
voltage source. Phase columns with no unit: ngspice returns radians unless ``set units=degrees``, and that
setting holds for every vector of a run, so all of them are read as radians when every value lies within
[-pi, pi] (+1e-9), else all as degrees; the decision is a warning.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..exceptions import InputError
from .delimited import TextTable, numeric_column
from .headers import parse_header, parse_vector_name

__all__ = ["ComplexTable", "parse_complex_cell", "find_simulator_table", "vector_table"]

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
    sources : tuple of tuple of str
        For a table of ngspice vector columns: the file columns each complex column was built from
        (``("vm(dut)", "vp(dut)")``); empty otherwise.
    warnings : tuple of str
        Decisions the user should know about (phase unit taken from the values).
    """

    layout: str
    frequency_header: str
    headers: tuple[str, ...]
    frequency: np.ndarray
    columns: tuple[np.ndarray, ...]
    lines: tuple[int, ...]
    notes: tuple[str, ...]
    sources: tuple[tuple[str, ...], ...] = ()
    warnings: tuple[str, ...] = ()


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


_PART_WORDS = {"m": "magnitude", "p": "phase", "r": "real part", "i": "imaginary part", "db": "dB magnitude"}


def _phase_unit(table: TextTable, phases: dict[int, str], where: str) -> tuple[dict[int, float], list[str]]:
    """Factor to rad per phase column; the unit of the unit-less ones is decided from all their values."""
    factors = {k: (np.pi / 180 if unit == "deg" else 1.0) for k, unit in phases.items() if unit}
    bare = [k for k, unit in phases.items() if not unit]
    if not bare:
        return factors, []
    values = np.concatenate([numeric_column(table, k, where) for k in bare])
    values = values[np.isfinite(values)]
    radians = bool(np.all(np.abs(values) <= np.pi + 1e-9))
    names = ", ".join(repr(table.headers[k]) for k in bare)
    factors.update({k: 1.0 if radians else np.pi / 180 for k in bare})
    if radians:
        words = (f"phase column(s) {names} state no unit; every value lies within [-pi, pi], so they are "
                 f"read as radians (ngspice's default); if they are degrees, write the unit in the header, "
                 f"e.g. "
                 f"'{table.headers[bare[0]]} (deg)'")
    else:
        words = (f"phase column(s) {names} state no unit; some value lies outside [-pi, pi], so they are "
                 f"read as degrees (ngspice with set units=degrees); if they are radians, write the unit "
                 f"in the header, e.g. '{table.headers[bare[0]]} (rad)'")
    return factors, [words]


def vector_table(table: TextTable, where: str) -> ComplexTable | None:
    """Join real columns named after ngspice vectors into complex columns (module docstring); else None.

    None unless the first column reads as frequency and every other column (repeats of the frequency column
    aside, as ``wrdata`` writes without ``wr_singlescale``) is an ngspice vector name.

    Raises
    ------
    InputError
        A repeated frequency column that differs, a bare ``v(x)`` not followed by its twin, or a vector
        with a part missing (a magnitude with no phase).
    """
    headers = list(table.headers)
    if len(headers) < 2 or parse_header(headers[0], 0).kind != "frequency":
        return None
    names = [parse_vector_name(h) for h in headers]
    scale = [k for k, h in enumerate(headers) if k and h.strip().casefold() == headers[0].strip().casefold()]
    if not any(names[1:]) or any(n is None for k, n in enumerate(names) if k and k not in scale):
        return None
    frequency = numeric_column(table, 0, where)
    for k in scale:
        if not np.array_equal(numeric_column(table, k, where), frequency, equal_nan=True):
            raise InputError(f"{where}: column {k + 1} ({headers[k]!r}) repeats the frequency header but "
                             f"holds other values; write one sweep per file")
    parts: dict[str, dict[str, int]] = {}
    k = 1
    while k < len(headers):
        name = names[k]
        if k in scale or name is None:
            k += 1
            continue
        if name.part == "pair":
            if k + 1 >= len(headers) or names[k + 1] != name:
                raise InputError(f"{where}: column {k + 1} ({headers[k]!r}) appears once; ngspice wrdata "
                                 f"writes a complex vector as two columns of that name (real, imaginary)")
            parts.setdefault(name.vector, {}).update(r=k, i=k + 1)
            k += 2
            continue
        if name.part in parts.setdefault(name.vector, {}):
            raise InputError(f"{where}: two columns hold the {_PART_WORDS[name.part]} of {name.vector} "
                             f"({headers[parts[name.vector][name.part]]!r} and {headers[k]!r}); keep one")
        parts[name.vector][name.part] = k
        k += 1
    phases = {p["p"]: names[p["p"]].phase_unit for p in parts.values() if "p" in p}
    factors, warnings = _phase_unit(table, phases, where)
    vectors, columns, sources = [], [], []
    for vector, p in parts.items():
        if "r" in p and "i" in p:
            used = (p["r"], p["i"])
            value = numeric_column(table, p["r"], where) + 1j * numeric_column(table, p["i"], where)
        elif "p" in p and ("m" in p or "db" in p):
            magnitude = (numeric_column(table, p["m"], where) if "m" in p
                         else 10.0 ** (numeric_column(table, p["db"], where) / 20.0))
            used = (p.get("m", p.get("db")), p["p"])
            value = magnitude * np.exp(1j * numeric_column(table, p["p"], where) * factors[p["p"]])
        else:
            have = ", ".join(repr(headers[j]) for j in p.values())
            raise InputError(f"{where}: vector {vector} has only {have}; impedance needs magnitude and phase "
                             f"(e.g. vm/vp, mag()/ph()) or real and imaginary parts (vr/vi, real()/imag())")
        vectors.append(vector)
        columns.append(value)
        sources.append(tuple(headers[j] for j in used))
        if any(names[j].print_style for j in used):
            warnings.append(f"columns {', '.join(repr(headers[j]) for j in used)} read with the SPICE .print "
                            f"names (im = magnitude, ip = phase, ir/ii = real/imaginary part of the current "
                            f"through the source); ngspice itself writes mag(i(...)), ph(i(...))")
    joined = "; ".join(f"{v} from {', '.join(map(repr, s))}" for v, s in zip(vectors, sources, strict=True))
    notes = [f"columns named after ngspice vectors, joined into complex vectors: {joined}"]
    if scale:
        notes.append(f"skipped {len(scale)} repeated frequency column(s)")
    return ComplexTable(layout=f"{table.describe()}, ngspice vector columns", frequency_header=headers[0],
                        headers=tuple(vectors), frequency=frequency, columns=tuple(columns),
                        lines=table.lines, notes=(*table.notes, *notes), sources=tuple(sources),
                        warnings=tuple(warnings))
