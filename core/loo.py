"""Leave-one-out cross-validation from the hat matrix (PRESS, Allen 1974).

For a fixed design the leave-one-out residual of row i is e_i / (1 - h_ii). The
shortcut therefore needs ONE standardization of the powers for all rows: here
the means and standard deviations come from all training rows, not from the
n - 1 rows of each left-out fit (which the k-fold surface re-estimates). With
the intercept free and the centred Legendre block Pc = R'R-factorized as in
``core.solve``,

    h_ii = w_i (1 / W + sum_j M_ij^2 s_j^2 / (s_j^2 + lambda)),  M = Pc R^-1 U,

so every lambda costs O(n d) once M is formed (O(n d^2) per degree). The score is
the weighted mean of squared LOO residuals, sum w e_(i)^2 / sum w (each row is its
own fold; with unit weights the plain mean).
"""

from __future__ import annotations

import numpy as np

from .basis import legendre_columns
from .errors import DataError, message
from .folds import FoldPlan
from .select import Engine, build_engine
from .solve import check_degree, check_lambdas

__all__ = ["LooEngine", "build_loo_engine"]


class LooEngine:
    """Duck-types ``Engine`` for the surface code, scoring by leave-one-out."""

    def __init__(self, base: Engine, x, y, w):
        self.base = base
        train = ~base.plan.test_mask
        self.x, self.y, self.w = x[train], y[train], w[train]
        n = self.x.size
        self.plan = FoldPlan("loo", n, 1, base.plan.seed, np.zeros((1, 0), dtype=np.int16), base.plan.test_mask,
                             base.plan.test_fraction)
        self.intercept = base.intercept
        self.n_folds = n
        self.n_train, self.n_test = base.n_train, base.n_test
        self.full = base.full
        self.P = legendre_columns(base.domain.map(self.x), base.max_degree)
        self._M: dict[int, np.ndarray] = {}

    # delegated to the all-rows solver
    max_degree = property(lambda self: self.base.max_degree)
    domain = property(lambda self: self.base.domain)

    def curve(self, degree, lam):
        return self.base.curve(degree, lam)

    def effective_df(self, degree, lams):
        return self.base.effective_df(degree, lams)

    def train_mse_all(self, degree, lams):
        return self.base.train_mse_all(degree, lams)

    def test_mse(self, degree, lam):
        return self.base.test_mse(degree, lam)

    def _leverage_factors(self, degree: int) -> np.ndarray:
        M = self._M.get(degree)
        if M is None:
            sv = self.full
            f = sv._prepare(degree)
            if f.R is None:
                raise DataError(message(f"Leave-one-out at degree {degree}",
                                        f"at least {degree + 1} distinct x values", "fewer"))
            if self.intercept:
                Pc = self.P[:, 1:degree + 1] - sv.mean[1:degree + 1]
            else:
                Pc = self.P[:, :degree + 1]
            M = Pc @ f.RiU if degree else np.zeros((self.x.size, 0))
            self._M[degree] = M
        return M

    def scores(self, degree: int, lams, *, train: bool = True, full: bool = False):
        """(squared LOO residual per row, training MSE): shapes (n, nl) and (1, nl); with
        ``full=True`` also the all-rows training MSE, shape (nl,) (as ``Engine.scores``)."""
        degree = check_degree(degree, self.max_degree)
        lams = check_lambdas(lams)
        sv = self.full
        theta = sv.coefficients(degree, lams)                      # (nl, d+1), working coordinates
        theta[:, 0] += sv.offset
        yhat = self.P[:, :degree + 1] @ theta.T                    # (n, nl)
        e = self.y[:, None] - yhat
        M = self._leverage_factors(degree)
        s2 = sv._prepare(degree).s ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            filt = np.where(s2 > 0, s2 / (s2 + lams[:, None]), 0.0)    # (nl, d)
        h = (M * M) @ filt.T                                       # (n, nl)
        if self.intercept:
            h = h + 1.0 / sv.W
        h = self.w[:, None] * h
        loo = e / (1.0 - h)
        tr = (np.sum(self.w[:, None] * e * e, axis=0) / np.sum(self.w))[None, :] if train else None
        # weight each row's loss by w_i / mean(w), so the mean over rows is sum w e^2 / sum w
        losses = (self.w / self.w.mean())[:, None] * loo * loo
        return (losses, tr, tr[0]) if full else (losses, tr)

    def cv_summary(self, degree, lams):
        from .select import fold_mean_se

        cv, tr = self.scores(degree, lams)
        m, se = fold_mean_se(cv)
        return m, se, tr[0]

    def cv_mean(self, degree, lam):
        cv, _ = self.scores(degree, [lam], train=False)
        return float(cv.mean())


def build_loo_engine(x, y, *, max_degree: int, weights=None, seed: int = 0, test_fraction: float = 0.0,
                     groups=None, intercept: bool = True) -> LooEngine:
    """Leave-one-out engine over the rows outside the sealed test set."""
    from .validate import check_xyw

    xa, ya, wa = check_xyw(x, y, weights)
    base = build_engine(xa, ya, max_degree=max_degree, folds=2, seed=seed, weights=weights, groups=groups,
                        test_fraction=test_fraction, intercept=intercept)
    return LooEngine(base, xa, ya, wa)
