"""``curvewright apply``: predict new rows with a saved choice file, as CSV (the input's columns plus
prediction, band limits and an extrapolation flag)."""

from __future__ import annotations

import sys

from core import defaults
from core.files import write_atomic

from .common import STDOUT, add_blank_rows, add_force, add_out, add_reader_args, load_rows
from .readings import add_reading_args, as_text_safe, reading_options, reading_values


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
    add_reading_args(p)
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
    ru, rw = reading_values(reading, t)
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
