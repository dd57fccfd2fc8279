"""``curvewright check``: score a saved choice file on new labelled rows and, with --tolerance, decide per
row and overall whether the curve meets a tolerance (simple or guarded acceptance)."""

from __future__ import annotations

import sys

from core.files import write_atomic

from .readings import add_reading_args, as_text_safe, reading_options, reading_values
from .common import (STDOUT, add_blank_rows, add_force, add_json, add_out, add_reader_args, load_rows, text_out,
                     write_json)


def add_parser(subparsers):
    p = subparsers.add_parser("check", help="score a saved choice file on new labelled rows; check a tolerance")
    p.add_argument("choice")
    p.add_argument("data")
    p.add_argument("--x", required=True)
    p.add_argument("--y", required=True)
    p.add_argument("--tolerance", type=float, metavar="T",
                   help="largest allowed |y - prediction|, in y units (or a fraction of the prediction with "
                        "--relative): each row and the whole set pass or fail")
    p.add_argument("--relative", action="store_true", help="--tolerance is a fraction of |prediction| (0.02 = 2%%)")
    p.add_argument("--decision", choices=["simple", "guarded"], default="simple",
                   help="simple acceptance (default: |error| <= T) or guarded acceptance (|error| <= T - U, "
                        "U = 2u the expanded uncertainty of the error)")
    add_reading_args(p, "each measured y")
    add_out(p, help="with --tolerance: per-row decisions as CSV here ('-': standard output)")
    p.add_argument("--report", metavar="HTML", help="with --tolerance: a standalone HTML record of the check here")
    add_blank_rows(p)
    add_reader_args(p)
    add_json(p, help="write the scores (and decisions) as JSON here")
    add_force(p)
    return p


def run(args, out) -> int:
    from core.choice import Choice
    from core.choice_build import score

    c = Choice.load(args.choice)
    for note in c.notices:
        print(f"note: {note}", file=sys.stderr)
    if args.tolerance is None and (args.relative or args.decision != "simple" or args.out or args.report):
        from core.errors import ParameterError, message

        raise ParameterError(message("Options --relative, --decision, --out and --report", "--tolerance T as well",
                                     "no tolerance", "Give the tolerance with --tolerance"))
    opts = reading_options(args, c)
    t, frame = load_rows(args, args.y, frame=args.out is not None, **opts["columns"])
    text = text_out(args, out) if args.out != STDOUT else sys.stderr
    sc = score(c, t.x.values, t.y.values)
    _print_scores(c, sc, text)
    _warn_about_rows(c, t, sc)
    if args.tolerance is not None:
        from core.tolerance import tolerance_check

        ru, rw = reading_values(opts, t)
        tc = tolerance_check(c, t.x.values, t.y.values, args.tolerance, relative=args.relative,
                             rule=args.decision, rows=t.row_numbers, reading_u=ru, reading_weight=rw)
        _print_tolerance(tc, text)
        sc["tolerance_check"] = tc
        if args.out:
            _write_rows(args, frame, tc, out)
        if args.report:
            from pathlib import Path

            from ..decisions import decisions_html

            write_atomic(args.report, decisions_html(c, Path(args.data).name, sc, tc), force=args.force)
            print(f"wrote the check's record to {args.report}", file=sys.stderr)
    if args.json:
        write_json(args.json, sc, force=args.force, out=out)
    return 0 if args.tolerance is None or sc["tolerance_check"]["overall"] == "pass" else 1


def _print_scores(c, sc, out):
    """Errors on the new rows next to the cross-validation error the curve was chosen with."""
    print(f"{sc['n']} rows: RMSE {sc['rmse']:.6g}  MAE {sc['mae']:.6g}  max |error| {sc['max_abs_error']:.6g}"
          f"  bias (mean of y - prediction) {sc['bias']:.6g}", file=out)
    kind = c.doc["model"]["weighting"]["kind"]
    print(f"saved curve's CV RMSE was {c.doc['validation']['cv_rmse']:.6g}"
          + ("" if kind is None else f" (weighted by the calibration's {'stated uncertainties' if kind == 'uncertainty' else 'weights'}: "
             "not directly comparable with the unweighted RMSE above)"), file=out)


def _print_tolerance(tc, out):
    """The rule, the overall verdict and the failing rows (at most 20 listed)."""
    tol = f"{100 * tc['tolerance']:g}% of the prediction" if tc["relative"] else f"{tc['tolerance']:g}"
    print(f"tolerance {tol}; decision rule: {tc['rule_text']}", file=out)
    print(f"{tc['overall'].upper()}: {tc['passed']} row(s) pass, {tc['failed']} fail", file=out)
    if tc["guard_band_exceeds_tolerance"]:
        print(f"note: at {tc['guard_band_exceeds_tolerance']} row(s) the guard band U is as wide as the tolerance: "
              "no reading there can pass guarded acceptance.", file=out)
    failing = [r for r in tc["rows"] if not r["pass"]]
    for r in failing[:20]:
        u = "-" if r["expanded_uncertainty"] is None else f"{r['expanded_uncertainty']:.4g}"
        print(f"  row {r['row']}: x {r['x']:.6g}  error {r['error']:+.4g}  U {u}  limit {r['acceptance_limit']:.4g}",
              file=out)
    if len(failing) > 20:
        print(f"  ... and {len(failing) - 20} more (see --out or --json)", file=out)


def _write_rows(args, frame, tc, out):
    frame = as_text_safe(frame)
    for k in ("prediction", "error", "expanded_uncertainty", "acceptance_limit", "pass"):
        frame[k] = [r[k] for r in tc["rows"]]
    text = frame.to_csv(index=False)
    if args.out == STDOUT:
        out.write(text)
    else:
        write_atomic(args.out, text, force=args.force)
        print(f"wrote {len(frame)} decisions to {args.out}", file=sys.stderr)


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
