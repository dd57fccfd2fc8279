"""The ``curvewright`` command line. Thin: parse, call core, print, write.

Bad input exits with code 2 and a one-paragraph message on stderr, never a traceback.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import warnings
from pathlib import Path

import numpy as np

import core
from core.errors import CurvewrightError, NumericalWarning, ParameterError, message
from core.files import write_atomic
from core.table import read_table

EXIT_BAD_INPUT = 2


class _Parser(argparse.ArgumentParser):
    def error(self, text):  # argparse's own errors also exit 2, with our shape
        self.print_usage(sys.stderr)
        sys.stderr.write(f"error: {text}\n")
        raise SystemExit(EXIT_BAD_INPUT)


def parse_degrees(spec: str) -> list[int]:
    """'0-15', '3', '1,2,5' or '2-4,8' -> sorted degrees."""
    out = set()
    try:
        for part in str(spec).split(","):
            part = part.strip()
            if "-" in part:
                a, b = part.split("-", 1)
                out.update(range(int(a), int(b) + 1))
            else:
                out.add(int(part))
    except ValueError:
        raise ParameterError(message("Option --degrees", "a range like 0-15 or a list like 1,2,5", repr(spec))) from None
    if not out or min(out) < 0 or max(out) > 30:
        raise ParameterError(message("Option --degrees", "degrees from 0 to 30", repr(spec)))
    return sorted(out)


def parse_grid(spec: str, *, log: bool, option: str) -> np.ndarray:
    """'START:STOP:COUNT' -> a log (or linear) grid; a single number -> that number."""
    try:
        parts = [float(p) for p in str(spec).split(":")]
    except ValueError:
        raise ParameterError(message(f"Option {option}", "START:STOP:COUNT or one number", repr(spec))) from None
    if len(parts) == 1:
        return np.array(parts)
    if len(parts) != 3 or parts[2] != int(parts[2]) or parts[2] < 1:
        raise ParameterError(message(f"Option {option}", "START:STOP:COUNT with a whole COUNT", repr(spec)))
    a, b, c = parts
    if log:
        if a <= 0 or b <= 0:
            raise ParameterError(message(f"Option {option}", "positive START and STOP for a log grid (add 0 with --with-zero)", repr(spec)))
        return np.logspace(math.log10(a), math.log10(b), int(c))
    return np.linspace(a, b, int(c))


def _data_args(p, need_y=True):
    p.add_argument("data", help="CSV/TSV, .xlsx or .parquet file with a header row")
    p.add_argument("--x", required=True, help="x column (name or 1-based position)")
    if need_y:
        p.add_argument("--y", required=True, help="response column (name or 1-based position)")
    p.add_argument("--weights", help="weight column (positive)")
    p.add_argument("--uncertainty", help="standard-uncertainty column u (weight = 1/u^2)")
    p.add_argument("--missing", choices=["refuse", "drop"], default="refuse")
    p.add_argument("--sheet", help="worksheet of an .xlsx file (default: the first)")
    p.add_argument("--no-intercept", action="store_true", help="fit through the origin")
    p.add_argument("--exclude", default="", help="spreadsheet rows to leave out, e.g. 7,19 (recorded)")


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="curvewright", description="Choose how flexible a fitted curve may be.")
    p.add_argument("--version", action="version", version=f"curvewright {core.__version__}")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)

    f = sub.add_parser("fit", help="fit one degree and lambda; print the coefficient table")
    _data_args(f)
    f.add_argument("--degree", type=int, required=True)
    f.add_argument("--lambda", dest="lam", type=float, default=0.0)
    f.add_argument("--penalty", choices=["ridge", "lasso", "elastic"], default="ridge")
    f.add_argument("--mix", type=float, default=0.5, help="elastic net: share of the L1 term")
    f.add_argument("--interval", choices=["confidence", "prediction"],
                   help="print the interval at 7 points across the range (lambda = 0: t-based; else bootstrap)")
    f.add_argument("--influence", action="store_true", help="list influential rows (lambda = 0: Cook's D > 4/n)")
    f.add_argument("--bias-variance", action="store_true",
                   help="split the expected error into bias^2, variance and noise, simulated from this fit")
    f.add_argument("--replicates", help="column naming repeated data sets (runs): --bias-variance then "
                   "estimates variance from them instead of simulating")
    f.add_argument("--json", help="write the fit as JSON here")
    f.add_argument("--force", action="store_true", help="overwrite an existing output file")

    s = sub.add_parser("sweep", help="cross-validate a degree x lambda grid; print the recommendation")
    _data_args(s)
    s.add_argument("--degrees", default="0-15")
    s.add_argument("--lambdas", default="1e-6:1e4:30", help="log grid START:STOP:COUNT")
    s.add_argument("--with-zero", action="store_true", help="add lambda = 0 to the grid")
    s.add_argument("--folds", type=int, default=10)
    s.add_argument("--loo", action="store_true", help="leave-one-out through the hat matrix instead of k-fold")
    s.add_argument("--penalty", choices=["ridge", "lasso", "elastic"], default="ridge")
    s.add_argument("--mix", type=float, default=0.5, help="elastic net: share of the L1 term")
    s.add_argument("--repeats", type=int, default=1)
    g = s.add_mutually_exclusive_group()
    g.add_argument("--group", help="group column: rows sharing a value stay in one fold")
    g.add_argument("--fold-column", help="explicit fold column")
    s.add_argument("--seed", type=int, default=0)
    s.add_argument("--test-fraction", type=float, default=0.0)
    s.add_argument("--stream", action="store_true",
                   help="read the file in chunks (automatic above 100 MB; CSV/TSV/Parquet)")
    s.add_argument("--chunk-rows", type=int, default=500_000, help="rows per chunk when streaming")
    s.add_argument("--engine", choices=["local", "dask"],
                   help="partition-independent engine (hashed folds) over a file, folder or glob")
    s.add_argument("--scheduler", help="Dask scheduler address (default: a LocalCluster on 127.0.0.1)")
    s.add_argument("--save-stats", help="write the sufficient statistics (JSON) for `curvewright open --stats`")
    s.add_argument("--json", help="write the surface as JSON here")
    s.add_argument("--save", help="write the choice file (JSON) for the recommended or picked curve")
    s.add_argument("--rule", choices=["1se", "min"], default="1se", help="recommendation saved by --save")
    s.add_argument("--pick-degree", type=int, help="save this degree instead of the recommendation")
    s.add_argument("--pick-lambda", type=float, help="save this lambda instead of the recommendation")
    s.add_argument("--notes", default="", help="free text stored in the choice file")
    s.add_argument("--force", action="store_true")

    gd = sub.add_parser("gd", help="plain batch gradient descent on the same cost, against the closed form")
    _data_args(gd)
    gd.add_argument("--degree", type=int, required=True)
    gd.add_argument("--lambda", dest="lam", type=float, default=0.0)
    gd.add_argument("--rate", type=float, help="learning rate (default: 0.9 x the largest stable rate)")
    gd.add_argument("--iterations", type=int, default=2000)

    lc = sub.add_parser("learn", help="learning curve of one configuration")
    _data_args(lc)
    lc.add_argument("--degree", type=int, required=True)
    lc.add_argument("--lambda", dest="lam", type=float, default=0.0)
    lc.add_argument("--sizes", default="0.1:1:10", help="fractions START:STOP:COUNT")
    lc.add_argument("--folds", type=int, default=10)
    lc.add_argument("--repeats", type=int, default=3)
    lc.add_argument("--seed", type=int, default=0)
    lc.add_argument("--json")
    lc.add_argument("--force", action="store_true")
    sc = sub.add_parser("schema", help="print the choice file's JSON Schema")
    sc.add_argument("--out", help="write it to a file instead")
    sc.add_argument("--force", action="store_true")

    ap = sub.add_parser("apply", help="predict new rows with a saved choice file")
    ap.add_argument("choice", help="choice file (JSON)")
    ap.add_argument("data", help="rows to predict (CSV/TSV, .xlsx, .parquet)")
    ap.add_argument("--x", required=True)
    ap.add_argument("--out", help="output CSV (default: standard output)")
    ap.add_argument("--level", type=float, default=0.95, help="prediction-interval coverage")
    ap.add_argument("--missing", choices=["refuse", "drop"], default="refuse")
    ap.add_argument("--sheet")
    ap.add_argument("--force", action="store_true")

    ck = sub.add_parser("check", help="score a saved choice file on new labelled rows")
    ck.add_argument("choice")
    ck.add_argument("data")
    ck.add_argument("--x", required=True)
    ck.add_argument("--y", required=True)
    ck.add_argument("--missing", choices=["refuse", "drop"], default="refuse")
    ck.add_argument("--sheet")
    ck.add_argument("--json")
    ck.add_argument("--force", action="store_true")

    rp = sub.add_parser("report", help="write a standalone HTML report of a choice file")
    rp.add_argument("choice")
    rp.add_argument("data", help="the data file the curve was chosen on")
    rp.add_argument("--out", default="report.html")
    rp.add_argument("--images", help="also save every plot as an image into this folder")
    rp.add_argument("--image-format", choices=["png", "svg"], default="png")
    rp.add_argument("--force", action="store_true")

    o = sub.add_parser("open", help="start the workbench page on 127.0.0.1 and open it in the browser")
    o.add_argument("data", nargs="?", help="data file (default: a bundled invented sample set)")
    o.add_argument("--port", type=int, default=5006)
    o.add_argument("--address", default="127.0.0.1", help="interface to listen on (default 127.0.0.1)")
    o.add_argument("--no-browser", action="store_true", help="do not open a browser window")
    o.add_argument("--stats", help="explore a statistics file from `sweep --save-stats` instead of rows")
    return p


def cmd_open(args, out):
    from .serve import serve
    print(f"curvewright: serving on http://{args.address}:{args.port}/ (Ctrl-C to stop)", file=out)
    serve(args.data, port=args.port, show=not args.no_browser, address=args.address, stats=args.stats)
    return 0


def _read(args, extra=None):
    from core.table import exclude_rows

    table = read_table(args.data, x=args.x, y=args.y, weights=args.weights,
                       uncertainty=args.uncertainty, missing=args.missing, sheet=args.sheet,
                       **(extra or {}))
    if getattr(args, "exclude", ""):
        try:
            rows = [int(v) for v in args.exclude.split(",") if v.strip()]
        except ValueError:
            raise ParameterError(message("Option --exclude", "row numbers like 7,19", repr(args.exclude))) from None
        table = exclude_rows(table, rows)
        print(f"note: excluded row(s) {', '.join(map(str, table.excluded_rows))} on request "
              "(recorded in outputs).", file=sys.stderr)
    for note in table.notices:
        print(f"note: {note}", file=sys.stderr)
    if table.rows_dropped:
        print(f"note: dropped {len(table.rows_dropped)} row(s) with missing values "
              f"(rows {', '.join(map(str, table.rows_dropped[:10]))}"
              f"{' ...' if len(table.rows_dropped) > 10 else ''}).", file=sys.stderr)
    return table


def _fmt(v) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    return f"{v:.10g}"


def cmd_fit(args, out):
    t = _read(args)
    r = core.fit(t.x.values, t.y.values, args.degree, args.lam, weights=t.weights,
                 intercept=not args.no_intercept, penalty=args.penalty, mix=args.mix)
    print(f"degree {r.degree}, lambda {_fmt(r.lam)}, {r.n} rows"
          + (", weighted" if r.weighted else "") + ("" if r.intercept else ", through origin"), file=out)
    print(f"{'term':>6}  {'estimate':>20}  {'std error':>18}", file=out)
    for row in r.power_table():
        print(f"{row['term']:>6}  {row['estimate']:>20.12g}  {_fmt(row['std_error']):>18}", file=out)
    print(f"residual SD {_fmt(r.residual_sd)}   R-squared {_fmt(r.r_squared)}"
          f"{'' if r.intercept else ' (uncentred)'}   residual df {_fmt(r.df_residual)}"
          f"   effective df {_fmt(r.effective_df)}", file=out)
    if t.weight_kind == "uncertainty":
        print(f"reduced chi-square {_fmt(r.reduced_chi_square)} (near 1 when curve and stated uncertainties "
              "agree)", file=out)
    if args.interval:
        xs = np.linspace(r.x_range[0], r.x_range[1], 7)
        if r.legendre_cov is not None:
            yhat, lo, hi = r.predict(xs, interval=args.interval)
            how = "t-based"
        else:
            from core.uncertainty import bootstrap_interval

            yhat, lo, hi = bootstrap_interval(t.x.values, t.y.values, args.degree, args.lam, xs,
                                              interval=args.interval, weights=t.weights,
                                              intercept=not args.no_intercept, penalty=args.penalty, mix=args.mix)
            how = "bootstrap, 400 resamples"
        print(f"95% {args.interval} interval ({how}):", file=out)
        for a, b_, c_, d_ in zip(xs, yhat, lo, hi):
            print(f"  x {a:>12.6g}  fit {b_:>14.8g}  [{c_:.8g}, {d_:.8g}]", file=out)
    if args.influence:
        if r.lam != 0:
            print("note: influence measures are classical (lambda = 0); refit with --lambda 0.", file=out)
        else:
            from core.influence import influence

            inf = influence(r, t.x.values, t.y.values, t.weights)
            rows = t.row_numbers[inf.flagged]
            print(f"influential rows (Cook's D > 4/n = {inf.threshold:.3g}, common practice): "
                  + (", ".join(f"row {int(n)} (D {inf.cooks_distance[i]:.3g}, studentized {inf.studentized[i]:.2f})"
                               for n, i in zip(rows, inf.flagged)) or "none"), file=out)
    if args.bias_variance and args.replicates:
        from core.table import read_table as _rt
        from core.uncertainty import bias_variance_from_sets

        rt = _rt(args.data, x=args.x, y=args.y, group=args.replicates, missing=args.missing, sheet=args.sheet)
        sets = [(rt.x.values[rt.groups == g], rt.y.values[rt.groups == g]) for g in np.unique(rt.groups)]
        grid = np.linspace(rt.x.values.min(), rt.x.values.max(), 101)
        est = bias_variance_from_sets(sets, args.degree, args.lam, grid, intercept=not args.no_intercept,
                                      penalty=args.penalty, mix=args.mix)
        print(f"from {est['n_sets']} repeated data sets ('{args.replicates}'): variance {est['variance']:.4g}, "
              f"noise {est['noise']:.4g}; bias^2 needs the true curve (not estimable from replicates alone)",
              file=out)
    elif args.bias_variance:
        from core.uncertainty import bias_variance

        bv = bias_variance(t.x.values, r.predict, r.residual_sd, args.degree, args.lam, weights=t.weights,
                           intercept=not args.no_intercept)
        print(f"expected squared error at new x (simulated from this fit, noise SD {r.residual_sd:.4g}): "
              f"bias^2 {bv.bias2:.4g} + variance {bv.variance:.4g} + noise {bv.noise:.4g} = {bv.expected_mse:.4g} "
              f"(simulation of {bv.n_sets} data sets: bias^2 {bv.simulated_bias2:.4g}, variance "
              f"{bv.simulated_variance:.4g})", file=out)
    if args.json:
        doc = r.to_dict()
        doc["data"] = {"file": t.path, **t.fingerprint(), "x_column": t.x.name, "y_column": t.y.name,
                       "excluded_rows": list(t.excluded_rows)}
        write_atomic(args.json, json.dumps(doc, indent=2), force=args.force)
    return 0


STREAM_BYTES = 100 * 2**20


class _Progress:
    """Rows done, rate and time left on one terminal line (stderr)."""

    def __init__(self):
        self.last = 0.0

    def __call__(self, done, total, seconds):
        if seconds - self.last < 0.5 and done < total:
            return
        self.last = seconds
        rate = done / seconds if seconds > 0 else float("inf")
        left = (total - done) / rate if rate > 0 else 0.0
        sys.stderr.write(f"\rstatistics: {done:,}/{total:,} rows, {rate:,.0f} rows/s, {left:.0f} s left   ")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()


def _sweep_streamed(args, degrees, lams):
    from core.stream import sweep_file

    if args.group or args.fold_column:
        raise ParameterError(message("Option --stream", "k-fold folds (no --group or --fold-column)",
                                     "a group or fold column", "Read the file whole for grouped or explicit folds"))
    s, sc = sweep_file(args.data, degrees, lams, x=args.x, y=args.y, weights=args.weights,
                       uncertainty=args.uncertainty, folds=args.folds, repeats=args.repeats, seed=args.seed,
                       test_fraction=args.test_fraction, intercept=not args.no_intercept,
                       missing=args.missing, chunk_rows=args.chunk_rows, progress=_Progress())
    if sc.rows_dropped:
        print(f"note: dropped {len(sc.rows_dropped)} row(s) with missing values.", file=sys.stderr)
    return s, sc


class _Info:
    """The streamed engines' data description, shaped like a Scan for the printing code."""

    def __init__(self, info):
        self.rows_used = info["rows_used"]
        self.rows_dropped = info["rows_dropped"]
        self.path = info["files"][0] if len(info["files"]) == 1 else args_join(info["files"])
        self.file_sha256, self.columns_sha256 = info["file_sha256"], info["columns_sha256"]
        self.x_name, self.y_name, self.weight_name = info["x_name"], info["y_name"], info["weight_name"]
        from core.table import unit_of
        self.x_unit, self.y_unit = unit_of(self.x_name), unit_of(self.y_name)


