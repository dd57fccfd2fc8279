"""The degree x lambda surface and the recommendation rules (nothing else).

``surface_from_engine`` scores every (degree, lambda) from a scoring engine
(``core.engine``), with no pass over rows:

* cv_mse[d, l]: unweighted mean over folds of the fold's held-out MSE
  (weighted by row weights inside a fold: sum w e^2 / sum w);
* cv_mse_se[d, l]: std of the fold MSEs (ddof = 1) over sqrt(number of folds)
  (with repeats, over sqrt(repeats * k): common practice, ignoring the
  correlation between repeats);
* train_mse[d, l]: mean over folds of the training-rows MSE;
* gcv_mse[d, l]: generalized cross-validation on all training rows.

Rules: ``lowest`` takes the lowest cv_mse; ``simplest`` the simplest
configuration whose cv_mse is within one standard error of that lowest value
(the one-standard-error rule, Breiman et al. 1984; Hastie, Tibshirani &
Friedman, ESL sec. 7.10), simpler meaning lower degree first, then larger lambda. After the grid, lambda is refined for the
chosen degree by a bounded search in log(lambda) between the grid neighbours.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from .engine import ScoringEngine, fold_mean_se, nanmean_folds
from .errors import DataError, ParameterError, message
from .params import check

__all__ = ["Surface", "Recommendation", "SealedTest", "surface_from_engine", "grid_choices", "default_lambdas",
           "edge_notes"]


def _finite(v):
    return float(v) if v is not None and math.isfinite(v) else None


def _json_array(a: np.ndarray):
    """Nested lists for JSON with None where a value is not finite (JSON has no NaN)."""
    return np.where(np.isfinite(a), a, None).tolist() if a.size else []


@dataclass(frozen=True)
class SealedTest:
    """The sealed test set's audit record: its error exists only once revealed."""

    fraction: float
    n: int
    revealed: bool = False
    revealed_at: str | None = None
    mse: float | None = None
    degree: int | None = None
    lam: float | None = None

    def revealed_for(self, degree: int, lam: float, mse: float) -> "SealedTest":
        """The record after a reveal (a new value; time of the reveal in UTC)."""
        now = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")
        return dataclasses.replace(self, revealed=True, revealed_at=now, mse=float(mse), degree=int(degree),
                                   lam=float(lam))

    def to_dict(self) -> dict:
        out = {"fraction": self.fraction, "n": self.n, "revealed": self.revealed,
               "revealed_at": self.revealed_at}
        if self.revealed:
            out.update({"mse": self.mse, "rmse": math.sqrt(self.mse), "degree": self.degree,
                        "lambda": self.lam})
        return out


@dataclass(frozen=True)
class Recommendation:
    """One rule's pick. ``lam`` is refined; ``grid_lambda`` is the grid point it came from."""

    rule: str
    degree: int
    lam: float
    grid_lambda: float
    cv_mse: float
    cv_mse_se: float
    train_mse: float
    effective_df: float
    degree_at_edge: bool
    lambda_at_edge: bool

    def to_dict(self) -> dict:
        return {"rule": self.rule, "degree": self.degree, "lambda": self.lam,
                "grid_lambda": self.grid_lambda, "cv_mse": self.cv_mse,
                "cv_rmse": math.sqrt(self.cv_mse), "cv_mse_se": _finite(self.cv_mse_se),
                "train_mse": self.train_mse, "effective_df": self.effective_df,
                "degree_at_edge": self.degree_at_edge, "lambda_at_edge": self.lambda_at_edge}


@dataclass(frozen=True)
class Surface:
    """Cross-validated errors over a degree x lambda grid (see module docstring).

    Arrays have shape (len(degrees), len(lambdas)); ``fold_mse`` adds a last
    axis over folds (repeat-major). A value: ``reveal_test`` returns a new surface.
    """

    degrees: np.ndarray
    lambdas: np.ndarray
    cv_mse: np.ndarray = field(repr=False)
    cv_mse_se: np.ndarray = field(repr=False)
    train_mse: np.ndarray = field(repr=False)
    fold_mse: np.ndarray = field(repr=False)
    effective_df: np.ndarray = field(repr=False)
    gcv_mse: np.ndarray = field(repr=False)
    recommended: dict
    folds: dict
    n_train: int
    intercept: bool
    sealed: SealedTest = field(repr=False, compare=False)
    engine: ScoringEngine = field(repr=False, compare=False)

    @property
    def test_revealed(self) -> bool:
        return self.sealed.revealed

    def reveal_test(self, degree: int, lam: float) -> "Surface":
        """This surface with the sealed-test MSE of (degree, lambda), fitted on all training rows,
        recorded (``.sealed.mse``)."""
        mse = self.engine.test_mse(degree, lam)
        return dataclasses.replace(self, sealed=self.sealed.revealed_for(degree, lam, mse))

    def to_dict(self) -> dict:
        return {
            "degrees": self.degrees.tolist(), "lambdas": self.lambdas.tolist(),
            "cv_mse": _json_array(self.cv_mse), "cv_mse_se": _json_array(self.cv_mse_se),
            "train_mse": _json_array(self.train_mse), "fold_mse": _json_array(self.fold_mse),
            "effective_df": _json_array(self.effective_df), "gcv_mse": _json_array(self.gcv_mse),
            "recommended": {k: v.to_dict() for k, v in self.recommended.items()},
            "folds": self.folds, "n_train": self.n_train, "intercept": self.intercept,
            "penalty": self.engine.penalty, "mix": self.engine.mix,
            "sealed_test": self.sealed.to_dict(), "sealed_rows": self.engine.plan.sealed_rows,
        }


