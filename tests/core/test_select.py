"""Recommendation rules and the sealed test set."""

import numpy as np
import pytest

import core
from core.select import grid_choices


def test_one_se_rule_on_hand_built_surface():
    """1se (Breiman et al. 1984; ESL sec. 7.10): simplest within one SE of the minimum.

    Degrees 1..3 (rows) x lambdas 0.01, 0.1, 1 (columns). Minimum 1.00 at degree 3,
    lambda 0.01, SE 0.20, so the bar is 1.20. Degree 1 never gets under it; degree 2
    does at lambdas 0.01 and 0.1 (1.15, 1.19) but not 1 (1.25): pick degree 2, lambda 0.1.
    """
    cv = np.array([[1.50, 1.40, 1.45],
                   [1.15, 1.19, 1.25],
                   [1.00, 1.05, 1.30]])
    se = np.full_like(cv, 0.05)
    se[2, 0] = 0.20
    g = grid_choices(cv, se)
    assert g["lowest"] == (2, 0)
    assert g["simplest"] == (1, 1)
    assert g["threshold"] == pytest.approx(1.20)


def test_grid_choices_ignore_nan_cells():
    cv = np.array([[np.nan, 2.0], [1.0, np.nan]])
    g = grid_choices(cv, np.full_like(cv, 0.5))
    assert g["lowest"] == (1, 0) and g["simplest"] == (1, 0)


def invented(n=300, seed=0):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 10, n)
    return x, 2 + np.sin(x / 2) + 0.2 * rng.normal(size=n)


def test_refined_lambda_is_the_minimum_between_grid_neighbours():
    """The lowest-error pick's lambda, refined between its grid neighbours, is where CV MSE is lowest:
    scikit-learn's cross_val_score on the same folds (PredefinedSplit) over a fine log grid between
    those neighbours finds nothing lower (to its rounding), and agrees with our value at our lambda."""
    from sklearn.linear_model import Ridge
    from sklearn.model_selection import PredefinedSplit, cross_val_score
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import PolynomialFeatures, StandardScaler

    x, y = invented()
    grid = np.logspace(-6, 4, 11)
    s = core.sweep(x, y, range(8, 13), grid, folds=5)        # high degrees: an interior lambda is best
    rec = s.recommended["lowest"]
    assert not rec.lambda_at_edge
    split = PredefinedSplit(s.engine.plan.labels[0])

    def sk_cv(lam):
        model = make_pipeline(PolynomialFeatures(rec.degree, include_bias=False), StandardScaler(), Ridge(alpha=lam))
        return -cross_val_score(model, x[:, None], y, cv=split, scoring="neg_mean_squared_error").mean()

    i = int(np.flatnonzero(grid == rec.grid_lambda)[0])
    fine = np.logspace(np.log10(grid[max(i - 1, 0)]), np.log10(grid[min(i + 1, grid.size - 1)]), 41)
    best_fine = min(sk_cv(v) for v in fine)
    assert sk_cv(rec.lam) == pytest.approx(rec.cv_mse, rel=1e-8)
    assert rec.cv_mse <= best_fine * (1 + 1e-6)
    assert rec.cv_mse < s.cv_mse[rec.degree - 8, i]          # refinement found a lower point than the grid


def test_simplest_pick_sits_on_the_one_standard_error_bar():
    """The 1se pick's refined lambda is the root of CV(lambda) = min + SE (it is moved as far towards
    simpler as the bar allows): scikit-learn's CV there equals the bar, to the root finder's tolerance."""
    from sklearn.linear_model import Ridge
    from sklearn.model_selection import PredefinedSplit, cross_val_score
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import PolynomialFeatures, StandardScaler

    x, y = invented()
    s = core.sweep(x, y, range(1, 8), np.logspace(-6, 4, 11), folds=5)
    one = s.recommended["simplest"]
    bar = grid_choices(s.cv_mse, s.cv_mse_se)["threshold"]
    model = make_pipeline(PolynomialFeatures(one.degree, include_bias=False), StandardScaler(), Ridge(alpha=one.lam))
    sk = -cross_val_score(model, x[:, None], y, cv=PredefinedSplit(s.engine.plan.labels[0]),
                          scoring="neg_mean_squared_error").mean()
    if one.lam > one.grid_lambda:                      # refined off the grid: on the bar
        assert sk == pytest.approx(bar, rel=1e-5) and sk <= bar * (1 + 1e-8)
    else:                                              # the next grid point is still under the bar
        assert sk <= bar


