"""Text columns beside the numbers: the columns no role uses, and the instrument's status column.

A column that no role uses may hold anything (text, dates, timestamps, empty cells); it is listed in the
provenance as ignored. A *status column* is an unused column whose header names a status (``Status``,
``State``, ``Flag``, ``Overload``, ``Valid``), else the one unused column whose every non-empty cell is a
status word, one of them bad. Rows whose
status reads as a bad reading (overload, error, clipped, unlocked, invalid, under/over range) are dropped with
a counted warning; rows with a good word (``OK``, ``PASS``, ``VALID``, ``AUTO``, ``LOCKED``) or an
empty cell are kept; a word that is neither is kept and named in a warning, never guessed.
``--map status=HEADER`` names the status column when its header does not say so.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..exceptions import InputError
from .delimited import TextTable

__all__ = ["BAD_STATUS", "GOOD_STATUS", "StatusCheck", "check_status"]

#: Status words that mark a reading as not valid (case ignored).
BAD_STATUS = frozenset({"ovld", "ovl", "ovf", "ovlo", "overload", "overloaded", "over", "overrange",
                        "over-range", "or", "err", "error", "fail", "failed", "invalid", "inv", "bad",
                        "clip", "clipped", "clipping", "under", "underrange", "under-range", "ur", "uncal",
                        "unlocked", "unlock", "nolock", "timeout", "ng"})
#: Status words that mark a reading as valid (case ignored).
GOOD_STATUS = frozenset({"ok", "pass", "passed", "valid", "good", "normal", "auto", "locked", "lock",
                         "ready", "done", "meas", "measured"})
_STATUS_HEADER = re.compile(r"(?i)^\W*(?:status|state|flags?|overload|ovld|valid(?:ity)?|condition|"
                            r"meas(?:urement)?[\s_]*status)\W*$")


@dataclass(frozen=True)
class StatusCheck:
    """Rows to drop for their status, and what was ignored, in words.

    Attributes
    ----------
    bad : ndarray of bool
        True for each row whose status marks it as not valid.
    ignored : tuple of str
        Headers of the columns no role uses.
    status_header : str or None
        Header of the status column, if one was found.
    steps, warnings : tuple of str
        What was done and what the user should know, in words.
    """

    bad: np.ndarray
    ignored: tuple[str, ...]
    status_header: str | None
    steps: tuple[str, ...]
    warnings: tuple[str, ...]


def _word(cell: str) -> str:
    return cell.strip().strip("\"'").strip().casefold()


def _is_status_column(header: str, cells: Sequence[str]) -> bool:
    """Whether every non-empty cell of a column is a status word, with at least one bad one."""
    words = {_word(c) for c in cells} - {""}
    letters = {w for w in words if not w.isdigit()}
    return bool(letters & BAD_STATUS) and words <= BAD_STATUS | GOOD_STATUS


def check_status(table: TextTable, used: set[int], status_header: str | None, where: str) -> StatusCheck:
    """Find the ignored columns and the status column of a table, and the rows their status marks bad.

    Parameters
    ----------
    table : TextTable
        The table as read.
    used : set of int
        Positions of the columns that roles use.
    status_header : str or None
        Header (or ``#N``) of the status column from ``--map status=...``, else None (found by header or
        content).
    where : str
        File name for messages.
    """
    n = len(table.rows)
    ignored = [k for k in range(len(table.headers)) if k not in used]
    column: int | None = None
    if status_header is not None:
        text = status_header.strip()
        hits = ([int(text[1:]) - 1] if text.startswith("#") and text[1:].isdigit() else
                [k for k, h in enumerate(table.headers) if h.strip().casefold() == text.casefold()])
        if len(hits) != 1 or not 0 <= hits[0] < len(table.headers):
            found = ", ".join(repr(h) for h in table.headers)
            raise InputError(f"{where}: --map status={status_header!r}: no single column of that name; "
                             f"headers found: {found}")
        if hits[0] in used:
            raise InputError(f"{where}: --map status={status_header!r}: that column is already used for a "
                             f"number; name the status column")
        column = hits[0]
    else:
        named = [k for k in ignored if _STATUS_HEADER.match(table.headers[k].strip())]
        candidates = named or [k for k in ignored
                               if _is_status_column(table.headers[k], [r[k] for r in table.rows])]
        column = candidates[0] if len(candidates) == 1 else None
    steps, warnings = [], []
    bad = np.zeros(n, dtype=bool)
    if ignored:
        steps.append("ignored column(s) no role uses: " + ", ".join(repr(table.headers[k]) for k in ignored))
    if column is None:
        return StatusCheck(bad, tuple(table.headers[k] for k in ignored), None, tuple(steps), ())
    header = table.headers[column]
    words = [_word(r[column]) for r in table.rows]
    bad = np.array([w in BAD_STATUS for w in words], dtype=bool)
    unknown = sorted({w for w in words if w and w not in BAD_STATUS | GOOD_STATUS})
    marks = ", ".join(sorted(BAD_STATUS & set(words)))
    steps.append(f"status column {header!r}: rows marked {marks} are dropped" if bad.any()
                 else f"status column {header!r}: every row reads as valid")
    if unknown:
        shown = ", ".join(repr(w) for w in unknown[:5])
        warnings.append(f"status column {header!r} holds word(s) {shown} that read neither as valid nor as "
                        f"bad; those rows were kept")
    return StatusCheck(bad, tuple(table.headers[k] for k in ignored), header, tuple(steps), tuple(warnings))
