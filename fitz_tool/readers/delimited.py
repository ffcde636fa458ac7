"""Delimited text as it comes off the bench: encoding, preamble, header, delimiter, decimal mark, numbers.

Layout rules:

* Encoding: UTF-8 with BOM, UTF-16 with BOM, UTF-8, else Latin-1 (which reads any byte, so it is last).
* Delimiter: tab, semicolon, comma or runs of spaces, whichever splits the most lines into data rows of
  one width (ties in that order). Quoted cells follow the usual CSV rules.
* Data rows: the lines with at least two numbers vote for the positions that hold numbers (a number in at
  least half of them); a data row has a number or a missing cell at each of those positions and anything
  elsewhere, so text columns (status, range, comment, timestamps) may stand beside the numbers.
* The header is the line just above the first row of numbers (a table with no header, such as ngspice
  ``wrdata`` output, is read only when ``--map ROLE=#N`` names its columns); a line of units only
  (``Hz;Ohm;deg``) just above the numbers is joined to the header above it (``Frequency (Hz)``).
  Everything above is preamble (instrument settings, dates), skipped and counted. A leading ``#`` or ``!``
  on the header line is ignored.
* Decimal mark: a comma when the numbers use one (only possible when the delimiter is not a comma); dots
  that then appear only as thousands separators (``1.234,5``) are removed. Mixed marks are refused.
* Cells: empty cells and instrument no-reading markers (``NaN``, ``n/a``, ``---``, ``***``) are *missing*
  (the row is dropped later with a counted warning); any other text is an error naming line and column.
* After the header, comment lines (``#``, ``!``, ``//``) and lines of one non-numeric word (``END``) are
  skipped and counted.
"""

from __future__ import annotations

import codecs
import csv
import os
import re
from dataclasses import dataclass

import numpy as np

from ..exceptions import InputError
from ..limits import OVERFLOW_MARKER, no_reading_as_nan
from ..progress import LONG_READ_LINES, READ_STEP_LINES
from ..progress import bar as progress_bar
from .headers import parse_unit

__all__ = ["TextTable", "decode_bytes", "split_table", "parse_number", "numeric_column"]

_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_NUMBER_COMMA = re.compile(r"[+-]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][+-]?\d+)?")
_THOUSANDS_DOT = re.compile(r"[+-]?\d{1,3}(?:\.\d{3})+(?:,\d*)?(?:[eE][+-]?\d+)?")
_THOUSANDS_COMMA = re.compile(r"[+-]?\d{1,3}(?:,\d{3})+(?:\.\d*)?(?:[eE][+-]?\d+)?")
_MISSING = re.compile(r"(?i:nan|-nan|na|n/a|#n/a|none|null|-+|\*+|[+-]?inf(?:inity)?)?")  # inf: no reading
_DELIMITERS = {"\t": "tab", ";": "semicolon", ",": "comma", " ": "spaces"}
_COMMENT = ("#", "!", "//")


@dataclass(frozen=True)
class TextTable:
    """The table found in a text file, cells still as text.

    Attributes
    ----------
    headers : tuple of str
        Column headers (units row, if any, joined in).
    rows : tuple of tuple of str
        Data rows, each as long as ``headers`` (short rows padded with empty cells).
    lines : tuple of int
        1-based line number in the file of each row.
    delimiter : str
        ``"\\t"``, ``";"``, ``","`` or ``" "`` (runs of spaces).
    decimal : str
        ``"."`` or ``","``.
    encoding : str
        Encoding the text was read in, in words.
    notes : tuple of str
        Lines skipped (preamble, comments, footer), in words.
    """

    headers: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    lines: tuple[int, ...]
    delimiter: str
    decimal: str
    encoding: str
    notes: tuple[str, ...]

    def describe(self) -> str:
        """The layout in words."""
        mark = "decimal comma" if self.decimal == "," else "decimal point"
        return f"{_DELIMITERS[self.delimiter]}-delimited text, {mark}, {self.encoding}"


