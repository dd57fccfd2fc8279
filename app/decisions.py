"""A standalone HTML record of a tolerance check (``curvewright check --tolerance T --report OUT``): the
curve it used (file, digest, range), the decision rule in words, the verdict and every row's numbers.
Every text from a file or the command line is escaped; nothing is fetched when it opens."""

from __future__ import annotations

import html
import math

from .text import CAUTION

STYLE = ("body{font-family:system-ui,sans-serif;color:#14213d;max-width:1000px;margin:2em auto;line-height:1.45}"
         "table{border-collapse:collapse}td,th{padding:2px 10px;border-bottom:1px solid #d9dde3;text-align:right}"
         "th{background:#eef1f5}.fail{color:#9b1d20;font-weight:600}.pass{color:#1f5f3a}"
         ".caution{border-left:4px solid #b5651d;padding:4px 10px;background:#fbf3ea}")


def _n(v, digits=6) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    return f"{v:.{digits}g}"


def decisions_html(choice, data_name: str, scores: dict, tc: dict) -> str:
    """The HTML page for a tolerance check ``tc`` (``core.tolerance.tolerance_check``) of ``choice``."""
    e = html.escape
    d, m = choice.doc["data"], choice.doc["model"]
    lo, hi = choice.x_range
    tol = f"{100 * tc['tolerance']:g} % of the prediction" if tc["relative"] else f"{tc['tolerance']:g} (y units)"
    verdict = tc["overall"].upper()
    rows = "".join(
        f"<tr><td>{r['row']}</td><td>{_n(r['x'])}</td><td>{_n(r['y'])}</td><td>{_n(r['prediction'])}</td>"
        f"<td>{_n(r['error'], 4)}</td><td>{_n(r['expanded_uncertainty'], 4)}</td><td>{_n(r['acceptance_limit'], 4)}</td>"
        f"<td class=\"{'pass' if r['pass'] else 'fail'}\">{'pass' if r['pass'] else 'FAIL'}</td>"
        f"<td>{'yes' if r['outside_fitted_range'] else ''}</td></tr>" for r in tc["rows"])
    caution = e(CAUTION.replace("**", ""))
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>Tolerance check: {e(data_name)}</title>
<style>{STYLE}</style></head><body>
<h1>Tolerance check</h1>
<p class="caution">{caution}</p>
<h2 class="{'pass' if verdict == 'PASS' else 'fail'}">{verdict}: {tc['passed']} row(s) pass, {tc['failed']} fail</h2>
<p><b>Rows checked:</b> {e(data_name)} ({scores['n']} rows; RMSE {_n(scores['rmse'])}, bias {_n(scores['bias'])})<br>
<b>Curve:</b> {e(str(d.get('file') or 'unnamed data'))}, {e(str(d['x_column']))} &rarr; {e(str(d['y_column']))},
degree {m['degree']}, lambda {_n(m['lambda'])} ({e(m['penalty'])} penalty), calibrated x range [{_n(lo)}, {_n(hi)}];
choice digest <code>{e(choice.doc['digest']['value'])}</code><br>
<b>Tolerance:</b> {e(tol)}<br>
<b>Decision rule:</b> {e(tc['rule_text'])}; U = {tc['k']:g} u, u combining the curve's uncertainty with one
reading's ({e(choice.band_label())}).</p>
{f"<p>At {tc['guard_band_exceeds_tolerance']} row(s) the guard band is as wide as the tolerance: no reading there can pass.</p>" if tc['guard_band_exceeds_tolerance'] else ""}
<table><tr><th>row</th><th>x</th><th>y</th><th>prediction</th><th>error</th><th>U</th><th>limit</th><th>decision</th>
<th>outside range</th></tr>{rows}</table>
</body></html>
"""
