"""Figure factories and pure functions turning the page model's outputs into column dicts.

Figures and ColumnDataSources are created once per page; updates assign a
whole new dict to ``source.data``. Sources carry names so browser tests can
find them (``Bokeh.documents[0].get_model_by_name``).
"""

from __future__ import annotations

import numpy as np
from bokeh.models import (BasicTicker, ColorBar, ColumnDataSource, HoverTool, LinearColorMapper, Span,
                          Whisker)
from bokeh.plotting import figure

from . import clientside
from .session import LOG_LAMBDA_OFF

# The workbench palette (our own): ink, fit rows, set-aside rows, sealed rows, warnings.
INK = "#14213d"
FIT_ROWS = "#1f6f78"
ASIDE = "#c9822b"
SEALED = "#7a3e9d"
ALERT = "#b23a48"
BAND = "#9aa5b1"
CV_LINE = "#b23a48"
TRAIN_LINE = "#1f6f78"
HEAT = ["#f7f4ea", "#e3dcc2", "#c9c19b", "#a8a57a", "#7f8c6a", "#57725e", "#355952", "#1d4048", "#0f2a3a"]


def _fig(title, x_label, y_label, **kw):
    f = figure(title=title, x_axis_label=x_label, y_axis_label=y_label, height=300,
               sizing_mode="stretch_width", output_backend="canvas", toolbar_location="right",
               tools="pan,wheel_zoom,box_zoom,reset,save", **kw)
    f.title.text_font_size = "11pt"
    f.title.text_color = INK
    return f


def make_fit_figure(x_label: str, y_label: str):
    src = {
        "points": ColumnDataSource({"x": [], "y": []}, name="fit_points"),
        "aside": ColumnDataSource({"x": [], "y": []}, name="aside_points"),
        "sealed": ColumnDataSource({"x": [], "y": []}, name="sealed_points"),
        "curve": ColumnDataSource({"x": [], "y": []}, name="fit_curve"),
        "band": ColumnDataSource({"xs": [], "ys": []}, name="fit_band"),
        "interval": ColumnDataSource({"x": [], "lo": [], "hi": []}, name="fit_interval"),
    }
    f = _fig("Fitted curve", x_label, y_label)
    f.varea("x", "lo", "hi", source=src["interval"], color=INK, alpha=0.10,
            legend_label="95% prediction interval")
    f.multi_line("xs", "ys", source=src["band"], color=BAND, alpha=0.55, line_width=1,
                 legend_label="refit on each fold's training rows")
    f.scatter("x", "y", source=src["points"], size=6, fill_color=FIT_ROWS, line_color=None, fill_alpha=0.75, legend_label="rows in the fit")
    f.scatter("x", "y", source=src["aside"], size=7, marker="circle", fill_color=None, line_color=ASIDE,
              line_width=1.5, legend_label="rows set aside (training fraction)")
    f.scatter("x", "y", source=src["sealed"], size=9, marker="diamond", color=SEALED, legend_label="sealed test rows")
    f.line("x", "y", source=src["curve"], color=INK, line_width=2.5, legend_label="curve")
    f.legend.click_policy = "hide"
    f.legend.label_text_font_size = "8pt"
    f.add_layout(f.legend[0], "right")      # beside the plot, never over the data
    return f, src


