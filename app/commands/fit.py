"""``curvewright fit``: one degree and lambda; the coefficient table and, on request, a band,
the influential rows, the bias/variance split and the fit as JSON."""

from __future__ import annotations

import numpy as np

import core
from core import defaults
from core.errors import ParameterError, message
from core.table import exclude_rows, read_table

from .common import (add_data_args, add_degree_lambda, add_force, add_json, add_penalty_args, fmt, read_data,
                     reader_options, text_out, write_json)


def add_parser(subparsers):
    p = subparsers.add_parser("fit", help="fit one degree and lambda; print the coefficient table")
    add_data_args(p)
    add_degree_lambda(p)
    add_penalty_args(p)
    p.add_argument("--band", choices=["curve", "reading"],
                   help="print a band at 7 points across the range: where the curve lies, or where one new "
                        "reading lies (lambda = 0: t-based; else bootstrap)")
    p.add_argument("--coverage", type=float, default=defaults.COVERAGE, help="share the band covers (default 0.95)")
    p.add_argument("--influence", action="store_true", help="list influential rows (lambda = 0: Cook's D > 4/n)")
    p.add_argument("--scale-by-birge", action="store_true",
                   help="with --uncertainty: scale the covariance by the reduced chi-square (the Birge ratio "
                        "squared) when the scatter disagrees with the stated uncertainties")
    p.add_argument("--bias-variance", action="store_true",
                   help="split the expected error into bias^2, variance and noise, simulated from this fit")
    p.add_argument("--replicates", help="column naming repeated data sets (runs): --bias-variance then "
                   "estimates variance from them instead of simulating")
    add_json(p, help="write the fit as JSON here")
    add_force(p, help="overwrite an existing output file")
    return p


def run(args, out) -> int:
    json_out, out = out, text_out(args, out)
    t = read_data(args)
    if args.scale_by_birge and t.weight_kind != "uncertainty":
        raise ParameterError(message("Option --scale-by-birge", "stated uncertainties (--uncertainty COL)",
                                     "relative weights" if t.weights is not None else "no weights",
                                     "Leave the option out: relative weights are scaled by the residual scatter "
                                     "anyway"))
    dom = None
    if args.penalty == "curvature" and t.x.values.size:
        dom = core.Domain.from_range(t.x.values.min(), t.x.values.max())
    r = core.fit(t.x.values, t.y.values, args.degree, args.lam, weights=t.weights,
                 intercept=not args.through_origin, penalty=args.penalty, mix=args.mix, domain=dom,
                 weight_kind=t.weight_kind, scale_by_birge=args.scale_by_birge)
    _print_coefficients(r, t, out)
    cal = _calibration(r, t)
    from .sweep import print_calibration

    print_calibration(cal, out, t.weight_kind)
    if args.band:
        _print_band(args, r, t, out)
    if args.influence:
        _print_influence(r, t, out)
    if args.bias_variance and args.replicates:
        _print_replicate_variance(args, t, out)
    elif args.bias_variance:
        _print_bias_variance(args, r, t, out)
    if args.json:
        _write_fit_json(args, r, t, json_out, cal)
    return 0


def _calibration(r, t) -> dict:
    """Lack of fit (x repeats) and detection limits of the fit (``core.choice_build.calibration_record``)."""
    from core.calibrate import lack_of_fit
    from core.choice_build import calibration_record

    lof = lack_of_fit(t.x.values, t.y.values, r.curve, float(r.effective_df), weights=t.weights)
    return calibration_record(r, t.transforms, lof)


def _print_coefficients(r, t, out):
    """The header line, the power-basis coefficient table and the goodness-of-fit line(s)."""
    print(f"degree {r.degree}, lambda {fmt(r.lam)}, {r.n} rows"
          + (", weighted" if r.weighted else "") + ("" if r.intercept else ", through origin"), file=out)
    from core.transforms import get

    tx, ty = (get(n) for n in t.transforms)
    var = tx.label("x") if tx.name != "reciprocal" else "(1/x)"
    if t.transforms != ("none", "none"):
        print(f"curve: {ty.label('y')} = sum of a_k {var}^k (x, y as in the file)", file=out)
    w = max(6, len(var) + 3)
    print(f"{'power':>{w}}  {'value':>20}  {'standard error':>18}", file=out)
    for row in r.power_rows():
        print(f"{var + '^' + str(row['power']):>{w}}  {row['value']:>20.12g}  {fmt(row['standard_error']):>18}",
              file=out)
    print(f"residual SD {fmt(r.residual_sd)}   R-squared {fmt(r.r_squared)}"
          f"{'' if r.intercept else ' (uncentred)'}   residual df {fmt(r.residual_df)}"
          f"   effective df {fmt(r.effective_df)}", file=out)
    if t.weight_kind == "uncertainty":
        p = r.chi_square_p
        verdict = ("the scatter is larger than the stated uncertainties say" if p is not None and p < 0.01 else
                   "the scatter is smaller than the stated uncertainties say"
                   if p is not None and p > 0.99 else "consistent with the stated uncertainties")
        print(f"reduced chi-square {fmt(r.reduced_chi_square)}, P(chi-square >= observed) = {fmt(p)}: {verdict}"
              + (" (covariance scaled by the Birge ratio squared)" if r.reading.birge_scaled else
                 " (covariance as the stated uncertainties give it)"), file=out)
    from core.choice_build import power_form_summary

    from .sweep import warn_power_form

    warn_power_form(power_form_summary(r))


