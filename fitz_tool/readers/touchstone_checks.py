"""Touchstone values checked before scikit-rf sees them; the text handed on has its comments stripped.

What is refused (InputError naming file, row and column) or repaired with a counted warning:

* option line: the reference ``R`` must be a finite resistance in (0, 1 Gohm];
* frequencies: finite, not negative, at most ``limits.MAX_FREQUENCY``; no frequency twice;
* order: a one-port file out of order is sorted into increasing frequency (each row stands alone; the count
  is recorded). In a two-port file a falling frequency is where the Touchstone 1.x standard starts the noise
  parameters, so a full 9-value row there would be paired wrongly: refused;
* values: MA magnitudes >= 0; no |S| above 1000 (MA, RI) or 60 dB (DB), and no dB below -1000: those are
  no S-parameters (a passive part has |S| <= 1); angles within +/- 1e6 degrees;
* a declared ``[Number of Frequencies]`` (Touchstone 2) must equal the rows found.

Comments (``!`` to end of line) are removed before the text goes to scikit-rf: it parses long comment lines
slowly (minutes for one 200 kB line) and reads nothing from them that fitz_tool uses.
"""

from __future__ import annotations

import io
import math
from pathlib import Path

from ..exceptions import InputError
from ..limits import MAX_FREQUENCY
from ..progress import LONG_READ_LINES, READ_STEP_LINES
from ..progress import bar as progress_bar

__all__ = ["checked_touchstone_text", "named_text"]

_UNIT_FACTORS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}
_MAX_REFERENCE = 1e9
_MAX_LINEAR = 1e3
_MAX_DB = 60.0
_MIN_DB = -1000.0
_MAX_ANGLE = 1e6


def named_text(text: str, path: Path) -> io.StringIO:
    """The checked text as a file object carrying the file's name (scikit-rf names the network after it)."""
    handle = io.StringIO(text)
    handle.name = path.name
    return handle


def _option(path: Path, number: int, line: str) -> tuple[float, str]:
    """(frequency factor to Hz, format) of the option line; refuses a non-finite or absurd reference."""
    tokens = line[1:].lower().split()
    factor, fmt = 1e9, "ma"  # Touchstone defaults: GHz, MA, R 50
    for k, token in enumerate(tokens):
        if token in _UNIT_FACTORS:
            factor = _UNIT_FACTORS[token]
        elif token in ("ma", "db", "ri"):
            fmt = token
        elif token == "r" and k + 1 < len(tokens):
            try:
                reference = float(tokens[k + 1])
            except ValueError:
                continue  # the layout check names a missing reference
            if not (math.isfinite(reference) and 0 < reference <= _MAX_REFERENCE):
                raise InputError(f"{path}: row {number}: option line {line.strip()!r}: reference R "
                                 f"{tokens[k + 1]} is not a resistance between 0 and 1 Gohm; e.g. R 50")
    return factor, fmt


def _number(path: Path, number: int, column: int, token: str) -> float:
    try:
        value = float(token)
    except ValueError:
        raise InputError(f"{path}: row {number}, column {column}: {token!r} is not a number") from None
    if not math.isfinite(value):
        raise InputError(f"{path}: row {number}, column {column}: {token!r} is not a finite number")
    return value


def _check_values(path: Path, number: int, values: list[tuple[int, float]], fmt: str) -> None:
    """Pairs after the frequency: (magnitude or dB or real, angle or imaginary)."""
    for k in range(1, len(values) - 1, 2):
        (col_a, a), (col_b, b) = values[k], values[k + 1]
        where = f"{path}: row {number}, column {col_a}"
        if fmt == "ma" and a < 0:
            raise InputError(f"{where}: magnitude {a:g} is negative; MA data gives |S| >= 0 and the angle")
        if fmt == "db" and not _MIN_DB <= a <= _MAX_DB:
            raise InputError(f"{where}: {a:g} dB is not an S-parameter (a passive part gives <= 0 dB)")
        if fmt in ("ma", "ri") and max(abs(a), abs(b) if fmt == "ri" else 0.0) > _MAX_LINEAR:
            raise InputError(f"{where}: {max(abs(a), abs(b)):g} is not an S-parameter (|S| <= 1 for a "
                             f"passive part); check the file's format")
        if fmt in ("ma", "db") and abs(b) > _MAX_ANGLE:
            raise InputError(f"{path}: row {number}, column {col_b}: angle {b:g} deg is not a phase")