def make_residual_figures(x_label: str, y_label: str):
    src = {
        "res": ColumnDataSource({"x": [], "fitted": [], "r": [], "color": [], "row": [], "size": []},
                                name="resid_points"),
        "hist": ColumnDataSource({"left": [], "right": [], "count": []}, name="resid_hist"),
    }
    fx = _fig("Residuals against x", x_label, "residual")
    fy = _fig("Residuals against fitted value", "fitted " + y_label, "residual")
    lines = {}
    for f, col in ((fx, "x"), (fy, "fitted")):
        f.scatter(col, "r", source=src["res"], size="size", fill_color="color", line_color=None, fill_alpha=0.8)
        f.add_tools(HoverTool(tooltips=[("row", "@row"), ("residual", "@r{0.0000}")], renderers=f.renderers[-1:]))
        zero = Span(location=0, dimension="width", line_color=INK, line_width=1)
        up = Span(location=0, dimension="width", line_color=ALERT, line_dash="dashed")
        dn = Span(location=0, dimension="width", line_color=ALERT, line_dash="dashed")
        f.add_layout(zero); f.add_layout(up); f.add_layout(dn)
        lines[col] = (up, dn)
    fh = _fig("Residual distribution", "residual", "rows")
    fh.quad(left="left", right="right", top="count", bottom=0, source=src["hist"], color=FIT_ROWS, alpha=0.7,
            line_color="white")
    return (fx, fy, fh), src, lines


def make_complexity_figures():
    src = {
        "deg": ColumnDataSource({"degree": [], "cv": [], "train": [], "lo": [], "hi": []}, name="by_degree"),
        "lam": ColumnDataSource({"lam": [], "cv": [], "train": [], "lo": [], "hi": [], "gcv": []}, name="by_lambda"),
        "deg_now": ColumnDataSource({"x": [], "y": []}, name="degree_marker"),
        "lam_now": ColumnDataSource({"x": [], "y": []}, name="lambda_marker"),
        "deg_rec": ColumnDataSource({"x": [], "y": [], "rule": []}, name="degree_recommended"),
        "lam_rec": ColumnDataSource({"x": [], "y": [], "rule": []}, name="lambda_recommended"),
        "heat": ColumnDataSource({"image": [], "x": [], "y": [], "dw": [], "dh": []}, name="surface_heat"),
        "heat_rec": ColumnDataSource({"x": [], "y": [], "rule": []}, name="heat_recommended"),
    }
    fd = _fig("Error against degree (current lambda)", "degree", "MSE", y_axis_type="log")
    fl = _fig("Error against lambda (current degree)", "lambda", "MSE", x_axis_type="log", y_axis_type="log")
    for f, key, xk in ((fd, "deg", "degree"), (fl, "lam", "lam")):
        f.line(xk, "train", source=src[key], color=TRAIN_LINE, line_width=2, legend_label="training MSE")
        f.line(xk, "cv", source=src[key], color=CV_LINE, line_width=2, legend_label="CV MSE")
        f.scatter(xk, "cv", source=src[key], color=CV_LINE, size=4)
        f.add_layout(Whisker(base=xk, upper="hi", lower="lo", source=src[key], line_color=CV_LINE,
                             upper_head=None, lower_head=None))
        if key == "lam":
            f.line(xk, "gcv", source=src[key], color=ASIDE, line_width=1.5, line_dash="dotted",
                   legend_label="GCV (all rows)")
        f.legend.location = "top_center"
        f.legend.orientation = "horizontal"
        f.legend.label_text_font_size = "8pt"
        f.legend.background_fill_alpha = 0.6
    for f, now, rec in ((fd, "deg_now", "deg_rec"), (fl, "lam_now", "lam_rec")):
        f.scatter("x", "y", source=src[now], size=14, marker="circle", fill_color=None, line_color=INK,
                  line_width=2.5, legend_label="current setting")
        f.scatter("x", "y", source=src[rec], size=12, marker="star", color=SEALED, legend_label="suggested (min, 1se)")
        f.add_tools(HoverTool(tooltips=[("rule", "@rule")], renderers=f.renderers[-1:]))
    mapper = LinearColorMapper(palette=HEAT[::-1])
    fh = _fig("CV error over the whole grid (log10 MSE)", "log10 lambda", "degree")
    fh.image(image="image", x="x", y="y", dw="dw", dh="dh", source=src["heat"], color_mapper=mapper)
    fh.scatter("x", "y", source=src["heat_rec"], marker="star", size=14, color=SEALED)
    fh.add_layout(ColorBar(color_mapper=mapper, ticker=BasicTicker(), width=10), "right")
    return (fd, fl, fh), src, mapper