def _refine_min(engine: ScoringEngine, degree: int, lams: np.ndarray, i: int, best: float) -> tuple[float, float]:
    lo = lams[i - 1] if i > 0 else lams[i]
    hi = lams[i + 1] if i + 1 < lams.size else lams[i]
    if lams[i] == 0 or lo == hi:
        return float(lams[i]), best
    if lo == 0:
        lo = lams[i] / 10.0

    def obj(u):
        return engine.cv_mean(degree, math.exp(u))

    res = minimize_scalar(obj, bounds=(math.log(lo), math.log(hi)), method="bounded",
                          options={"xatol": 1e-2})
    if res.fun < best:
        return float(math.exp(res.x)), float(res.fun)
    return float(lams[i]), best


def _refine_simplest(engine: ScoringEngine, degree: int, lams: np.ndarray, i: int, thr: float,
                cv_row: np.ndarray) -> float:
    if i + 1 >= lams.size or lams[i] == 0 or not cv_row[i + 1] > thr:
        return float(lams[i])

    def g(u):
        return engine.cv_mean(degree, math.exp(u)) - thr

    a, b = math.log(lams[i]), math.log(lams[i + 1])
    if not (g(a) <= 0 < g(b)):
        return float(lams[i])
    u = brentq(g, a, b, xtol=1e-6)
    while g(u) > 0 and u > a:   # stay on the admissible side of the root
        u -= 1e-6
    return float(math.exp(max(u, a)))


def grid_choices(cv: np.ndarray, se: np.ndarray) -> dict:
    """Grid indices (degree row, lambda column) chosen by the ``lowest`` and ``simplest`` rules.

    Rows must be in increasing degree and columns in increasing lambda, so
    "simplest" is the first row with an admissible cell, then its last
    admissible column (largest lambda). NaN cells are never chosen.
    """
    cv = np.asarray(cv, dtype=float)
    if not np.isfinite(cv).any():
        raise DataError("Cross-validation: expected at least one finite score, got none.")
    di, li = np.unravel_index(np.nanargmin(cv), cv.shape)
    s = float(np.asarray(se)[di, li])
    thr = float(cv[di, li]) + (s if np.isfinite(s) else 0.0)
    ok = np.isfinite(cv) & (cv <= thr)
    d1 = int(np.flatnonzero(ok.any(axis=1))[0])
    l1 = int(np.flatnonzero(ok[d1])[-1])
    return {"lowest": (int(di), int(li)), "simplest": (d1, l1), "threshold": thr}


def _recommend(engine, degrees, lams, cv, se) -> dict:
    g = grid_choices(cv, se)
    di, li = g["lowest"]
    d = int(degrees[di])
    lam, _ = _refine_min(engine, d, lams, li, float(cv[di, li]))
    out = {"lowest": _pick(engine, "lowest", d, lam, float(lams[li]), degrees, lams)}
    d1, l1 = g["simplest"]
    lam1 = _refine_simplest(engine, int(degrees[d1]), lams, l1, g["threshold"], cv[d1])
    out["simplest"] = _pick(engine, "simplest", int(degrees[d1]), lam1, float(lams[l1]), degrees, lams)
    return out


def _pick(engine, rule, degree, lam, grid_lam, degrees, lams) -> Recommendation:
    # where the penalty cannot act (a constant; a straight line under the curvature penalty) every lambda gives
    # the same curve: say lambda = 0, which also keeps the exact classical covariance for the export
    inert = degree == 0 or (engine.penalty == "curvature" and degree <= 1)
    if inert:
        lam = grid_lam = 0.0
    m, s, t = engine.cv_summary(degree, [lam])
    edf = float(engine.effective_df(degree, [lam])[0])
    positive = lams[lams > 0]
    at_lam_edge = bool(not inert and positive.size > 1 and (grid_lam == positive[0] or grid_lam == lams[-1]))
    return Recommendation(rule, int(degree), float(lam), float(grid_lam), float(m[0]), float(s[0]),
                          float(t[0]), edf, bool(degree == degrees.max() and degrees.size > 1),
                          at_lam_edge)


