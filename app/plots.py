"""Figure factories and pure functions turning the page model's outputs into column dicts.

Figures and ColumnDataSources are created once per page; updates assign a
whole new dict to ``source.data``. Sources carry names so browser tests can
find them (``Bokeh.documents[0].get_model_by_name``).
"""

from __future__ import annotations

import numpy as np
from bokeh.models import (BasicTicker, ColorBar, ColumnDataSource, HoverTool, Label, LinearColorMapper, Span)
from bokeh.plotting import figure

from . import clientside
from .session import LOG_LAMBDA_OFF

# The workbench palette (our own), one meaning per colour across every plot.
INK = "#14213d"           # the fitted curve and the current setting
FIT_ROWS = "#1f6f78"      # rows in the fit
ASIDE = "#8d6e63"         # rows set aside by the training fraction (hollow)
SEALED = "#7a3e9d"        # sealed test rows
ALERT = "#b23a48"         # residuals beyond 2 residual SD
INFLUENTIAL = "#2e86de"   # rows with a large influence on the lambda = 0 fit
RECOMMEND = "#d97706"     # the two recommendations ("lowest", "simplest")
ERROR = "#3a7d44"         # error estimates: held-out solid, training dashed, GCV dotted; SE band shaded
BAND = "#9aa5b1"          # refits on each fold's training rows
CV_LINE = TRAIN_LINE = ERROR
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
    fx = _fig("Residuals along x", x_label, "residual")
    fy = _fig("Residuals across the predicted range", "predicted " + y_label, "residual")
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


def _marks(f, *, with_now: bool = True):
    """Vertical marks of one error plot: the current setting (solid, ink) and the two
    recommendations (dashed), each with a text label at the top of the plot area."""
    out = {}
    for key, color, dash in (("now", INK, "solid"), ("lowest", RECOMMEND, "dashed"), ("simplest", RECOMMEND, "dotdash")):
        if key == "now" and not with_now:
            continue
        span = Span(location=None, dimension="height", line_color=color, line_width=2 if key == "now" else 1.5,
                    line_dash=dash, line_alpha=0.9)
        # hung from the top of the data, stacked, on the side of the mark with more room
        label = Label(x=0, y=1, text="", text_font_size="8pt", text_color=color, text_baseline="top",
                      x_offset=4, y_offset={"now": 0, "lowest": -13, "simplest": -26}[key],
                      background_fill_color="white", background_fill_alpha=0.8, visible=False)
        f.add_layout(span)
        f.add_layout(label)
        out[key] = (span, label)
    return out


def _legend_below(f):
    """The legend outside the plot area (it never covers data), in one row."""
    leg = f.legend[0]
    leg.orientation = "horizontal"
    leg.label_text_font_size = "8pt"
    leg.border_line_alpha = 0
    leg.spacing = 12
    f.add_layout(leg, "below")


def make_complexity_figures():
    src = {
        "deg": ColumnDataSource({"degree": [], "cv": [], "train": [], "lo": [], "hi": []}, name="by_degree"),
        "lam": ColumnDataSource({"lam": [], "cv": [], "train": [], "lo": [], "hi": [], "gcv": []}, name="by_lambda"),
        "deg_now": ColumnDataSource({"x": [], "y": []}, name="degree_marker"),
        "lam_now": ColumnDataSource({"x": [], "y": [], "lam": []}, name="lambda_marker"),
        "heat": ColumnDataSource({"image": [], "x": [], "y": [], "dw": [], "dh": []}, name="surface_heat"),
        "heat_rec": ColumnDataSource({"x": [], "y": [], "rule": []}, name="heat_recommended"),
    }
    fd = _fig("Error against degree (current lambda)", "degree", "mean squared error", y_axis_type="log")
    fl = _fig("Error against lambda (current degree)", "lambda", "mean squared error", x_axis_type="log",
              y_axis_type="log")
    for f, key, xk in ((fd, "deg", "degree"), (fl, "lam", "lam")):
        f.varea(xk, "lo", "hi", source=src[key], color=ERROR, alpha=0.16, legend_label="CV error ± 1 SE")
        f.line(xk, "cv", source=src[key], color=ERROR, line_width=2.2, legend_label="CV error")
        f.line(xk, "train", source=src[key], color=ERROR, line_width=1.4, line_dash="dashed",
               legend_label="training error")
        if key == "lam":
            f.line(xk, "gcv", source=src[key], color=ERROR, line_width=1.4, line_dash="dotted",
                   legend_label="GCV (all rows)")
        # the current setting's point on the CV line (the vertical mark says where it is)
        f.scatter("x", "y", source=src[key + "_now"], size=8, marker="circle", fill_color="white",
                  line_color=INK, line_width=2)
        f.add_tools(HoverTool(tooltips=[("CV error", "@cv{0.0000g}"), ("training", "@train{0.0000g}")],
                              renderers=f.renderers[1:2], mode="vline"))
        _legend_below(f)
    mapper = LinearColorMapper(palette=HEAT[::-1])
    fh = _fig("CV error over the whole grid (log10 MSE)", "log10 lambda", "degree")
    fh.image(image="image", x="x", y="y", dw="dw", dh="dh", source=src["heat"], color_mapper=mapper)
    fh.scatter("x", "y", source=src["heat_rec"], marker="square", size=13, fill_color=None, line_color=RECOMMEND,
               line_width=2.5)
    fh.text("x", "y", text="rule", source=src["heat_rec"], x_offset=9, y_offset=-6, text_font_size="8pt",
            text_color=RECOMMEND, text_font_style="bold")
    fh.add_layout(ColorBar(color_mapper=mapper, ticker=BasicTicker(), width=10), "right")
    marks = {"deg": _marks(fd), "lam": _marks(fl)}
    return (fd, fl, fh), src, marks


