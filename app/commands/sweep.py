"""``curvewright sweep``: cross-validate a degree x lambda grid, print the recommendations and the
best error of each degree, and on request write the surface, a choice file and the statistics.

The rows come from one of three readers: the whole file in memory (the default), the file in
chunks (``--stream``, or automatically above STREAM_BYTES), or the partition-independent engine
over a file, folder or glob (``--engine``, a folder or a glob pattern).
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np

import core
from core import defaults
from core.errors import ParameterError, message
from core.select import edge_notes
from core.table import unit_of

from .common import (Progress, add_data_args, add_folds, add_force, add_json, add_penalty_args, add_repeats,
                     add_seed, check_cells, parse_degrees, parse_grid, read_data, reader_options, text_out,
                     write_json)


def add_parser(subparsers):
    p = subparsers.add_parser("sweep", help="cross-validate a degree x lambda grid; print the recommendation")
    add_data_args(p)
    p.add_argument("--degrees", default=f"{min(defaults.DEGREES)}-{max(defaults.DEGREES)}")
    p.add_argument("--lambdas", help="log grid START:STOP:COUNT (default: 0, then a grid scaled to the data "
                                     "and the penalty, from where the penalty is negligible to where it has "
                                     "done all it can)")
    p.add_argument("--with-zero", action="store_true", help="add lambda = 0 to a grid given by --lambdas")
    add_folds(p)
    p.add_argument("--loo", action="store_true", help="leave-one-out through the hat matrix instead of k-fold")
    add_penalty_args(p)
    add_repeats(p, 1)
    g = p.add_mutually_exclusive_group()
    g.add_argument("--group", help="group column: rows sharing a value stay in one fold")
    g.add_argument("--fold-ids", help="column giving each row's fold (explicit folds)")
    add_seed(p)
    p.add_argument("--test-fraction", type=float, default=defaults.TEST_FRACTION,
                   help=f"share of rows sealed away before cross-validation (default {defaults.TEST_FRACTION:g})")
    p.add_argument("--stream", action="store_true",
                   help=f"read the file in chunks (automatic above {defaults.STREAM_BYTES // 2**20} MB; CSV/TSV/Parquet)")
    p.add_argument("--chunk-rows", type=int, default=defaults.CHUNK_ROWS, help="rows per chunk when streaming")
    p.add_argument("--engine", choices=["local", "dask"],
                   help="partition-independent engine (hashed folds) over a file, folder or glob")
    p.add_argument("--scheduler", help="Dask scheduler address (default: a LocalCluster on 127.0.0.1)")
    p.add_argument("--save-stats", help="write the sufficient statistics (JSON) for `curvewright open --stats`")
    add_json(p, help="write the surface as JSON here")
    p.add_argument("--save", help="write the choice file (JSON) for the recommended or picked curve")
    p.add_argument("--rule", choices=["simplest", "lowest"], default="simplest",
                   help="recommendation saved by --save: the simplest curve within one standard error of the "
                        "lowest CV error (default), or the lowest CV error")
    p.add_argument("--pick-degree", type=int, help="save this degree instead of the recommendation")
    p.add_argument("--pick-lambda", type=float, help="save this lambda instead of the recommendation")
    p.add_argument("--notes", default="", help="free text stored in the choice file")
    p.add_argument("--refit-all", action="store_true",
                   help="fit the saved curve on every kept row (cross-validation and sealed), recorded as such; "
                        "by default it is fitted on the rows it was scored on")
    add_force(p)
    return p


def run(args, out) -> int:
    _check_options(args)
    degrees, lams = _grid(args)
    check_cells("--folds, --repeats, --degrees and --lambdas",
                {"folds": 1 if args.loo else args.folds, "repeats": args.repeats, "degrees": len(degrees),
                 "lambdas": defaults.DEFAULT_GRID_MAX if lams is None else len(lams)})
    s, t = _sweep(args, degrees, lams)
    json_out, out = out, text_out(args, out)
    _print_recommendations(s, t, out)
    checks = _print_checks(s, t, out)
    _print_by_degree(s, out)
    if args.json:
        doc = s.to_dict()
        doc["checks"] = {k: c.to_dict() for k, c in checks.items()}      # incl. each pick's lack of fit
        write_json(args.json, doc, force=args.force, out=json_out)
    if args.save:
        _save_choice(args, t, s, out)
    if args.save_stats:
        _save_stats(args, t, s, out)
    return 0


def _check_options(args):
    """Combinations refused before any work is done or any file is written."""
    if (args.pick_degree is None) != (args.pick_lambda is None):
        raise ParameterError(message("Options --pick-degree and --pick-lambda", "both or neither", "only one"))
    if args.save_stats and (args.x_transform != "none" or args.y_transform != "none"):
        raise ParameterError(message("Option --save-stats", "untransformed x and y",
                                     "--x-transform or --y-transform",
                                     "Save a choice file (--save) instead: it records the transforms"))
    if args.loo and args.save_stats:
        raise ParameterError(message("Option --save-stats", "k-fold cross-validation (the file holds per-fold sums)",
                                     "--loo", "Leave-one-out needs the rows themselves; drop --loo to save statistics"))
    if not 1 <= args.chunk_rows <= 100_000_000:
        raise ParameterError(message("Option --chunk-rows", "a whole number from 1 to 100,000,000", args.chunk_rows))


def _grid(args):
    """The swept degrees and lambdas (with 0 first under --with-zero)."""
    degrees = parse_degrees(args.degrees)
    if args.lambdas is None:
        return degrees, None
    lams = parse_grid(args.lambdas, log=True, option="--lambdas")
    if args.with_zero:
        lams = np.concatenate([[0.0], lams])
    return degrees, lams


def _sweep(args, degrees, lams):
    """(surface, data description) from the reader the data path and options ask for."""
    path = Path(args.data)
    streamable = path.suffix.lower() in (".csv", ".tsv", ".txt", ".parquet")
    if args.engine or path.is_dir() or any(ch in args.data for ch in "*?["):
        return _sweep_engine(args, degrees, lams)
    if args.stream or (streamable and path.is_file() and path.stat().st_size > defaults.STREAM_BYTES):
        return _sweep_streamed(args, degrees, lams)
    t = read_data(args, {"group": args.group, "fold": args.fold_ids})
    s = core.sweep(t.x.values, t.y.values, degrees, lams, folds="loo" if args.loo else args.folds,
                   repeats=args.repeats, groups=t.groups, fold_ids=t.folds, seed=args.seed, weights=t.weights,
                   test_fraction=args.test_fraction, intercept=not args.through_origin,
                   penalty=args.penalty, mix=args.mix, row_keys=t.row_numbers)
    return s, t


def _refuse_row_options(args, how: str):
    """Options that need every row in memory are refused by name for the chunked readers."""
    used = [name for name, on in (("--group", args.group), ("--fold-ids", args.fold_ids),
                                  ("--loo", args.loo), ("--exclude", args.exclude),
                                  ("--x-transform", args.x_transform != "none"),
                                  ("--y-transform", args.y_transform != "none")) if on]
    if used:
        raise ParameterError(message(f"Option {how}", "k-fold folds over every row (the file is read in chunks)",
                                     " and ".join(used),
                                     "Leave-one-out, grouped or explicit folds, excluded rows and transforms need "
                                     "the file read whole: drop those options or make the file smaller"))


def _sweep_streamed(args, degrees, lams):
    from core.stream import sweep_file

    _refuse_row_options(args, "--stream")
    s, sc = sweep_file(args.data, degrees, lams, x=args.x, y=args.y, weights=args.weights,
                       uncertainty=args.uncertainty, folds=args.folds, repeats=args.repeats, seed=args.seed,
                       test_fraction=args.test_fraction, intercept=not args.through_origin,
                       penalty=args.penalty, mix=args.mix,
                       blank_rows=args.blank_rows, chunk_rows=args.chunk_rows, progress=Progress(),
                       **reader_options(args))
    for note in sc.notices:
        print(f"note: {note}", file=sys.stderr)
    if sc.rows_dropped:
        print(f"note: skipped {len(sc.rows_dropped)} row(s) with blank cells.", file=sys.stderr)
    return s, sc


def _sweep_engine(args, degrees, lams):
    from core.distributed import expand_paths, sweep_files

    _refuse_row_options(args, "--engine")
    used = [name for name, on in (("--sheet", args.sheet), ("--no-header", args.no_header),
                                  ("--skip-rows", args.skip_rows), ("--comment", args.comment)) if on]
    if used:
        raise ParameterError(message(f"Option {used[0]}", "one file read whole or with --stream",
                                     "--engine (or a folder or a pattern of files)",
                                     "Sweeps over many files read files whose header is their first line: "
                                     "drop the option or sweep one file"))
    s, info = sweep_files(expand_paths(args.data), degrees, lams, x=args.x, y=args.y, weights=args.weights,
                          uncertainty=args.uncertainty, folds=args.folds, repeats=args.repeats, seed=args.seed,
                          test_fraction=args.test_fraction, intercept=not args.through_origin,
                          penalty=args.penalty, mix=args.mix, blank_rows=args.blank_rows,
                          engine=args.engine or "local", scheduler=args.scheduler,
                          chunk_rows=min(args.chunk_rows, 200_000), progress=Progress())
    return s, _Info(info)


class _Info:
    """The streamed engines' data description, shaped like a Scan for the printing code."""

    def __init__(self, info):
        self.rows_used = info["rows_used"]
        self.rows_dropped = info["rows_dropped"]
        self.path = info["files"][0] if len(info["files"]) == 1 else _files_label(info["files"])
        self.file_sha256, self.columns_sha256 = info["file_sha256"], info["columns_sha256"]
        self.x_name, self.y_name, self.weight_name = info["x_name"], info["y_name"], info["weight_name"]
        self.x_unit, self.y_unit = unit_of(self.x_name), unit_of(self.y_name)


