"""One standalone HTML file defending a chosen curve: plots, numbers, audit trail.

The report re-derives every plot from the data and the choice file's settings
(same columns, folds, seed and sealed fraction), checks that the recomputed
cross-validation error equals the file's, and prints the file's own numbers.
Bokeh's JavaScript is inlined, so the file opens offline.
"""

from __future__ import annotations

import html
import math
import warnings
import re
from pathlib import Path

import numpy as np
from bokeh.embed import components
from bokeh.layouts import column, row
from bokeh.resources import INLINE

import core
from core.choice import Choice
from core.errors import DataError, message
from core.influence import row_influence

from . import plots
from .model import PageModel
from .session import LOG_LAMBDA_OFF, Session
from .text import CAUTION

STYLE = ("font-family: system-ui, sans-serif; color: #14213d; max-width: 1100px; line-height: 1.45;")


def _f(v, digits=6):
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "–"
    return f"{v:.{digits}g}"


def _model_for(choice: Choice, data_path) -> PageModel:
    """The page model re-deriving the choice from the data with the file's settings (refused when
    the data or the recomputed CV error differ)."""
    doc = choice.doc
    d, m, v = doc["data"], doc["model"], doc["validation"]
    tr = m.get("transforms") or {"x": "none", "y": "none"}
    session = Session(folds=v["k"] if v["scheme"] != "loo" else Session.folds, seed=v["seed"],
                      test_fraction=v["sealed_test"]["fraction"], loo=v["scheme"] == "loo",
                      fold_column=v.get("folds_given_by") or "", through_origin=not m.get("intercept", True),
                      x_transform=tr["x"], y_transform=tr["y"],
                      repeats=v["repeats"], x_column=d["x_column"], y_column=d["y_column"],
                      weight_column=m["weighting"]["column"] or "",
                      weight_kind=m["weighting"]["kind"] or "relative",
                      group_column=v.get("groups_from") or "", penalty=m.get("penalty", "ridge"),
                      mix=max(0.05, m.get("mix") or 0.5),
                      exclude=", ".join(map(str, d.get("excluded_rows", []))))
    model = PageModel(session)
    if not model.load_path(data_path):
        raise DataError(model.status)
    if model.table.columns_sha256 != d["columns_sha256"]:
        raise DataError(message("Choice file field 'data/columns_sha256'",
                                f"the fingerprint of the selected columns of '{Path(data_path).name}'",
                                "a different one", "Give the data file the curve was chosen on"))
    lam = m["lambda"]
    session.degree = m["degree"]
    session.log_lambda = LOG_LAMBDA_OFF if lam == 0 else math.log10(lam)
    cv = model.out["cv_mse"]
    if not math.isclose(cv, v["cv_mse"], rel_tol=1e-7):
        raise DataError(message("Choice file field 'validation/cv_mse'",
                                f"the value recomputed from the data and fold settings ({cv:.12g})",
                                f"{v['cv_mse']:.12g}", "The file was edited or made from other settings"))
    model.compute_learning_curve()
    return model


def _notices(choice: Choice, model: PageModel, infl) -> list[str]:
    doc = choice.doc
    out = []
    lo, hi = doc["data"]["x_range"]
    g = model.out["grid"]
    if g.min() < lo or g.max() > hi:
        out.append(f"The curve is drawn from {g.min():.4g} to {g.max():.4g}, a little beyond the fitted x range "
                   f"[{lo:.4g}, {hi:.4g}]: outside that range it is an extrapolation and should not be relied on.")
    for name, rec in doc["validation"]["recommendation"].items():
        if rec["degree_at_edge"]:
            out.append(f"The {name} recommendation's degree ({rec['degree']}) is the top of the searched range: "
                       "a wider degree search might choose differently.")
        if rec["lambda_at_edge"]:
            out.append(f"The {name} recommendation's lambda lies at the edge of the lambda grid: widen the grid.")
    if infl is not None and infl.flagged.size:
        out.append(f"{infl.flagged.size} row(s) have a large influence on the curve (Cook's distance above 4/n, "
                   f"common practice): rows at x = " + ", ".join(f"{v:.4g}" for v in model.training_rows()[0][infl.flagged][:8])
                   + ". Check them for recording errors before trusting the curve.")
    if doc["validation"]["sealed_test"]["revealed"] is False and doc["validation"]["sealed_test"]["n"]:
        out.append("The sealed test set was not looked at before this choice was exported: its error is not "
                   "part of this report.")
    return out