def checked_touchstone_text(path: Path, text: str, nports: int) -> tuple[str, list[str]]:
    """Check a Touchstone file's values; return the text for scikit-rf and the warnings to record.

    Parameters
    ----------
    path : Path
        The file (for messages).
    text : str
        Its text (already past the layout check of ``touchstone.py``).
    nports : int
        1 or 2, from the extension.

    Returns
    -------
    text : str
        The same data without comments (a one-port's rows in increasing frequency).
    warnings : list of str
        What was repaired, counted.
    """
    per_row = 1 + 2 * nports * nports
    factor, fmt = 1e9, "ma"
    version2 = False
    section = ""  # Touchstone 2 keyword section we are in
    declared: tuple[int, int] | None = None
    head: list[str] = []  # option line and keywords before the data
    rows: list[tuple[int, list[tuple[int, float]]]] = []  # (row number, [(column, value)])
    tail: list[str] = []  # noise data and keywords after the network data
    pending: list[tuple[int, int, float]] = []  # Touchstone 2 values of a row spread over lines
    lines = text.splitlines()
    with progress_bar(f"reading {path.name}", len(lines), "line", show=len(lines) >= LONG_READ_LINES) as bar:
        for number, raw in enumerate(lines, 1):
            if number % READ_STEP_LINES == 0:
                bar.update(READ_STEP_LINES)
            line = raw.split("!", 1)[0].strip()
            if not line:
                continue
            if line.startswith("["):
                keyword = line[1:].split("]", 1)[0].strip().lower()
                version2 = version2 or keyword == "version"
                section = keyword
                if keyword == "number of frequencies":
                    value = line.split("]", 1)[1].split()
                    if value and value[0].isdigit():
                        declared = (number, int(value[0]))
                (tail if rows else head).append(line)
                continue
            if line.startswith("#"):
                if not any(h.startswith("#") for h in head):
                    factor, fmt = _option(path, number, line)
                (tail if rows else head).append(line)
                continue
            if version2 and section != "network data":
                (tail if rows else head).append(line)
                continue
            tokens = line.split()
            if tail and not version2:
                tail.append(line)
                continue
            if not version2 and not pending and nports == 2 and len(tokens) == 5 and rows and (
                    _number(path, number, 1, tokens[0]) <= rows[-1][1][0][1]):
                tail.append(line)  # Touchstone 1.x noise parameters (a 5-value row at a frequency not above)
                continue
            pending.extend((number, c, _number(path, number, c, t)) for c, t in enumerate(tokens, 1))
            while len(pending) >= per_row:  # a row may be wrapped over several lines
                chunk, pending = pending[:per_row], pending[per_row:]
                rows.append((chunk[0][0], [(c, v) for _, c, v in chunk]))

    warnings: list[str] = []
    for number, values in rows:
        frequency = values[0][1] * factor
        if frequency < 0:
            raise InputError(f"{path}: row {number}, column 1: negative frequency {values[0][1]:g}; "
                             f"frequencies are >= 0")
        if frequency > MAX_FREQUENCY:
            raise InputError(f"{path}: row {number}, column 1: frequency {frequency:g} Hz is beyond "
                             f"{MAX_FREQUENCY:g} Hz; check the unit on the option line")
        _check_values(path, number, values, fmt)
    if declared is not None and declared[1] != len(rows):
        raise InputError(f"{path}: row {declared[0]}: [Number of Frequencies] says {declared[1]} but the "
                         f"file has {len(rows)} rows of network data")
    frequencies = [values[0][1] for _, values in rows]
    seen: dict[float, int] = {}
    for number, values in rows:
        if values[0][1] in seen:
            raise InputError(f"{path}: row {number}: frequency {values[0][1]:g} already given in row "
                             f"{seen[values[0][1]]}; keep one row per frequency")
        seen[values[0][1]] = number
    falls = [rows[k][0] for k in range(1, len(rows)) if frequencies[k] < frequencies[k - 1]]
    if falls:
        if nports == 2:
            raise InputError(f"{path}: row {falls[0]}: frequency falls below the row before it; a .s2p "
                             f"file's rows must rise (a falling frequency starts the noise data in the "
                             f"Touchstone standard, so its rows would be paired wrongly): sort the file")
        rows.sort(key=lambda row: row[1][0][1])
        warnings.append(f"sorted the rows into increasing frequency ({len(falls)} row(s) were out of order, "
                        f"first at row {falls[0]})")
    data = [" ".join(repr(v) for _, v in values) for _, values in rows]
    return "\n".join([*head, *data, *tail]) + "\n", warnings