def test_sealed_test_rows_never_enter_cross_validation():
    """Sealed rows are disjoint from all folds, chosen by seed, scored only when revealed."""
    x, y = invented()
    s = core.sweep(x, y, range(0, 6), [1e-3, 1.0], folds=5, test_fraction=0.2, seed=3)
    plan = s.engine.plan
    assert 40 <= plan.n_test <= 80 and s.n_train == 300 - plan.n_test
    assert np.all(plan.labels[:, plan.test_mask] == -1)
    assert not s.test_revealed and "mse" not in s.sealed.to_dict()
    revealed = s.reveal_test(3, 1.0)
    assert not s.test_revealed            # a surface is a value: the reveal makes a new one
    mse = revealed.sealed.mse
    ref = core.fit(x[~plan.test_mask], y[~plan.test_mask], 3, 1.0)
    expect = np.mean((y[plan.test_mask] - ref.predict(x[plan.test_mask])) ** 2)
    assert mse == pytest.approx(expect, rel=1e-10)
    d = revealed.to_dict()["sealed_test"]
    assert d["revealed"] and d["mse"] == mse and d["revealed_at"]
    again = core.sweep(x, y, range(0, 6), [1e-3, 1.0], folds=5, test_fraction=0.2, seed=3)
    assert np.array_equal(again.engine.plan.test_mask, plan.test_mask)


def test_too_few_training_rows_per_fold_is_refused():
    x, y = invented(n=12)
    with pytest.raises(core.DataError, match=r"Training rows of fold 1: expected at least degree \+ 1 = 12 rows, got 10"):
        core.sweep(x, y, range(0, 12), [1.0], folds=6)


def splitmix64(z: int) -> int:
    """The splitmix64 finalizer written out in Python integers (Steele, Lea & Flood 2014, the published
    constants), as the documented rule for sealed rows states it."""
    m = 2**64 - 1
    z = (z + 0x9E3779B97F4A7C15) & m
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & m
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & m
    return z ^ (z >> 31)


def test_sealed_rows_follow_the_documented_rule():
    """Row i is sealed when splitmix64(key_i xor splitmix64(seed * 1000003 + 12345)) / 2^64, taken to 53 bits,
    is below the fraction: recomputed here in plain Python integers from the rule in core.folds."""
    keys = np.arange(2, 502)
    s = core.sweep(np.linspace(0, 1, 500), np.linspace(0, 1, 500) ** 2, [2], [0.0], folds=5, seed=11,
                   test_fraction=0.25, row_keys=keys)
    key = splitmix64((11 * 1000003 + 12345) % 2**64)
    want = [(splitmix64(int(k) ^ key) >> 11) / 2.0**53 < 0.25 for k in keys]
    assert s.engine.plan.test_mask.tolist() == want


def test_excluding_rows_never_moves_another_row_in_or_out_of_the_sealed_set():
    """Property: for every single excluded row (and a block of rows), each remaining row keeps its sealed
    membership when rows are keyed by their spreadsheet numbers."""
    x, y = invented(120)
    rows = np.arange(2, 122)
    full = core.build_engine(x, y, max_degree=3, folds=5, seed=4, test_fraction=0.3, row_keys=rows).plan.test_mask
    for drop in [[i] for i in range(120)] + [list(range(10, 40))]:
        keep = np.setdiff1d(np.arange(120), drop)
        e = core.build_engine(x[keep], y[keep], max_degree=3, folds=5, seed=4, test_fraction=0.3,
                              row_keys=rows[keep])
        assert np.array_equal(e.plan.test_mask, full[keep])


def test_a_penalty_that_cannot_act_is_reported_as_lambda_zero():
    """Under the curvature penalty a straight line is in the penalty's null space (integral of f''^2 = 0), so
    every lambda gives the same line: the pick says lambda = 0 rather than the grid's top (closed form)."""
    rng = np.random.default_rng(12)
    x = np.linspace(0, 10, 40)
    y = 1 + 0.3 * x + rng.normal(0, 0.05, x.size)
    s = core.sweep(x, y, [0, 1, 2, 3], None, folds=5, penalty="curvature", seed=2)
    rec = s.recommended["simplest"]
    assert rec.degree == 1 and rec.lam == 0.0 and not rec.lambda_at_edge
    assert rec.cv_mse == pytest.approx(float(s.engine.cv_mean(1, 1e3)), rel=1e-9)