def args_join(files):
    return f"{len(files)} files ({Path(files[0]).name} ... {Path(files[-1]).name})"


def _sweep_engine(args, degrees, lams):
    from core.distributed import expand_paths, sweep_files

    if args.group or args.fold_column:
        raise ParameterError(message("Option --engine", "hashed k-fold folds (no --group or --fold-column)",
                                     "a group or fold column", "Read a single file whole for grouped folds"))
    s, info = sweep_files(expand_paths(args.data), degrees, lams, x=args.x, y=args.y, weights=args.weights,
                          uncertainty=args.uncertainty, folds=args.folds, repeats=args.repeats, seed=args.seed,
                          test_fraction=args.test_fraction, intercept=not args.no_intercept, missing=args.missing,
                          engine=args.engine or "local", scheduler=args.scheduler,
                          chunk_rows=min(args.chunk_rows, 200_000), progress=_Progress())
    return s, _Info(info)


def cmd_sweep(args, out):
    degrees = parse_degrees(args.degrees)
    lams = parse_grid(args.lambdas, log=True, option="--lambdas")
    if args.with_zero:
        lams = np.concatenate([[0.0], lams])
    path = Path(args.data)
    streamable = path.suffix.lower() in (".csv", ".tsv", ".txt", ".parquet")
    if args.engine or path.is_dir() or any(ch in args.data for ch in "*?["):
        s, t = _sweep_engine(args, degrees, lams)
    elif args.stream or (streamable and path.is_file() and path.stat().st_size > STREAM_BYTES):
        s, t = _sweep_streamed(args, degrees, lams)
    else:
        t = _read(args, {"group": args.group, "fold": args.fold_column})
        s = core.sweep(t.x.values, t.y.values, degrees, lams, folds="loo" if args.loo else args.folds,
                       repeats=args.repeats, groups=t.groups, fold_ids=t.folds, seed=args.seed, weights=t.weights,
                       test_fraction=args.test_fraction, intercept=not args.no_intercept,
                       penalty=args.penalty, mix=args.mix)
    n_rows = t.rows_used if hasattr(t, "rows_used") else t.n
    f = s.folds
    print(f"{n_rows} rows ({s.n_train} for cross-validation, {f['n_test']} sealed); "
          f"{f['scheme']} folds k={f['k']}, repeats={f['repeats']}, seed={f['seed']}", file=out)
    for name, rec in s.recommended.items():
        print(f"recommended ({name}): degree {rec.degree}, lambda {rec.lam:.4g} "
              f"(grid {rec.grid_lambda:.3g}); CV RMSE {math.sqrt(rec.cv_mse):.6g} "
              f"+/- {rec.cv_mse_se / (2 * math.sqrt(rec.cv_mse)):.2g}; effective df {rec.effective_df:.3g}",
              file=out)
        if rec.degree_at_edge:
            print(f"  note: degree {rec.degree} is the top of the searched range; widen --degrees.", file=out)
        if rec.lambda_at_edge:
            print("  note: lambda is at the edge of the grid; widen --lambdas.", file=out)
    print(f"\nCV RMSE by degree (best lambda of each):", file=out)
    print(f"{'degree':>6}  {'lambda':>10}  {'CV RMSE':>12}  {'SE(MSE)':>10}  {'train RMSE':>12}", file=out)
    for i, d in enumerate(s.degrees):
        j = int(np.nanargmin(s.cv_mse[i]))
        print(f"{d:>6}  {s.lambdas[j]:>10.3g}  {math.sqrt(s.cv_mse[i, j]):>12.6g}  "
              f"{s.cv_mse_se[i, j]:>10.3g}  {math.sqrt(s.train_mse[i, j]):>12.6g}", file=out)
    if args.json:
        write_atomic(args.json, json.dumps(s.to_dict(), indent=2), force=args.force)
    if args.save:
        _save_choice(args, t, s, out)
    if args.save_stats:
        from core.statsfile import save_stats

        meta = {"x_column": getattr(t, "x_name", None) or t.x.name, "y_column": getattr(t, "y_name", None) or t.y.name,
                "file": Path(t.path).name if not str(t.path).endswith("files)") else t.path,
                "columns_sha256": t.columns_sha256}
        save_stats(args.save_stats, s.engine, meta, force=args.force)
        print(f"saved statistics -> {args.save_stats}", file=out)
    return 0


