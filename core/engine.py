"""The scoring-engine contract: how any sweep is scored, whatever fed its statistics.

An engine holds the one-pass statistics of a sweep (``core.moments``) and its
fold plan, and answers, for any degree <= max_degree and lambdas >= 0:

* ``scores``: held-out and training MSE per fold, shapes (n_folds, len(lams));
* ``cv_summary``: mean CV MSE, its standard error, mean training MSE;
* ``coefficients`` / ``curve``: the fit on all training rows (stable form, raw y);
* ``effective_df``, ``train_mse``: of that fit; ``test_mse``: its sealed-test error.

Attributes every engine has: ``plan``, ``penalty``, ``mix``, ``intercept``,
``moments``, ``counts`` (held-out rows per fold), ``n_train``, ``n_test``.

``engine_from_moments`` is the one constructor from statistics, used by the
in-memory sweep, the streamed sweep, the Dask engine and statistics files.
Leave-one-out (``core.loo``) is a subclass. Engines are values: nothing changes
one after it is built; ``with_penalty`` returns a new engine.
"""

from __future__ import annotations

import warnings
from abc import ABC, abstractmethod
from dataclasses import dataclass

import numpy as np

from .curve import Curve
from .errors import ParameterError, message
from .folds import FoldPlan
from .moments import Moments, complement_sums
from .params import check, combination
from .batch import FoldBatch, solve_sets
from .solve import FoldSolver

__all__ = ["ScoringEngine", "FoldEngine", "engine_from_moments", "fold_mean_se", "OwnDomain", "nanmean_folds"]


@dataclass(frozen=True)
class OwnDomain:
    """One training set's statistics in coordinates of its own (from the rows, in memory).

    When a fold's training rows cover only a small part of the sweep's x range, Legendre
    columns of the sweep's mapped x are nearly collinear on them and the fold's fit loses
    digits; these statistics use the training rows' own range instead. ``train`` and
    ``held`` (its held-out or sealed rows) are (D + 2)^2 matrices with the sweep's response
    shift; ``window`` says where the sweep's curvature integral runs in these coordinates.
    ``domain`` None keeps the sweep's statistics and only records ``distinct`` (the number of
    distinct x values in the training rows, for honest messages).
    """

    domain: object = None
    train: np.ndarray | None = None
    held: np.ndarray | None = None
    window: tuple | None = None
    distinct: int | None = None
    rows_factor: tuple | None = None     # (R, Q'y) from a QR of the rows, for crowded x
    rows: tuple | None = None            # (x, y, w) training and (x, y, w) held-out rows, for crowded x


def _solver(gram, moments, intercept, label, own: OwnDomain | None):
    if own is not None and own.domain is not None:
        return FoldSolver(own.train, own.domain, moments.y_shift, intercept, label, penalty_window=own.window,
                          distinct=own.distinct, rows_factor=own.rows_factor)
    return FoldSolver(gram, moments.domain, moments.y_shift, intercept, label,
                      distinct=None if own is None else own.distinct)


