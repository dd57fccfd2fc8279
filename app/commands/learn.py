"""``curvewright learn``: the learning curve of one configuration (error against training size)."""

from __future__ import annotations

import core
from core import defaults

from .common import (add_data_args, add_degree_lambda, add_fold_args, add_force, add_json, check_cells, fmt,
                     parse_grid, read_data, text_out, write_json)


def add_parser(subparsers):
    p = subparsers.add_parser("learn", help="learning curve of one configuration")
    add_data_args(p)
    add_degree_lambda(p)
    p.add_argument("--sizes", default="0.1:1:10", help="fractions START:STOP:COUNT")
    add_fold_args(p, repeats=defaults.LEARN_REPEATS)
    add_json(p, help="write the learning curve as JSON here")
    add_force(p)
    return p


def run(args, out) -> int:
    sizes = parse_grid(args.sizes, log=False, option="--sizes")
    check_cells("--folds, --repeats and --sizes", {"folds": args.folds, "repeats": args.repeats,
                                                    "sizes": int(sizes.size)})
    t = read_data(args)
    lc = core.size_curve(t.x.values, t.y.values, args.degree, args.lam, sizes=sizes,
                         folds=args.folds, repeats=args.repeats, seed=args.seed,
                         weights=t.weights, intercept=not args.through_origin)
    _print_curve(lc, text_out(args, out))
    if args.json:
        write_json(args.json, lc.to_dict(), force=args.force, out=out)
    return 0


def _print_curve(lc, out):
    """One line per training size, then the worded reading of the curve."""
    print(f"learning curve: degree {lc.degree}, lambda {fmt(lc.lam)}, {lc.folds}-fold x {lc.repeats}", file=out)
    print(f"{'size':>6}  {'rows':>8}  {'train MSE':>12}  {'CV MSE':>12}  {'CV SE':>10}", file=out)
    for i, s in enumerate(lc.sizes):
        print(f"{s:>6.3g}  {lc.n_train[i]:>8.1f}  {fmt(lc.train_mse[i]):>12}  {fmt(lc.cv_mse[i]):>12}"
              f"  {fmt(lc.cv_mse_se[i]):>10}", file=out)
    print(lc.reading(), file=out)
