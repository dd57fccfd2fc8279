"""The fit recomputed in the browser on the slider's own event, before the server answers.

A slider change used to travel to the server and back before anything moved. The
all-rows fit at any lambda is cheap once its degree is factorized, so the page ships,
once per change of data, folds or penalty, a small factorization per degree and lets a
Bokeh ``CustomJS`` callback redraw the curve, the prediction band at lambda = 0 and the
shown residual points in the same frame. The server's exact answer arrives afterwards
and replaces the browser's (the browser test checks they agree to 1e-9 relative).

What is shipped (``factorization``), for each degree d of the engine's training rows, in
the working coordinates of ``core.solve.FoldSolver`` (response shifted by ``offset``):

* ``riu`` (d x d, row-major), ``uq`` and ``s2`` (d): the all-rows fit is
  theta_w = RiU diag(f) Uq with filter factors f = s2 / (s2 + lambda) (f = 1 where
  s2 = inf, a direction the curvature penalty leaves free); ``core.penalties.ridge_filter``;
* ``mean`` (d): weighted means of P_1..P_d; the constant coefficient is
  response_mean - theta_w . mean (the fit passes through the weighted means);
* ``zero`` (d + 1): the lambda = 0 solution from the statistics;
* ``gram`` ((d + 1) x (d + 1)) and ``cross`` (d + 1) with ``yy``: the training rows' sums,
  for the training SSE = yy - 2 theta' cross + theta' G theta, as ``FoldSolver.sse``;
* ``ginv``, ``tq``: (P'WP)^-1 and the t quantile on n - d - 1 degrees of freedom, for the
  95% reading band at lambda = 0 (``core.fit.fit_from_engine`` and ``core.bands``).

The Legendre basis at the plotted grid and points is evaluated in the browser by the same
three-term recurrence as ``core.basis.legendre_columns`` (at the x the page's sources
already hold), once per data change, instead of being sent: 4000 x 31 numbers saved.

The lasso and the elastic net have no closed form in lambda (an active-set solve per
value), so for them no factorization is shipped and the browser does nothing: the
server alone answers. Likewise for a degree whose training rows are rank deficient
(minimum-norm path) and for through-origin engines.
"""

from __future__ import annotations

import numpy as np
from bokeh.models import ColumnDataSource, CustomJSTickFormatter
from scipy import stats

from core.penalties import QUADRATIC

from .session import LOG_LAMBDA_OFF

__all__ = ["COLUMNS", "factorization", "attach", "lambda_format", "stats_source", "fit_in_browser_js"]

COLUMNS = ("degree", "ok", "riu", "uq", "s2", "mean", "zero", "gram", "cross", "ginv", "tq",
           "c0", "offset", "yy", "n", "center", "half")

def lambda_format() -> CustomJSTickFormatter:
    """The lambda slider's shown value: it moves log10(lambda) and its left end means lambda = 0
    exactly, so it shows lambda itself and "0" there. A new model per page (a Bokeh model
    belongs to one document)."""
    return CustomJSTickFormatter(code=f"""
if (tick <= {LOG_LAMBDA_OFF} + 1e-9) return "0";
const v = Math.pow(10, tick);
return Number(v.toPrecision(2)).toString();
""")


def _empty() -> dict:
    return {k: [] for k in COLUMNS}


def factorization(engine) -> dict:
    """Column dict (one row per degree 0..D) of what the browser needs for any lambda.

    Parameters
    ----------
    engine : core.ScoringEngine or None

    Returns
    -------
    dict of lists
        See the module docstring; empty lists when the browser cannot recompute
        (no engine, the lasso or elastic net, a through-origin engine).
    """
    if engine is None or engine.penalty not in QUADRATIC or not engine.intercept:
        return _empty()
    sv = engine.full
    S = engine.full_stats                  # working coordinates (shifted response)
    n = int(engine.n_train)
    out = _empty()
    for d in range(engine.max_degree + 1):
        ok = sv.rank >= d
        f = sv.factor(d, engine.penalty) if ok and d else None
        if d and (f is None or f.RiU is None or f.s2 is None):
            ok = False
        G = S[:d + 1, :d + 1]
        dfr = n - (d + 1)
        try:
            ginv = np.linalg.inv(G) if ok else np.zeros((d + 1, d + 1))
        except np.linalg.LinAlgError:
            ok, ginv = False, np.zeros((d + 1, d + 1))
        zero = sv.coefficients(d, np.array([0.0]), engine.penalty)[0] if ok else np.zeros(d + 1)
        out["degree"].append(d)
        out["ok"].append(int(ok))
        out["riu"].append(np.ascontiguousarray(f.RiU).ravel() if f is not None and ok else np.zeros(0))
        out["uq"].append(np.asarray(f.Uq, float) if f is not None and ok else np.zeros(0))
        # inf (a free direction) is sent as -1: JSON-safe whatever the encoding
        out["s2"].append(np.where(np.isinf(f.s2), -1.0, f.s2) if f is not None and ok else np.zeros(0))
        out["mean"].append(np.asarray(sv.mean[1:d + 1], float))
        out["zero"].append(np.asarray(zero, float))
        out["gram"].append(np.ascontiguousarray(G).ravel())
        out["cross"].append(np.asarray(S[:d + 1, -1], float))
        out["ginv"].append(np.ascontiguousarray(ginv).ravel())
        out["tq"].append(float(stats.t.ppf(0.975, dfr)) if dfr > 0 else float("nan"))
        out["c0"].append(float(sv.response_mean))
        out["offset"].append(float(sv.offset))
        out["yy"].append(float(S[-1, -1]))
        out["n"].append(n)
        out["center"].append(float(sv.domain.center))
        out["half"].append(float(sv.domain.half_width))
    return out


