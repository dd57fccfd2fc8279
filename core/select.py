"""The degree x lambda surface from one pass, and the recommendation rules.

``sweep`` assigns folds, runs the single accumulation pass (``core.moments``),
then solves every (degree, lambda, fold) from the statistics alone:

* cv_mse[d, l]: unweighted mean over folds of the fold's held-out MSE
  (weighted by row weights inside a fold: sum w e^2 / sum w);
* cv_mse_se[d, l]: std of the fold MSEs (ddof = 1) over sqrt(number of folds)
  (with repeats, over sqrt(repeats * k): common practice, ignoring the
  correlation between repeats);
* train_mse[d, l]: mean over folds of the training-rows MSE.

Rules (Breiman et al. 1984; Hastie, Tibshirani & Friedman, ESL sec. 7.10):
``min`` takes the lowest cv_mse; ``1se`` the simplest configuration whose
cv_mse is within one standard error of that minimum, simpler meaning lower
degree first, then larger lambda. After the grid, lambda is refined for the
chosen degree by a bounded search in log(lambda) between the grid neighbours.
"""

from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from .basis import Domain, legendre_columns, legval
from .errors import DataError, ParameterError, message
from .folds import FoldPlan, make_plan
from .moments import Moments, accumulate
from .solve import FoldBatch, FoldSolver, check_degree, check_lambdas
from .validate import check_xyw

__all__ = ["Engine", "Surface", "Recommendation", "SealedTest", "sweep", "build_engine",
           "surface_from_engine", "grid_choices"]