def _calibration_html(doc: dict) -> str:
    """Lack of fit and detection limits as the choice file records them, in the page's sentences
    (``app.uses.calibration_lines``), escaped, with the key numbers tagged for checking."""
    from .uses import calibration_lines

    tags = {}

    def mark(name, text):
        token = f"\x00{len(tags)}\x00"
        tags[token] = f"<b data-field='{name}'>{html.escape(text)}</b>"
        return token

    lines = calibration_lines(doc.get("calibration") or {}, (doc["model"].get("weighting") or {}).get("kind"),
                              digits=6, mark=mark)
    items = []
    for line in lines:
        text = html.escape(line)
        for token, tagged in tags.items():
            text = text.replace(token, tagged)
        items.append(f"<li>{text}</li>")
    return "<h2>Calibration checks</h2><ul>" + "".join(items) + "</ul>"


def _pass_on_warnings(caught, degree: int) -> None:
    """Re-derive the whole surface quietly: pass on only the warnings about the chosen curve's degree
    (or naming none), not about other degrees of the grid the choice did not take."""
    for w in caught:
        named = {int(d) for d in re.findall(r"\bdegree[- ](\d+)\b", str(w.message))}
        if not named or degree in named:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)


def build_report(choice: Choice, data_path) -> str:
    """The report as an HTML string (see module docstring)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        model = _model_for(choice, data_path)
    _pass_on_warnings(caught, choice.doc["model"]["degree"])
    doc = choice.doc
    m, v, d = doc["model"], doc["validation"], doc["data"]
    figs = plots.FigureSet(d["x_column"], d["y_column"])
    figs.update_data(model)
    figs.update(model, show_sealed=True)
    infl = None
    if m["lambda"] == 0:
        x_tr, y_tr, w = model.training_rows()
        fit = core.fit(x_tr, y_tr, m["degree"], 0.0, weights=w, intercept=m["intercept"])
        infl = row_influence(fit, x_tr, y_tr, w)

    cv_rmse, se = v["cv_rmse"], v["cv_mse_se"]
    se_rmse = se / (2 * cv_rmse) if se is not None and cv_rmse > 0 else None
    st = v["sealed_test"]
    coef_rows = "".join(f"<tr><td>x<sup>{int(c['power'])}</sup></td><td data-field='coef'>{c['value']:.12g}</td>"
                        f"<td>{_f(c['standard_error'], 6)}</td></tr>" for c in m["power_coefficients"])
    leg_rows = "".join(f"<tr><td>P<sub>{j}</sub>(t)</td><td>{c:.15g}</td></tr>"
                       for j, c in enumerate(m["legendre_coefficients"]))
    width_html = ""
    if choice.has_band:
        xs = np.linspace(*d["x_range"], 7)
        _, lo, hi = choice.predict(xs, band="reading")
        width_html = ("<h3>How wide is the uncertainty?</h3><p>Width of the 95% band for one new reading "
                      "(where a new single measurement is expected to fall) across the fitted range:</p>"
                      "<table><tr><th>x</th>" + "".join(f"<td>{a:.4g}</td>" for a in xs) + "</tr><tr><th>width</th>"
                      + "".join(f"<td>{b:.4g}</td>" for b in hi - lo) + "</tr></table>")
    else:
        width_html = ("<p>No prediction interval is reported: the curve was chosen with lambda &gt; 0, where the "
                      "classical interval does not apply.</p>")
    sealed_html = (f"Sealed test RMSE <b data-field='test_rmse'>{_f(st['rmse'])}</b> on {st['n']} rows, revealed "
                   f"{html.escape(str(st['revealed_at']))} for degree {st['degree']}, lambda {_f(st['lambda'], 4)}."
                   if st["revealed"] else
                   f"Sealed test set: {st['n']} rows set aside; not revealed before export.")
    notices = _notices(choice, model, infl)
    reading = model.learning.reading() if model.learning is not None else ""
    units = f" {d['y_unit']}" if d["y_unit"] else ""
    head = f"""
<h1>Curve report: {html.escape(d['y_column'])} against {html.escape(d['x_column'])}</h1>
<div style="background:#fff4d6;border:1px solid #e0b84c;padding:8px 12px;">{CAUTION.replace('**', '')}</div>
<h2>In plain words</h2>
<p>The chosen curve is a polynomial of degree <b data-field="degree">{m['degree']}</b> with penalty
lambda = <b data-field="lambda">{m["lambda"]!r}</b> (rule: {html.escape(v['rule'])}). When it predicts rows it was
not fitted on, its typical error is about <b data-field="cv_rmse">{cv_rmse:.10g}</b>{html.escape(units)}
(cross-validated RMSE, give or take {_f(se_rmse, 2)}), against {math.sqrt(v['train_mse']):.6g} on the rows it was fitted
to. A much smaller training error than cross-validated error would mean the curve follows noise; here the ratio is
{cv_rmse / max(math.sqrt(v['train_mse']), 1e-300):.3g}. The curve uses about {v['effective_df']:.3g} effective
parameters. {html.escape(reading)}</p>
<p>{sealed_html}</p>
<h2>Things to look at</h2>
<ul>{''.join(f'<li>{html.escape(n)}</li>' for n in notices) or '<li>Nothing unusual was noticed.</li>'}</ul>
"""
    tables = f"""
