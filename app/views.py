"""Views of one page: widgets bound to the session, figures and text drawn from the page model.

Views compute nothing: sliders and fields are bound to the ``Session`` (``from_param``),
buttons call the ``PageModel``'s actions, and every figure and number is read from the
model when it announces a change (``version``, ``data_version``, ``status``).
"""

from __future__ import annotations

import io
import json
import re
import threading

import numpy as np
import panel as pn
import param

import core
from core.errors import CurvewrightError

from . import clientside, plots
from .model import PageModel
from .text import CAUTION, HELP


def _plain(text: str) -> str:
    """Text shown literally in a Markdown pane: every ASCII punctuation mark backslash-escaped, so
    file names, column names and cells quoted in a message never become HTML or formatting."""
    return re.sub(r"([!-/:-@\[-`{-~])", r"\\\1", text)


def _fmt(v, digits=5):
    if v is None or not np.isfinite(v):
        return "–"
    return f"{v:.{digits}g}"


class Workspace(param.Parameterized):
    """One page: the model plus every widget and figure, created once."""

    def __init__(self, model: PageModel, **params):
        super().__init__(**params)
        self.model = m = model
        xl, yl = m.axis_names()
        self.figs = f = plots.FigureSet(xl or "x", yl or "y")
        self.fit_fig, self.rx, self.ry, self.rh = f.fit_fig, f.rx, f.ry, f.rh
        self.fd, self.fl, self.fh, self.lc_fig = f.fd, f.fl, f.fh, f.lc_fig
        self.status = pn.pane.Alert("", alert_type="light", sizing_mode="stretch_width", name="status")
        self.numbers = pn.pane.Markdown("", sizing_mode="stretch_width", name="numbers")
        self.lc_text = pn.pane.Markdown("Press *Learning curve* to compute it for the current setting.")
        self._build_widgets()
        clientside.attach(self.figs, self.degree, self.lam)     # the fit redrawn in the browser, same frame
        m.param.watch(self._on_version, "version")
        m.param.watch(self._on_status, "status")
        m.param.watch(self._on_data, "data_version")
        self._on_data()
        self._on_version()
        self._on_status()

    # ---- widgets ------------------------------------------------------------------
    def _build_widgets(self):
        m, s = self.model, self.model.session
        self.degree = pn.widgets.IntSlider.from_param(s.param.degree, label="Degree", sizing_mode="stretch_width")
        self.lam = pn.widgets.FloatSlider.from_param(s.param.log_lambda, label="Lambda (log scale; left end: 0)",
                                                     format=clientside.lambda_format(), sizing_mode="stretch_width")
        self.frac = pn.widgets.FloatSlider.from_param(s.param.train_fraction, label="Training fraction",
                                                      sizing_mode="stretch_width")
        self.folds = pn.widgets.IntInput.from_param(s.param.folds, label="Folds (k)", width=90)
        self.seed = pn.widgets.IntInput.from_param(s.param.seed, label="Seed", width=90)
        self.test = pn.widgets.FloatSlider.from_param(s.param.test_fraction, label="Sealed-test fraction",
                                                      sizing_mode="stretch_width")
        self.upload = pn.widgets.FileInput(accept=".csv,.tsv,.txt,.xlsx,.parquet", label="Data file",
                                           sizing_mode="stretch_width")
        self.upload.param.watch(self._on_upload, "value")
        cols = m.columns or [""]
        self.xcol = pn.widgets.Select(label="x column", options=cols, value=s.x_column or cols[0], width=150)
        self.ycol = pn.widgets.Select(label="y column", options=cols, value=s.y_column or cols[-1], width=150)
        self.wcol = pn.widgets.Select(label="weights (optional)", options=[""] + cols, value=s.weight_column, width=150)
        self.wkind = pn.widgets.Select.from_param(s.param.weight_kind, label="that column holds", width=150)
        self.apply_cols = pn.widgets.Button(label="Use these columns", color="default")
        self.apply_cols.on_click(lambda e: self._safe(lambda: m.select_columns(self.xcol.value, self.ycol.value,
                                                                                  self.wcol.value)))
        self.rec_min = pn.widgets.Button(label="Suggest: lowest CV error", color="primary")
        self.rec_1se = pn.widgets.Button(label="Suggest: simplest within one SE", color="primary")
        self.rec_min.on_click(lambda e: self._safe(lambda: m.recommend("lowest")))
        self.rec_1se.on_click(lambda e: self._safe(lambda: m.recommend("simplest")))
        self.lc_button = pn.widgets.Button(label="Learning curve", color="default")
        self.lc_button.on_click(lambda e: self._safe(m.compute_learning_curve))
        self.reveal = pn.widgets.Button(label="Reveal sealed test…", color="warning")
        self.confirm = pn.widgets.Checkbox(label="I have made my choice; reveal and record it", visible=False)
        self.confirm_btn = pn.widgets.Button(label="Confirm reveal", color="danger", visible=False)
        self.reveal.on_click(self._ask_reveal)
        self.confirm_btn.on_click(self._do_reveal)
        self.notes = pn.widgets.TextAreaInput(label="Notes for the export", height=70, sizing_mode="stretch_width")
        self.download = pn.widgets.FileDownload(callback=self._export, filename="curve_choice.json",
                                                label="Export choice (JSON)", color="success",
                                                sizing_mode="stretch_width")
        self.report = pn.widgets.FileDownload(callback=self._report, filename="curve_report.html",
                                              label="Download report (HTML)", color="default",
                                              sizing_mode="stretch_width")
        self.save_beside = pn.widgets.Button(label="Save next to the data file", color="default")
        self.save_beside.on_click(self._save_beside)
        self.penalty = pn.widgets.Select.from_param(s.param.penalty, label="Penalty", width=140)
        self.mix = pn.widgets.FloatSlider.from_param(s.param.mix, label="Elastic-net L1 share", width=160)
        self.exclude = pn.widgets.TextInput.from_param(s.param.exclude, label="Exclude rows (recorded)",
                                                       placeholder="e.g. 11, 33", sizing_mode="stretch_width")
        self.boot = pn.widgets.Button(label="Bootstrap band (200 refits)", color="default")
        self.boot.on_click(lambda e: self._safe(m.bootstrap_band))
        self.bv = pn.widgets.Button(label="Bias / variance split", color="default")
        self.bv.on_click(lambda e: self._safe(m.compute_bias_variance))
        self.progress = pn.indicators.Progress(value=0, max=1000, visible=False, sizing_mode="stretch_width",
                                               name="progress")
        self.progress_text = pn.pane.Str("", visible=False)
        self._doc, self._thread = pn.state.curdoc, threading.get_ident()
        m.param.watch(self._on_progress, ["progress", "progress_text"])
        self.busy = pn.indicators.LoadingSpinner(value=False, size=20)
        m.param.watch(lambda e: setattr(self.busy, "value", e.new), "busy")

    def _safe(self, fn):
        try:
            fn()
        except CurvewrightError as exc:
            self.model.status = str(exc)

    # ---- events -------------------------------------------------------------------
    def _on_progress(self, *_):
        if threading.get_ident() != self._thread and self._doc is not None:
            self._doc.add_next_tick_callback(self._show_progress)    # from the loading thread
            return
        self._show_progress()

    def _show_progress(self):
        s = self.model
        with pn.io.unlocked():
            self.progress.value = int(1000 * s.progress)
            self.progress.visible = 0 < s.progress < 1
            self.progress_text.object = s.progress_text
            self.progress_text.visible = bool(s.progress_text)

    def _on_upload(self, event):
        if not event.new:
            return
        m = self.model
        m.load_bytes(event.new, self.upload.filename or "upload.csv")
        cols = m.columns or [""]
        self.xcol.options, self.ycol.options, self.wcol.options = cols, cols, [""] + cols
        self.xcol.value, self.ycol.value = m.session.x_column, m.session.y_column

    def _ask_reveal(self, _):
        self.confirm.visible = True
        self.confirm_btn.visible = True

    def _do_reveal(self, _):
        if not self.confirm.value:
            self.model.status = "Tick the confirmation box to reveal the sealed test."
            return
        self.model.reveal_test()
        self.confirm.visible = self.confirm_btn.visible = False
        self.confirm.value = False

    def _export(self):
        try:
            text = self.model.choice(self.notes.value or "").to_json()
        except CurvewrightError as exc:
            self.model.status = f"Export failed: {exc}"
            return io.StringIO(json.dumps({"error": str(exc)}))
        self.model.status = "Choice exported (downloaded as curve_choice.json)."
        return io.StringIO(text)

    def _report(self):
        from .report import report_in_subprocess

        m = self.model
        if m.source_path is None:
            m.status = "Export failed: the report re-reads the rows; open the data file itself to build one."
            return io.StringIO("<p>Report not built: the rows are not loaded.</p>")
        try:
            text = report_in_subprocess(m.choice(self.notes.value or "").to_json(), m.source_path)
        except CurvewrightError as exc:
            m.status = f"Export failed: {exc}"
            return io.StringIO(f"<p>Report not built: {exc}</p>")
        m.status = "Report downloaded (curve_report.html)."
        return io.StringIO(text)

    def _save_beside(self, _):
        self.model.save_beside(self.notes.value or "")

    def _on_status(self, *_):
        text = self.model.status
        self.status.object = _plain(text)
        self.status.alert_type = "danger" if text.startswith(("Could not", "Export failed", "Not saved")) else "light"

    def _on_data(self, *_):
        with pn.io.unlocked():
            self._update_data_views()

    def _update_data_views(self):
        self.figs.update_data(self.model)
        self.lc_text.object = "Press *Learning curve* to compute it for the current setting."

    def _on_version(self, *_):
        # Button events arrive outside the document lock; ``unlocked`` sends the
        # model changes straight to this session's page (Panel's documented way).
        with pn.io.unlocked():
            self._update_views()

    def _update_views(self):
        m = self.model
        if not m.out:
            return
        self.figs.update(m, show_sealed=m.surface is not None and m.surface.test_revealed)
        if m.learning is not None:
            self.lc_text.object = (f"**Reading (guidance, not certainty):** "
                                   f"{m.learning.reading()}  \n"
                                   f"Computed for degree {m.learning.degree}, lambda {_fmt(m.learning.lam, 3)}.")
        self.numbers.object = self._numbers_md(m.out)

    def _numbers_md(self, out) -> str:
        m = self.model
        e = m.engine
        lines = [f"### Degree {out['degree']}, lambda {_fmt(out['lam'], 4)}", "",
                 f"CV RMSE **{_fmt(out['cv_rmse'])}** ± {_fmt(out['cv_rmse_se'], 2)} · "
                 f"training RMSE {_fmt(out['train_rmse'])} · "
                 f"effective df {_fmt(out['effective_df'], 4)} · rows: {e.n_train} for CV, {e.n_test} sealed", ""]
        extra = [f"GCV {_fmt(out.get('gcv_mse'))}"]
        if out.get("loo_mse") is not None:
            extra.append(f"leave-one-out MSE {_fmt(out['loo_mse'])} (one standardization for all rows)")
        if out.get("reduced_chi_square") is not None:
            extra.append(f"reduced chi-square {_fmt(out['reduced_chi_square'], 4)} (near 1 when the curve and the "
                         "stated uncertainties agree)")
        lines.extend([" · ".join(extra), ""])
        sealed = m.surface.sealed.to_dict()
        if sealed["revealed"]:
            lines.append(f"Sealed test RMSE **{_fmt(sealed['rmse'])}** (revealed {sealed['revealed_at']} "
                         f"for degree {sealed['degree']}, lambda {_fmt(sealed['lambda'], 3)})")
        else:
            lines.append("Sealed test: not revealed.")
        lines.append("")
        lines.append("| term | coefficient (raw x) |")
        lines.append("|---|---|")
        if out["power"] is not None:
            for k, a in enumerate(out["power"]):
                lines.append(f"| {'1' if k == 0 else ('x' if k == 1 else f'x^{k}')} | {a:.10g} |")
        else:
            lines.append("| – | not defined: this degree is too collinear for the chosen penalty |")
        lines.append("")
        lines.append("Standard errors and the exact least-squares numbers are in the export and `curvewright fit`.")
        if out["penalty"] != "ridge":
            lines.insert(2, f"Penalty: {out['penalty']}"
                         + (f" (L1 share {out['mix']:g})" if out["penalty"] == "elastic" else ""))
        infl = out.get("influential")
        if infl is not None and infl.any():
            rows = ", ".join(str(int(r)) for r in out["rows"][infl][:10])
            lines.append(f"\n*Influential rows* (Cook's D > 4/n, common practice; large blue points in the residual plots): "
                         f"{rows}. Check them; exclude one only with a reason (it is recorded).")
        if m.table is not None and m.table.excluded_rows:
            lines.append(f"\n*Excluded on request:* rows {', '.join(map(str, m.table.excluded_rows))}.")
        if m.bias_var is not None:
            b = m.bias_var
            lines.append(f"\n*Expected error split* (simulated from the fit): bias² {b.bias2:.4g} + variance "
                         f"{b.variance:.4g} + noise {b.noise:.4g} = {b.expected_mse:.4g}")
        for w in out.get("warnings", [])[:2]:
            lines.append(f"\n*Note:* {w}")
        return "\n".join(lines)

    # ---- layout ---------------------------------------------------------------------
    def panel(self):
        controls = pn.Column(
            pn.pane.Markdown("#### Data"), self.upload, pn.Row(self.xcol, self.ycol), pn.Row(self.wcol, self.wkind), self.apply_cols,
            pn.pane.Markdown("#### Flexibility"), self.degree, self.lam, pn.Row(self.penalty, self.mix),
            pn.pane.Markdown("#### Validation"), self.frac, pn.Row(self.folds, self.seed), self.test,
            pn.Row(self.rec_min), pn.Row(self.rec_1se), self.lc_button,
            pn.pane.Markdown("#### Uncertainty and outliers"), pn.Row(self.boot, self.bv), self.exclude,
            pn.pane.Markdown("#### Sealed test and export"), self.reveal, self.confirm, self.confirm_btn,
            self.notes, self.download, self.report, self.save_beside,
            width=330, sizing_mode="fixed", styles={"background": "#f4f1ea", "padding": "6px"},
        )
        curve_tab = pn.Column(pn.Row(self.fit_fig, sizing_mode="stretch_width"),
                              pn.Row(self.rx, self.ry, sizing_mode="stretch_width"),
                              pn.Row(self.rh, self.numbers, sizing_mode="stretch_width"),
                              sizing_mode="stretch_width")
        cx_tab = pn.Column(pn.Row(self.fd, self.fl, sizing_mode="stretch_width"), self.fh,
                           sizing_mode="stretch_width")
        lc_tab = pn.Column(self.lc_fig, self.lc_text, sizing_mode="stretch_width")
        help_tab = pn.pane.Markdown(HELP, sizing_mode="stretch_width")
        tabs = pn.Tabs(("Curve & residuals", curve_tab), ("Error vs flexibility", cx_tab),
                       ("Learning curve", lc_tab), ("How to read this", help_tab),
                       dynamic=False, sizing_mode="stretch_width")
        header = pn.Row(pn.pane.Markdown("## curvewright · how flexible may this curve be?",
                                         styles={"color": plots.INK}), self.busy, sizing_mode="stretch_width")
        caution = pn.pane.Alert(CAUTION, alert_type="warning", sizing_mode="stretch_width", name="caution")
        return pn.Column(header, caution, self.status, self.progress, self.progress_text,
                         pn.Row(controls, tabs, sizing_mode="stretch_width"),
                         sizing_mode="stretch_width")
