"""Leave-one-out via the hat matrix and generalized cross-validation."""

import numpy as np
import pytest
from sklearn.linear_model import RidgeCV

import core


def invented(n=120, seed=2):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 3, n)
    return x, np.sin(2 * x) + 0.1 * rng.normal(size=n)


def test_loo_equals_sklearn_ridgecv():
    """scikit-learn RidgeCV(store_cv_results=True) on powers standardized on ALL rows (the
    shortcut's one standardization): LOO MSE to 1e-8 for degrees 1-8."""
    x, y = invented()
    lams = np.logspace(-6, 3, 10)
    s = core.sweep(x, y, range(0, 9), lams, folds="loo")
    for d in range(1, 9):
        Z = np.column_stack([x ** k for k in range(1, d + 1)])
        Z = (Z - Z.mean(0)) / Z.std(0)
        ref = RidgeCV(alphas=lams, store_cv_results=True).fit(Z, y).cv_results_.mean(axis=0)
        np.testing.assert_allclose(s.cv_mse[d], ref, rtol=1e-8)
    assert s.folds["scheme"] == "loo" and s.fold_mse.shape == (9, 10, x.size)


def test_loo_equals_brute_force_refits_with_fixed_standardization():
    """Refitting n times on n - 1 rows with the all-rows scaler gives the same LOO errors."""
    x, y = invented(40)
    s = core.sweep(x, y, [3], [0.1], folds="loo")
    Z = np.column_stack([x ** k for k in range(1, 4)])
    Z = (Z - Z.mean(0)) / Z.std(0)
    errs = []
    for i in range(x.size):
        m = np.ones(x.size, bool); m[i] = False
        Zi, yi = Z[m], y[m]
        zc, yc = Zi - Zi.mean(0), yi - yi.mean()
        b = np.linalg.solve(zc.T @ zc + 0.1 * np.eye(3), zc.T @ yc)
        errs.append((y[i] - (yi.mean() + (Z[i] - Zi.mean(0)) @ b)) ** 2)
    assert s.cv_mse[0, 0] == pytest.approx(np.mean(errs), rel=1e-10)


def test_gcv_closed_form():
    """GCV (Golub, Heath & Wahba 1979) = (SSE/n) / (1 - tr(H)/n)^2, tr(H) = effective df."""
    x, y = invented()
    s = core.sweep(x, y, [4], [0.01, 1.0], folds=5)
    for j, lam in enumerate((0.01, 1.0)):
        r = core.fit(x, y, 4, lam)
        assert s.gcv_mse[0, j] == pytest.approx(r.train_mse / (1 - r.effective_df / x.size) ** 2, rel=1e-9)
