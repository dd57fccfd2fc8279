"""What the page shows, derived from core: the rows in play, the engine and surface, one setting's numbers.

Plain functions and values (no param, no UI), used by ``app.model.PageModel``:

* ``Rows``: the rows the fold plan covers (after the training fraction), which of
  them are sealed, the rows set aside, the subsample drawn, and the x grid of the curve;
* ``row_engine``: the scoring engine of those rows, lowering the highest degree when
  the data cannot support it; ``surface_for``: the page's degree x lambda surface;
* ``loo_engine``: leave-one-out scoring of the training rows (ridge, moderate n);
* ``setting_outputs``: every number and curve of one (degree, lambda).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

import core
from core import defaults
from core.errors import CurvewrightError, DataError, NumericalWarning
from core.influence import row_influence

__all__ = ["MAX_SHOWN", "Rows", "loaded_text", "training_keep", "row_engine", "surface_for", "loo_engine", "setting_outputs"]

MAX_SHOWN = 4000              # rows drawn in scatter plots (statistics use all rows)
LOO_MAX_ROWS = 50_000         # leave-one-out needs the rows in memory: offered up to this many
INFLUENCE_MAX_ROWS = 20_000   # influence measures refit on the rows: offered up to this many
PENALIZED_TOP = 15            # highest degree drawn against degree for the lasso and elastic net


@dataclass(frozen=True)
class Rows:
    """The rows behind the page's engine (all empty when only statistics were loaded)."""

    x: np.ndarray = field(repr=False)            # rows in the fold plan (training fraction applied)
    y: np.ndarray = field(repr=False)
    w: np.ndarray | None = field(repr=False)
    sealed: np.ndarray = field(repr=False)       # bool over x: rows of the sealed test set
    row_numbers: np.ndarray | None = field(repr=False)
    aside_x: np.ndarray = field(repr=False)      # rows left out by the training fraction
    aside_y: np.ndarray = field(repr=False)
    shown: np.ndarray = field(repr=False)        # indices into x drawn in scatter plots
    grid: np.ndarray = field(repr=False)         # x values the curve is drawn at

    @classmethod
    def of_table(cls, table, keep: np.ndarray, sealed: np.ndarray) -> "Rows":
        x, y = table.x.values, table.y.values
        xs = x[keep]
        idx = np.arange(xs.size)
        shown = (np.sort(np.random.default_rng(0).choice(idx, MAX_SHOWN, replace=False))
                 if xs.size > MAX_SHOWN else idx)
        lo, hi = float(xs.min()), float(xs.max())
        pad = 0.05 * (hi - lo)
        return cls(xs, y[keep], None if table.weights is None else table.weights[keep], sealed,
                   None if table.row_numbers is None else table.row_numbers[keep], x[~keep], y[~keep], shown,
                   np.linspace(lo - pad, hi + pad, 400))

    @classmethod
    def none(cls, domain) -> "Rows":
        """No rows (statistics only): the curve is drawn a little beyond the statistics' x range."""
        empty = np.zeros(0)
        c, h = domain.center, domain.half_width
        return cls(empty, empty, None, np.zeros(0, dtype=bool), None, empty, empty, np.zeros(0, dtype=int),
                   np.linspace(c - 1.05 * h, c + 1.05 * h, 400))

    @property
    def present(self) -> bool:
        return self.x.size > 0

    def training(self):
        """(x, y, w) of the rows outside the sealed test set (w None when unweighted)."""
        t = ~self.sealed
        return self.x[t], self.y[t], None if self.w is None else self.w[t]


def _row_list(rows, limit: int = 12) -> str:
    rows = [int(r) for r in rows]
    return ", ".join(map(str, rows[:limit])) + (f" and {len(rows) - limit} more" if len(rows) > limit else "")


def loaded_text(name: str, table) -> str:
    """What was loaded and which rows were left out, and why (spreadsheet row numbers; header = row 1)."""
    parts = [f"Loaded {name}: {table.n} rows in use"]
    if table.rows_dropped:
        parts.append(f"{len(table.rows_dropped)} skipped for a blank cell in a chosen column "
                     f"(rows {_row_list(table.rows_dropped)})")
    if table.excluded_rows:
        parts.append(f"rows {_row_list(table.excluded_rows)} excluded on request")
    return "; ".join(parts) + "."


