"""``curvewright apply``: predict new rows with a saved choice file, as CSV (the input's columns plus
prediction, band limits and an extrapolation flag)."""

from __future__ import annotations

import sys

import numpy as np

from core import defaults
from core.errors import ParameterError, message
from core.cells import is_number
from core.files import write_atomic

from .common import STDOUT, add_blank_rows, add_force, add_out, add_reader_args, load_rows

# A spreadsheet opening the CSV treats a cell starting with one of these as a formula. Common
# practice (OWASP, "CSV Injection"): prefix such text cells with a single quote so they show as
# text. Numbers, negative ones included, are left as they are.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def add_parser(subparsers):
    p = subparsers.add_parser("apply", help="predict new rows with a saved choice file")
    p.add_argument("choice", help="choice file (JSON)")
    p.add_argument("data", help="rows to predict (CSV/TSV, .xlsx, .parquet)")
    p.add_argument("--x", required=True)
    add_out(p, help="output CSV (default, or '-': standard output)")
    p.add_argument("--band", choices=["reading", "curve"], default="reading",
                   help="band written beside each prediction: where one new reading lies (default) or where "
                        "the curve lies")
    p.add_argument("--coverage", type=float, default=defaults.COVERAGE, help="share the band covers (default 0.95)")
    p.add_argument("--reading-uncertainty", metavar="VALUE|COL",
                   help="standard uncertainty of each new reading, in y units (a number or a column); for curves "
                        "fitted with stated uncertainties (default: interpolated from the calibration rows' u)")
    p.add_argument("--reading-weight", metavar="VALUE|COL",
                   help="relative weight of each new reading (a number or a column); for curves fitted with "
                        "relative weights (default: the calibration rows' median weight)")
    add_blank_rows(p)
    add_reader_args(p)
    add_force(p)
    return p


def run(args, out) -> int:
    from core.choice import Choice

    c = Choice.load(args.choice)
    for note in c.notices:
        print(f"note: {note}", file=sys.stderr)
    reading = reading_options(args, c)
    t, frame = load_rows(args, frame=True, **reading["columns"])
    frame = as_text_safe(frame)
    ru = reading["u"] if reading["u"] is not None else (None if "uncertainty" not in reading["columns"]
                                                        else 1.0 / np.sqrt(t.weights))
    rw = reading["w"] if reading["w"] is not None else (None if "weights" not in reading["columns"] else t.weights)
    outside = _add_predictions(c, t.x.values, frame, args.band, args.coverage, ru, rw)
    _write_table(args, frame, out)
    if outside.any():
        lo_x, hi_x = c.x_range
        print(f"warning: {int(outside.sum())} row(s) lie outside the fitted x range [{lo_x:g}, {hi_x:g}]: "
              "those predictions are extrapolations.", file=sys.stderr)
    if not c.has_band:
        print("note: no band: this curve was fitted from statistics alone with the lasso or elastic net, "
              "which leaves no covariance (fit it from the rows for a bootstrap band).", file=sys.stderr)
    elif args.band == "reading":
        print(f"note: {args.band} band ({c.band_label()}) for a {c.reading.describe(ru, rw)}.", file=sys.stderr)
    return 0


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


def _add_predictions(c, x, frame, band, coverage, reading_u=None, reading_weight=None):
    """Prediction, band limits (when the choice has them) and the outside-range flag as new
    columns of ``frame``; returns the flag."""
    frame["prediction"] = c.predict(x)
    if c.has_band:
        _, lo, hi = c.predict(x, band=band, coverage=coverage, reading_u=reading_u, reading_weight=reading_weight)
        pct = f"{100 * coverage:g}"
        frame[f"{band}_low_{pct}"] = lo
        frame[f"{band}_high_{pct}"] = hi
    lo_x, hi_x = c.x_range
    outside = (x < lo_x) | (x > hi_x)
    frame["outside_fitted_range"] = outside
    return outside


def _write_table(args, frame, out):
    """The frame as CSV to --out, or to standard output (no --out, or '-')."""
    text = frame.to_csv(index=False)
    if args.out and args.out != STDOUT:
        write_atomic(args.out, text, force=args.force)
        print(f"wrote {len(frame)} predictions to {args.out}", file=out)
    else:
        out.write(text)
