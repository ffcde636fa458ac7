"""The total work budget of a fit: a wall-clock limit (s) and a cap on model evaluations.

An evaluation is the circuit's impedance at one frequency (a residual over M points costs M, a Jacobian
M times the free parameters, a batch of K candidates K M). Every evaluation in :mod:`.problem` is charged
here; past either limit the fit stops with :class:`WorkLimitError`, which says what to reduce. The budget
lives in a context variable: each call, and each thread, has its own (a thread started inside a budgeted
call runs without one); forked pool workers inherit their parent's context, so its deadline, and each counts
its own evaluations.
"""

from __future__ import annotations

import functools
import time
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass

from ..exceptions import InputError, WorkLimitError

__all__ = ["DEFAULT_MAX_TIME", "DEFAULT_MAX_EVALUATIONS", "work_budget", "budgeted", "charge",
           "WorkLimitError"]

#: Default wall-clock limit of one fit command or API call (s).
DEFAULT_MAX_TIME = 600.0
#: Default cap on model evaluations (impedance values at one frequency) of one fit.
DEFAULT_MAX_EVALUATIONS = 20_000_000_000

_ADVICE = ("reduce the points (--band or a coarser sweep), the model elements (or --fix some), the auto "
           "candidates (name one model instead of auto) or --jobs")


@dataclass
class _Budget:
    deadline: float | None
    max_time: float | None
    max_evaluations: int | None
    used: int = 0


#: The budget of the call running in this context (None: no limit).
_ACTIVE: ContextVar[_Budget | None] = ContextVar("fitz_tool_work_budget", default=None)


def _check_limit(value, what: str) -> None:
    if value is not None and not (isinstance(value, (int, float)) and 0 < value < float("inf")):
        raise InputError(f"{what}={value!r}: give a positive finite number (or None for no limit)")


@contextmanager
def work_budget(max_time: float | None = DEFAULT_MAX_TIME,
                max_evaluations: int | None = DEFAULT_MAX_EVALUATIONS):
    """Limit the work inside the block; a budget already running (an outer call) is kept as it is."""
    if _ACTIVE.get() is not None:
        yield
        return
    _check_limit(max_time, "max_time")
    _check_limit(max_evaluations, "max_evaluations")
    deadline = None if max_time is None else time.monotonic() + float(max_time)
    token = _ACTIVE.set(_Budget(deadline, max_time, max_evaluations))
    try:
        yield
    finally:
        _ACTIVE.reset(token)


def charge(evaluations: int) -> None:
    """Count ``evaluations`` model values; raise WorkLimitError past the time or the evaluation limit."""
    budget = _ACTIVE.get()
    if budget is None:
        return
    budget.used += int(evaluations)
    if budget.max_evaluations is not None and budget.used > budget.max_evaluations:
        raise WorkLimitError(f"the fit stopped at its work limit of {int(budget.max_evaluations):,} model "
                             f"evaluations (--max-evaluations): {_ADVICE}; nothing was written")
    if budget.deadline is not None and time.monotonic() > budget.deadline:
        raise WorkLimitError(f"the fit stopped at its time limit of {budget.max_time:g} s (--max-time): "
                             f"{_ADVICE}, or raise --max-time; nothing was written")


def budgeted(function):
    """Give ``function`` the keyword arguments ``max_time`` and ``max_evaluations`` (defaults above): its
    whole call runs inside :func:`work_budget`."""
    @functools.wraps(function)
    def wrapper(*args, max_time: float | None = DEFAULT_MAX_TIME,
                max_evaluations: int | None = DEFAULT_MAX_EVALUATIONS, **kwargs):
        with work_budget(max_time, max_evaluations):
            return function(*args, **kwargs)

    return wrapper
