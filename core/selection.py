"""The selected columns of one file, chunk by chunk, as validated numbers.

``read_table`` and the streamed reader (``core.stream``) both read through ``Selection``, so they
see the same rows, numbers and messages whatever the chunk size: within a chunk the problem of the
lowest row wins (roles in the order x, y, weights, uncertainty), and rows with empty cells are
refused only after the whole file has been read, listing the first of them and their count.
"""

from __future__ import annotations

import numpy as np

from .cells import Marks, column_numbers
from .errors import DataError, message
from .validate import MAX_ABS

__all__ = ["Selection", "check_positive", "ROLES"]

ROLES = ("x", "y", "weights", "uncertainty")
_SHOWN = 12          # rows listed in the refusal of rows with empty cells

_POSITIVE = {"weights": ("a positive weight", "Drop the row or give it a positive weight"),
             "uncertainty": ("a positive uncertainty", "Uncertainties must be > 0 (weight = 1/u^2)")}


def _positivity(values, role, column, fname, rows):
    """(row, message) of the first weight or uncertainty that is not usable, or None."""
    bad = np.flatnonzero(values <= 0)
    if bad.size:
        what, fix = _POSITIVE[role]
        i = int(bad[0])
        return int(rows[i]), message(f"File '{fname}' column '{column}' row {int(rows[i])}", what,
                                     f"{values[i]:g}", fix)
    if role == "uncertainty":
        tiny = np.flatnonzero(values < 1.0 / np.sqrt(MAX_ABS))
        if tiny.size:
            i = int(tiny[0])
            return int(rows[i]), message(f"File '{fname}' column '{column}' row {int(rows[i])}",
                                         f"an uncertainty of at least {1.0 / np.sqrt(MAX_ABS):g} "
                                         f"(its weight 1/u^2 must stay <= {MAX_ABS:g})", f"{values[i]:g}",
                                         "Rescale the column (change its unit)")
    return None


def check_positive(values: np.ndarray, role: str, column: str, fname: str, rows: np.ndarray) -> np.ndarray:
    """Weights or uncertainties must be > 0; the message names the spreadsheet row."""
    p = _positivity(np.asarray(values, dtype=float), role, column, fname, rows)
    if p:
        raise DataError(p[1])
    return values


class Selection:
    """One read of the columns ``names`` (role -> column) of an opened source."""

    def __init__(self, source, names: dict):
        self.fname = source.fname
        self.source_notices = source.notices      # the source's own notes (a sheet adds some while read)
        self.names = {r: names[r] for r in ROLES if names.get(r) is not None}
        self.marks = Marks(source.fname, source.comma_decimal)
        self.blank_count = 0
        self.blank_first: list = []

    def numbers(self, rows: np.ndarray, cells: dict) -> tuple[dict, np.ndarray]:
        """(values of every role, mask of rows with an empty selected cell) of one chunk.

        Raises the DataError of the lowest row with an unusable cell."""
        vals, miss, problems = {}, np.zeros(len(rows), dtype=bool), []
        for order, (role, col) in enumerate(self.names.items()):
            v, m, p = column_numbers(cells[col], rows, col, self.marks)
            if p:
                problems.append((p[0], order, p[1]))
            vals[role] = v
            miss |= m
        for order, role in enumerate(self.names):
            if role in ("weights", "uncertainty"):
                ok = ~miss
                p = _positivity(vals[role][ok], role, self.names[role], self.fname, rows[ok])
                if p:
                    problems.append((p[0], order, p[1]))
        if problems:
            raise DataError(min(problems)[2])
        return vals, miss

    def note_blanks(self, rows) -> None:
        """Remember rows with an empty selected cell (the first few and their count)."""
        rows = np.asarray(rows)
        self.blank_count += int(rows.size)
        if len(self.blank_first) < _SHOWN:
            self.blank_first.extend(int(r) for r in rows[:_SHOWN - len(self.blank_first)])

    def blank_refusal(self) -> DataError:
        shown = ", ".join(map(str, self.blank_first)) + (" ..." if self.blank_count > _SHOWN else "")
        return DataError(message(f"File '{self.fname}' rows {shown}", "a value in every selected column",
                                 f"{self.blank_count} row(s) with empty cells",
                                 "Fill them in, or pass --blank-rows skip to leave those rows out"))

    def finish(self, blank_rows: str) -> None:
        """After the last chunk: refuse the rows with empty cells unless they are to be skipped."""
        if self.blank_count and blank_rows == "refuse":
            raise self.blank_refusal()

    def weights(self, kept: dict):
        """Row weights of the kept rows (1/u^2 for uncertainties), or None."""
        if "uncertainty" in kept:
            return 1.0 / kept["uncertainty"] ** 2
        return kept.get("weights")

    def notice(self) -> str | None:
        """Which decimal mark each selected column was read with (semicolon files)."""
        return self.marks.notice(self.names.values())