def make_learning_figure():
    src = ColumnDataSource({"n": [], "cv": [], "train": [], "cv_lo": [], "cv_hi": [], "tr_lo": [], "tr_hi": []},
                           name="learning_curve")
    f = _fig("Learning curve (current setting)", "training rows", "MSE", y_axis_type="log")
    f.line("n", "train", source=src, color=TRAIN_LINE, line_width=2, legend_label="training MSE")
    f.line("n", "cv", source=src, color=CV_LINE, line_width=2, legend_label="CV MSE")
    f.varea("n", "cv_lo", "cv_hi", source=src, color=CV_LINE, alpha=0.15)
    f.varea("n", "tr_lo", "tr_hi", source=src, color=TRAIN_LINE, alpha=0.15)
    f.legend.location = "top_right"
    return f, src


# ---- pure data functions ----------------------------------------------------------------

def residual_columns(out: dict) -> tuple[dict, dict, float]:
    r = out["resid"]
    sd = out["resid_sd"]
    big = np.abs(r) > 2 * sd
    infl = out.get("influential", np.zeros(r.size, dtype=bool))
    colors = np.where(infl, SEALED, np.where(big, ALERT, FIT_ROWS))
    sizes = np.where(infl, 9, 5)
    keep = ~out["test"]
    rows = out.get("rows", np.zeros(r.size, dtype=int))
    res = {"x": out["x"][keep], "fitted": out["fitted"][keep], "r": r[keep], "color": colors[keep],
           "row": rows[keep], "size": sizes[keep]}
    rr = r[keep]
    if rr.size:
        counts, edges = np.histogram(rr, bins=min(30, max(5, rr.size // 4)))
    else:
        counts, edges = np.zeros(0), np.zeros(1)
    return res, {"left": edges[:-1], "right": edges[1:], "count": counts}, sd


def band_columns(out: dict) -> dict:
    return {"xs": [out["grid"]] * len(out["band"]), "ys": list(out["band"])}


def _err(mean, se):
    return np.maximum(mean - se, mean * 1e-3), mean + se


def complexity_columns(out: dict) -> tuple[dict, dict]:
    bd, bl = out["by_degree"], out["by_lambda"]
    se_d = np.nan_to_num(bd["se"])
    se_l = np.nan_to_num(bl["se"])
    lo, hi = _err(bd["cv"], se_d)
    lo2, hi2 = _err(bl["cv"], se_l)
    return ({"degree": bd["degree"], "cv": bd["cv"], "train": bd["train"], "lo": lo, "hi": hi},
            {"lam": bl["lam"], "cv": bl["cv"], "train": bl["train"], "lo": lo2, "hi": hi2,
             "gcv": bl.get("gcv", np.full(len(bl["lam"]), np.nan))})


def heat_columns(surface) -> dict:
    lams = surface.lambdas
    pos = lams > 0
    img = np.log10(surface.cv_mse[:, pos])
    ll = np.log10(lams[pos])
    step = (ll[-1] - ll[0]) / max(1, ll.size - 1)
    return {"image": [img], "x": [ll[0] - step / 2], "y": [surface.degrees[0] - 0.5],
            "dw": [ll[-1] - ll[0] + step], "dh": [surface.degrees[-1] - surface.degrees[0] + 1]}


def learning_columns(lc) -> dict:
    if lc is None:
        return {"n": [], "cv": [], "train": [], "cv_lo": [], "cv_hi": [], "tr_lo": [], "tr_hi": []}
    ok = np.isfinite(lc.cv_mse) & np.isfinite(lc.train_mse)
    cse = np.nan_to_num(lc.cv_mse_se[ok]); tse = np.nan_to_num(lc.train_mse_se[ok])
    cv, tr = lc.cv_mse[ok], lc.train_mse[ok]
    return {"n": lc.n_train[ok], "cv": cv, "train": tr,
            "cv_lo": np.maximum(cv - cse, cv * 1e-3), "cv_hi": cv + cse,
            "tr_lo": np.maximum(tr - tse, tr * 1e-3), "tr_hi": tr + tse}


class FigureSet:
    """Every workbench figure and source, created once; ``update`` fills them from a page model.

    Shared by the page (``views.Workspace``) and the standalone report.
    """

    def __init__(self, x_label: str = "x", y_label: str = "y"):
        self.fit_fig, self.fit_src = make_fit_figure(x_label, y_label)
        (self.rx, self.ry, self.rh), self.res_src, self.res_lines = make_residual_figures(x_label, y_label)
        (self.fd, self.fl, self.fh), self.cx_src, _ = make_complexity_figures()
        self.lc_fig, self.lc_src = make_learning_figure()
        self.client_src = clientside.stats_source()     # the browser's copy of the fit's factorization

    def update_data(self, model) -> None:
        """Parts that change only with new statistics: heat map, axis labels (``model``: a
        ``app.model.PageModel``)."""
        import math

        self.client_src.data = clientside.factorization(model.engine)
        if model.surface is not None:
            s = model.surface
            self.cx_src["heat"].data = heat_columns(s)
            recs = list(s.recommended.values())
            self.cx_src["heat_rec"].data = {
                "x": [math.log10(r.lam) if r.lam > 0 else math.log10(s.lambdas[1]) for r in recs],
                "y": [r.degree for r in recs], "rule": [r.rule for r in recs]}
        names = model.axis_names()
        if names[0]:
            self.fit_fig.xaxis.axis_label = self.rx.xaxis.axis_label = names[0]
        if names[1]:
            self.fit_fig.yaxis.axis_label = names[1]
            self.ry.xaxis.axis_label = "fitted " + names[1]
        self.lc_src.data = learning_columns(model.learning)

    def update(self, model, show_sealed: bool) -> None:
        """Everything that follows one change of degree or lambda."""
        out = model.out
        if not out:
            return
        keep = ~out["test"]
        self.fit_src["points"].data = {"x": out["x"][keep], "y": out["y"][keep]}
        self.fit_src["sealed"].data = ({"x": out["x"][~keep], "y": out["y"][~keep]} if show_sealed
                                       else {"x": [], "y": []})
        self.fit_src["aside"].data = {"x": out["aside_x"][:4000], "y": out["aside_y"][:4000]}
        self.fit_src["curve"].data = {"x": out["grid"], "y": out["curve"]}
        self.fit_src["band"].data = band_columns(out)
        iv = out.get("interval")
        self.fit_src["interval"].data = ({"x": out["grid"], "lo": iv[0], "hi": iv[1]} if iv is not None
                                         else {"x": [], "lo": [], "hi": []})
        res, hist, sd = residual_columns(out)
        self.res_src["res"].data = res
        self.res_src["hist"].data = hist
        for up, dn in self.res_lines.values():
            up.location, dn.location = 2 * sd, -2 * sd
        deg, lam = complexity_columns(out)
        self.cx_src["deg"].data = deg
        self.cx_src["lam"].data = lam
        self.cx_src["deg_now"].data = {"x": [out["degree"]], "y": [out["cv_mse"]]}
        lam_x = out["lam"] if out["lam"] > 0 else 10 ** LOG_LAMBDA_OFF
        self.cx_src["lam_now"].data = {"x": [lam_x], "y": [out["cv_mse"]]}
        recs = list(model.surface.recommended.values())
        near = [r for r in recs if np.isclose(r.lam, out["lam"], rtol=0.3)]
        self.cx_src["deg_rec"].data = {"x": [r.degree for r in near], "y": [r.cv_mse for r in near],
                                       "rule": [r.rule for r in near]}
        here = [r for r in recs if r.degree == out["degree"]]
        self.cx_src["lam_rec"].data = {"x": [max(r.lam, 10 ** LOG_LAMBDA_OFF) for r in here],
                                       "y": [r.cv_mse for r in here], "rule": [r.rule for r in here]}
        self.lc_src.data = learning_columns(model.learning)
