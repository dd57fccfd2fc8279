"""``curvewright invert``: read x back from measured readings with a saved choice file (inverse
prediction): each reading's x estimate, its interval over the calibrated range and its standard
uncertainty, as CSV (the input's columns plus the results) and on request JSON."""

from __future__ import annotations

import sys

import numpy as np

from core import defaults
from core.errors import ParameterError, message
from core.files import write_atomic
from core.table import read_frame, read_table

from .readings import add_reading_args, as_text_safe, reading_options, reading_values
from .common import (STDOUT, add_blank_rows, add_force, add_json, add_out, add_reader_args, reader_options,
                     text_out, write_json)

COLUMNS = ("reading", "replicates", "x_estimate", "x_low", "x_high", "x_standard_uncertainty", "interval")
MEANINGS = {
    "bounded": "the interval has both ends inside the calibrated range",
    "one-sided": "the interval reaches an end of the calibrated range (only the inner end is given)",
    "unbounded": "every x in the calibrated range is consistent with the reading",
    "empty": "no x in the calibrated range is consistent with the reading (outside the calibration)",
    "several": "the reading fits more than one stretch of the curve: every solution is listed, no single x",
}


def add_parser(subparsers):
    p = subparsers.add_parser("invert", help="read x back from measured readings with a saved choice file")
    p.add_argument("choice", help="choice file (JSON)")
    p.add_argument("data", help="readings (CSV/TSV, .xlsx, .parquet)")
    p.add_argument("--y", required=True, help="column of readings (name or 1-based position)")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--replicates", type=int, default=1, metavar="M",
                   help="each reading is already the mean of M readings of the unknown (default 1)")
    g.add_argument("--group", metavar="COL",
                   help="readings sharing a value in this column are replicates of one unknown: their mean is read "
                        "back, one output row per group")
    p.add_argument("--coverage", type=float, default=defaults.COVERAGE, help="share the interval covers (default 0.95)")
    add_reading_args(p, "one reading")
    add_out(p, help="output CSV (default, or '-': standard output)")
    add_json(p, help="write the read-back as JSON here")
    add_blank_rows(p)
    add_reader_args(p)
    add_force(p)
    return p


def run(args, out) -> int:
    from core.choice import Choice

    if not 1 <= args.replicates <= 10_000:
        raise ParameterError(message("Option --replicates", "a whole number from 1 to 10000", args.replicates))
    c = Choice.load(args.choice)
    for note in c.notices:
        print(f"note: {note}", file=sys.stderr)
    opts = reading_options(args, c)
    t = read_table(args.data, x=args.y, group=args.group, blank_rows=args.blank_rows, require_spread=False,
                   weights=opts["columns"].get("weights"), uncertainty=opts["columns"].get("uncertainty"),
                   x_option="y", **reader_options(args))
    for note in t.notices:
        print(f"note: {note}", file=sys.stderr)
    if t.rows_dropped:
        print(f"note: skipped {len(t.rows_dropped)} row(s) with blank cells.", file=sys.stderr)
    y = t.x.values
    ru, rw = reading_values(opts, t)
    if args.group:
        frame, y, reps, ru, rw = _grouped(t, y, ru, rw)
    else:
        rows, _ = read_frame(args.data, **reader_options(args))
        frame = as_text_safe(rows.loc[t.row_numbers].reset_index(drop=True))
        reps = args.replicates
    rb = c.invert(y, replicates=reps, coverage=args.coverage, reading_u=ru, reading_weight=rw)
    rows = rb.rows()
    _add_columns(frame, rows)
    detected = _decision(c, rb)
    if detected is not None:
        frame["above_decision_level"] = detected
        for r, d in zip(rows, detected.tolist()):
            r["above_decision_level"] = d
    text = text_out(args, out)
    if args.out and args.out != STDOUT:
        write_atomic(args.out, frame.to_csv(index=False), force=args.force)
        print(f"wrote {len(frame)} read-back rows to {args.out}", file=text)
    elif not (args.json and str(args.json) == STDOUT):
        out.write(frame.to_csv(index=False))
    _summary(c, rb, rows, args)
    if args.json:
        write_json(args.json, _json(c, rb, rows, args), force=args.force, out=out)
    return 0


