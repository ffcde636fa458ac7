"""The one error hierarchy of fitz_tool.

Errors are raised deep inside with a message that already names the file, row, column or
parameter and says what to do; ``cli.py`` turns them into one line on stderr and an exit code.
"""

from __future__ import annotations

__all__ = ["FitzError", "InputError", "ModelSyntaxError", "FitError", "WorkLimitError", "OutputError"]


class FitzError(Exception):
    """Base class of every error fitz_tool raises on purpose."""

    exit_code = 1


class InputError(FitzError):
    """A bench file, option or value that cannot be used as given."""

    exit_code = 2


class ModelSyntaxError(FitzError):
    """A circuit expression that does not parse; ``column`` is 1-based (None when not positional)."""

    exit_code = 3

    def __init__(self, message: str, expression: str = "", column: int | None = None):
        self.expression = expression
        self.column = column
        if column is not None and expression:
            message = f"{message} at column {column}: {_excerpt(expression, column)}"
        super().__init__(message)


def _excerpt(expression: str, column: int, width: int = 60) -> str:
    """The expression, or for a long one the ``width`` characters around ``column`` with ``...`` marks."""
    if len(expression) <= width:
        return repr(expression)
    start = max(0, min(column - 1 - width // 2, len(expression) - width))
    piece = expression[start:start + width]
    return f"{'...' if start > 0 else ''}{piece!r}{'...' if start + width < len(expression) else ''}"


class FitError(FitzError):
    """A fit that cannot be attempted (e.g. more free parameters than data)."""

    exit_code = 4


class WorkLimitError(FitzError):
    """A fit stopped at its work budget (time or model evaluations). Not a FitError: model selection
    skips a candidate that cannot be fitted, but a budget stops the whole run."""

    exit_code = 4


class OutputError(FitzError):
    """An output that cannot be written (e.g. it would overwrite an input file)."""

    exit_code = 5
