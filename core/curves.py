"""Learning curves from one pass: training and CV error against training-set size.

``size_curve`` computes one (a ``SizeCurve``); ``SizeCurve.reading`` says in one
sentence what it implies for the question "would more measurements help?".

For repeat r every row gets a fold (k-fold, as in ``core.folds``) and a
uniform draw u from ``default_rng([seed, 17, r])``. The training subset of
size fraction s in fold f is the fold's training rows with u < s, so subsets
are nested and a row's size bin is fixed in advance: one pass accumulates
statistics per (repeat, fold, size bin), and every point of the curve is a
sum of those cells. Each subset is scored on its own rows (training MSE)
and on the whole held-out fold (CV MSE); means and standard errors are over
repeats x folds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .basis import Domain
from .errors import ParameterError, message
from .folds import make_plan
from .moments import accumulate, complement_sums
from .params import check
from .solve import FoldSolver
from .validate import check_xyw, require_spread

__all__ = ["SizeCurve", "size_curve"]


@dataclass(frozen=True)
class SizeCurve:
    """Training and CV MSE against training-set size.

    Attributes
    ----------
    sizes : ndarray of shape (m,)
        Requested fractions of each fold's training rows.
    n_train : ndarray of shape (m,)
        Mean number of training rows actually used.
    train_mse, train_mse_se, cv_mse, cv_mse_se : ndarray of shape (m,)
        Means over repeats x folds and their standard errors (NaN where a
        subset had fewer rows than parameters).
    """

    degree: int
    lam: float
    sizes: np.ndarray
    n_train: np.ndarray
    train_mse: np.ndarray = field(repr=False)
    train_mse_se: np.ndarray = field(repr=False)
    cv_mse: np.ndarray = field(repr=False)
    cv_mse_se: np.ndarray = field(repr=False)
    folds: int
    repeats: int
    seed: int

    def to_dict(self) -> dict:
        def lst(a):
            return [None if not np.isfinite(v) else float(v) for v in a]
        return {"degree": self.degree, "lambda": self.lam, "sizes": self.sizes.tolist(),
                "n_train": self.n_train.tolist(), "train_mse": lst(self.train_mse),
                "train_mse_se": lst(self.train_mse_se), "cv_mse": lst(self.cv_mse),
                "cv_mse_se": lst(self.cv_mse_se), "folds": self.folds,
                "repeats": self.repeats, "seed": self.seed,
                "reading": self.reading()}

    def expected_gap(self) -> float:
        """The gap (e_cv - e_fit) / e_cv a least-squares curve with p = degree + 1 terms shows on pure
        noise with n training rows: the optimism 2 p sigma^2 / n of the training error (Hastie,
        Tibshirani & Friedman, ESL sec. 7.4) gives e_fit = sigma^2 (1 - p/n), e_cv = sigma^2 (1 + p/n),
        so 2p / (n + p). A penalty only lowers p, so this is an upper allowance."""
        p = self.degree + 1
        n = float(self.n_train[-1]) if len(self.n_train) else 0.0
        return 2.0 * p / (n + p) if n > 0 else 0.0

    def reading(self) -> str:
        """One sentence on whether more measurements would help, read off the last points.

        The rule (stated so it can be checked): with e_cv and e_fit the CV and training
        MSE at full size, if (e_cv - e_fit) / e_cv exceeds both 0.25 and 1.5 times the gap
        pure noise gives a curve of this many terms (``expected_gap``) the setting follows noise;
        otherwise, if CV MSE at full size is more than 3% below its value half-way
        along the sizes, it is still dropping; otherwise both have levelled off.
        Guidance, not a certainty.
        """
        ok = np.isfinite(self.cv_mse) & np.isfinite(self.train_mse)
        if ok.sum() < 2:
            return ("Too few sizes could be fitted to read a trend: this setting needs more rows "
                    "per fold than most subsets have.")
        cv, tr = self.cv_mse[ok], self.train_mse[ok]
        gap = (cv[-1] - tr[-1]) / cv[-1] if cv[-1] > 0 else 0.0
        half = max(1, len(cv) // 2)
        drop = 1.0 - cv[-1] / cv[half - 1] if cv[half - 1] > 0 else 0.0
        allowed = self.expected_gap()
        if gap > max(0.25, 1.5 * allowed):
            return (f"At full size the held-out error is {100 * gap:.0f}% above the fitted error (share of the "
                    f"held-out MSE), where pure noise would give a curve of this many terms about "
                    f"{100 * allowed:.0f}%: it is probably following noise in the sample. More measurements "
                    "would close that gap; so would a stiffer setting (lower degree or larger lambda).")
        if drop > 0.03:
            return (f"Held-out error was still dropping at full size ({100 * drop:.0f}% lower than half-way "
                    "along): more measurements of the same kind would probably improve this curve.")
        return ("Held-out and fitted errors have levelled off together: more measurements of the same kind "
                "are unlikely to improve this setting. If the error is still too large for the job, the setting "
                "is too stiff for the trend: allow more flexibility.")


def size_curve(x, y, degree: int, lam: float = 0.0, *, sizes=np.linspace(0.1, 1.0, 10),
               folds: int = 10, repeats: int = 3, seed: int = 0, weights=None, groups=None,
               test_fraction: float = 0.0, intercept: bool = True, penalty: str = "ridge",
               domain: Domain | None = None) -> SizeCurve:
    """Learning curve of one configuration (see module docstring).

    Parameters
    ----------
    x, y : array_like of shape (n,)
    degree : int
    lam : float
    sizes : array_like
        Fractions in (0, 1] of each fold's training rows.
    folds, repeats, seed, weights, groups, test_fraction, intercept
        As for ``core.sweep`` (the sealed rows are left out entirely).
    penalty : {"ridge", "curvature"}
        The quadratic penalty lambda weighs (the ones whose fit follows from the statistics).
    domain : Domain, optional
        The x range mapped onto [-1, 1] (where the curvature integral runs); default the
        range of the rows outside the sealed set. Pass a sweep's ``engine.domain`` so the
        curve's lambda means what it means there.

    Returns
    -------
    SizeCurve
    """
    p = check(degree=degree, lam=lam, sizes=sizes, intercept=intercept)
    if penalty not in ("ridge", "curvature"):
        raise ParameterError(message("Penalty of a learning curve", "ridge or curvature", repr(penalty),
                                     "The lasso and elastic net need the rows of every subset"))
    degree, lam, sizes = p.degree, p.lam, p.sizes
    x, y, w = check_xyw(x, y, weights)
    require_spread(x)
    plan = make_plan(x.size, folds=folds, repeats=repeats, groups=groups, seed=seed,
                     test_fraction=test_fraction)
    k, R, m = plan.k, plan.repeats, sizes.size
    nb = m + 1
    labels = np.full((R, x.size), -1, dtype=np.int32)
    for r in range(R):
        u = np.random.default_rng([seed, 17, r]).random(x.size)
        b = np.searchsorted(sizes, u, side="right")
        ok = plan.labels[r] >= 0
        labels[r, ok] = (r * k + plan.labels[r, ok]) * nb + b[ok]
    keep = ~plan.test_mask
    if domain is None:
        domain = Domain.from_range(x[keep].min(), x[keep].max())
    mom = accumulate(x, y, labels=labels, n_cells=R * k * nb, domain=domain, max_degree=degree,
                     weights=None if weights is None else w)
    G = mom.gram.reshape(R, k, nb, *mom.gram.shape[1:])
    C = mom.counts.reshape(R, k, nb)
    cum = np.cumsum(G, axis=2)          # rows with bin <= i: the subset of size i
    ccum = np.cumsum(C, axis=2)
    p = degree + 1 if intercept else max(degree, 1)
    tr = np.full((R * k, m), np.nan)
    cv = np.full((R * k, m), np.nan)
    ntr = np.zeros((R * k, m))
    for r in range(R):
        held = G[r].sum(axis=1)          # whole fold
        for i in range(m):
            train = complement_sums(cum[r, :, i])
            counts = ccum[r, :, i].sum() - ccum[r, :, i]
            for f in range(k):
                ntr[r * k + f, i] = counts[f]
                if counts[f] <= p:
                    continue
                sv = FoldSolver(train[f], domain, mom.y_shift, intercept)
                theta = sv.coefficients(degree, np.array([lam]), penalty)
                S = sv.working(train[f])
                H = sv.working(held[f])
                tr[r * k + f, i] = FoldSolver.sse(S, theta)[0] / S[0, 0]
                cv[r * k + f, i] = FoldSolver.sse(H, theta)[0] / H[0, 0]

    def mean_se(a):
        cnt = np.sum(np.isfinite(a), axis=0)
        mean = np.full(a.shape[1], np.nan)
        se = np.full(a.shape[1], np.nan)
        for j, c in enumerate(cnt):
            col = a[np.isfinite(a[:, j]), j]
            if c:
                mean[j] = col.mean()
            if c > 1:
                se[j] = col.std(ddof=1) / math.sqrt(c)
        return mean, se

    trm, trs = mean_se(tr)
    cvm, cvs = mean_se(cv)
    return SizeCurve(degree, lam, sizes, ntr.mean(axis=0), trm, trs, cvm, cvs, k, R, int(seed))
