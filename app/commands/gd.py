"""``curvewright gd``: plain batch gradient descent on the fit's cost, reported against the
closed-form minimum (a teaching aid: the closed form is what every other command uses)."""

from __future__ import annotations

import numpy as np

import core

from .common import add_data_args, add_degree_lambda, read_data


def add_parser(subparsers):
    p = subparsers.add_parser("gd", help="plain batch gradient descent on the same cost, against the closed form")
    add_data_args(p)
    add_degree_lambda(p)
    p.add_argument("--rate", type=float, help="learning rate (default: 0.9 x the largest stable rate)")
    p.add_argument("--iterations", type=int, default=2000)
    return p


def run(args, out) -> int:
    t = read_data(args)
    e = core.build_engine(t.x.values, t.y.values, max_degree=args.degree, folds=2, weights=t.weights)
    stable = _largest_stable_rate(e, args)   # probed even when --rate is given, as the checks run there too
    rate = args.rate if args.rate is not None else 0.9 * stable
    res = core.gradient_descent(e.full, args.degree, args.lam, learning_rate=rate, iterations=args.iterations)
    _print_descent(args, rate, res, out)
    return 0


def _largest_stable_rate(e, args) -> float:
    """The largest stable learning rate, read from a one-step probe run."""
    probe = core.gradient_descent(e.full, args.degree, args.lam, learning_rate=1e-12, iterations=1)
    return probe.max_stable_rate


def _print_descent(args, rate, res, out):
    """The cost at about a dozen steps spread geometrically, then the comparison with the closed form."""
    steps = np.unique(np.geomspace(1, len(res.cost) - 1, 12).astype(int))
    print(f"gradient descent, degree {args.degree}, lambda {args.lam:g}, rate {rate:.4g}", file=out)
    for k in [0, *steps]:
        if np.isfinite(res.cost[k]):
            print(f"  step {k:>8}  cost {res.cost[k]:.10g}", file=out)
    print(res.message, file=out)