def _print_band(args, r, t, out):
    """The requested band at 7 points across the x range: t-based at lambda = 0, else bootstrap."""
    from core.transforms import get

    tx, ty = (get(n) for n in t.transforms)
    xs = np.linspace(r.x_range[0], r.x_range[1], 7)      # in the fitted (transformed) x
    if r.legendre_cov is not None:
        yhat, lo, hi = r.predict(xs, band=args.band, coverage=args.coverage)
        how = ("normal quantile, stated uncertainties taken as given" if r.reading.df is None
               else f"Student's t on {r.reading.df:g} df")
        if args.band == "reading":
            how += "; " + r.reading.describe()
    else:
        from core.uncertainty import bootstrap_band

        yhat, lo, hi = bootstrap_band(t.x.values, t.y.values, args.degree, args.lam, xs, band=args.band,
                                      coverage=args.coverage, weights=t.weights, B=defaults.BOOTSTRAP_B,
                                      weight_kind=t.weight_kind,
                                      intercept=not args.through_origin, penalty=args.penalty, mix=args.mix)
        how = f"bootstrap, {defaults.BOOTSTRAP_B} resamples"
    what = "the fitted curve" if args.band == "curve" else "one new reading"
    if ty.name == "log":
        how += "; back-transformed from ln(y): the line is the median of y"
    print(f"{100 * args.coverage:g}% band for {what} ({how}):", file=out)
    lo, hi = ty.interval(lo, hi)
    for a, b_, c_, d_ in zip(tx.inverse(xs), ty.inverse(yhat), lo, hi):
        print(f"  x {a:>12.6g}  fit {b_:>14.8g}  [{c_:.8g}, {d_:.8g}]", file=out)


def _print_influence(r, t, out):
    """Rows with Cook's distance above 4/n (classical, lambda = 0 only)."""
    if r.lam != 0:
        print("note: influence measures are classical (lambda = 0); refit with --lambda 0.", file=out)
        return
    from core.influence import row_influence

    inf = row_influence(r, t.x.values, t.y.values, t.weights)
    rows = t.row_numbers[inf.flagged]
    print(f"influential rows (Cook's D > 4/n = {inf.threshold:.3g}, common practice): "
          + (", ".join(f"row {int(n)} (D {inf.cook_d[i]:.3g}, studentized {inf.studentized_residual[i]:.2f})"
                       for n, i in zip(rows, inf.flagged)) or "none"), file=out)


def _print_replicate_variance(args, t, out):
    """Variance and noise estimated from the repeated data sets named by --replicates (the rows
    excluded with --exclude left out here too)."""
    from core.uncertainty import bias_variance_from_sets

    rt = read_table(args.data, x=args.x, y=args.y, group=args.replicates, blank_rows=args.blank_rows,
                    **reader_options(args))
    if t.excluded_rows:
        rt = exclude_rows(rt, t.excluded_rows)
    sets = [(rt.x.values[rt.groups == g], rt.y.values[rt.groups == g]) for g in np.unique(rt.groups)]
    grid = np.linspace(rt.x.values.min(), rt.x.values.max(), 101)
    est = bias_variance_from_sets(sets, args.degree, args.lam, grid, intercept=not args.through_origin,
                                  penalty=args.penalty, mix=args.mix)
    print(f"from {est['n_sets']} repeated data sets ('{args.replicates}'): variance {est['variance']:.4g}, "
          f"noise {est['noise']:.4g}; bias^2 needs the true curve (not estimable from replicates alone)",
          file=out)


def _print_bias_variance(args, r, t, out):
    """The expected squared error split into bias^2, variance and noise, simulated from this fit."""
    from core.errors import ParameterError, message
    from core.uncertainty import bias_variance

    if r.penalty not in ("ridge", "curvature"):
        raise ParameterError(message("Option --bias-variance", "a ridge or curvature fit (linear in y)",
                                     f"the {r.penalty} penalty", "Use --penalty curvature or ridge for the split"))
    bv = bias_variance(t.x.values, r.predict, r.residual_sd, args.degree, args.lam, weights=t.weights,
                       intercept=not args.through_origin, penalty=r.penalty, domain=r.domain,
                       weight_kind=t.weight_kind)
    noise = ("the stated uncertainties" if t.weight_kind == "uncertainty" else f"noise SD {r.residual_sd:.4g}")
    print(f"expected squared error at new x (simulated from this fit, {noise}): "
          f"bias^2 {bv.bias2:.4g} + variance {bv.variance:.4g} + noise {bv.noise:.4g} = {bv.expected_mse:.4g} "
          f"(simulation of {bv.n_sets} data sets: bias^2 {bv.simulated_bias2:.4g}, variance "
          f"{bv.simulated_variance:.4g})", file=out)


def _write_fit_json(args, r, t, out, cal):
    """The fit and the data it came from (file, fingerprint, columns, excluded rows) as JSON."""
    from pathlib import Path

    from core.choice_build import power_form_summary

    doc = r.to_dict()
    doc["power_form"] = power_form_summary(r)
    doc["weight_kind"] = r.weight_kind
    doc["chi_square_p"] = r.chi_square_p
    doc["transforms"] = {"x": t.transforms[0], "y": t.transforms[1]}
    doc.update(cal)
    doc["data"] = {"file": Path(t.path).name, **t.fingerprint(), "x_column": t.x.name, "y_column": t.y.name,
                   "excluded_rows": list(t.excluded_rows)}
    write_json(args.json, doc, force=args.force, out=out)