def _files_label(files):
    return f"{len(files)} files ({Path(files[0]).name} ... {Path(files[-1]).name})"


def _rmse(mse) -> str:
    """sqrt(MSE) for printing; 0 for an exact fit (and a rounding-level negative), '-' for none."""
    if mse is None or not math.isfinite(mse):
        return "-"
    return f"{math.sqrt(max(mse, 0.0)):.6g}"


def _error_text(rec) -> str:
    """'CV RMSE r +/- se' (the SE of the RMSE from the SE of the MSE), or the exact-fit wording."""
    if not rec.cv_mse > 0:
        return "exact fit (CV error 0)"
    return (f"CV RMSE {math.sqrt(rec.cv_mse):.6g} "
            f"+/- {rec.cv_mse_se / (2 * math.sqrt(rec.cv_mse)):.2g}")


def _print_recommendations(s, t, out):
    """Rows and folds used, then each rule's recommendation with its edge-of-grid notes."""
    n_rows = t.rows_used if hasattr(t, "rows_used") else t.n
    f = s.folds
    print(f"{n_rows} rows ({s.n_train} for cross-validation, {f['n_test']} sealed); "
          f"{f['scheme']} folds k={f['k']}, repeats={f['repeats']}, seed={f['seed']}", file=out)
    for name, rec in s.recommended.items():
        print(f"recommended ({name}): degree {rec.degree}, lambda {rec.lam:.4g} "
              f"(grid {rec.grid_lambda:.3g}); {_error_text(rec)}; effective df {rec.effective_df:.3g}",
              file=out)
        for note in edge_notes(rec, s):
            print(f"  note: {note} ({'--degrees' if note.startswith('Degree') else '--lambdas'})", file=out)


