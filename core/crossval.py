"""Cross-validation of rows held in memory: rows -> fold plan -> one pass -> engine -> surface.

The public entry points ``build_engine`` and ``sweep`` validate their parameters
once (``core.params``) and their data once (``core.validate``); everything they
call trusts its inputs. Streamed files (``core.stream``), many files or a Dask
cluster (``core.distributed``) and statistics files (``core.statsfile``) feed the
same ``core.engine.engine_from_moments``.
"""

from __future__ import annotations

import numpy as np

from .basis import Domain
from .engine import OwnDomain, ScoringEngine, engine_from_moments
from .errors import DataError, message
from .folds import cell_labels, make_plan, sealed_mask
from .loo import build_loo_engine
from .moments import accumulate
from .params import check, combination
from .select import Surface, surface_from_engine
from .validate import check_xyw, require_spread

__all__ = ["build_engine", "sweep", "own_domains"]


def build_engine(x, y, *, max_degree: int, folds: int | str = 10, repeats: int = 1, groups=None,
                 fold_ids=None, seed: int = 0, weights=None, test_fraction: float = 0.0,
                 intercept: bool = True, penalty: str = "ridge", mix: float = 0.5, row_keys=None) -> ScoringEngine:
    """Assign folds and run the one pass; see ``sweep`` for the parameters.

    The basis domain is the range of all rows (a choice of coordinates only:
    standardization always uses the training rows), so a streamed file and
    the same rows in memory give the same statistics.
    """
    x, y, w = check_xyw(x, y, weights)
    p = check(max_degree=max_degree, intercept=intercept, seed=seed, test_fraction=test_fraction)
    combination(penalty=penalty, mix=mix, folds=folds, repeats=repeats, groups=groups, fold_ids=fold_ids)
    require_spread(x)
    wt = None if weights is None else w
    if isinstance(folds, str):     # "loo", checked above
        keys = None if row_keys is None else np.asarray(row_keys)
        if keys is not None and keys.shape != x.shape:
            raise DataError(message("Row keys", f"{x.size} values (one per row)", keys.shape))
        mask = sealed_mask(x.size, p.test_fraction, p.seed, keys=keys)
        n_train = int(x.size - mask.sum())
        if n_train < p.max_degree + 2:
            raise DataError(message("Rows for leave-one-out", f"at least degree + 2 = {p.max_degree + 2} rows "
                                    "outside the sealed test set", n_train,
                                    "Lower the highest degree or use a smaller test fraction"))
        return build_loo_engine(x, y, wt, mask, seed=p.seed, test_fraction=p.test_fraction,
                                max_degree=p.max_degree, intercept=p.intercept, penalty=penalty,
                                own=own_domains(x, y, wt, p.max_degree, p.intercept), row_keys=keys)
    plan = make_plan(x.size, folds=folds, repeats=repeats, groups=groups, fold_ids=fold_ids,
                     seed=p.seed, test_fraction=p.test_fraction, row_keys=row_keys)
    labels = cell_labels(plan, p.max_degree)
    domain = Domain.from_range(x.min(), x.max())
    mom = accumulate(x, y, labels=labels, n_cells=plan.repeats * plan.k + 1, domain=domain,
                     max_degree=p.max_degree, weights=wt)
    sets = {"full": (~plan.test_mask, plan.test_mask)}
    for r in range(plan.repeats):
        for f in range(plan.k):
            sets[r * plan.k + f] = ((plan.labels[r] >= 0) & (plan.labels[r] != f), plan.labels[r] == f)
    own = own_domains(x, y, wt, p.max_degree, p.intercept, plan.k)(mom, sets)
    return engine_from_moments(mom, plan, penalty=penalty, mix=mix, intercept=p.intercept, own=own)


def sweep(x, y, degrees, lambdas=None, *, folds: int | str = 10, repeats: int = 1, groups=None,
          fold_ids=None, seed: int = 0, weights=None, test_fraction: float = 0.0,
          intercept: bool = True, penalty: str = "ridge", mix: float = 0.5, row_keys=None) -> Surface:
    """Cross-validate every degree and lambda from one pass over the rows.

    Parameters
    ----------
    x, y : array_like of shape (n,)
    degrees : iterable of int
        Degrees 0..30 to score.
    lambdas : array_like, optional
        Penalties >= 0 (0 = least squares); default a grid scaled to the data and the penalty
        (``core.select.default_lambdas``).
    folds : int or "loo"
        k (default 10); ignored with ``fold_ids``. ``"loo"`` scores leave-one-out through
        the hat matrix (``core.loo``: one standardization for all rows; ridge only, and
        not with repeats, groups or fold_ids).
    repeats : int
        Repeated k-fold with independent shuffles.
    groups : array_like of shape (n,), optional
        Grouped folds: rows sharing a value stay together.
    fold_ids : array_like of shape (n,), optional
        Explicit fold of each row.
    seed : int
    weights : array_like of shape (n,), optional
    test_fraction : float
        Share of rows sealed away before folding (scored only by ``Surface.reveal_test``);
        each row is sealed by a hash of its key and the seed (``core.folds``).
    row_keys : array_like of shape (n,), optional
        Each row's key for the sealed test (default 0..n-1): spreadsheet row numbers keep
        every other row's membership when a row is excluded.
    intercept : bool
    penalty : {"ridge", "curvature", "lasso", "elastic"}
        Ridge, lasso and elastic net penalize the standardized power coefficients;
        curvature penalizes the integral of the curve's squared second derivative over
        the mapped x range (straight lines are free; ``core.penalties``).
    mix : float
        Elastic-net share of the L1 term (0 < mix <= 1).

    Returns
    -------
    Surface
    """
    p = check(degrees=degrees, **({} if lambdas is None else {"lambdas": lambdas}))
    engine = build_engine(x, y, max_degree=int(p.degrees.max()), folds=folds, repeats=repeats, groups=groups,
                          fold_ids=fold_ids, seed=seed, weights=weights, test_fraction=test_fraction,
                          intercept=intercept, penalty=penalty, mix=mix, row_keys=row_keys)
    return surface_from_engine(engine, p.degrees, None if lambdas is None else p.lambdas)