def _save_choice(args, t, s, out):
    from core.choice import make_choice, rule_of

    if (args.pick_degree is None) != (args.pick_lambda is None):
        raise ParameterError(message("Options --pick-degree and --pick-lambda", "both or neither", "only one"))
    if args.pick_degree is not None:
        d, lam = args.pick_degree, args.pick_lambda
        if d not in set(int(v) for v in s.degrees):
            raise ParameterError(message("Option --pick-degree", "one of the swept degrees", d))
    else:
        rec = s.recommended[args.rule]
        d, lam = rec.degree, rec.lam
    streamed = hasattr(t, "rows_used")
    data = {"file": Path(t.path).name, "file_sha256": t.file_sha256, "columns_sha256": t.columns_sha256,
            "rows_dropped": list(map(int, t.rows_dropped)),
            "excluded_rows": list(getattr(t, "excluded_rows", ()))}
    if streamed:
        data.update({"x_column": t.x_name, "y_column": t.y_name, "x_unit": t.x_unit, "y_unit": t.y_unit})
        kind = "uncertainty" if args.uncertainty else ("weights" if args.weights else None)
        c = make_choice(None, None, s, d, lam, rule=rule_of(s, d, lam), data=data,
                        weights_column=t.weight_name, notes=args.notes, version=core.__version__,
                        weights_kind=kind)
    else:
        data.update({"x_column": t.x.name, "y_column": t.y.name, "x_unit": t.x.unit, "y_unit": t.y.unit})
        c = make_choice(t.x.values, t.y.values, s, d, lam, rule=rule_of(s, d, lam), data=data,
                        weights=t.weights, weights_column=t.weight_column, notes=args.notes,
                        version=core.__version__, group_column=t.group_column, fold_column=t.fold_column,
                        weights_kind=t.weight_kind)
    c.save(args.save, force=args.force)
    print(f"saved choice: degree {d}, lambda {lam:.4g} ({c.doc['validation']['rule']}) -> {args.save}", file=out)


