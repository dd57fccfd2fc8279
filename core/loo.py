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

The shortcut holds for penalties that keep the fit linear in y (ridge and
curvature: the same formula with that penalty's filter); the lasso and elastic
net, repeats, groups and explicit folds are refused
(``core.params.combination``), never silently replaced.
"""

from __future__ import annotations

import numpy as np

from .basis import Domain, legendre_columns
from .engine import ScoringEngine
from .errors import DataError, message
from .folds import FoldPlan
from .moments import accumulate
from .params import combination
from .penalties import ridge_filter

__all__ = ["LooEngine", "build_loo_engine"]


class LooEngine(ScoringEngine):
    """Leave-one-out scoring; the all-rows answers come from the shared contract.

    ``moments`` has two cells: the training rows and the sealed rows.
    """

    def __init__(self, moments, plan: FoldPlan, x, y, w, *, intercept: bool = True, penalty: str = "ridge",
                 own: dict | None = None):
        n_test = int(moments.counts[1]) if moments.n_cells > 1 else 0
        super().__init__(moments, plan, moments.gram[0], moments.gram[1] if n_test else None,
                         penalty=penalty, mix=0.0, intercept=intercept,
                         n_train=int(moments.counts[0]), n_test=n_test, own=own)
        self.x, self.y, self.w = x, y, w
        self.P = legendre_columns(self.full.domain.map(x), moments.max_degree)
        self._M: dict[int, np.ndarray] = {}

    @property
    def counts(self) -> np.ndarray:
        return np.ones(self.x.size, dtype=np.int64)

    def with_penalty(self, penalty: str, mix: float = 0.5) -> "LooEngine":
        """The same rows scored under another quadratic penalty (the lasso and elastic net are refused)."""
        combination(penalty=penalty, mix=mix, folds="loo")
        return LooEngine(self.moments, self.plan, self.x, self.y, self.w, intercept=self.intercept, penalty=penalty,
                         own=self.own)

    def _leverage_factors(self, degree: int) -> np.ndarray:
        M = self._M.get(degree)
        if M is None:
            sv = self.full
            f = sv.factor(degree, self.penalty)
            if f.R is None:
                raise DataError(message(f"Leave-one-out at degree {degree}",
                                        f"at least {degree + 1} distinct x values in the training rows", "fewer",
                                        "Lower the degree or use k-fold cross-validation"))
            if self.intercept:
                Pc = self.P[:, 1:degree + 1] - sv.mean[1:degree + 1]
            else:
                Pc = self.P[:, :degree + 1]
            M = Pc @ f.RiU if degree else np.zeros((self.x.size, 0))
            self._M[degree] = M
        return M

    def scores(self, degree: int, lams) -> tuple[np.ndarray, np.ndarray]:
        """(weighted squared LOO residual per row, shape (n, nl); training MSE, shape (n, nl)).

        Each row is its own fold; the training MSE given for every fold is that of the
        all-rows fit (the left-out fits are never formed: that is the shortcut).
        """
        degree, lams = self._args(degree, lams)
        sv = self.full
        theta = sv.raw(self._full(degree, lams)[0])                 # (nl, d+1), raw response
        e = self.y[:, None] - self.P[:, :degree + 1] @ theta.T     # (n, nl)
        M = self._leverage_factors(degree)
        h = (M * M) @ ridge_filter(sv.factor(degree, self.penalty).s2, lams).T
        if self.intercept:
            h = h + 1.0 / sv.W
        h = self.w[:, None] * h
        loo = e / (1.0 - h)
        tr = np.broadcast_to(np.sum(self.w[:, None] * e * e, axis=0) / np.sum(self.w), loo.shape)
        # weight each row's loss by w_i / mean(w), so the mean over rows is sum w e^2 / sum w
        return (self.w / self.w.mean())[:, None] * loo * loo, tr


def build_loo_engine(x, y, w, test_mask, *, seed: int, test_fraction: float, max_degree: int,
                     intercept: bool = True, penalty: str = "ridge", own=None, row_keys=None) -> LooEngine:
    """Leave-one-out engine over the rows outside the sealed test set (inputs trusted)."""
    train = ~test_mask
    labels = np.where(train, 0, 1)[None, :].astype(np.int32)
    domain = Domain.from_range(x.min(), x.max())
    mom = accumulate(x, y, labels=labels, n_cells=2, domain=domain, max_degree=max_degree,
                     weights=w)
    n = int(train.sum())
    loo_labels = np.full((1, x.size), -1, dtype=np.int32)
    loo_labels[0, train] = np.arange(n)
    loo_plan = FoldPlan("loo", n, 1, seed, loo_labels, test_mask, test_fraction, row_keys=row_keys)
    wt = np.ones(n) if w is None else w[train]
    own = None if own is None else own(mom, {"full": (train, ~train)})
    return LooEngine(mom, loo_plan, x[train], y[train], wt, intercept=intercept, penalty=penalty, own=own)