def training_keep(n: int, fraction: float, seed: int) -> np.ndarray:
    """Rows kept by the training fraction (a seeded draw; all rows at 1)."""
    if fraction >= 1.0:
        return np.ones(n, dtype=bool)
    return np.random.default_rng([seed, 23]).random(n) < fraction


def row_engine(x, y, w, groups, *, folds, seed: int, repeats: int, test_fraction: float,
               penalty: str, mix: float, row_keys=None, fold_ids=None, intercept: bool = True):
    """The engine of rows in memory (``folds`` a number or "loo"; ``fold_ids`` explicit folds).

    The highest degree held is 30, lowered step by step while the rows cannot
    support it; k is lowered to n // 2 for tiny data sets.
    """
    if folds != "loo":
        folds = min(folds, max(2, x.size // 2))
    if folds == "loo" or fold_ids is not None:
        repeats = 1                       # one assignment only: nothing to repeat
    last = None
    for top in (defaults.MAX_DEGREE, 20, 15, 10, 5, 2, 1):
        try:
            engine = core.build_engine(x, y, max_degree=top, folds=folds, seed=seed, weights=w, groups=groups,
                                       fold_ids=fold_ids, repeats=repeats, test_fraction=test_fraction,
                                       penalty=penalty, mix=mix, intercept=intercept, row_keys=row_keys)
            if folds == "loo":
                engine.cv_summary(top, [0.0])    # leave-one-out refuses degrees its rows cannot support only here
            return engine
        except DataError as exc:
            last = exc
    raise last


def surface_for(engine) -> "core.Surface":
    """The page's surface: the default degrees the engine holds, over the default grid scaled to the data."""
    return core.surface_from_engine(engine, [d for d in defaults.DEGREES if d <= engine.max_degree])


def loo_engine(rows: Rows, max_degree: int, intercept: bool = True):
    """Leave-one-out engine of the training rows, or None when there are too many or too few."""
    x, y, w = rows.training()
    if not 0 < x.size <= LOO_MAX_ROWS:
        return None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", NumericalWarning)     # an extra score: no note of its own
            return core.build_engine(x, y, max_degree=max_degree, folds="loo", weights=w, intercept=intercept)
    except CurvewrightError:
        return None


def _influential(rows: Rows, degree: int) -> np.ndarray:
    """Rows drawn (``rows.shown``) with a large Cook's distance in the lambda = 0 fit."""
    flagged = np.zeros(rows.shown.size, dtype=bool)
    if not 0 < rows.x.size <= INFLUENCE_MAX_ROWS:
        return flagged
    x, y, w = rows.training()
    try:
        inf = row_influence(core.fit(x, y, degree, 0.0, weights=w), x, y, w)
    except CurvewrightError:
        return flagged
    big = np.zeros(rows.x.size, dtype=bool)
    big[np.flatnonzero(~rows.sealed)[inf.flagged]] = True
    return big[rows.shown]


def lambda_axis(engine) -> np.ndarray:
    """The positive lambdas drawn on the error-against-lambda plot (the default grid without 0)."""
    from core.select import default_lambdas

    return default_lambdas(engine, min(engine.max_degree, max(defaults.DEGREES)))[1:]


def setting_outputs(engine, rows: Rows, degree: int, lam: float, *, loo=None, band=None,
                    uncertainty: bool = False) -> dict:
    """Every number and curve shown for one (degree, lambda) (see ``app.model.PageModel.out``).

    ``band`` is a (lower, upper) prediction band already computed for this setting
    (the bootstrap), used where the classical one does not apply.
    """
    with warnings.catch_warnings():
        # the degree sweep touches every degree; only the current one deserves a note
        warnings.simplefilter("ignore", NumericalWarning)
        out = _outputs(engine, rows, min(degree, engine.max_degree), lam, loo, band, uncertainty)
    out["warnings"] = _short_folds(engine, out["degree"])
    return out


def _short_folds(e, d: int) -> list[str]:
    need = d if e.intercept else d + 1
    short = [sv for sv in e.solvers if sv.rank < need] if isinstance(e, core.FoldEngine) else []
    return [] if not short else [
        f"Degree {d} needs at least {d + 1} distinct x values in every fold's training rows; "
        f"{len(short)} fold(s) have fewer, so their fits are not unique at lambda = 0 "
        "(a minimum-norm solution is used). Prefer a lower degree or a larger lambda."]


def _outputs(e, rows: Rows, d: int, lam: float, loo, band, uncertainty: bool) -> dict:
    ridge = e.penalty in ("ridge", "curvature")      # linear in y: classical bands, GCV, LOO, influence
    curve = e.curve(d, lam)
    grid, shown = rows.grid, rows.shown
    xs, ys = rows.x[shown], rows.y[shown]
    fitted = curve(xs)
    n_tr = e.n_train
    train_mse = float(e.train_mse(d, [lam])[0])
    dfe = float(e.effective_df(d, [lam])[0])
    sd = math.sqrt(train_mse * n_tr / max(n_tr - dfe, 1.0))
    cv, se, tr = e.cv_summary(d, [lam])
    folds = e.fold_curves(d, lam)[: e.plan.k] if isinstance(e, core.FoldEngine) else []
    top = e.max_degree if ridge else min(e.max_degree, PENALIZED_TOP)
    by_degree = [e.cv_summary(k, [lam]) for k in range(0, top + 1)]
    interval = None
    if lam == 0 and ridge:
        fr = core.fit_from_engine(e, d, 0.0)
        if fr.legendre_cov is not None and fr.residual_df > 0:
            interval = tuple(fr.predict(grid, band="reading", coverage=0.95)[1:])
    elif band is not None:
        interval = band
    lam_axis = lambda_axis(e)
    by_lam = e.cv_summary(d, lam_axis)
    with np.errstate(divide="ignore", invalid="ignore"):
        gcv_axis = (e.train_mse(d, lam_axis) / (1.0 - e.effective_df(d, lam_axis) / n_tr) ** 2 if ridge
                    else np.full(lam_axis.size, np.nan))
        gcv = train_mse / (1.0 - dfe / n_tr) ** 2
    loo_mse = None
    if loo is not None and ridge:
        try:
            loo_mse = loo.cv_mean(d, lam)
        except CurvewrightError:
            loo_mse = None
    cv_mse, cv_se = float(cv[0]), float(se[0])
    cv_rmse = math.sqrt(cv_mse) if cv_mse >= 0 else float("nan")
    coef = curve.coef
    return {
        "degree": d, "lam": lam, "penalty": e.penalty, "mix": e.mix, "theta": coef,
        "power": curve.power_form() if np.all(np.isfinite(coef)) else None,
        "gcv_mse": float(gcv), "loo_mse": loo_mse,
        "reduced_chi_square": (train_mse * float(e.full_stats[0, 0]) / max(n_tr - dfe, 1.0)
                               if uncertainty else None),
        "grid": grid, "curve": curve(grid), "band": [f(grid) for f in folds],
        "x": xs, "y": ys, "test": rows.sealed[shown], "aside_x": rows.aside_x, "aside_y": rows.aside_y,
        "fitted": fitted, "resid": ys - fitted,
        "resid_sd": sd, "train_rmse": math.sqrt(train_mse), "effective_df": dfe,
        "cv_mse": cv_mse, "cv_mse_se": cv_se, "cv_train_mse": float(tr[0]),
        "cv_rmse": cv_rmse, "cv_rmse_se": cv_se / (2 * cv_rmse) if cv_rmse > 0 else float("nan"),
        "interval": interval,
        "influential": (_influential(rows, d) if lam == 0 and ridge and rows.present
                        else np.zeros(xs.size, dtype=bool)),
        "rows": rows.row_numbers[shown] if rows.row_numbers is not None else np.zeros(xs.size, dtype=int),
        "by_degree": {"degree": np.arange(top + 1),
                      "cv": np.array([b[0][0] for b in by_degree]),
                      "se": np.array([b[1][0] for b in by_degree]),
                      "train": np.array([b[2][0] for b in by_degree])},
        "by_lambda": {"lam": lam_axis, "cv": by_lam[0], "se": by_lam[1], "train": by_lam[2], "gcv": gcv_axis},
    }