def cmd_schema(args, out):
    from core.choice import SCHEMA

    text = json.dumps(SCHEMA, indent=2)
    if args.out:
        write_atomic(args.out, text + "\n", force=args.force)
    else:
        print(text, file=out)
    return 0


def _load_rows(path, x, y, missing, sheet):
    """Validated x (and y) plus the original frame's kept rows, for apply/check."""
    from core.table import _read_frame

    t = read_table(path, x=x, y=y, missing=missing, sheet=sheet, require_spread=False)
    frame, _, _ = _read_frame(Path(path), sheet)
    drop = set(r - 2 for r in t.rows_dropped)
    frame = frame.iloc[[i for i in range(len(frame)) if i not in drop]].reset_index(drop=True)
    return t, frame


def cmd_apply(args, out):
    from core.choice import Choice

    c = Choice.load(args.choice)
    t, frame = _load_rows(args.data, args.x, None, args.missing, args.sheet)
    x = t.x.values
    frame["prediction"] = c.predict(x)
    if c.has_interval:
        _, lo, hi = c.predict(x, interval="prediction", level=args.level)
        pct = f"{100 * args.level:g}"
        frame[f"prediction_lower_{pct}"] = lo
        frame[f"prediction_upper_{pct}"] = hi
    lo_x, hi_x = c.x_range
    outside = (x < lo_x) | (x > hi_x)
    frame["outside_fitted_range"] = outside
    text = frame.to_csv(index=False)
    if args.out:
        write_atomic(args.out, text, force=args.force)
        print(f"wrote {len(frame)} predictions to {args.out}", file=out)
    else:
        out.write(text)
    if outside.any():
        print(f"warning: {int(outside.sum())} row(s) lie outside the fitted x range [{lo_x:g}, {hi_x:g}]: "
              "those predictions are extrapolations.", file=sys.stderr)
    if not c.has_interval:
        print("note: no prediction interval: the choice has lambda > 0 (classical intervals need lambda = 0).",
              file=sys.stderr)
    return 0


