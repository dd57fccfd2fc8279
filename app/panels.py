"""Text panels of the page, as Markdown built from the page model (no widgets, no figures).

Every text that came from a file (column names, cells, messages quoting them) passes through ``plain``
so it is shown literally, never as HTML or formatting. Numbers use ``app.fmt``.
"""

from __future__ import annotations

import re

import numpy as np

from .fmt import lam_text, number, with_se
from .uses import INTERVAL_WORDS

__all__ = ["plain", "suggestions_md", "numbers_md", "rows_md", "readback_md", "tolerance_md", "calibration_md"]


def plain(text: str) -> str:
    """Text shown literally in a Markdown pane: every ASCII punctuation mark backslash-escaped, so
    file names, column names and cells quoted in a message never become HTML or formatting."""
    return re.sub(r"([!-/:-@\[-`{-~])", r"\\\1", str(text))


def _rows(rows, limit=20) -> str:
    rows = [int(r) for r in rows]
    return ", ".join(map(str, rows[:limit])) + (f" … ({len(rows) - limit} more)" if len(rows) > limit else "")


RULE_NAMES = {"lowest": "Lowest CV error", "simplest": "Simplest within one SE"}


def suggestions_md(m) -> str:
    """Each suggestion with its setting and what the residual checks found, then which to prefer."""
    if m.surface is None:
        return ""
    checks, prefer = m.suggestion_checks
    lines = []
    for rule, rec in m.surface.recommended.items():
        c = checks.get(rule)
        verdict = {True: "passes", False: "fails", None: "not checked"}[c.passed] if c is not None else "not checked"
        why = f" ({'; '.join(c.reasons)})" if c is not None and c.passed is False else ""
        lines.append(f"- **{RULE_NAMES.get(rule, rule)}**: degree {rec.degree}, lambda {lam_text(rec.lam)}; "
                     f"residual checks: {verdict}{plain(why)}")
    if prefer:
        lines.append(f"\n{plain(prefer)}")
    return "\n".join(lines)


def numbers_md(m) -> str:
    """The current setting's numbers: errors with their standard errors, the coefficients, notes."""
    out, e = m.out, m.engine
    pen = out["penalty"] + (f", L1 share {out['mix']:g}" if out["penalty"] == "elastic" else "")
    lines = [f"### Degree {out['degree']}, lambda {lam_text(out['lam'])} ({pen} penalty)", "",
             "| | value |", "|---|---:|",
             f"| CV RMSE ± SE | **{with_se(out['cv_rmse'], out['cv_rmse_se'])}** |",
             f"| training RMSE | {number(out['train_rmse'])} |",
             f"| effective degrees of freedom | {number(out['effective_df'], 3)} |",
             f"| GCV (mean square) | {number(out.get('gcv_mse'))} |"]
    if out.get("loo_mse") is not None:
        lines.append(f"| leave-one-out mean square | {number(out['loo_mse'])} |")
    if out.get("reduced_chi_square") is not None:
        lines.append(f"| reduced chi-square (near 1: curve and stated u agree) | {number(out['reduced_chi_square'], 3)} |")
    lines.append(f"| rows: cross-validation / sealed | {e.n_train} / {e.n_test} |")
    sealed = m.surface.sealed.to_dict()
    if sealed["revealed"]:
        lines.append(f"| sealed-test RMSE (degree {sealed['degree']}, lambda {lam_text(sealed['lambda'])}) | "
                     f"**{number(sealed['rmse'])}** |")
    lines += ["", "| term | coefficient (raw x) |", "|---|---:|"]
    if out["power"] is not None:
        for k, a in enumerate(out["power"]):
            lines.append(f"| {'1' if k == 0 else ('x' if k == 1 else f'x^{k}')} | {a:.10g} |")
    else:
        lines.append("| – | not defined: this degree is too collinear for the chosen penalty |")
    infl = out.get("influential")
    if infl is not None and infl.any():
        lines.append(f"\n*Influential rows* (Cook's distance above 4/n; large blue points in the residual plots): "
                     f"{_rows(out['rows'][infl], 10)}. Look at them; exclude one only with a reason (it is recorded).")
    if m.bias_var is not None:
        b = m.bias_var
        lines.append(f"\n*Expected error split* (simulated from the fit): bias² {number(b.bias2)} + variance "
                     f"{number(b.variance)} + noise {number(b.noise)} = {number(b.expected_mse)}")
    for w in out.get("warnings", [])[:2]:
        lines.append(f"\n*Note:* {plain(w)}")
    return "\n".join(lines)


def rows_md(m) -> str:
    """Which rows are in play and which were left out, and why (spreadsheet row numbers; header = row 1)."""
    t = m.table
    if t is None:
        return ""
    lines = ["**Rows**"]
    if t.rows_dropped:
        lines.append(f"- skipped, blank cell in a chosen column: rows {_rows(t.rows_dropped)}")
    if t.excluded_rows:
        lines.append(f"- excluded on request (recorded in the export): rows {_rows(t.excluded_rows)}")
    aside = m.aside_rows()
    if aside.size:
        lines.append(f"- set aside by the training fraction: {aside.size} rows ({_rows(aside, 10)})")
    sealed = m.sealed_rows()
    if m.surface is not None and m.surface.test_revealed:
        lines.append(f"- sealed test, revealed: rows {_rows(sealed, 40)}")
    elif sealed.size:
        lines.append(f"- sealed test: {sealed.size} rows, listed after the reveal")
    if len(lines) == 1:
        lines.append("- every row of the file is in use")
    return "\n".join(lines)


