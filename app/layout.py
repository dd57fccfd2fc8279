"""Where everything sits on the page: a fixed-width column of controls beside tabs of figures and numbers,
under the title, the first-visit guide (dismissible), the caution (always shown) and the status line.

Widths are chosen so nothing is cut at 1280 x 800: every control in the side column stretches to the
column's width instead of carrying its own.
"""

from __future__ import annotations

import panel as pn

from . import plots
from .text import CAUTION, GUIDE

SIDE_WIDTH = 340


def _section(title, *items, collapsed=False):
    return pn.Card(*items, title=title, collapsed=collapsed, sizing_mode="stretch_width", margin=(4, 0),
                   header_background="#e8e2d4", styles={"background": "#f4f1ea"})


def guide(ws):
    """The first-visit guide with a button that hides it for the rest of the visit."""
    text = pn.pane.Markdown(GUIDE, sizing_mode="stretch_width")
    hide = pn.widgets.Button(label="Got it, hide this guide", color="default", width=200, css_classes=["cw-guide-hide"])
    box = pn.Column(text, hide, sizing_mode="stretch_width", css_classes=["cw-guide"],
                    styles={"background": "#eef3f6", "border-left": "4px solid #1f6f78", "padding": "0 10px"})
    hide.on_click(lambda e: setattr(box, "visible", False))
    return box


def page_layout(ws):
    """The whole page for a ``app.views.Workspace``."""
    side = pn.Column(
        _section("Data", ws.upload, ws.upload_note, pn.Row(ws.xcol, ws.ycol, sizing_mode="stretch_width"),
                 pn.Row(ws.xt, ws.yt, sizing_mode="stretch_width"),
                 pn.Row(ws.wcol, ws.wkind, sizing_mode="stretch_width"), ws.weight_meaning,
                 pn.Row(ws.gcol, ws.fcol, sizing_mode="stretch_width"), ws.exclude),
        _section("Flexibility", ws.degree, ws.lam, ws.penalty, ws.mix, ws.origin,
                 ws.rec_min, ws.rec_1se, ws.suggestions),
        _section("Validation", pn.Row(ws.folds, ws.repeats, ws.seed, sizing_mode="stretch_width"), ws.loo,
                 ws.frac, ws.test),
        _section("Use the curve", ws.readings, ws.replicates, ws.tolerance, ws.tol_rel, ws.tol_rule),
        _section("Uncertainty", pn.Row(ws.boot, ws.bv, sizing_mode="stretch_width")),
        _section("Sealed test and export", ws.reveal, ws.confirm, ws.confirm_btn, ws.notes, ws.download,
                 ws.report, ws.save_beside),
        width=SIDE_WIDTH, sizing_mode="fixed", css_classes=["cw-side"], margin=(0, 8, 0, 0),
    )
    curve_tab = pn.Column(pn.Row(ws.fit_fig, sizing_mode="stretch_width"), ws.rb_text, ws.tol_text,
                          pn.Row(ws.rx, ws.ry, sizing_mode="stretch_width"),
                          pn.Row(ws.rh, pn.Column(ws.numbers, ws.rows_text, ws.calib, sizing_mode="stretch_width"),
                                 sizing_mode="stretch_width"),
                          sizing_mode="stretch_width")
    cx_tab = pn.Column(pn.Row(ws.fd, ws.fl, sizing_mode="stretch_width"), ws.fh, sizing_mode="stretch_width")
    lc_tab = pn.Column(ws.lc_fig, ws.lc_text, sizing_mode="stretch_width")
    tabs = pn.Tabs(("Curve & residuals", curve_tab), ("Error vs flexibility", cx_tab), ("Learning curve", lc_tab),
                   dynamic=False, sizing_mode="stretch_width", css_classes=["cw-main"])
    header = pn.Row(pn.pane.Markdown("## curvewright · how flexible may this curve be?",
                                     styles={"color": plots.INK}), ws.busy, sizing_mode="stretch_width")
    caution = pn.pane.Alert(CAUTION, alert_type="warning", sizing_mode="stretch_width", name="caution")
    return pn.Column(header, guide(ws), caution, ws.status, ws.progress, ws.progress_text,
                     pn.Row(side, tabs, sizing_mode="stretch_width"), sizing_mode="stretch_width")
