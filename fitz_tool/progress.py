"""Progress of long work: a bar on stderr, or nothing at all.

The decision is made once, by the face that owns the terminal: :func:`wanted` (stderr is a terminal and the
user did not ask for quiet). The command line hands it to the library as a context, :func:`shown`; library
code never prints, it opens :func:`bar` around long work (long reads, profile-likelihood intervals, Monte
Carlo draws, the parts of a lot) and updates it. The bar is silent (nothing written, same methods) outside
:func:`shown`, in another process (forked pool workers inherit the context), in another thread, and inside
a drawn bar: one bar at a time, the outermost long work shows.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar

__all__ = ["wanted", "shown", "bar", "LONG_READ_LINES", "READ_STEP_LINES"]

#: A file of at least this many lines shows a bar while it is read (on a terminal).
LONG_READ_LINES = 100_000
#: Lines read between two updates of a reading bar.
READ_STEP_LINES = 50_000

#: Process id of the process that shows bars (None: no bars), set by :func:`shown`.
_SHOWN: ContextVar[int | None] = ContextVar("fitz_tool_progress_shown", default=None)
#: True while a bar is drawn: bars opened inside it stay silent.
_OPEN: ContextVar[bool] = ContextVar("fitz_tool_progress_open", default=False)


def wanted(quiet: bool = False, stream=None) -> bool:
    """True when a bar should be drawn: ``stream`` (default stderr) is a terminal and not ``quiet``."""
    stream = sys.stderr if stream is None else stream
    isatty = getattr(stream, "isatty", None)
    return not quiet and callable(isatty) and bool(isatty())


@contextmanager
def shown(show: bool = True) -> Iterator[None]:
    """Inside the block, bars of this process are drawn on stderr when ``show`` (else none are)."""
    token = _SHOWN.set(os.getpid() if show else None)
    try:
        yield
    finally:
        _SHOWN.reset(token)


class _Silent:
    """A bar that shows nothing (the methods of tqdm that fitz_tool uses)."""

    def update(self, n: float = 1) -> None:
        pass

    def set_postfix(self, *args, **kwargs) -> None:
        pass

    def set_postfix_str(self, text: str = "", refresh: bool = True) -> None:
        pass


@contextmanager
def bar(what: str, total: int | None = None, unit: str = "step", show: bool = True, leave: bool = False):
    """A tqdm bar on stderr for the block (``total`` steps of ``unit``; None: a counter), or a silent one.

    ``show`` is the caller's own condition (e.g. a file long enough to be worth a bar); the bar is drawn
    only when it holds, :func:`shown` is active in this process and no other bar is drawn. ``leave``: the
    final state stays on the terminal (else the line is cleared).
    """
    if not (show and _SHOWN.get() == os.getpid() and not _OPEN.get()):
        yield _Silent()
        return
    from tqdm import tqdm

    tqdm.monitor_interval = 0  # no monitor thread: a process pool may then start its workers by fork
    progress = tqdm(total=total, desc=what, unit=unit, file=sys.stderr, leave=leave, dynamic_ncols=True)
    token = _OPEN.set(True)
    try:
        yield progress
    finally:
        _OPEN.reset(token)
        progress.close()
