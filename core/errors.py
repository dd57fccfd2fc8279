"""Error and warning types shared by every part of curvewright.

Each subclasses the builtin whose meaning it shares, so callers that only
know Python's own exceptions still catch them sensibly.
"""

from __future__ import annotations

__all__ = ["CurvewrightError", "DataError", "ParameterError", "NumericalWarning", "message"]


class CurvewrightError(Exception):
    """Base of every error this project raises on purpose."""


class DataError(CurvewrightError, ValueError):
    """The user's data cannot be used as given (names file, row, column, fix)."""


class ParameterError(CurvewrightError, ValueError):
    """A parameter (degree, lambda, fold count, ...) is out of its allowed range."""


class NumericalWarning(UserWarning):
    """Numerical trouble that was handled (rank deficiency, ill-conditioning)."""


def message(what: str, expected: str, got: object | None = None, fix: str | None = None) -> str:
    """Format a message in the project's one shape.

    ``"<what>: expected <expected>, got <got>. <fix>"``; ``got`` and ``fix``
    are optional.

    Examples
    --------
    >>> message("Parameter 'degree'", "an integer from 0 to 30", 31)
    "Parameter 'degree': expected an integer from 0 to 30, got 31."

    ``got`` is inserted as written: quote raw cell values yourself (``repr``).
    """
    text = f"{what}: expected {expected}"
    if got is not None:
        text += f", got {got}"
    text += "."
    if fix:
        text += " " + fix.rstrip(".") + "."
    return text