def surface_from_engine(engine: ScoringEngine, degrees, lambdas=None) -> Surface:
    """The full surface and recommendations from an engine (no pass over rows).

    Parameters
    ----------
    engine : ScoringEngine
    degrees : iterable of int
        Degrees up to ``engine.max_degree``.
    lambdas : array_like, optional
        Penalties >= 0 (sorted and made unique); default ``default_lambdas`` for the
        engine's data, penalty and highest requested degree.
    """
    if lambdas is None:
        lambdas = default_lambdas(engine, int(check(degrees=degrees).degrees.max()))
    p = check(degrees=degrees, lambdas=lambdas)
    degrees, lams = p.degrees, p.lambdas
    if degrees.max() > engine.max_degree:
        raise ParameterError(message("Parameter 'degrees'", f"degrees up to {engine.max_degree} (the highest "
                                     "these statistics hold)", int(degrees.max())))
    nd, nl = degrees.size, lams.size
    cv = np.empty((nd, nl)); se = np.empty((nd, nl)); tr = np.empty((nd, nl))
    fold = np.empty((nd, nl, engine.n_folds)); edf = np.empty((nd, nl)); gcv = np.empty((nd, nl))
    for i, d in enumerate(degrees.tolist()):
        c, t = engine.scores(d, lams)
        fold[i] = c.T
        cv[i], se[i] = fold_mean_se(c)
        tr[i] = nanmean_folds(t)
        edf[i] = engine.effective_df(d, lams)
        # generalized cross-validation (Golub, Heath & Wahba 1979) on all training rows
        with np.errstate(divide="ignore", invalid="ignore"):
            gcv[i] = engine.train_mse(d, lams) / (1.0 - edf[i] / engine.n_train) ** 2
    rec = _recommend(engine, degrees, lams, cv, se)
    sealed = SealedTest(engine.plan.test_fraction, engine.n_test)
    return Surface(degrees, lams, cv, se, tr, fold, edf, gcv, rec, engine.plan.to_dict(),
                   engine.n_train, engine.intercept, sealed, engine)


def default_lambdas(engine: ScoringEngine, degree: int | None = None) -> np.ndarray:
    """The default grid for an engine's data and penalty: 0, then log-spaced values from where the
    penalty is negligible to where it has done all it can (``core.defaults``).

    Ridge: filter factors s^2 / (s^2 + lambda) over the highest degree's standardized design, so
    lambda runs from s_min^2 / M to M s_max^2 (M = LAMBDA_MARGIN; s_min^2 floored at 1e-16 of the
    total weight). Curvature: factors 1 / (1 + lambda mu) over the penalty's eigenvalues mu, so from
    1 / (M mu_max) to M / mu_min (then only the straight line is left). Lasso and elastic net: from
    lambda_max / 10^6 to lambda_max, lambda_max = 2 max|c| / mix, above which every coefficient is 0.
    """
    from . import defaults

    D = engine.max_degree if degree is None else int(degree)
    M, per = defaults.LAMBDA_MARGIN, defaults.LAMBDA_PER_DECADE
    sv = engine.full
    lo = hi = None
    if D >= 1 and sv.rank >= sv.dim(D):
        if engine.penalty == "ridge":
            s2 = sv.factor(D).s ** 2
            lo, hi = max(s2.min(), 1e-16 * sv.W) / M, M * s2.max()
        elif engine.penalty == "curvature":
            s2 = sv.factor(D, "curvature").s2
            finite = s2[np.isfinite(s2)]
            if finite.size:
                lo, hi = finite.min() / M, M * finite.max()
        else:
            f = sv.factor(D)
            c = np.abs(f.Vt.T @ (f.s * f.Uq))
            top = 2.0 * float(c.max()) / engine.mix if c.size and c.max() > 0 else None
            if top:
                lo, hi = top * 1e-6, top
    if lo is None or not (0 < lo < hi) or not np.isfinite(hi):
        lo, hi = defaults.LAMBDA_RANGE
    count = int(np.clip(np.ceil(per * np.log10(hi / lo)) + 1, 2, defaults.DEFAULT_GRID_MAX - 1))
    return np.concatenate([[0.0], np.logspace(np.log10(lo), np.log10(hi), count)])


def edge_notes(rec: Recommendation, surface: Surface) -> list[str]:
    """Plain sentences for a pick at an edge of the searched grid, saying what to widen."""
    out = []
    lams = surface.lambdas
    positive = lams[lams > 0]
    if rec.degree_at_edge:
        out.append(f"Degree {rec.degree} is the highest degree searched: a wider degree range might choose "
                   f"differently (search up to about {min(rec.degree + 5, 30)}).")
    if rec.lambda_at_edge and positive.size:
        if rec.grid_lambda >= positive[-1]:
            out.append(f"Lambda {rec.lam:.3g} is the top of the lambda grid: the penalty may want to be stronger "
                       f"still; extend the grid above {positive[-1]:.3g}.")
        else:
            out.append(f"Lambda {rec.lam:.3g} is the smallest positive lambda of the grid and beats lambda = 0: "
                       f"the best penalty may lie below it; extend the grid below {positive[0]:.3g}.")
    return out
