"""Views of one page: widgets bound to the session, figures and text drawn from the page model.

Views compute nothing: sliders and fields are bound to the ``Session`` (``from_param``, or a
slider's settled value), buttons call the ``PageModel``'s actions, and every figure and number is
read from the model when it announces a change (``version``, ``data_version``, ``uses_version``,
``status``). The page's layout is ``app.layout``.
"""

from __future__ import annotations

import html
import io
import json
import threading
import time

import panel as pn
import param
from bokeh.models import ColumnDataSource

from core import defaults
from core.errors import CurvewrightError

from . import clientside, plots
from .model import PageModel
from .panels import (calibration_md, numbers_md, plain, readback_glyphs, readback_md, rows_md, suggestions_md,
                     tolerance_md)
from .text import NO_WEIGHTS, WEIGHT_MEANINGS, learning_reading



READBACK = "#3b6fb6"     # read-back marks: a colour no other mark of the page uses


def readback_figure_source(fig):
    """Add the read-back marks to the fit figure (a line at each reading, its x interval, the estimate);
    returns their source (named ``readback_marks``)."""
    src = ColumnDataSource({"y": [], "x0": [], "x1": [], "lo": [], "hi": [], "x": []}, name="readback_marks")
    # no legend entries: the legend lists what is always drawn; the read-back table names these marks
    fig.segment("x0", "y", "x1", "y", source=src, color=READBACK, line_dash="dashed", line_width=1.5)
    fig.segment("lo", "y", "hi", "y", source=src, color=READBACK, line_width=6, alpha=0.6)
    fig.scatter("x", "y", source=src, marker="x", size=12, line_width=2, color=READBACK)
    return src