def readback_md(m) -> str:
    """The read-back table (x with its interval for each pasted reading) or what stands in its way."""
    if m.readback_problem:
        return f"**Could not read back:** {plain(m.readback_problem)}"
    if m.use_choice is None:
        return "*Working out the curve's uncertainty…*" if m.uses_pending else \
            "Read-back needs the rows of a data file and a curve with a band."
    if not m.readback:
        return "Read-back: paste readings under *Use the curve* (one per line, or the replicates of one unknown on one line)."
    cov = 95
    lines = [f"| reading | n | x estimate | x low | x high | standard uncertainty of x | interval ({cov}%) |",
             "|---:|---:|---:|---:|---:|---:|---|"]
    for r in m.readback:
        lines.append(f"| {number(r['reading'], 6)} | {r['replicates']} | {number(r['x_estimate'], 5)} | "
                     f"{number(r['x_low'], 5)} | {number(r['x_high'], 5)} | {number(r['x_standard_uncertainty'], 3)} | "
                     f"{r['interval']}: {INTERVAL_WORDS[r['interval']]} |")
        if "solutions" in r:
            lines.append(f"| | | solutions: {', '.join(number(v, 5) for v in r['solutions'])} | | | | |")
    lo, hi = m.use_choice.x_range
    lines.append("\nOn the curve plot: a dashed blue line at each reading, a thick blue bar over its x interval "
                 "and a cross at the estimate.")
    lines.append(f"\nCalibrated x range [{number(lo, 6)}, {number(hi, 6)}]; band: {plain(m.use_choice.band_label())}.")
    if m.use_choice.transforms[1].name == "log":
        lines.append("The curve was fitted to ln(y): readings are read back through it unchanged.")
    return "\n".join(lines)


def tolerance_md(m) -> str:
    """The tolerance check's verdict, its rule and the failing rows."""
    if m.tolerance_problem:
        return f"**Could not check:** {plain(m.tolerance_problem)}"
    tc = m.tolerance_result
    if tc is None:
        return "Tolerance check: set a tolerance above 0 under *Use the curve*."
    tol = f"{100 * tc['tolerance']:g}% of the prediction" if tc["relative"] else f"{tc['tolerance']:g} (y units)"
    lines = [f"**{tc['overall'].upper()}**: {tc['passed']} rows pass, {tc['failed']} fail; tolerance {tol}; "
             f"rows checked: {tc['rows_checked']}.", "", f"Rule: {plain(tc['rule_text'])}."]
    if tc.get("guard_band_exceeds_tolerance"):
        lines.append(f"At {tc['guard_band_exceeds_tolerance']} rows the guard band is as wide as the tolerance: "
                     "no reading there can pass.")
    fails = [r for r in tc["rows"] if not r["pass"]][:15]
    if fails:
        lines += ["", "| row | x | y | prediction | error | U (k = 2) | limit |", "|---:|---:|---:|---:|---:|---:|---:|"]
        lines += [f"| {r['row']} | {number(r['x'], 6)} | {number(r['y'], 6)} | {number(r['prediction'], 6)} | "
                  f"{number(r['error'], 3)} | {number(r['expanded_uncertainty'], 3)} | {number(r['acceptance_limit'], 3)} |"
                  for r in fails]
    return "\n".join(lines)


def calibration_md(m) -> str:
    """Lack of fit and detection limits of the current setting, each naming its method."""
    if m.uses_pending and not m.calibration:
        return "*Working out lack of fit and limits…*"
    if not m.calibration:
        return ""
    return "**Calibration figures** (" + ("updating…" if m.uses_pending else "this setting") + ")\n\n" + \
        "\n".join(f"- {plain(t)}" for t in m.calibration)


def readback_glyphs(m) -> dict:
    """Columns for the read-back marks on the fit plot, in the plot's (possibly transformed) units:
    a horizontal line at each reading across the calibrated range, and the x interval on it."""
    from core.transforms import get as get_transform

    empty = {"y": [], "x0": [], "x1": [], "lo": [], "hi": [], "x": []}
    c = m.use_choice
    if c is None or not m.readback:
        return empty
    tx, ty = (get_transform(n) for n in m.table.transforms)
    lo, hi = c.x_range
    out = {k: [] for k in empty}
    for r in m.readback:
        y = float(ty.forward(np.array([r["reading"]]))[0])
        a = r["x_low"] if r["x_low"] is not None else (lo if r["interval"] == "one-sided" else np.nan)
        b = r["x_high"] if r["x_high"] is not None else (hi if r["interval"] == "one-sided" else np.nan)
        est = r["x_estimate"] if r["x_estimate"] is not None else np.nan
        fx = lambda v: float(tx.forward(np.array([v]))[0]) if np.isfinite(v) else np.nan  # noqa: E731
        out["y"].append(y)
        out["x0"].append(fx(lo)); out["x1"].append(fx(hi))
        out["lo"].append(fx(a)); out["hi"].append(fx(b)); out["x"].append(fx(est))
    return out
