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
from .engine import ScoringEngine, engine_from_moments
from .errors import DataError, message
from .folds import cell_labels, make_plan, sealed_mask
from .loo import build_loo_engine
from .moments import accumulate
from .params import check, combination
from .select import Surface, surface_from_engine
from .validate import check_xyw, require_spread

__all__ = ["build_engine", "sweep"]


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
                                max_degree=p.max_degree, intercept=p.intercept, penalty=penalty)
    plan = make_plan(x.size, folds=folds, repeats=repeats, groups=groups, fold_ids=fold_ids,
                     seed=p.seed, test_fraction=p.test_fraction, row_keys=row_keys)
    labels = cell_labels(plan, p.max_degree)
    domain = Domain.from_range(x.min(), x.max())
    mom = accumulate(x, y, labels=labels, n_cells=plan.repeats * plan.k + 1, domain=domain,
                     max_degree=p.max_degree, weights=wt)
    return engine_from_moments(mom, plan, penalty=penalty, mix=mix, intercept=p.intercept)


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