<h2>Coefficients</h2>
<p>Raw-x power form: y = a0 + a1 x + ... (standard errors at lambda = 0 only).</p>
<table border="1" cellpadding="4" style="border-collapse:collapse"><tr><th>power</th><th>value</th><th>standard error</th></tr>{coef_rows}</table>
<p>Stable form used for every prediction: y = sum c<sub>j</sub> P<sub>j</sub>(t), t = (x - {m['domain']['center']!r}) / {m['domain']['half_width']!r}.</p>
<table border="1" cellpadding="4" style="border-collapse:collapse">{leg_rows}</table>
{width_html}
{_calibration_html(doc)}
<h2>Validation</h2>
<ul><li>Folds: {html.escape(v['scheme'])}, k = {v['k']}, repeats = {v['repeats']}, seed = {v['seed']}</li>
<li>CV MSE {v['cv_mse']:.10g} (SE {_f(se, 4)}), training MSE {v['train_mse']:.10g}, effective df {v['effective_df']:.6g}</li>
<li>Suggestions: """ + "; ".join(f"{k}: degree {r['degree']}, lambda {r['lambda']:.4g}" for k, r in v["recommendation"].items()) + f"""</li></ul>
<h2>Audit trail</h2>
<ul><li>Data file: {html.escape(str(d['file']))}; {d['rows_used']} rows used, {len(d['rows_dropped'])} dropped</li>
<li>File SHA-256: <code>{d['file_sha256']}</code></li><li>Columns SHA-256: <code>{d['columns_sha256']}</code></li>
<li>Choice written {html.escape(doc['created'])} by curvewright {html.escape(doc['software']['version'])};
report by curvewright {core.__version__}</li>
<li>Notes: {html.escape(doc['notes']) or '–'}</li></ul>
"""
    for f in (figs.fit_fig, figs.rx, figs.ry, figs.rh, figs.fd, figs.fl, figs.fh, figs.lc_fig):
        f.output_backend = "canvas"
    layout = column(figs.fit_fig, row(figs.rx, figs.ry, sizing_mode="stretch_width"), figs.rh,
                    row(figs.fd, figs.fl, sizing_mode="stretch_width"), figs.fh, figs.lc_fig,
                    sizing_mode="stretch_width")
    script, div = components(layout)
    title = html.escape(f"curvewright report: {d['y_column']} against {d['x_column']}")
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{title}</title>
{INLINE.render()}
{script}
</head><body style="{STYLE} margin: 16px auto; padding: 0 12px;">
{head}
<h2>Plots</h2>
<p>Rows in the fit (teal), sealed test rows (purple diamonds), the curve (dark) and refits on each fold's
training rows (grey); residuals with +/- 2 residual SD (red beyond, blue for influential rows); cross-validated
error (green line, shaded +/- 1 SE) and training error (dashed) against degree and lambda, with the current
setting marked by a solid line and the two recommendations by labelled dashed lines (amber); the learning
curve.</p>
{div}
{tables}
</body></html>
"""


def write_report(choice_path, data_path, out, *, force: bool = False) -> Path:
    """Build the report and write it atomically (refusing to overwrite unless ``force``).

    Where panel is imported (it registers browser extensions with Bokeh that a
    standalone file could not load offline) the report is built in a fresh
    interpreter instead (``report_in_subprocess``).
    """
    from core.files import write_atomic

    choice = Choice.load(choice_path)
    if Path(out).exists() and not force:
        write_atomic(out, "", force=False)          # raises the standard refusal
    if "panel" in __import__("sys").modules:         # panel's extensions would leak in: build elsewhere
        text = report_in_subprocess(choice.to_json(), data_path)
    else:
        text = build_report(choice, data_path)
    return write_atomic(out, text, force=force)


def report_in_subprocess(choice_json: str, data_path) -> str:
    """Build the report in a fresh interpreter (for the page, where panel is loaded); returns HTML.

    Raises DataError with the child's message when the choice or data are refused.
    """
    import subprocess
    import sys
    import tempfile

    with tempfile.TemporaryDirectory() as tmp:
        cfile = Path(tmp) / "choice.json"
        cfile.write_text(choice_json, encoding="utf-8")
        out = Path(tmp) / "report.html"
        p = subprocess.run([sys.executable, "-m", "app.cli", "report", str(cfile), str(data_path), "--out", str(out)],
                           capture_output=True, text=True, cwd=Path(__file__).resolve().parents[1])
        if p.returncode != 0:
            raise DataError(p.stderr.strip().removeprefix("error: ") or "The report could not be built.")
        return out.read_text(encoding="utf-8")