def cmd_check(args, out):
    from core.choice import Choice, score

    c = Choice.load(args.choice)
    t, _ = _load_rows(args.data, args.x, args.y, args.missing, args.sheet)
    sc = score(c, t.x.values, t.y.values)
    print(f"{sc['n']} rows: RMSE {sc['rmse']:.6g}  MAE {sc['mae']:.6g}  max |error| {sc['max_abs_error']:.6g}"
          f"  bias (mean of y - prediction) {sc['bias']:.6g}", file=out)
    print(f"saved curve's CV RMSE was {c.doc['validation']['cv_rmse']:.6g}", file=out)
    if sc["outside_fitted_range"]:
        print(f"warning: {sc['outside_fitted_range']} row(s) outside the fitted x range "
              f"[{sc['fitted_x_range'][0]:g}, {sc['fitted_x_range'][1]:g}] (extrapolation).", file=sys.stderr)
    if t.columns_sha256 == c.doc["data"]["columns_sha256"]:
        print("warning: these are the rows the curve was chosen on (same fingerprint): not an independent check.",
              file=sys.stderr)
    else:
        print("note: data fingerprint differs from the data the curve was chosen on.", file=sys.stderr)
    if args.json:
        write_atomic(args.json, json.dumps(sc, indent=2), force=args.force)
    return 0


