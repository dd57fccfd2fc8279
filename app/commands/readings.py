"""Options and output guards shared by the commands that use a saved curve on new rows (apply, invert,
check): a new reading's own uncertainty or weight, and CSV cells made safe for spreadsheets."""

from __future__ import annotations

import numpy as np

from core.cells import is_number
from core.errors import ParameterError, message

__all__ = ["add_reading_args", "reading_options", "reading_values", "guard_cell", "as_text_safe", "FORMULA_START"]

# A spreadsheet opening the CSV treats a cell starting with one of these as a formula. Common
# practice (OWASP, "CSV Injection"): prefix such text cells with a single quote so they show as
# text. Numbers, negative ones included, are left as they are.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def add_reading_args(p, what: str = "each new reading"):
    """--reading-uncertainty and --reading-weight (a number or a column of the data)."""
    p.add_argument("--reading-uncertainty", metavar="VALUE|COL",
                   help=f"standard uncertainty of {what}, in y units (a number or a column); for curves fitted "
                        "with stated uncertainties (default: interpolated from the calibration rows' u)")
    p.add_argument("--reading-weight", metavar="VALUE|COL",
                   help=f"relative weight of {what} (a number or a column); for curves fitted with relative "
                        "weights (default: the calibration rows' median weight)")


def reading_options(args, c) -> dict:
    """--reading-uncertainty / --reading-weight as a number or a column of the data, checked against the
    curve's weights kind."""
    kind = c.reading.kind if c.reading is not None else "none"
    out = {"u": None, "w": None, "columns": {}}
    for opt, key, role, fits in (("reading_uncertainty", "u", "uncertainty", "uncertainty"),
                                 ("reading_weight", "w", "weights", "relative")):
        spec = getattr(args, opt)
        if spec is None:
            continue
        flag = "--" + opt.replace("_", "-")
        if kind != fits:
            raise ParameterError(message(f"Option {flag}", f"a curve fitted with {fits} weights",
                                         f"one fitted with {'no' if kind == 'none' else kind} weights",
                                         "Leave the option out: the band uses the curve's own residual scatter"
                                         if kind in ("none", "relative") else "Use --reading-uncertainty"))
        try:
            value = float(spec)
        except ValueError:
            out["columns"][role] = spec
            continue
        if not (np.isfinite(value) and value > 0):
            raise ParameterError(message(f"Option {flag}", "a positive number or a column name", repr(spec)))
        out[key] = value
    return out


def reading_values(opts: dict, table):
    """(reading u, reading weight) for ``core.Choice`` from ``reading_options`` and the table read with its
    columns: a number, one value per row, or None for the curve's default."""
    ru = opts["u"] if opts["u"] is not None else (None if "uncertainty" not in opts["columns"]
                                                  else 1.0 / np.sqrt(table.weights))
    rw = opts["w"] if opts["w"] is not None else (None if "weights" not in opts["columns"] else table.weights)
    return ru, rw


def guard_cell(value):
    """A copied text cell that a spreadsheet would run as a formula, prefixed with ' (see FORMULA_START);
    numbers and other cells unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_START) and not is_number(value, comma_decimal=True):
        return "'" + value
    return value


def as_text_safe(frame):
    """The input's columns (names and text cells) with every formula-like text guarded."""
    import pandas as pd

    frame = frame.copy()
    frame.columns = [guard_cell(str(c)) for c in frame.columns]
    for c in frame.columns:
        if frame[c].dtype == object or pd.api.types.is_string_dtype(frame[c].dtype):
            frame[c] = frame[c].map(guard_cell).astype(object)
    return frame