def stats_source() -> ColumnDataSource:
    """The source holding ``factorization`` in the page (named for tests)."""
    return ColumnDataSource(_empty(), name="clientside_stats")


def fit_in_browser_js(alert: str, rows: str) -> str:
    """The CustomJS body: recompute curve, band and residuals for the sliders' setting.

    Arguments in scope: stats, degree, lam (the two slider models), curve, points, res,
    interval, hist, up, dn, deg_now, lam_now.
    """
    return f"""
const S = stats.data;
if (!S.ok || S.ok.length === 0) return;          // lasso / elastic net: the server alone answers
const lv = lam.value;
const L = lv <= {LOG_LAMBDA_OFF} ? 0.0 : Math.pow(10, lv);
const d = Math.min(Math.round(degree.value), S.ok.length - 1);
if (!S.ok[d]) return;                             // rank-deficient degree: the server answers
// the server's own answer for exactly this setting is on show already: keep it
const mine = curve.__cw_data !== undefined && curve.data === curve.__cw_data;
const lamShown = lam_now.data.lam && lam_now.data.lam.length ? lam_now.data.lam[0] : NaN;
if (!mine && deg_now.data.x.length && deg_now.data.x[0] === d &&
    (lamShown === L || Math.abs(lamShown - L) <= 1e-12 * L)) return;
const c = S.center[d], h = S.half[d], D = S.ok.length - 1;
// Legendre columns P_0..P_D of mapped x, as core.basis.legendre_columns (cached per data)
function basis(xs) {{
  const m = xs.length, P = new Float64Array(m * (D + 1));
  for (let i = 0; i < m; i++) {{
    const t = (xs[i] - c) / h, o = i * (D + 1);
    P[o] = 1.0;
    if (D >= 1) P[o + 1] = t;
    for (let j = 1; j < D; j++) {{
      P[o + j + 1] = (P[o + j] * t) * ((2 * j + 1) / (j + 1)) - (j / (j + 1)) * P[o + j - 1];
    }}
  }}
  return P;
}}
const cache = stats.__cw_cache || (stats.__cw_cache = {{}});
function cached(key, xs) {{
  const hit = cache[key];
  if (hit && hit.xs === xs && hit.c === c && hit.h === h && hit.D === D) return hit.P;
  const P = basis(xs);
  cache[key] = {{xs: xs, c: c, h: h, D: D, P: P}};
  return P;
}}
// working coefficients theta (d + 1): theta_w = RiU diag(f) Uq, constant from the means
const th = new Float64Array(d + 1);
let edf = 1.0;
if (L === 0 || d === 0) {{
  const z = S.zero[d];
  for (let j = 0; j <= d; j++) th[j] = z[j];
  edf += d;
}} else {{
  const riu = S.riu[d], uq = S.uq[d], s2 = S.s2[d], mean = S.mean[d];
  const fu = new Float64Array(d);
  for (let k = 0; k < d; k++) {{
    const s = s2[k];
    const f = s < 0 ? 1.0 : (s > 0 ? s / (s + L) : 0.0);
    edf += f;
    fu[k] = f * uq[k];
  }}
  let c0 = S.c0[d];
  for (let j = 0; j < d; j++) {{
    let acc = 0.0;
    for (let k = 0; k < d; k++) acc += riu[j * d + k] * fu[k];
    th[j + 1] = acc;
    c0 -= acc * mean[j];
  }}
  th[0] = c0;
}}
// training SSE from the sums (as core.solve.FoldSolver.sse) and the residual scale
const G = S.gram[d], g = S.cross[d];
let quad = 0.0, lin = 0.0;
for (let j = 0; j <= d; j++) {{
  lin += th[j] * g[j];
  let r = 0.0;
  for (let k = 0; k <= d; k++) r += G[j * (d + 1) + k] * th[k];
  quad += r * th[j];
}}
const W = G[0], n = S.n[d];
const sse = Math.max(S.yy[d] - 2.0 * lin + quad, 0.0);
const sd = Math.sqrt((sse / W) * n / Math.max(n - edf, 1.0));
const raw = Float64Array.from(th); raw[0] += S.offset[d];
function evaluate(P, m) {{
  const out = new Float64Array(m);
  for (let i = 0; i < m; i++) {{
    const o = i * (D + 1);
    let acc = 0.0;
    for (let j = 0; j <= d; j++) acc += P[o + j] * raw[j];
    out[i] = acc;
  }}
  return out;
}}
const gx = curve.data.x, Pg = cached("grid", gx), yg = evaluate(Pg, gx.length);
// every change below stays in this page ({{sync: false}}): the server computes its own answer
const newCurve = {{x: gx, y: yg}};
stats.__cw_busy = true;                           // changes below are the browser's (tests read this)
curve.__cw_data = newCurve;
curve.setv({{data: newCurve}}, {{sync: false}});
// 95% reading band at lambda = 0: s^2 (1 + p' (P'WP)^-1 p) (core.fit.fit_from_engine, core.bands)
if (L === 0 && d > 0 && isFinite(S.tq[d]) && n - d - 1 > 0) {{
  const s2r = sse / (n - d - 1), Gi = S.ginv[d], q = S.tq[d];
  const lo = new Float64Array(gx.length), hi = new Float64Array(gx.length);
  for (let i = 0; i < gx.length; i++) {{
    const o = i * (D + 1);
    let v = 0.0;
    for (let j = 0; j <= d; j++) {{
      let r = 0.0;
      for (let k = 0; k <= d; k++) r += Gi[j * (d + 1) + k] * Pg[o + k];
      v += Pg[o + j] * r;
    }}
    const half = q * Math.sqrt(Math.max(s2r * v + s2r, 0.0));
    lo[i] = yg[i] - half; hi[i] = yg[i] + half;
  }}
  interval.setv({{data: {{x: gx, lo: lo, hi: hi}}}}, {{sync: false}});
}} else if (interval.data.x.length) {{
  interval.setv({{data: {{x: [], lo: [], hi: []}}}}, {{sync: false}});
}}
// residuals of the rows drawn (influential rows are marked by the server's answer)
const px = points.data.x, py = points.data.y, m = px.length;
if (m && res.data.x.length === m) {{
  const fitted = evaluate(cached("points", px), m);
  const r = new Float64Array(m), color = new Array(m), size = new Float64Array(m);
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < m; i++) {{
    r[i] = py[i] - fitted[i];
    color[i] = Math.abs(r[i]) > 2 * sd ? "{alert}" : "{rows}";
    size[i] = 5;
    if (r[i] < lo) lo = r[i];
    if (r[i] > hi) hi = r[i];
  }}
  res.setv({{data: {{x: res.data.x, fitted: fitted, r: r, color: color, row: res.data.row, size: size}}}},
         {{sync: false}});
  const bins = Math.min(30, Math.max(5, Math.floor(m / 4)));
  const w = (hi - lo) / bins || 1.0;
  const count = new Float64Array(bins), left = new Float64Array(bins), right = new Float64Array(bins);
  for (let b = 0; b < bins; b++) {{ left[b] = lo + b * w; right[b] = lo + (b + 1) * w; }}
  for (let i = 0; i < m; i++) count[Math.min(bins - 1, Math.floor((r[i] - lo) / w))] += 1;
  hist.setv({{data: {{left: left, right: right, count: count}}}}, {{sync: false}});
}}
up.setv({{location: 2 * sd}}, {{sync: false}});
dn.setv({{location: -2 * sd}}, {{sync: false}});
stats.__cw_busy = false;
"""