def make_learning_figure():
    src = ColumnDataSource({"n": [], "cv": [], "train": [], "cv_lo": [], "cv_hi": [], "tr_lo": [], "tr_hi": []},
                           name="learning_curve")
    f = _fig("Learning curve (current setting)", "training rows", "MSE", y_axis_type="log")
    f.varea("n", "cv_lo", "cv_hi", source=src, color=ERROR, alpha=0.16, legend_label="± 1 SE")
    f.varea("n", "tr_lo", "tr_hi", source=src, color=ERROR, alpha=0.10)
    f.line("n", "cv", source=src, color=ERROR, line_width=2.2, legend_label="CV error")
    f.line("n", "train", source=src, color=ERROR, line_width=1.4, line_dash="dashed", legend_label="training error")
    _legend_below(f)
    return f, src


# ---- pure data functions ----------------------------------------------------------------

def residual_columns(out: dict) -> tuple[dict, dict, float]:
    r = out["resid"]
    sd = out["resid_sd"]
    big = np.abs(r) > 2 * sd
    infl = out.get("influential", np.zeros(r.size, dtype=bool))
    colors = np.where(infl, INFLUENTIAL, np.where(big, ALERT, FIT_ROWS))
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
        (self.fd, self.fl, self.fh), self.cx_src, self.cx_marks = make_complexity_figures()
        self.lc_fig, self.lc_src = make_learning_figure()
        self.client_src = clientside.stats_source()     # the browser's copy of the fit's factorization
        self._rows_key = None

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
            self.ry.xaxis.axis_label = "predicted " + names[1]
        self.lc_src.data = learning_columns(model.learning)

    def update(self, model, show_sealed: bool) -> None:
        """Everything that follows one change of degree or lambda."""
        out = model.out
        if not out:
            return
        keep = ~out["test"]
        # the rows drawn change only with the data or the reveal: not resent on every slider step
        rows_key = (getattr(model, "data_version", None), show_sealed, out["x"].size)
        same_rows = rows_key == self._rows_key and rows_key[0] is not None
        if not same_rows:
            self._rows_key = rows_key
            self.fit_src["points"].data = {"x": out["x"][keep], "y": out["y"][keep]}
            self.fit_src["sealed"].data = ({"x": out["x"][~keep], "y": out["y"][~keep]} if show_sealed
                                           else {"x": [], "y": []})
            self.fit_src["aside"].data = {"x": out["aside_x"][:4000], "y": out["aside_y"][:4000]}
        self.fit_src["curve"].data = {"x": out["grid"], "y": out["curve"]}
        band = band_columns(out)
        if same_rows and len(self.fit_src["band"].data["xs"]) == len(band["xs"]):
            self.fit_src["band"].data.update(ys=band["ys"])        # only the changed column travels
        else:
            self.fit_src["band"].data = band
        iv = out.get("interval")
        self.fit_src["interval"].data = ({"x": out["grid"], "lo": iv[0], "hi": iv[1]} if iv is not None
                                         else {"x": [], "lo": [], "hi": []})
        res, hist, sd = residual_columns(out)
        if same_rows and len(self.res_src["res"].data["x"]) == len(res["x"]):
            self.res_src["res"].data.update({k: res[k] for k in ("fitted", "r", "color", "size")})
        else:
            self.res_src["res"].data = res
        self.res_src["hist"].data = hist
        for up, dn in self.res_lines.values():
            up.location, dn.location = 2 * sd, -2 * sd
        deg, lam = complexity_columns(out)
        self.cx_src["deg"].data = deg
        self.cx_src["lam"].data = lam
        self.cx_src["deg_now"].data = {"x": [out["degree"]], "y": [out["cv_mse"]]}
        # lambda = 0 sits at the left end of the log axis; "lam" keeps the exact value
        lam_x = out["lam"] if out["lam"] > 0 else (float(lam["lam"][0]) if len(lam["lam"]) else 1.0)
        self.cx_src["lam_now"].data = {"x": [lam_x], "y": [out["cv_mse"]], "lam": [out["lam"]]}
        self._mark(out, model.surface, lam["lam"])
        _show_drawn(self.fit_fig)
        _show_drawn(self.fl)
        self.lc_src.data = learning_columns(model.learning)

    def update_learning(self, model) -> None:
        """The learning curve alone (it can arrive after the setting has moved on)."""
        self.lc_src.data = learning_columns(model.learning)

    def _mark(self, out: dict, surface, lam_axis) -> None:
        """Place the current-setting and recommendation marks on both error plots."""
        lam_axis = np.asarray(lam_axis, dtype=float)
        lam_floor = float(lam_axis[0]) if lam_axis.size else 1.0
        degs = np.asarray(out["by_degree"]["degree"], dtype=float)

        def top(cols):
            vals = np.concatenate([np.asarray(c, dtype=float) for c in cols])
            vals = vals[np.isfinite(vals) & (vals > 0)]
            return float(vals.max()) if vals.size else 1.0

        y_deg = top([out["by_degree"]["cv"] + np.nan_to_num(out["by_degree"]["se"]), out["by_degree"]["train"]])
        bl = out["by_lambda"]
        y_lam = top([bl["cv"] + np.nan_to_num(bl["se"]), bl["train"], bl.get("gcv", [])])

        def put(mark, x, text, y, share):
            span, label = mark
            span.location = x
            label.visible = x is not None
            if x is None:
                return
            right = share > 0.6              # near the right edge: the text goes to the left of the mark
            label.x, label.y, label.text = x, y, text
            label.text_align, label.x_offset = ("right", -4) if right else ("left", 4)

        def share_deg(x):
            return (x - degs.min()) / max(degs.max() - degs.min(), 1.0) if degs.size else 0.0

        def share_lam(x):
            if lam_axis.size < 2:
                return 0.0
            lo, hi = np.log10(lam_axis[0]), np.log10(lam_axis[-1])
            return (np.log10(x) - lo) / (hi - lo)

        marks = self.cx_marks
        d, lam = out["degree"], out["lam"]
        lam_now = lam if lam > 0 else lam_floor
        put(marks["deg"]["now"], d, f"now: {d}", y_deg, share_deg(d))
        put(marks["lam"]["now"], lam_now, "now: " + lambda_text(lam), y_lam, share_lam(lam_now))
        recs = surface.recommended if surface is not None else {}
        for rule in ("lowest", "simplest"):
            r = recs.get(rule)
            if r is None:
                put(marks["deg"][rule], None, "", 1.0, 0.0)
                put(marks["lam"][rule], None, "", 1.0, 0.0)
                continue
            x_lam = r.lam if r.lam > 0 else lam_floor
            put(marks["deg"][rule], r.degree, f"{rule}: {r.degree}", y_deg, share_deg(r.degree))
            put(marks["lam"][rule], x_lam, f"{rule}: {lambda_text(r.lam)}" + ("" if r.degree == d else f" (at degree {r.degree})"),
                y_lam, share_lam(x_lam))


def _show_drawn(fig) -> None:
    """Legend entries only for glyphs with something to draw (an empty band or NaN line is not listed)."""
    for item in fig.legend[0].items:
        item.visible = any(_has_values(r) for r in item.renderers)


def _has_values(renderer) -> bool:
    g = renderer.glyph
    name = next(getattr(g, a) for a in ("y", "y1", "ys") if hasattr(g, a))
    name = getattr(name, "field", name)
    col = renderer.data_source.data.get(name, [])
    if not len(col):
        return False
    vals = np.concatenate([np.ravel(np.asarray(v, dtype=float)) for v in col]) if name == "ys" \
        else np.asarray(col, dtype=float)
    return bool(np.isfinite(vals).any())


def lambda_text(lam: float) -> str:
    """lambda as the page shows it: exactly "0" for no penalty, else two significant digits."""
    return "0" if lam == 0 else f"{lam:.2g}"