def decode_bytes(raw: bytes, where: str) -> tuple[str, str]:
    """Text and encoding name (in words) of a file's bytes."""
    try:
        if raw.startswith(codecs.BOM_UTF8):
            text, encoding = raw[len(codecs.BOM_UTF8):].decode("utf-8"), "UTF-8 with BOM"
        elif raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
            text, encoding = raw.decode("utf-16"), "UTF-16"
        else:
            try:
                text, encoding = raw.decode("utf-8"), "UTF-8"
            except UnicodeDecodeError:
                text, encoding = raw.decode("latin-1"), "Latin-1"
    except UnicodeDecodeError as exc:
        raise InputError(f"{where}: not readable as text ({exc.reason} at byte {exc.start})") from None
    if "\x00" in text:
        raise InputError(f"{where}: binary data (NUL bytes), not a text export")
    return text, encoding


def _cells(line: str, delimiter: str) -> list[str]:
    if delimiter == " ":
        cells = line.split()
    elif '"' not in line:  # no quoting: the csv module's split is a plain split (and 4 x slower)
        cells = [c.strip() for c in line.split(delimiter)]
    else:
        cells = [c.strip() for c in next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))]
    while cells and cells[-1] == "":
        cells.pop()
    return cells


def _is_numeric(cell: str) -> bool:
    return bool(_NUMBER.fullmatch(cell) or _NUMBER_COMMA.fullmatch(cell) or _THOUSANDS_DOT.fullmatch(cell))


def _is_data(cells: list[str]) -> bool:
    """A row of numbers only (or missing cells), at least two of them."""
    numbers = sum(1 for c in cells if _is_numeric(c))
    return numbers >= 2 and all(_is_numeric(c) or _MISSING.fullmatch(c) for c in cells)


def _numeric_positions(rows: list[list[str]]) -> frozenset[int]:
    """Positions that hold a number in at least half of the rows (text columns are the others)."""
    if not rows:
        return frozenset()
    width = max(len(r) for r in rows)
    counts = [sum(1 for r in rows if p < len(r) and _is_numeric(r[p])) for p in range(width)]
    return frozenset(p for p, n in enumerate(counts) if 2 * n >= len(rows))


def _data_rule(lines: list[str], delimiter: str):
    """The test a line's cells must pass to be a data row, with text columns allowed beside the numbers.

    The lines with at least two numbers vote for the positions that hold numbers; a data row has a number
    (or a missing cell) at every one of those positions and anything (text, dates, status words) elsewhere.
    """
    split = [_cells(line, delimiter) for line in lines]
    mixed = [c for c in split if sum(1 for x in c if _is_numeric(x)) >= 2 and not c[0].startswith(_COMMENT)]
    positions = _numeric_positions(mixed)
    if len(positions) < 2:
        return _is_data

    def is_data(cells: list[str]) -> bool:
        numbers = sum(1 for c in cells if _is_numeric(c))
        return numbers >= 2 and all(p >= len(cells) or _is_numeric(cells[p]) or _MISSING.fullmatch(cells[p])
                                    for p in positions)
    return is_data


#: Lines of a long file on which the delimiter is chosen: the head, then lines spread over the rest.
_SAMPLE_HEAD, _SAMPLE_SPREAD = 2000, 3000