def fold_mean_se(cv: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean over folds (axis 0) and its SE: std (ddof = 1) over sqrt(number of finite folds)."""
    if np.isfinite(cv).all():
        F = cv.shape[0]
        se = cv.std(axis=0, ddof=1) / np.sqrt(F) if F > 1 else np.full(cv.shape[1], np.nan)
        return cv.mean(axis=0), se
    F = np.sum(np.isfinite(cv), axis=0)
    with np.errstate(invalid="ignore", divide="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.nanmean(cv, axis=0), np.nanstd(cv, axis=0, ddof=1) / np.sqrt(F)


def nanmean_folds(a: np.ndarray) -> np.ndarray:
    """Mean over axis 0 ignoring NaN (a degree left out for a penalty gives NaN, without a warning)."""
    if np.isfinite(a).all():
        return a.mean(axis=0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.nanmean(a, axis=0)


class ScoringEngine(ABC):
    """What every engine answers (see module docstring).

    Subclasses provide ``scores``; the all-training-rows answers (coefficients,
    curve, effective df, training and sealed-test MSE) are shared here.
    """

    def __init__(self, moments: Moments, plan: FoldPlan, train_gram: np.ndarray, test_gram, *,
                 penalty: str, mix: float, intercept: bool, n_train: int, n_test: int, own: dict | None = None):
        self.moments = moments
        self.plan = plan
        self.penalty = penalty
        self.mix = float(mix)
        self.intercept = bool(intercept)
        self.n_train, self.n_test = int(n_train), int(n_test)
        self.own = dict(own or {})
        mine = self.own.get("full")
        self.full = _solver(train_gram, moments, intercept, "training rows", mine)
        if mine is not None and mine.domain is not None:
            train_gram, test_gram = mine.train, mine.held
        self.full_stats = self.full.working(train_gram)
        self.test_stats = None if test_gram is None else self.full.working(test_gram)
        self._memo: tuple | None = None

    # ---- what the statistics are -------------------------------------------------
    @property
    def max_degree(self) -> int:
        return self.moments.max_degree

    @property
    def domain(self):
        return self.moments.domain

    @property
    def weighted(self) -> bool:
        return self.moments.weighted

    @property
    @abstractmethod
    def counts(self) -> np.ndarray:
        """Held-out rows per fold, shape (n_folds,)."""

    @property
    def n_folds(self) -> int:
        return int(self.counts.size)

    def _args(self, degree, lams):
        """Validated (degree, lambdas) for this engine (the public methods' one check)."""
        p = check(degree=degree, lambdas=lams)
        if p.degree > self.max_degree:
            raise ParameterError(message("Parameter 'degree'", f"an integer from 0 to {self.max_degree} "
                                         "(the highest degree these statistics hold)", degree))
        return p.degree, np.asarray(lams, dtype=float).ravel() if np.ndim(lams) else np.array([float(lams)])

    # ---- the contract ---------------------------------------------------------------
    @abstractmethod
    def scores(self, degree: int, lams) -> tuple[np.ndarray, np.ndarray]:
        """Held-out and training MSE per fold, each of shape (n_folds, len(lams))."""

    def cv_summary(self, degree: int, lams) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(mean CV MSE, its SE, mean training MSE), each of shape (len(lams),)."""
        cv, tr = self.scores(degree, lams)
        mean, se = fold_mean_se(cv)
        return mean, se, nanmean_folds(tr)

    def cv_mean(self, degree: int, lam: float) -> float:
        """Mean CV MSE of one configuration."""
        return float(self.cv_summary(degree, [lam])[0][0])

    def coefficients(self, degree: int, lams) -> np.ndarray:
        """Legendre coefficients (raw y) of the fit on all training rows, shape (len(lams), degree + 1)."""
        degree, lams = self._args(degree, lams)
        return self.full.raw(self._full(degree, lams)[0])

    def curve(self, degree: int, lam: float) -> Curve:
        """The fit on all training rows as a ``Curve``."""
        degree, lams = self._args(degree, [lam])
        return self.full.curve(self._full(degree, lams)[0][0])

    def effective_df(self, degree: int, lams) -> np.ndarray:
        """df(lambda) of the all-rows fit: the smoother's trace (ESL eq. 3.50 for ridge), plus one for
        the intercept."""
        degree, lams = self._args(degree, lams)
        return self._full(degree, lams)[1].copy()

    def train_mse(self, degree: int, lams) -> np.ndarray:
        """Weighted training MSE (SSE / sum w) of the all-rows fit, shape (len(lams),)."""
        degree, lams = self._args(degree, lams)
        theta = self._full(degree, lams)[0]
        out = FoldSolver.sse(self.full_stats, theta) / self.full_stats[0, 0]
        mine = self.own.get("full")
        if mine is not None and mine.rows is not None and (lams == 0).any() and degree < (mine.distinct or 0):
            out[lams == 0] = self._rows_solution("full", self.full, degree)[1] / self.full_stats[0, 0]
        return out

    def test_mse(self, degree: int, lam: float) -> float:
        """Sealed-test MSE of the all-rows fit (only meaningful once the user asks to reveal it)."""
        degree, lams = self._args(degree, [lam])
        if self.test_stats is None:
            raise ParameterError("Sealed test set: expected one (test_fraction > 0), got none.")
        mine = self.own.get("full")
        if lams[0] == 0 and mine is not None and mine.rows is not None and degree < (mine.distinct or 0):
            return self._rows_solution("full", self.full, degree)[2] / self.test_stats[0, 0]
        theta = self._full(degree, lams)[0]
        return float(FoldSolver.sse(self.test_stats, theta)[0] / self.test_stats[0, 0])

    def with_penalty(self, penalty: str, mix: float = 0.5) -> "ScoringEngine":
        """A new engine on the same statistics with another penalty (this one is unchanged)."""
        return engine_from_moments(self.moments, self.plan, penalty=penalty, mix=mix, intercept=self.intercept,
                                   own=self.own)

    # ---- shared solving -----------------------------------------------------------------
    def _full(self, degree: int, lams: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(working coefficients (nl, d + 1), effective df (nl,)) of the all-rows fit."""
        coef, edf = self._solve([self.full], degree, lams)
        return self._exact_at_zero("full", self.full, degree, lams, coef[0]), edf[0]

    def _exact_at_zero(self, key, solver, degree: int, lams: np.ndarray, coef: np.ndarray) -> np.ndarray:
        """``coef`` with its lambda = 0 rows replaced by least squares on the rows themselves, for
        training sets whose x values are too crowded for the statistics (``OwnDomain.rows``)."""
        mine = self.own.get(key)
        zero = lams == 0
        if mine is None or mine.rows is None or not zero.any() or degree >= (mine.distinct or 0):
            return coef
        theta = self._rows_solution(key, solver, degree)[0]
        coef = coef.copy()
        coef[zero] = theta
        return coef

    def _rows_solution(self, key, solver, degree: int):
        """(working coefficients, training SSE, held-out SSE) of the least-squares fit of one
        crowded training set, from its rows in extended precision (cached per degree)."""
        from .fit import least_squares_rows

        cache = self.__dict__.setdefault("_rows_cache", {})
        got = cache.get((key, degree))
        if got is None:
            (xt, yt, wt), (xh, yh, wh) = self.own[key].rows
            leg = least_squares_rows(xt, yt, wt, degree, self.intercept, solver.domain, power=False)[0]
            theta = leg.copy()
            theta[0] -= solver.offset
            curve = solver.curve(theta)

            def sse(x, y, w):
                r = y.astype(np.longdouble) - curve(x).astype(np.longdouble)
                return float(np.sum(w * r * r)) if x.size else 0.0
            got = cache[(key, degree)] = (theta, sse(xt, yt, wt), sse(xh, yh, wh))
        return got

    def _solve(self, solvers: list, degree: int, lams: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Working coefficients (S, nl, d + 1) and effective df (S, nl) of several training sets
        under this engine's penalty; the last call is remembered (a slider asks twice)."""
        key = (id(solvers[0]), len(solvers), degree, lams.tobytes())
        if self._memo is not None and self._memo[0] == key:
            return self._memo[1]
        out = solve_sets(solvers, degree, lams, self.penalty, self.mix)
        self._memo = (key, out)
        return out


class FoldEngine(ScoringEngine):
    """k-fold (also repeated, grouped, explicit or hashed) scoring from per-cell statistics.

    Cells of ``moments`` are ``r * k + f`` for repeat r and fold f, plus one last
    cell for the sealed test rows.
    """

    def __init__(self, moments: Moments, plan: FoldPlan, *, penalty: str = "ridge", mix: float = 0.0,
                 intercept: bool = True, own: dict | None = None):
        k, R = plan.k, plan.repeats
        gram = moments.gram
        has_test = moments.n_cells > R * k
        super().__init__(moments, plan, gram[:k].sum(axis=0), gram[R * k] if has_test else None,
                         penalty=penalty, mix=mix, intercept=intercept,
                         n_train=int(moments.counts[:k].sum()),
                         n_test=int(moments.counts[R * k]) if has_test else 0, own=own)
        self.solvers: list[FoldSolver] = []
        held, train = [], []
        for r in range(R):
            blocks = gram[r * k:(r + 1) * k]
            for f, S in enumerate(complement_sums(blocks)):
                mine = self.own.get(r * k + f)
                sv = _solver(S, moments, intercept,
                             f"training rows of fold {f + 1}" + (f" (repeat {r + 1})" if R > 1 else ""), mine)
                if mine is not None and mine.domain is not None:
                    S, H = mine.train, mine.held
                else:
                    H = blocks[f]
                self.solvers.append(sv)
                held.append(sv.working(H))
                train.append(sv.working(S))
        self._held = np.stack(held)          # held-out statistics per fold (working coordinates)
        self._train = np.stack(train)        # training statistics per fold
        self._counts = moments.counts[:R * k].copy()
        self._all = self.solvers + [self.full]

    @property
    def counts(self) -> np.ndarray:
        return self._counts

    def fold_solver(self, i: int) -> FoldSolver:
        """The solver of fold i (repeat-major)."""
        return self.solvers[i]

    def fold_coefficients(self, degree: int, lams) -> np.ndarray:
        """Working-coordinate coefficients of every fold's fit, shape (n_folds, len(lams), degree + 1)."""
        degree, lams = self._args(degree, lams)
        return self._solve(self._all, degree, lams)[0][:-1].copy()

    def fold_curves(self, degree: int, lam: float) -> list[Curve]:
        """Each fold's training-rows fit as a ``Curve`` (the spread shows variance)."""
        theta = self.fold_coefficients(degree, [lam])[:, 0]
        return [sv.curve(th) for sv, th in zip(self.solvers, theta)]

    def scores(self, degree: int, lams) -> tuple[np.ndarray, np.ndarray]:
        degree, lams = self._args(degree, lams)
        theta = self._solve(self._all, degree, lams)[0][:-1]
        with np.errstate(invalid="ignore", divide="ignore"):
            wh = self._held[:, 0, 0][:, None]
            cv = np.where(wh > 0, FoldBatch.sse(self._held, theta) / wh, np.nan)
            tr = FoldBatch.sse(self._train, theta) / self._train[:, 0, 0][:, None]
        zero = lams == 0
        for i, sv in enumerate(self.solvers):        # crowded sets at lambda = 0: from their rows
            mine = self.own.get(i)
            if zero.any() and mine is not None and mine.rows is not None and degree < (mine.distinct or 0):
                _, sse_t, sse_h = self._rows_solution(i, sv, degree)
                cv[i, zero] = sse_h / self._held[i, 0, 0]
                tr[i, zero] = sse_t / self._train[i, 0, 0]
        return cv, tr

    def _full(self, degree: int, lams: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        # the all-rows fit is solved together with the folds (one batched solve per degree)
        coef, edf = self._solve(self._all, degree, lams)
        return coef[-1], edf[-1]


def engine_from_moments(moments: Moments, plan: FoldPlan, *, penalty: str = "ridge", mix: float = 0.5,
                        intercept: bool = True, own: dict | None = None) -> FoldEngine:
    """The scoring engine for per-cell statistics and their fold plan (the one way to build one).

    Parameters
    ----------
    moments : Moments
        Cells ``r * k + f`` then the sealed cell (see ``core.folds.cell_labels``).
    plan : FoldPlan
    penalty : {"ridge", "curvature", "lasso", "elastic"}
    mix : float
        The elastic net's L1 share (ignored for the others).
    intercept : bool
    own : dict, optional
        ``{cell index or "full": OwnDomain}``: training sets whose statistics were recomputed in
        coordinates of their own from the rows (``core.crossval``).

    Raises
    ------
    ParameterError
        An unknown penalty, a bad mix, or statistics that do not match the plan.
    """
    share = combination(penalty=penalty, mix=mix)
    need = plan.repeats * plan.k
    if moments.n_cells not in (need, need + 1):
        raise ParameterError(message("Statistics", f"{need + 1} cells for k = {plan.k}, repeats = {plan.repeats}",
                                     moments.n_cells))
    return FoldEngine(moments, plan, penalty=penalty, mix=share, intercept=intercept, own=own)