def _print_checks(s, t, out):
    """Each pick's residual checks and which rule to prefer (core.checks)."""
    from core.checks import advice, check_recommendations

    if hasattr(t, "rows_used"):
        checks = check_recommendations(s)
    else:
        train = ~s.engine.plan.test_mask
        checks = check_recommendations(s, t.x.values[train], t.y.values[train],
                                       None if t.weights is None else t.weights[train])
    for c in checks.values():
        print(f"check: {c.summary()}", file=out)
    print(f"check: {advice(checks)}", file=out)
    return checks


def _print_by_degree(s, out):
    """One line per degree at its best lambda: CV RMSE, its standard error and the training RMSE.

    A degree without any score (the lasso leaves out degrees whose powers are too collinear; the
    warning says which) is listed as such instead of being given a number."""
    print("\nCV RMSE by degree (best lambda of each):", file=out)
    print(f"{'degree':>6}  {'lambda':>10}  {'CV RMSE':>12}  {'SE(MSE)':>10}  {'train RMSE':>12}", file=out)
    for i, d in enumerate(s.degrees):
        row = np.asarray(s.cv_mse[i], dtype=float)
        if not np.isfinite(row).any():
            print(f"{d:>6}  {'-':>10}  {'not scored (see the warning)':>12}", file=out)
            continue
        j = int(np.nanargmin(row))
        print(f"{d:>6}  {s.lambdas[j]:>10.3g}  {_rmse(s.cv_mse[i, j]):>12}  "
              f"{s.cv_mse_se[i, j]:>10.3g}  {_rmse(s.train_mse[i, j]):>12}", file=out)