class Workspace(param.Parameterized):
    """One page: the model plus every widget and figure, created once."""

    def __init__(self, model: PageModel, **params):
        super().__init__(**params)
        self.model = m = model
        xl, yl = m.axis_names()
        self.figs = f = plots.FigureSet(xl or "x", yl or "y")
        self.fit_fig, self.rx, self.ry, self.rh = f.fit_fig, f.rx, f.ry, f.rh
        self.fd, self.fl, self.fh, self.lc_fig = f.fd, f.fl, f.fh, f.lc_fig
        self.rb_src = readback_figure_source(self.fit_fig)
        self.status = pn.pane.Alert("", alert_type="light", sizing_mode="stretch_width", name="status")
        self.numbers = pn.pane.Markdown("", sizing_mode="stretch_width", name="numbers", css_classes=["cw-numbers"])
        self.rows_text = pn.pane.Markdown("", sizing_mode="stretch_width", css_classes=["cw-rows"])
        self.calib = pn.pane.Markdown("", sizing_mode="stretch_width", css_classes=["cw-calibration"])
        self.lc_text = pn.pane.Markdown("", sizing_mode="stretch_width", name="learning_text")
        self.rb_text = pn.pane.Markdown("", sizing_mode="stretch_width", css_classes=["cw-readback"])
        self.tol_text = pn.pane.Markdown("", sizing_mode="stretch_width", css_classes=["cw-tolerance"])
        self.weight_meaning = pn.pane.Markdown("", sizing_mode="stretch_width", margin=(0, 10))
        self.suggestions = pn.pane.Markdown("", sizing_mode="stretch_width", margin=(0, 10),
                                            css_classes=["cw-suggestions"])
        self._doc, self._thread = pn.state.curdoc, threading.get_ident()
        self._syncing = False
        self._bg_lock, self._bg_running, self._bg_next = threading.Lock(), set(), {}
        self._build_widgets()
        m.background = self._in_background if self._doc is not None else None
        clientside.attach(self.figs, self.degree, self.lam)     # the fit redrawn in the browser, same frame
        m.param.watch(self._on_version, "version")
        m.param.watch(self._on_status, "status")
        m.param.watch(self._on_data, "data_version")
        m.param.watch(self._on_uses, "uses_version")
        m.param.watch(self._on_learning, "learning_version")
        self._on_data()
        self._on_version()
        self._on_status()
        self._on_uses()

    # ---- widgets ------------------------------------------------------------------
    def _build_widgets(self):
        m, s = self.model, self.model.session
        sw = {"sizing_mode": "stretch_width"}
        self.degree = pn.widgets.IntSlider.from_param(s.param.degree, label="Degree", css_classes=["cw-degree"], **sw)
        self.lam = pn.widgets.FloatSlider.from_param(s.param.log_lambda, label="lambda", format=clientside.lambda_format(),
                                                     css_classes=["cw-lambda"], **sw)
        # the training fraction rebuilds the statistics: it applies once the slider is released
        p = s.param.train_fraction
        self.frac = pn.widgets.FloatSlider(name="Training fraction", start=p.bounds[0], end=p.bounds[1], step=p.step,
                                           value=s.train_fraction, css_classes=["cw-train-fraction"], **sw)
        self.frac.param.watch(lambda e: setattr(s, "train_fraction", e.new), "value_throttled")
        for w in (self.degree, self.lam):
            w.param.watch(self._on_settle, "value_throttled")
        self.folds = pn.widgets.IntInput.from_param(s.param.folds, label="Folds", css_classes=["cw-folds"], **sw)
        self.seed = pn.widgets.IntInput.from_param(s.param.seed, label="Seed", **sw)
        self.repeats = pn.widgets.IntInput.from_param(s.param.repeats, label="Repeats", css_classes=["cw-repeats"],
                                                    **sw)
        self.loo = pn.widgets.Checkbox.from_param(s.param.loo, label="Leave-one-out instead of folds", css_classes=["cw-loo"],
                                                  **sw)
        self.test = pn.widgets.FloatSlider.from_param(s.param.test_fraction, label="Sealed-test fraction",
                                                      css_classes=["cw-sealed"], **sw)
        # chunked upload (never one websocket message above its limit) with the size refused in the browser
        self.upload = pn.widgets.FileDropper(accepted_filetypes=[".csv", ".tsv", ".txt", ".xlsx", ".parquet"],
                                             max_file_size=f"{defaults.UPLOAD_MB}MB", multiple=False,
                                             css_classes=["cw-upload"], **sw)
        self.upload_note = pn.pane.Markdown(
            f"Files up to {defaults.UPLOAD_MB} MB. A larger file is opened from disk with "
            "`curvewright open FILE`, which reads it in chunks.", sizing_mode="stretch_width", margin=(0, 10))
        self.upload.param.watch(self._on_upload, "value")
        self.xcol = pn.widgets.Select(name="x column", css_classes=["cw-xcol"], **sw)
        self.ycol = pn.widgets.Select(name="y column", css_classes=["cw-ycol"], **sw)
        self.wcol = pn.widgets.Select(name="Weights column", css_classes=["cw-wcol"], **sw)
        self.gcol = pn.widgets.Select(name="Group column", css_classes=["cw-gcol"], **sw)
        self.fcol = pn.widgets.Select(name="Fold column", css_classes=["cw-fcol"], **sw)
        for w, name in ((self.xcol, "x_column"), (self.ycol, "y_column"), (self.wcol, "weight_column"),
                        (self.gcol, "group_column"), (self.fcol, "fold_column")):
            w.param.watch(lambda e, n=name: self._set_column(n, e.new), "value")
        self.wkind = pn.widgets.Select.from_param(s.param.weight_kind, label="Weights column holds",
                                                   css_classes=["cw-wkind"], **sw)
        self.xt = pn.widgets.Select.from_param(s.param.x_transform, label="x transform", css_classes=["cw-xt"], **sw)
        self.yt = pn.widgets.Select.from_param(s.param.y_transform, label="y transform", **sw)
        self.origin = pn.widgets.Checkbox.from_param(s.param.through_origin, label="Through (0, 0): no constant term",
                                                     css_classes=["cw-origin"], **sw)
        self.rec_min = pn.widgets.Button(label="Suggest: lowest CV error", color="primary", **sw)
        self.rec_1se = pn.widgets.Button(label="Suggest: simplest within one SE", color="primary", **sw)
        self.rec_min.on_click(lambda e: self._safe(lambda: m.recommend("lowest")))
        self.rec_1se.on_click(lambda e: self._safe(lambda: m.recommend("simplest")))
        self.reveal = pn.widgets.Button(label="Reveal sealed test…", color="warning", **sw)
        self.confirm = pn.widgets.Checkbox(label="I have made my choice; reveal and record it", visible=False,
                                           css_classes=["cw-confirm"])
        self.confirm_btn = pn.widgets.Button(label="Confirm reveal", color="danger", visible=False)
        self.reveal.on_click(self._ask_reveal)
        self.confirm_btn.on_click(self._do_reveal)
        self.notes = pn.widgets.TextAreaInput(name="Notes for the export", height=70, **sw)
        self.download = pn.widgets.FileDownload(callback=self._export, filename="curve_choice.json",
                                                label="Export choice (JSON)", color="success", **sw)
        self.report = pn.widgets.FileDownload(callback=self._report, filename="curve_report.html",
                                              label="Download report (HTML)", color="default", **sw)
        self.save_beside = pn.widgets.Button(label="Save next to the data file", color="default", **sw)
        self.save_beside.on_click(lambda e: m.save_beside(self.notes.value or ""))
        self.penalty = pn.widgets.Select.from_param(s.param.penalty, label="Penalty", css_classes=["cw-penalty"], **sw)
        self.mix = pn.widgets.FloatSlider.from_param(s.param.mix, label="Elastic-net L1 share", css_classes=["cw-mix"],
                                                     **sw)
        self.exclude = pn.widgets.TextInput.from_param(s.param.exclude, label="Exclude rows (recorded)",
                                                       placeholder="e.g. 11, 33", **sw)
        self.boot = pn.widgets.Button(label="Bootstrap band", color="default", **sw)
        self.boot.on_click(lambda e: self._safe(m.bootstrap_band))
        self.bv = pn.widgets.Button(label="Bias / variance", color="default", **sw)
        self.bv.on_click(lambda e: self._safe(m.compute_bias_variance))
        self.readings = pn.widgets.TextAreaInput.from_param(
            s.param.readings, name="Readings (y), one unknown per line", height=120, css_classes=["cw-readings"],
            placeholder="0.21\n0.30 0.31 0.29   <- replicates of one unknown", **sw)
        self.replicates = pn.widgets.IntInput.from_param(s.param.replicates, label="A single reading is the mean of",
                                                         **sw)
        self.tolerance = pn.widgets.FloatInput.from_param(s.param.tolerance, label="Tolerance (0: no check)",
                                                          description="Checks the rows of this fit (the cross-validation "
                                                          "rows, and the sealed rows once revealed): |y - curve| at "
                                                          "most this, in y units or as a share. Not the pasted readings.",
                                                          step=0.01, css_classes=["cw-tolerance-input"], **sw)
        self.tol_rel = pn.widgets.Checkbox.from_param(s.param.tolerance_relative,
                                                      label="Tolerance is a share of the prediction", **sw)
        self.tol_rule = pn.widgets.Select.from_param(s.param.tolerance_rule, label="Decision rule",
                                                     description="simple: pass when |error| <= tolerance. guarded: pass "
                                                     "only when |error| <= tolerance - U, U = 2u the expanded "
                                                     "uncertainty of the error (ILAC-G8).", **sw)
        self.progress = pn.indicators.Progress(value=0, max=1000, visible=False, name="progress", **sw)
        self.progress_text = pn.pane.Str("", visible=False)
        m.param.watch(self._on_progress, ["progress", "progress_text"])
        self.busy = pn.indicators.LoadingSpinner(value=False, size=20)
        m.param.watch(lambda e: setattr(self.busy, "value", e.new), "busy")
        s.param.watch(self._show_weight_meaning, ["weight_kind", "weight_column"])
        s.param.watch(self._sync_selects, ["x_column", "y_column", "weight_column", "group_column", "fold_column"])
        s.param.watch(lambda e: setattr(self.mix, "visible", e.new == "elastic"), "penalty")
        self.mix.visible = s.penalty == "elastic"
        self._show_weight_meaning()

    def _sync_selects(self, *_):
        """Column selects follow the session (the model may set or restore them)."""
        s = self.model.session
        self._syncing = True
        try:
            for w, val in ((self.xcol, s.x_column), (self.ycol, s.y_column), (self.wcol, s.weight_column),
                           (self.gcol, s.group_column), (self.fcol, s.fold_column)):
                if val in w.options and w.value != val:
                    w.value = val
        finally:
            self._syncing = False

    def _set_column(self, name, value):
        s = self.model.session
        if not self._syncing and getattr(s, name) != (value or ""):
            self._safe(lambda: setattr(s, name, value or ""))

    def _show_weight_meaning(self, *_):
        s = self.model.session
        self.weight_meaning.object = WEIGHT_MEANINGS[s.weight_kind] if s.weight_column else NO_WEIGHTS

    def _safe(self, fn):
        try:
            fn()
        except CurvewrightError as exc:
            self.model.status = str(exc)

    def _in_background(self, work, done, slot: str = "work", rest: float = 0.0):
        """Run ``work()`` in a thread and ``done(result)`` on this page's own thread.

        One thread per ``slot`` at most: a request that arrives while its slot is busy waits as the
        slot's only queued job (a newer one replaces it), so a run of slider presses costs one
        computation in flight and one to come, never one thread per press."""
        doc = self._doc
        with self._bg_lock:
            if slot in self._bg_running:
                self._bg_next[slot] = (work, done)
                return
            self._bg_running.add(slot)

        def run(work, done):
            while True:
                if rest:
                    time.sleep(rest)
                    with self._bg_lock:
                        queued = self._bg_next.pop(slot, None)
                    if queued is not None:
                        work, done = queued
                        continue
                result = work()
                doc.add_next_tick_callback(lambda done=done, result=result: done(result))
                with self._bg_lock:
                    queued = self._bg_next.pop(slot, None)
                    if queued is None:
                        self._bg_running.discard(slot)
                        return
                work, done = queued
        threading.Thread(target=run, args=(work, done), daemon=True).start()

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
        for name, data in (event.new or {}).items():
            # the dropper hands text files over decoded when they are UTF-8: encode them back, byte for byte
            self.model.load_bytes(data.encode("utf-8") if isinstance(data, str) else data, name)

    def _on_settle(self, _):
        # the slider's own value may arrive in the same message: read the session on the next tick
        doc = pn.state.curdoc
        if doc is not None and doc.session_context is not None:
            doc.add_next_tick_callback(lambda: self._safe(self.model.settle))
        else:
            self._safe(self.model.settle)

    def _ask_reveal(self, _):
        self.confirm.visible = True
        self.confirm_btn.visible = True

    def _do_reveal(self, _):
        if not self.confirm.value:
            self.model.status = "Tick the confirmation box to reveal the sealed test."
            return
        self.model.reveal_test()
        self.model.refresh_uses()
        self.confirm.visible = self.confirm_btn.visible = False
        self.confirm.value = False

    def _names(self):
        return self.model.file_name("choice", "json"), self.model.file_name("report", "html")

    def _export(self):
        try:
            text = self.model.choice(self.notes.value or "").to_json()
        except CurvewrightError as exc:
            self.model.status = f"Export failed: {exc}"
            return io.StringIO(json.dumps({"error": str(exc)}))
        self.model.status = f"Choice exported (downloaded as {self.download.filename})."
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
            return io.StringIO(f"<p>Report not built: {html.escape(str(exc))}</p>")   # an HTML file: HTML-escaped
        m.status = f"Report downloaded ({self.report.filename})."
        return io.StringIO(text)

    def _on_status(self, *_):
        text = self.model.status
        self.status.object = plain(text)
        self.status.alert_type = "danger" if text.startswith(("Could not", "Export failed", "Not saved")) else "light"

    def _on_data(self, *_):
        with pn.io.unlocked():
            self._update_data_views()

    def _update_data_views(self):
        m = self.model
        self.figs.update_data(m)
        cols = list(m.columns) or [""]
        s = m.session
        self._syncing = True          # the model chose these: do not send them back as a user's choice
        try:
            for w, opts, val in ((self.xcol, cols, s.x_column), (self.ycol, cols, s.y_column),
                                 (self.wcol, [""] + cols, s.weight_column), (self.gcol, [""] + cols, s.group_column),
                                 (self.fcol, [""] + cols, s.fold_column)):
                w.param.update(options=opts, value=val if val in opts else opts[0])
        finally:
            self._syncing = False
        self.rows_text.object = rows_md(m)
        self.suggestions.object = suggestions_md(m)

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
        self.lc_text.object = self._learning_md()
        self.numbers.object = numbers_md(m)
        self.rows_text.object = rows_md(m)
        self.download.filename, self.report.filename = self._names()

    def _on_uses(self, *_):
        with pn.io.unlocked():
            m = self.model
            self.rb_text.object = readback_md(m)
            self.tol_text.object = tolerance_md(m)
            self.calib.object = calibration_md(m)
            self.rb_src.data = readback_glyphs(m)

    def _on_learning(self, *_):
        with pn.io.unlocked():
            self.figs.update_learning(self.model)
            self.lc_text.object = self._learning_md()

    def _learning_md(self) -> str:
        m = self.model
        lc = m.learning
        if lc is None:
            return plain(m.learning_note or "The learning curve appears once a setting is chosen.")
        pen = "no penalty" if m.learning_note else f"{m.engine.penalty} penalty"
        head = (f"Degree {lc.degree}, lambda {lc.lam:.3g} ({pen}), {lc.folds} folds x {lc.repeats} repeats; "
                "recomputed whenever a slider comes to rest.")
        return "  \n".join(plain(t) for t in (learning_reading(lc), head, m.learning_note) if t)

    def panel(self):
        from .layout import page_layout

        return page_layout(self)
