"""``curvewright check``: score a saved choice file on new labelled rows."""

from __future__ import annotations

import sys

from .common import add_blank_rows, add_force, add_json, add_reader_args, load_rows, text_out, write_json


def add_parser(subparsers):
    p = subparsers.add_parser("check", help="score a saved choice file on new labelled rows")
    p.add_argument("choice")
    p.add_argument("data")
    p.add_argument("--x", required=True)
    p.add_argument("--y", required=True)
    add_blank_rows(p)
    add_reader_args(p)
    add_json(p, help="write the scores as JSON here")
    add_force(p)
    return p


def run(args, out) -> int:
    from core.choice import Choice
    from core.choice_build import score

    c = Choice.load(args.choice)
    for note in c.notices:
        print(f"note: {note}", file=sys.stderr)
    t, _ = load_rows(args, args.y)
    sc = score(c, t.x.values, t.y.values)
    _print_scores(c, sc, text_out(args, out))
    _warn_about_rows(c, t, sc)
    if args.json:
        write_json(args.json, sc, force=args.force, out=out)
    return 0


def _print_scores(c, sc, out):
    """Errors on the new rows next to the cross-validation error the curve was chosen with."""
    print(f"{sc['n']} rows: RMSE {sc['rmse']:.6g}  MAE {sc['mae']:.6g}  max |error| {sc['max_abs_error']:.6g}"
          f"  bias (mean of y - prediction) {sc['bias']:.6g}", file=out)
    print(f"saved curve's CV RMSE was {c.doc['validation']['cv_rmse']:.6g}", file=out)


def _warn_about_rows(c, t, sc):
    """Extrapolated rows, and whether these rows are the ones the curve was chosen on (stderr)."""
    if sc["outside_fitted_range"]:
        print(f"warning: {sc['outside_fitted_range']} row(s) outside the fitted x range "
              f"[{sc['fitted_x_range'][0]:g}, {sc['fitted_x_range'][1]:g}] (extrapolation).", file=sys.stderr)
    if t.columns_sha256 == c.doc["data"]["columns_sha256"]:
        print("warning: these are the rows the curve was chosen on (same fingerprint): not an independent check.",
              file=sys.stderr)
    else:
        print("note: data fingerprint differs from the data the curve was chosen on.", file=sys.stderr)