def _save_choice(args, t, s, out):
    """The choice file for the picked (--pick-degree/--pick-lambda) or recommended (--rule) curve."""
    from core.choice_build import make_choice, rule_of

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
        kind = "uncertainty" if args.uncertainty else ("relative" if args.weights else None)
        c = make_choice(None, None, s, d, lam, rule=rule_of(s, d, lam), data=data,
                        weight_column=t.weight_name, weight_kind=kind, notes=args.notes, version=core.__version__)
    else:
        data.update({"x_column": t.x.name, "y_column": t.y.name, "x_unit": t.x.unit, "y_unit": t.y.unit})
        c = make_choice(t.x.values, t.y.values, s, d, lam, rule=rule_of(s, d, lam), data=data,
                        weights=t.weights, weight_column=t.weight_column, weight_kind=t.weight_kind,
                        notes=args.notes, version=core.__version__, groups_from=t.group_column,
                        folds_given_by=t.fold_column, refit_all=args.refit_all, groups=t.groups,
                        transforms=t.transforms, x_raw=t.raw_x)
    c.save(args.save, force=args.force)
    u = c.doc["model"]["uncertainty"]
    print(f"saved choice: degree {d}, lambda {lam:.4g} ({c.doc['validation']['rule']}), fitted on "
          f"{c.doc['data']['fit_rows']}, band: {c.band_label()} -> {args.save}", file=out)
    if u is None:
        print("note: the saved curve carries no band: the lasso and elastic net have no covariance from "
              "statistics alone (read the file whole for a bootstrap band).", file=sys.stderr)
    warn_power_form(c.doc["model"]["power_form"])
    print_calibration(c.doc["calibration"], out, c.doc["model"]["weighting"]["kind"])


def print_calibration(cal: dict, out, weight_kind=None) -> None:
    """Lack of fit against pure error and the detection limits, each with its method."""
    lof = cal.get("lack_of_fit")
    if lof is not None:
        verdict = ("the curve misses a trend the replicates resolve" if lof["p_value"] < 0.01
                   else "no lack of fit detected at the 1% level")
        pe = lof["pure_error_sd"]
        floor = {None: f"pure-error SD {pe:.6g} (the noise floor for the CV RMSE)",
                 "none": f"pure-error SD {pe:.6g} (the noise floor for the CV RMSE)",
                 "relative": f"pure-error SD {pe:.6g} per unit weight",
                 "uncertainty": f"pure-error scatter {pe:.4g} times the stated uncertainties (near 1: as stated)"}
        print(f"lack of fit: F = {lof['F']:.6g} on ({lof['df_lack']:.4g}, {lof['df_pure']}) df, p = {lof['p_value']:.3g}: "
              f"{verdict}; {floor.get(weight_kind, floor[None])}", file=out)
    lim = cal.get("limits")
    if lim is None:
        return
    ich, hv = lim.get("ich_q2"), lim.get("hubaux_vos")
    if ich is not None:
        print(f"limits (ICH Q2(R2): 3.3 and 10 sigma / S with sigma {ich['sigma']:.6g}, the {ich['sigma_from']}, "
              f"and S {ich['slope']:.6g}, the slope at 0): detection {ich['detection_limit']:.6g}, "
              f"quantitation {ich['quantitation_limit']:.6g}", file=out)
    if hv is not None:
        xd = "beyond the calibrated range" if hv["detection_limit_x"] is None else f"{hv['detection_limit_x']:.6g}"
        xc = "-" if hv["decision_limit_x"] is None else f"{hv['decision_limit_x']:.6g}"
        print(f"limits (Hubaux & Vos, alpha = beta = {hv['alpha']:g}): decision level y_C {hv['decision_level_y']:.6g} "
              f"(x_C {xc}), detection limit x_D {xd}", file=out)
    if lim.get("note") and hv is not None:
        print(f"limits: {lim['note']}", file=out)


def warn_power_form(pf: dict) -> None:
    """Warn (stderr) when the raw-x power form keeps fewer than 10 significant digits over the data."""
    from core.choice_build import POWER_DIGITS_WARN

    if pf["digits"] < POWER_DIGITS_WARN:
        c = pf["centred"]
        print(f"warning: the raw-x power coefficients keep only {pf['digits']:.1f} significant digits of the curve "
              f"over the data range (evaluated in double precision); use the stable form, or the centred form "
              f"in ((x - {c['center']:.10g}) / {c['scale']:.10g})^k (keeps {c['digits']:.1f} digits; it is in "
              "the choice file).", file=sys.stderr)


def _save_stats(args, t, s, out):
    """The sufficient statistics that `curvewright open --stats` explores without the rows."""
    from core.statsfile import save_stats

    meta = {"x_column": getattr(t, "x_name", None) or t.x.name, "y_column": getattr(t, "y_name", None) or t.y.name,
            "file": Path(t.path).name if not str(t.path).endswith("files)") else t.path,
            "columns_sha256": t.columns_sha256}
    save_stats(args.save_stats, s.engine, meta, force=args.force)
    print(f"saved statistics -> {args.save_stats}", file=out)