def fold_mean_se(cv: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over folds (axis 0) and its SE: std (ddof = 1) over sqrt(number of finite folds)."""
    if np.isfinite(cv).all():
        F = cv.shape[0]
        se = cv.std(axis=0, ddof=1) / np.sqrt(F) if F > 1 else np.full(cv.shape[1], np.nan)
        return cv.mean(axis=0), se
    F = np.sum(np.isfinite(cv), axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        import warnings
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            return np.nanmean(cv, axis=0), np.nanstd(cv, axis=0, ddof=1) / np.sqrt(F)


def _fold_sums(blocks: np.ndarray) -> np.ndarray:
    """For blocks[0..k-1], the sum of all blocks but f, for every f (adds only)."""
    k = blocks.shape[0]
    zero = np.zeros_like(blocks[0])
    pre = [zero]
    for b in blocks[:-1]:
        pre.append(pre[-1] + b)
    suf = [zero]
    for b in blocks[:0:-1]:
        suf.append(suf[-1] + b)
    suf = suf[::-1]
    return np.stack([pre[f] + suf[f] for f in range(k)])


class Engine:
    """Factorized fold statistics: scores any degree <= D and lambda instantly.

    Built by ``build_engine``; cells of ``moments`` are ``r * k + f`` for
    repeat r and fold f, plus one last cell for the sealed test rows.
    """

    def __init__(self, moments: Moments, plan: FoldPlan, intercept: bool = True, *,
                 penalty: str = "ridge", mix: float = 0.5):
        from .penalized import check_penalty

        self.moments = moments
        self.plan = plan
        self.intercept = bool(intercept)
        self.penalty = penalty
        self.mix = check_penalty(penalty, mix)
        k, R = plan.k, plan.repeats
        self.n_folds = k * R
        gram = moments.gram
        self.solvers: list[FoldSolver] = []
        held, train = [], []
        for r in range(R):
            blocks = gram[r * k:(r + 1) * k]
            for f, S in enumerate(_fold_sums(blocks)):
                sv = FoldSolver(S, moments.domain, moments.y_shift, intercept,
                                label=f"training rows of fold {f + 1}" + (f" (repeat {r + 1})" if R > 1 else ""))
                self.solvers.append(sv)
                held.append(sv.working(blocks[f]))
                train.append(sv.working(S))
        all_train = gram[:k].sum(axis=0)
        self.full = FoldSolver(all_train, moments.domain, moments.y_shift, intercept,
                               label="training rows")
        self.full_stats = self.full.working(all_train)
        self.test_stats = self.full.working(gram[R * k]) if moments.n_cells > R * k else None
        self.n_test = int(moments.counts[R * k]) if moments.n_cells > R * k else 0
        self.n_train = int(moments.counts[:k].sum())
        self._held = np.stack(held)          # held-out statistics per fold (working coordinates)
        self._train = np.stack(train)        # training statistics per fold
        self._batches: dict[int, FoldBatch] = {}

    def batch(self, degree: int) -> FoldBatch:
        """Folds plus, last, the all-training-rows solver, factorized together for one degree."""
        b = self._batches.get(degree)
        if b is None:
            b = self._batches[degree] = FoldBatch(self.solvers + [self.full], degree)
        return b

    @property
    def max_degree(self) -> int:
        return self.moments.max_degree

    @property
    def domain(self) -> Domain:
        return self.moments.domain

    def scores(self, degree: int, lams, *, train: bool = True, full: bool = False):
        """Held-out and training MSE per fold: two arrays of shape (n_folds, len(lams))
        (the second is None with ``train=False``). With ``full=True`` a third array, the
        training MSE of the all-rows fit, shape (len(lams),), from the same solve."""
        lams = check_lambdas(lams)
        every = self._all_coefficients(check_degree(degree, self.max_degree), lams)
        theta = every[:-1]
        with np.errstate(invalid="ignore", divide="ignore"):
            wh = self._held[:, 0, 0][:, None]
            cv = np.where(wh > 0, FoldBatch.sse(self._held, theta) / wh, np.nan)
            tr = FoldBatch.sse(self._train, theta) / self._train[:, 0, 0][:, None] if train else None
        if full:
            whole = FoldSolver.sse(self.full_stats, every[-1]) / self.full_stats[0, 0]
            return cv, tr, whole
        return cv, tr

    def _all_coefficients(self, degree: int, lams: np.ndarray) -> np.ndarray:
        """Coefficients of every fold solver and, last, the all-rows solver: (F + 1, nl, d + 1)."""
        if self.penalty == "ridge":
            return self.batch(degree).coefficients(lams)
        from .penalized import penalized_coefficients

        return penalized_coefficients(self.solvers + [self.full], degree, lams, self.mix)[0]

    def _full_coefficients(self, degree: int, lams) -> np.ndarray:
        lams = check_lambdas(lams)
        if self.penalty == "ridge":
            return self.full.coefficients(degree, lams)
        from .penalized import penalized_coefficients

        return penalized_coefficients([self.full], check_degree(degree, self.max_degree), lams, self.mix)[0][0]

    def cv_mean(self, degree: int, lam: float) -> float:
        """Mean CV MSE of one configuration (the refinement's objective)."""
        cv, _ = self.scores(degree, [lam], train=False)
        return float(fold_mean_se(cv)[0][0])

    def cv_summary(self, degree: int, lams) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(mean CV MSE, its SE, mean training MSE), each of shape (len(lams),)."""
        cv, tr = self.scores(degree, lams)
        mean, se = fold_mean_se(cv)
        return mean, se, tr.mean(axis=0) if np.isfinite(tr).all() else np.nanmean(tr, axis=0)

    def curve(self, degree: int, lam: float) -> np.ndarray:
        """Legendre coefficients (raw y) of the fit on all training rows."""
        theta = self._full_coefficients(degree, [lam])[0]
        theta[0] += self.full.offset
        return theta

    def effective_df(self, degree: int, lams) -> np.ndarray:
        """df(lambda) on all training rows (ESL eq. 3.50, plus one for the intercept)."""
        if self.penalty != "ridge":
            from .penalized import penalized_coefficients

            return penalized_coefficients([self.full], check_degree(degree, self.max_degree),
                                          check_lambdas(lams), self.mix)[1][0]
        b = self.batch(check_degree(degree, self.max_degree))
        if b.RiU is None or b.slow and b.slow[-1] == len(b.solvers) - 1:
            return self.full.effective_df(degree, lams)
        lams = check_lambdas(lams)
        s2 = b.s2[-1]
        with np.errstate(divide="ignore", invalid="ignore"):
            filt = np.where(s2 > 0, s2 / (s2 + lams[:, None]), 0.0)
        return filt.sum(axis=1) + (1.0 if self.intercept else 0.0)

    def train_mse_all(self, degree: int, lams) -> np.ndarray:
        theta = self._full_coefficients(degree, lams)
        return FoldSolver.sse(self.full_stats, theta) / self.full_stats[0, 0]

    def test_mse(self, degree: int, lam: float) -> float:
        if self.test_stats is None:
            raise ParameterError("Sealed test set: expected one (test_fraction > 0), got none.")
        theta = self._full_coefficients(degree, [lam])
        return float(FoldSolver.sse(self.test_stats, theta)[0] / self.test_stats[0, 0])


def cell_labels(plan: FoldPlan, max_degree: int) -> np.ndarray:
    """Cell of every row for each repeat (``r * k + fold``; sealed rows -> ``R * k`` in repeat 0).

    Raises
    ------
    DataError
        When a fold's training rows are fewer than max_degree + 1.
    """
    k, R = plan.k, plan.repeats
    if R == 1:
        labels = plan.labels.copy()
    else:
        labels = plan.labels.astype(np.int32)
        for r in range(1, R):
            labels[r, labels[r] >= 0] += r * k
    if plan.n_test:
        labels[0, plan.test_mask] = R * k
    counts = np.concatenate([np.bincount(plan.labels[r][plan.labels[r] >= 0], minlength=k)
                             for r in range(R)])
    need = max_degree + 1
    train_rows = plan.n - plan.n_test - counts
    if train_rows.min() < need:
        i = int(np.argmin(train_rows))
        raise DataError(message(
            f"Training rows of fold {i % k + 1}" + (f" (repeat {i // k + 1})" if R > 1 else ""),
            f"at least degree + 1 = {need} rows", int(train_rows[i]),
            "Lower the highest degree, use fewer folds or a smaller test fraction"))
    return labels


def build_engine(x, y, *, max_degree: int, folds: int | str = 10, repeats: int = 1, groups=None,
                 fold_ids=None, seed: int = 0, weights=None, test_fraction: float = 0.0,
                 intercept: bool = True, penalty: str = "ridge", mix: float = 0.5) -> Engine:
    """Assign folds and run the one pass; see ``sweep`` for the parameters.

    The basis domain is the range of all rows (a choice of coordinates only:
    standardization always uses the training rows), so a streamed file and
    the same rows in memory give the same statistics.
    """
    x, y, w = check_xyw(x, y, weights)
    max_degree = check_degree(max_degree)
    plan = make_plan(x.size, folds=folds, repeats=repeats, groups=groups, fold_ids=fold_ids,
                     seed=seed, test_fraction=test_fraction)
    if not x.min() < x.max():
        raise DataError(message("Column x", "at least two distinct values", f"only x = {float(x[0])!r}",
                                "A curve cannot be fitted against a single x value"))
    labels = cell_labels(plan, max_degree)
    domain = Domain.from_range(x.min(), x.max())
    mom = accumulate(x, y, labels=labels, n_cells=plan.repeats * plan.k + 1, domain=domain,
                     max_degree=max_degree, weights=None if weights is None else w)
    return Engine(mom, plan, intercept, penalty=penalty, mix=mix)


class SealedTest:
    """The sealed test set's audit record: its error exists only once revealed."""

    def __init__(self, fraction: float, n: int):
        self.fraction = float(fraction)
        self.n = int(n)
        self.revealed = False
        self.revealed_at: str | None = None
        self.mse: float | None = None
        self.degree: int | None = None
        self.lam: float | None = None

    def record(self, degree: int, lam: float, mse: float) -> None:
        self.revealed = True
        self.revealed_at = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")
        self.mse, self.degree, self.lam = float(mse), int(degree), float(lam)

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
                "cv_rmse": math.sqrt(self.cv_mse), "cv_mse_se": self.cv_mse_se,
                "train_mse": self.train_mse, "effective_df": self.effective_df,
                "degree_at_edge": self.degree_at_edge, "lambda_at_edge": self.lambda_at_edge}


@dataclass(frozen=True)
class Surface:
    """Cross-validated errors over a degree x lambda grid (see module docstring).

    Arrays have shape (len(degrees), len(lambdas)); ``fold_mse`` adds a last
    axis over folds (repeat-major).
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
    engine: Engine = field(repr=False, compare=False)

    @property
    def test_revealed(self) -> bool:
        return self.sealed.revealed

    def reveal_test(self, degree: int, lam: float) -> float:
        """Sealed-test MSE of (degree, lambda) fitted on all training rows; recorded."""
        mse = self.engine.test_mse(check_degree(degree, self.engine.max_degree), lam)
        self.sealed.record(degree, lam, mse)
        return mse

    def to_dict(self) -> dict:
        return {
            "degrees": self.degrees.tolist(), "lambdas": self.lambdas.tolist(),
            "cv_mse": self.cv_mse.tolist(), "cv_mse_se": self.cv_mse_se.tolist(),
            "train_mse": self.train_mse.tolist(), "fold_mse": self.fold_mse.tolist(),
            "effective_df": self.effective_df.tolist(), "gcv_mse": self.gcv_mse.tolist(),
            "recommended": {k: v.to_dict() for k, v in self.recommended.items()},
            "folds": self.folds, "n_train": self.n_train, "intercept": self.intercept,
            "sealed_test": self.sealed.to_dict(),
        }


def _lambda_grid(lambdas) -> np.ndarray:
    lams = check_lambdas(lambdas)
    return np.unique(lams)


def _refine_min(engine: Engine, degree: int, lams: np.ndarray, i: int, best: float) -> tuple[float, float]:
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


def _refine_1se(engine: Engine, degree: int, lams: np.ndarray, i: int, thr: float,
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
    """Grid indices (degree row, lambda column) chosen by the ``min`` and ``1se`` rules.

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
    return {"min": (int(di), int(li)), "1se": (d1, l1), "threshold": thr}


def _recommend(engine, degrees, lams, cv, se) -> dict:
    g = grid_choices(cv, se)
    di, li = g["min"]
    d = int(degrees[di])
    lam, _ = _refine_min(engine, d, lams, li, float(cv[di, li]))
    out = {"min": _pick(engine, "min", d, lam, float(lams[li]), degrees, lams)}
    d1, l1 = g["1se"]
    lam1 = _refine_1se(engine, int(degrees[d1]), lams, l1, g["threshold"], cv[d1])
    out["1se"] = _pick(engine, "1se", int(degrees[d1]), lam1, float(lams[l1]), degrees, lams)
    return out


def _pick(engine, rule, degree, lam, grid_lam, degrees, lams) -> Recommendation:
    m, s, t = engine.cv_summary(degree, [lam])
    edf = float(engine.effective_df(degree, [lam])[0])
    positive = lams[lams > 0]
    at_lam_edge = bool(positive.size > 1 and (grid_lam == positive[0] or grid_lam == lams[-1]))
    return Recommendation(rule, int(degree), float(lam), float(grid_lam), float(m[0]), float(s[0]),
                          float(t[0]), edf, bool(degree == degrees.max() and degrees.size > 1),
                          at_lam_edge)


def surface_from_engine(engine: Engine, degrees, lambdas) -> Surface:
    """The full surface and recommendations from an existing engine (no pass over rows)."""
    degrees = np.unique(np.asarray([check_degree(d, engine.max_degree) for d in np.atleast_1d(degrees)]))
    lams = _lambda_grid(lambdas)
    nd, nl = degrees.size, lams.size
    cv = np.empty((nd, nl)); se = np.empty((nd, nl)); tr = np.empty((nd, nl))
    fold = np.empty((nd, nl, engine.n_folds)); edf = np.empty((nd, nl)); gcv = np.empty((nd, nl))
    for i, d in enumerate(degrees):
        c, t, whole = engine.scores(int(d), lams, full=True)
        fold[i] = c.T
        cv[i], se[i] = fold_mean_se(c)
        tr[i] = t.mean(axis=0) if np.isfinite(t).all() else np.nanmean(t, axis=0)
        edf[i] = engine.effective_df(int(d), lams)
        # generalized cross-validation (Golub, Heath & Wahba 1979) on all training rows
        with np.errstate(divide="ignore", invalid="ignore"):
            gcv[i] = whole / (1.0 - edf[i] / engine.n_train) ** 2
    rec = _recommend(engine, degrees, lams, cv, se)
    sealed = SealedTest(engine.plan.test_fraction, engine.n_test)
    return Surface(degrees, lams, cv, se, tr, fold, edf, gcv, rec, engine.plan.to_dict(),
                   engine.n_train, engine.intercept, sealed, engine)


def sweep(x, y, degrees, lambdas, *, folds: int = 10, repeats: int = 1, groups=None,
          fold_ids=None, seed: int = 0, weights=None, test_fraction: float = 0.0,
          intercept: bool = True, penalty: str = "ridge", mix: float = 0.5) -> Surface:
    """Cross-validate every degree and lambda from one pass over the rows.

    Parameters
    ----------
    x, y : array_like of shape (n,)
    degrees : iterable of int
        Degrees 0..30 to score.
    lambdas : array_like
        Penalties >= 0 (0 = least squares).
    folds : int or "loo"
        k (default 10); ignored with ``fold_ids``. ``"loo"`` scores leave-one-out through
        the hat matrix (``core.loo``: one standardization for all rows).
    repeats : int
        Repeated k-fold with independent shuffles.
    groups : array_like of shape (n,), optional
        Grouped folds: rows sharing a value stay together.
    fold_ids : array_like of shape (n,), optional
        Explicit fold of each row.
    seed : int
    weights : array_like of shape (n,), optional
    test_fraction : float
        Rows sealed away before folding (scored only by ``Surface.reveal_test``).
    intercept : bool
    penalty : {"ridge", "lasso", "elastic"}
        Penalty on the standardized coefficients (``core.penalized``).
    mix : float
        Elastic-net share of the L1 term (0 < mix <= 1).

    Returns
    -------
    Surface
    """
    degrees = np.atleast_1d(np.asarray(degrees))
    if degrees.size == 0:
        raise ParameterError(message("Parameter 'degrees'", "at least one degree", "none"))
    max_degree = max(check_degree(d) for d in degrees.tolist())
    if isinstance(folds, str):
        if folds != "loo":
            raise ParameterError(message("Parameter 'folds'", "an integer k or 'loo'", repr(folds)))
        from .loo import build_loo_engine

        engine = build_loo_engine(x, y, max_degree=max_degree, weights=weights, seed=seed,
                                  test_fraction=test_fraction, groups=groups, intercept=intercept)
        return surface_from_engine(engine, degrees, lambdas)
    engine = build_engine(x, y, max_degree=max_degree, folds=folds, repeats=repeats, groups=groups,
                          fold_ids=fold_ids, seed=seed, weights=weights,
                          test_fraction=test_fraction, intercept=intercept, penalty=penalty, mix=mix)
    return surface_from_engine(engine, degrees, lambdas)