def _grouped(t, y, ru, rw):
    """One row per group: the mean reading, its count, and the group's u or weight (one value per group)."""
    import pandas as pd

    labels = t.groups
    order = list(dict.fromkeys(labels.tolist()))
    idx = {g: np.flatnonzero(labels == g) for g in order}
    means = np.array([y[idx[g]].mean() for g in order])
    counts = np.array([idx[g].size for g in order], dtype=int)

    def one_per_group(v, name):
        if v is None or np.ndim(v) == 0:
            return v
        out = []
        for g in order:
            vals = np.unique(v[idx[g]])
            if vals.size > 1:
                raise ParameterError(message(f"Column of the reading's {name} in group '{g}'",
                                             "one value per group (the group is one unknown)",
                                             f"{vals.size} different values", "Give each group one value"))
            out.append(vals[0])
        return np.array(out)
    frame = pd.DataFrame({t.group_column: order, "rows": [", ".join(map(str, t.row_numbers[idx[g]][:20]))
                                                          + (" ..." if idx[g].size > 20 else "") for g in order]})
    return as_text_safe(frame), means, counts, one_per_group(ru, "uncertainty"), one_per_group(rw, "weight")


def _add_columns(frame, rows):
    for k in COLUMNS:
        frame[k] = [r[k] for r in rows]
    frame["solutions"] = ["; ".join(f"{v:.10g}" for v in r["solutions"]) if "solutions" in r else "" for r in rows]


def _decision(c, rb):
    """Whether each reading (the mean of its replicates) is beyond the Hubaux & Vos decision level y_C for
    that many replicates (None when the curve has no limits: no blank in its range, or transforms)."""
    from core.bands import ReadingModel
    from core.limits import detection_limits

    lim = (c.doc.get("calibration") or {}).get("limits") or {}
    if not lim.get("hubaux_vos"):
        return None
    rising = lim["ich_q2"]["slope"] > 0          # the slope at the blank, as the limits used it
    out = np.zeros(rb.reading.size, dtype=bool)
    for m in np.unique(rb.replicates):
        y_c = detection_limits(c.curve, c.covariance, c.reading or ReadingModel(), c.u_range,
                               replicates=int(m))["hubaux_vos"]["decision_level_y"]
        sel = rb.replicates == m
        out[sel] = (rb.reading[sel] > y_c) if rising else (rb.reading[sel] < y_c)
    return out


def _summary(c, rb, rows, args):
    """Counts per interval kind with their meaning, the band's assumptions, and the log-y note (stderr)."""
    kinds = {k: int(np.sum(rb.interval == k)) for k in MEANINGS}
    lo, hi = c.x_range
    print(f"note: {len(rows)} reading(s) read back over the calibrated range [{lo:.6g}, {hi:.6g}] at "
          f"{100 * args.coverage:g}% coverage ({c.band_label()}).", file=sys.stderr)
    for k, n in kinds.items():
        if n and k != "bounded":
            print(f"{'warning' if k in ('empty', 'several') else 'note'}: {n} reading(s) '{k}': {MEANINGS[k]}.",
                  file=sys.stderr)
    below = [r for r in rows if r.get("above_decision_level") is False]
    if below:
        hv = c.doc["calibration"]["limits"]["hubaux_vos"]
        print(f"note: {len(below)} reading(s) at or below the decision level y_C (Hubaux & Vos, alpha = "
              f"{hv['alpha']:g}; {hv['decision_level_y']:.6g} for one reading): not distinguishable from the blank.",
              file=sys.stderr)
    if c.transforms[1].name == "log":
        print("note: the curve was fitted to ln(y); readings are read back through it unchanged.", file=sys.stderr)


def _json(c, rb, rows, args) -> dict:
    return {"choice_digest": c.doc["digest"]["value"], "coverage": args.coverage, "x_range": list(c.x_range),
            "band": c.band_label(), "transforms": c.doc["model"]["transforms"], "interval_meanings": MEANINGS,
            "readings": rows}