def attach(figs, degree_widget, lambda_widget) -> None:
    """Wire the browser-side fit to the degree and lambda sliders of one page.

    ``figs`` is the page's ``app.plots.FigureSet`` (its ``client_src`` is filled by
    ``FigureSet.update_data``); the sliders are the Panel widgets. The callback runs on
    the sliders' ``value`` (every step of a mouse drag, not only its end).
    """
    from .plots import ALERT, FIT_ROWS

    up, dn = figs.res_lines["x"]
    up2, dn2 = figs.res_lines["fitted"]
    code = (fit_in_browser_js(ALERT, FIT_ROWS)
            + "up2.setv({location: up.location}, {sync: false}); dn2.setv({location: dn.location}, {sync: false});\n")
    for w in (degree_widget, lambda_widget):
        w.jscallback(value=code, args={
            "stats": figs.client_src, "degree": degree_widget, "lam": lambda_widget,
            "curve": figs.fit_src["curve"], "points": figs.fit_src["points"], "interval": figs.fit_src["interval"],
            "res": figs.res_src["res"], "hist": figs.res_src["hist"], "up": up, "dn": dn, "up2": up2, "dn2": dn2,
            "deg_now": figs.cx_src["deg_now"], "lam_now": figs.cx_src["lam_now"]})
