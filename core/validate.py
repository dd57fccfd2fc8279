"""Checks on in-memory arrays shared by every public function (one place, one wording)."""

from __future__ import annotations

import numpy as np

from .errors import DataError, message

__all__ = ["check_xyw", "require_spread", "single_x", "MAX_ABS"]

MAX_ABS = 1e150


def _column(name: str, values) -> np.ndarray:
    try:
        arr = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise DataError(message(f"Column {name}", "numbers", type(values).__name__)) from exc
    if arr.ndim != 1:
        raise DataError(message(f"Column {name}", "a one-dimensional array", f"shape {arr.shape}"))
    bad = np.flatnonzero(~np.isfinite(arr))
    if bad.size:
        rows = ", ".join(str(i + 1) for i in bad[:10]) + (" ..." if bad.size > 10 else "")
        raise DataError(message(f"Column {name} row {rows}", "finite numbers",
                                f"{arr[bad[0]]}", "Remove or fill missing and infinite values"))
    big = np.flatnonzero(np.abs(arr) > MAX_ABS)
    if big.size:
        raise DataError(message(f"Column {name} row {big[0] + 1}", f"|value| <= {MAX_ABS:g}",
                                f"{arr[big[0]]:g}", "Rescale the column (change its unit)"))
    return arr


def check_xyw(x, y, weights=None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Validated float arrays x, y, w (w = ones when not given).

    Raises
    ------
    DataError
        Naming the column and the first offending row (1-based).
    """
    x = _column("x", x)
    y = _column("y", y)
    if x.shape != y.shape:
        raise DataError(message("Columns x and y", "the same length", f"{x.size} and {y.size}"))
    if x.size == 0:
        raise DataError(message("Data", "at least one row", "none"))
    if weights is None:
        return x, y, np.ones_like(x)
    w = _column("weights", weights)
    if w.shape != x.shape:
        raise DataError(message("Column weights", f"{x.size} values", w.size))
    bad = np.flatnonzero(w <= 0)
    if bad.size:
        raise DataError(message(f"Column weights row {bad[0] + 1}", "a positive number",
                                f"{w[bad[0]]:g}", "Drop the row or give it a positive weight"))
    return x, y, w


def single_x(where: str, value) -> DataError:
    """The one refusal for data whose x takes a single value (``where`` names file/column)."""
    return DataError(message(where, "at least two distinct x values", f"only {float(value)!r}",
                             "A curve cannot be fitted against a single x value"))


def require_spread(x: np.ndarray, where: str = "Column x") -> None:
    """Refuse x without two distinct values (the one place this data check lives)."""
    if x.size and not x.min() < x.max():
        raise single_x(where, x[0])