def _sample(lines: list[str]) -> list[str]:
    """The lines the delimiter is chosen on: all of a short file; of a long one, the first
    ``_SAMPLE_HEAD`` (metadata and header sit there) and ``_SAMPLE_SPREAD`` spread evenly over the rest."""
    if len(lines) <= _SAMPLE_HEAD + _SAMPLE_SPREAD:
        return lines
    step = max(1, (len(lines) - _SAMPLE_HEAD) // _SAMPLE_SPREAD)
    return lines[:_SAMPLE_HEAD] + lines[_SAMPLE_HEAD::step]


def _choose_delimiter(lines: list[str]):
    best, best_score, best_rule = ",", 0, _is_data
    lines = _sample(lines)
    for delimiter in _DELIMITERS:
        rule = _data_rule(lines, delimiter)
        widths = [len(c) for c in (_cells(line, delimiter) for line in lines) if rule(c)]
        if not widths:
            continue
        width = max(set(widths), key=widths.count)
        score = widths.count(width)
        if score > best_score:
            best, best_score, best_rule = delimiter, score, rule
    return best, best_score, best_rule


def _decimal(rows: list[tuple[str, ...]], delimiter: str, where: str) -> str:
    if delimiter == ",":
        return "."
    cells = [c for row in rows for c in row]
    comma = [c for c in cells if "," in c and _NUMBER_COMMA.fullmatch(c)]
    dot = [c for c in cells if "." in c and _NUMBER.fullmatch(c)]
    if comma and dot and not all(_THOUSANDS_DOT.fullmatch(c) for c in dot):
        raise InputError(f"{where}: numbers use both decimal points ({dot[0]!r}) and decimal commas "
                         f"({comma[0]!r}); export with one decimal mark")
    return "," if comma else "."


def _header(lines: list[str], first: int, delimiter: str, width: int, where: str,
            headerless: bool) -> tuple[list[str], int]:
    """Header cells for the table whose first data row is ``lines[first]``; also the header's line index.

    A table with no line above it gets the headers ``#1`` ... ``#N`` when ``headerless`` (the user named
    its columns with ``--map ROLE=#N``); header index -1 then.
    """
    above = [k for k in range(first) if lines[k].strip()]
    if not above and headerless:
        return [f"#{k + 1}" for k in range(width)], -1
    if not above:
        raise InputError(f"{where}: no header line above the first row of numbers (line {first + 1}); name "
                         f"the columns by position, e.g. for ngspice wrdata output (frequency, real, "
                         f"imaginary): --map frequency=#1 --map z_real=#2 --map z_imag=#3")

    def cells_of(k: int) -> list[str]:
        text = lines[k].strip().lstrip("#!").strip()
        cells = _cells(text, delimiter)
        if delimiter == " " and len(cells) != width:
            cells = [c for c in re.split(r"\t|\s{2,}", text) if c]
        return cells

    k = above[-1]
    cells = cells_of(k)
    if len(above) > 1 and len(cells) >= width and all(parse_unit(c) for c in cells if c):
        names = cells_of(above[-2])
        if len(names) == len(cells):
            return [f"{n} ({u})" if u else n for n, u in zip(names, cells, strict=True)], above[-2]
    if len(cells) < width:
        raise InputError(f"{where}: line {k + 1} (taken as the header) has {len(cells)} column(s) but the "
                         f"data below has {width}; fix the header so it names every column")
    return cells, k


def split_table(text: str, encoding: str, where: str, headerless: bool = False) -> TextTable:
    """Find preamble, header and data rows in the text of a delimited export (see the module docstring).

    ``headerless`` allows a table with no header line (columns then named ``#1`` ... ``#N``).
    """
    lines = text.splitlines()
    delimiter, score, is_data = _choose_delimiter(lines)
    if score == 0:
        raise InputError(f"{where}: no table of numbers found (expected rows of numbers separated by comma, "
                         f"semicolon, tab or spaces, below a header line)")
    first = next(k for k, line in enumerate(lines) if is_data(_cells(line, delimiter)))
    width = len(_cells(lines[first], delimiter))
    headers, header_index = _header(lines, first, delimiter, width, where, headerless)
    notes = []
    if header_index < 0:
        notes.append(f"no header line: columns named #1 to #{width} by position")
    elif header_index:
        notes.append(f"skipped {header_index} preamble line(s) above the header (line {header_index + 1})")
    rows, numbers, skipped = [], [], []
    with progress_bar(f"reading {os.path.basename(where)}", len(lines) - header_index - 1, "line",
                      show=len(lines) >= LONG_READ_LINES) as bar:
        for start in range(header_index + 1, len(lines), READ_STEP_LINES):
            for k in range(start, min(start + READ_STEP_LINES, len(lines))):
                line = lines[k].strip()
                if not line or k < first:
                    continue
                cells = _cells(line if delimiter == " " else lines[k], delimiter)  # leading empty cell counts
                if line.startswith(_COMMENT) or (len(cells) == 1 and not _is_numeric(cells[0])):
                    skipped.append(k + 1)
                    continue
                if len(cells) > len(headers):
                    raise InputError(f"{where}: line {k + 1} has {len(cells)} cells but the header has "
                                     f"{len(headers)} columns")
                rows.append(tuple(cells) + ("",) * (len(headers) - len(cells)))
                numbers.append(k + 1)
            bar.update(min(start + READ_STEP_LINES, len(lines)) - start)
    if skipped:
        notes.append(f"skipped {len(skipped)} comment or non-table line(s) below the header "
                     f"(line(s) {', '.join(map(str, skipped[:5]))}{'...' if len(skipped) > 5 else ''})")
    decimal = _decimal(rows, delimiter, where)
    return TextTable(headers=tuple(headers), rows=tuple(rows), lines=tuple(numbers), delimiter=delimiter,
                     decimal=decimal, encoding=encoding, notes=tuple(notes))


def parse_number(cell: str, decimal: str = ".") -> float:
    """A cell as float; NaN for a missing cell; ValueError for anything else.

    ``decimal`` is ``"."`` or ``","``; the other mark is accepted only as a thousands separator.
    """
    cell = cell.strip()
    if _MISSING.fullmatch(cell):
        return float("nan")
    if decimal == ",":
        if _THOUSANDS_DOT.fullmatch(cell):
            cell = cell.replace(".", "")
        if _NUMBER_COMMA.fullmatch(cell):
            return no_reading_as_nan(float(cell.replace(",", ".")))
    else:
        if _THOUSANDS_COMMA.fullmatch(cell):
            cell = cell.replace(",", "")
        if _NUMBER.fullmatch(cell):
            return no_reading_as_nan(float(cell))
    raise ValueError(f"not a number: {cell!r}")


#: Per decimal mark, a table that deletes every character a plain number may hold (digits, sign, mark,
#: exponent, blanks, the newlines between cells): a column left with nothing has only such characters.
_PLAIN_CHARACTERS = {mark: str.maketrans("", "", f"0123456789+-eE \t\n{mark}") for mark in ".,"}


def _plain_column(table: TextTable, index: int) -> np.ndarray | None:
    """The column as floats when every cell is a plain number in the table's decimal mark (one pass over
    the whole column, then one conversion); None when any cell needs the cell-by-cell rules of
    :func:`parse_number` (missing cells, thousands separators, text). Same values either way: within those
    characters Python's float() accepts exactly the plain-number pattern (``_NUMBER`` with blanks around)."""
    cells = [row[index] for row in table.rows]
    if not cells or "\n".join(cells).translate(_PLAIN_CHARACTERS[table.decimal]):
        return None
    try:
        values = np.array([c.replace(",", ".") for c in cells] if table.decimal == "," else cells,
                          dtype=float)
    except ValueError:  # e.g. an empty cell, a lone sign or mark: the cell-by-cell rules decide
        return None
    with np.errstate(invalid="ignore"):
        values[~np.isfinite(values) | (np.abs(values) >= OVERFLOW_MARKER)] = np.nan  # no reading
    return values


def numeric_column(table: TextTable, index: int, where: str, rows: np.ndarray | None = None) -> np.ndarray:
    """Column ``index`` as floats (NaN where missing); InputError naming line and column for other text.

    ``rows`` (bool per row) limits the reading to those rows; the others come back as NaN.
    """
    fast = _plain_column(table, index)
    if fast is not None:
        if rows is not None:
            fast[~rows] = np.nan
        return fast
    values = np.full(len(table.rows), np.nan)
    for k, row in enumerate(table.rows):
        if rows is not None and not rows[k]:
            continue
        try:
            values[k] = parse_number(row[index], table.decimal)
        except ValueError:
            raise InputError(f"{where}: line {table.lines[k]}, column {table.headers[index]!r}: "
                             f"{row[index]!r} is not a number; correct or delete that row") from None
    return values
