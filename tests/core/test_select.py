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
    assert g["min"] == (2, 0)
    assert g["1se"] == (1, 1)
    assert g["threshold"] == pytest.approx(1.20)


def test_grid_choices_ignore_nan_cells():
    cv = np.array([[np.nan, 2.0], [1.0, np.nan]])
    g = grid_choices(cv, np.full_like(cv, 0.5))
    assert g["min"] == (1, 0) and g["1se"] == (1, 0)


def invented(n=300, seed=0):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 10, n)
    return x, 2 + np.sin(x / 2) + 0.2 * rng.normal(size=n)


def test_refined_lambda_is_no_worse_than_grid():
    """The bounded log-lambda search between grid neighbours never raises CV MSE."""
    x, y = invented()
    s = core.sweep(x, y, range(1, 10), np.logspace(-6, 4, 11), folds=5)
    rec = s.recommended["min"]
    assert rec.cv_mse <= s.cv_mse.min() + 1e-15
    one = s.recommended["1se"]
    g = grid_choices(s.cv_mse, s.cv_mse_se)
    assert one.cv_mse <= g["threshold"] * (1 + 1e-12)
    assert one.lam >= one.grid_lambda


def test_sealed_test_rows_never_enter_cross_validation():
    """Sealed rows are disjoint from all folds, chosen by seed, scored only when revealed."""
    x, y = invented()
    s = core.sweep(x, y, range(0, 6), [1e-3, 1.0], folds=5, test_fraction=0.2, seed=3)
    plan = s.engine.plan
    assert plan.n_test == 60 and s.n_train == 240
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