# A training set whose Gram matrix is worse conditioned than this (x crowded into part of the range)
# is refitted at lambda = 0 from its rows, in extended precision, like core.fit.
CROWDED_CONDITION = 1e10
# A training set whose rows span less of the sweep's x range than this loses more than
# OWN_DIGITS digits to Legendre columns of the sweep's mapped x at the highest degree
# (their conditioning grows like (1 / span)^degree), so it is recomputed in its own coordinates.
OWN_DIGITS = 2.0


def own_domains(x, y, w, max_degree: int, intercept: bool = True, k: int = 1):
    """A function (moments, sets) -> {key: OwnDomain} for in-memory rows.

    ``sets`` maps a cell key (fold cell index, or "full") to (training mask, held-out mask).
    Every set gets its count of distinct training x values; a set whose training rows span
    too little of the sweep's range gets statistics in its own domain (see OWN_DIGITS); a set
    whose Gram matrix is numerically rank deficient although it has enough distinct x values
    (x crowded into a small part of the range) gets its triangular factor from a QR of its rows.
    """
    _, inv = np.unique(x, return_inverse=True)

    def build(moments, sets) -> dict:
        dom = moments.domain
        out = {}
        for key, (train, held) in sets.items():
            if not train.any():
                continue
            distinct = int(np.count_nonzero(np.bincount(inv[train])))
            lo, hi = float(x[train].min()), float(x[train].max())
            span = (hi - lo) / (2.0 * dom.half_width)
            narrow = hi > lo and max_degree >= 2 and max_degree * np.log10(1.0 / span) > OWN_DIGITS
            crowded = _gram_condition(moments, key, k, intercept) > CROWDED_CONDITION
            if not (narrow or crowded):
                out[key] = OwnDomain(distinct=distinct)
                continue
            own = Domain.from_range(lo, hi) if hi > lo else dom
            # the sweep's curvature integral over t in [-1, 1], in the own coordinate s:
            # s(t) = (c + h t - c_own) / h_own and d^2/dt^2 = (h / h_own)^2 d^2/ds^2
            a = (dom.center - dom.half_width - own.center) / own.half_width
            b = (dom.center + dom.half_width - own.center) / own.half_width
            scale = (dom.half_width / own.half_width) ** 3

            def stats(mask):
                one = np.zeros((1, int(mask.sum())), dtype=np.int16)
                return accumulate(x[mask], y[mask], labels=one, n_cells=1, domain=own, max_degree=max_degree,
                                  weights=None if w is None else w[mask], y_shift=moments.y_shift).gram[0]

            wt = np.ones(x.size) if w is None else w
            rows = ((x[train], y[train], wt[train]), (x[held], y[held], wt[held])) if crowded else None
            out[key] = OwnDomain(own, stats(train), stats(held) if held.any() else None, (a, b, scale), distinct,
                                 _rows_factor(x[train], y[train], None if w is None else w[train], own,
                                              max_degree, intercept, moments.y_shift), rows)
        return out
    return build


def _gram_condition(moments, key, k: int, intercept: bool) -> float:
    """Condition number of a set's (centred, with an intercept) Legendre Gram matrix in the sweep's
    coordinates. ``key`` is "full" (every fold of repeat 0) or a fold cell r * k + f."""
    if key == "full":
        S = moments.gram[:k].sum(axis=0)
    else:
        r = key // k
        S = sum(moments.gram[c] for c in range(r * k, (r + 1) * k) if c != key)
    D = S.shape[0] - 2
    if D < 1:
        return 1.0
    if intercept:
        s = S[0, 1:D + 1]
        G = S[1:D + 1, 1:D + 1] - np.outer(s, s) / S[0, 0]
    else:
        G = S[:D + 1, :D + 1]
    ev = np.linalg.eigvalsh(G)
    return float(ev.max() / ev.min()) if ev.min() > 0 else np.inf


def _rows_factor(x, y, w, domain, max_degree: int, intercept: bool, y_shift: float):
    """(R, Q' y) of the weighted (centred, with an intercept) Legendre design of these rows."""
    from .basis import legendre_columns

    sw = np.ones_like(x) if w is None else np.sqrt(w)
    P = legendre_columns(domain.map(x), max_degree)
    yy = y - y_shift if intercept else y
    if intercept:
        W = np.sum(sw * sw)
        mean = (sw * sw) @ P / W
        X = (P[:, 1:] - mean[1:]) * sw[:, None]
        r = (yy - (sw * sw) @ yy / W) * sw
    else:
        X, r = P * sw[:, None], yy * sw
    Q, R = np.linalg.qr(X)
    sign = np.where(np.diag(R) < 0, -1.0, 1.0)      # positive diagonal, as a Cholesky factor has
    return sign[:, None] * R, sign * (Q.T @ r)