def cmd_report(args, out):
    from .report import write_report

    path = write_report(args.choice, args.data, args.out, force=args.force)
    print(f"wrote {path}", file=out)
    if args.images:
        from .export import export_images

        files = export_images(path, args.images, args.image_format, force=args.force)
        print(f"wrote {len(files)} {args.image_format.upper()} images to {args.images}", file=out)
    return 0


def cmd_gd(args, out):
    t = _read(args)
    e = core.build_engine(t.x.values, t.y.values, max_degree=args.degree, folds=2, weights=t.weights)
    probe = core.gradient_descent(e.full, args.degree, args.lam, learning_rate=1e-12, iterations=1)
    rate = args.rate if args.rate is not None else 0.9 * probe.max_stable_rate
    res = core.gradient_descent(e.full, args.degree, args.lam, learning_rate=rate, iterations=args.iterations)
    steps = np.unique(np.geomspace(1, len(res.cost) - 1, 12).astype(int))
    print(f"gradient descent, degree {args.degree}, lambda {args.lam:g}, rate {rate:.4g}", file=out)
    for k in [0, *steps]:
        if np.isfinite(res.cost[k]):
            print(f"  step {k:>8}  cost {res.cost[k]:.10g}", file=out)
    print(res.message, file=out)
    return 0


