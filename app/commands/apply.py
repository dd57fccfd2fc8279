"""``curvewright apply``: predict new rows with a saved choice file, as CSV (the input's columns plus
prediction, interval and an extrapolation flag)."""

from __future__ import annotations

import sys

from core.files import write_atomic

from .common import add_force, add_missing, add_out, add_sheet, load_rows


def add_parser(subparsers):
    p = subparsers.add_parser("apply", help="predict new rows with a saved choice file")
    p.add_argument("choice", help="choice file (JSON)")
    p.add_argument("data", help="rows to predict (CSV/TSV, .xlsx, .parquet)")
    p.add_argument("--x", required=True)
    add_out(p, help="output CSV (default: standard output)")
    p.add_argument("--level", type=float, default=0.95, help="prediction-interval coverage")
    add_missing(p)
    add_sheet(p)
    add_force(p)
    return p


def run(args, out) -> int:
    from core.choice import Choice

    c = Choice.load(args.choice)
    t, frame = load_rows(args.data, args.x, None, args.missing, args.sheet)
    outside = _add_predictions(c, t.x.values, frame, args.level)
    _write_table(args, frame, out)
    if outside.any():
        lo_x, hi_x = c.x_range
        print(f"warning: {int(outside.sum())} row(s) lie outside the fitted x range [{lo_x:g}, {hi_x:g}]: "
              "those predictions are extrapolations.", file=sys.stderr)
    if not c.has_interval:
        print("note: no prediction interval: the choice has lambda > 0 (classical intervals need lambda = 0).",
              file=sys.stderr)
    return 0


def _add_predictions(c, x, frame, level):
    """Prediction, interval bounds (when the choice has them) and the outside-range flag as new
    columns of ``frame``; returns the flag."""
    frame["prediction"] = c.predict(x)
    if c.has_interval:
        _, lo, hi = c.predict(x, interval="prediction", level=level)
        pct = f"{100 * level:g}"
        frame[f"prediction_lower_{pct}"] = lo
        frame[f"prediction_upper_{pct}"] = hi
    lo_x, hi_x = c.x_range
    outside = (x < lo_x) | (x > hi_x)
    frame["outside_fitted_range"] = outside
    return outside


def _write_table(args, frame, out):
    """The frame as CSV to --out, or to standard output."""
    text = frame.to_csv(index=False)
    if args.out:
        write_atomic(args.out, text, force=args.force)
        print(f"wrote {len(frame)} predictions to {args.out}", file=out)
    else:
        out.write(text)