def cmd_learn(args, out):
    t = _read(args)
    sizes = parse_grid(args.sizes, log=False, option="--sizes")
    lc = core.learning_curve(t.x.values, t.y.values, args.degree, args.lam, sizes=sizes,
                             folds=args.folds, repeats=args.repeats, seed=args.seed,
                             weights=t.weights, intercept=not args.no_intercept)
    print(f"learning curve: degree {lc.degree}, lambda {_fmt(lc.lam)}, {lc.folds}-fold x {lc.repeats}", file=out)
    print(f"{'size':>6}  {'rows':>8}  {'train MSE':>12}  {'CV MSE':>12}  {'CV SE':>10}", file=out)
    for i, s in enumerate(lc.sizes):
        print(f"{s:>6.3g}  {lc.n_train[i]:>8.1f}  {_fmt(lc.train_mse[i]):>12}  {_fmt(lc.cv_mse[i]):>12}"
              f"  {_fmt(lc.cv_mse_se[i]):>10}", file=out)
    print(core.describe_learning_curve(lc), file=out)
    if args.json:
        write_atomic(args.json, json.dumps(lc.to_dict(), indent=2), force=args.force)
    return 0


COMMANDS = {"fit": cmd_fit, "sweep": cmd_sweep, "learn": cmd_learn, "open": cmd_open,
            "schema": cmd_schema, "apply": cmd_apply, "check": cmd_check, "report": cmd_report,
            "gd": cmd_gd}


def main(argv=None, out=None) -> int:
    out = out or sys.stdout
    parser = build_parser()
    args = parser.parse_args(argv)
    handler = COMMANDS[args.command]
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", NumericalWarning)
            code = handler(args, out)
        for w in {str(c.message) for c in caught if issubclass(c.category, NumericalWarning)}:
            print(f"warning: {w}", file=sys.stderr)
        return code
    except CurvewrightError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":
    raise SystemExit(main())
