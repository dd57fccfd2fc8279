"""Lasso and elastic net from the statistics, against scikit-learn's ElasticNet."""

import numpy as np
import pytest
from sklearn.linear_model import ElasticNet

import core
from core.penalties import active_set, coordinate_descent


def invented(n=200, seed=2):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 3, n)
    return x, np.sin(2 * x) + 0.1 * rng.normal(size=n)


@pytest.mark.parametrize("penalty, mix", [("lasso", 1.0), ("elastic", 0.5), ("elastic", 0.2)])
def test_predictions_equal_sklearn_elasticnet(penalty, mix):
    """scikit-learn ElasticNet(alpha = lambda (1 - mix/2) / n, l1_ratio = mix / (2 - mix)) on the
    standardized powers: predictions to 1e-6 where scikit-learn converges; elsewhere our
    objective is never worse than scikit-learn's."""
    x, y = invented()
    n = x.size
    g = np.linspace(0, 3, 25)
    for d in (2, 4, 6):
        Z = np.column_stack([x ** k for k in range(1, d + 1)])
        mu, sd = Z.mean(0), Z.std(0)
        Zs = (Z - mu) / sd
        Gs = (np.column_stack([g ** k for k in range(1, d + 1)]) - mu) / sd
        for lam in (0.01, 0.3, 3.0):
            r = core.fit(x, y, d, lam, penalty=penalty, mix=mix)
            m = ElasticNet(alpha=lam * (1 - mix / 2) / n, l1_ratio=mix / (2 - mix), tol=1e-14,
                           max_iter=200000).fit(Zs, y)
            if m.n_iter_ < 200000:
                np.testing.assert_allclose(r.predict(g), m.predict(Gs), rtol=1e-6, atol=1e-9)
            ours = r.predict(x)
            b = np.linalg.lstsq(Zs, ours - ours.mean(), rcond=None)[0]

            def objective(coef, resid):
                return resid @ resid + lam * (mix * np.abs(coef).sum() + (1 - mix) * coef @ coef)
            assert objective(b, y - ours) <= objective(m.coef_, y - m.predict(Zs)) * (1 + 1e-9)


def test_active_set_agrees_with_coordinate_descent_where_it_converges():
    rng = np.random.default_rng(3)
    A = rng.normal(size=(50, 4))
    G, c = A.T @ A, A.T @ rng.normal(size=50)
    for lam, mix in ((0.5, 1.0), (2.0, 0.5), (10.0, 1.0)):
        b1, ok1 = active_set(G, c, lam, mix)
        b2, ok2 = coordinate_descent(G[None], c[None], np.array([lam]), mix)
        assert ok1 and ok2[0]
        np.testing.assert_allclose(b1, b2[0], rtol=1e-9, atol=1e-11)


def test_lasso_surface_and_sparsity():
    """The lasso zeroes coefficients as lambda grows; the surface and recommendation work."""
    x, y = invented()
    s = core.sweep(x, y, range(0, 7), np.logspace(-4, 2, 9), folds=5, penalty="lasso")
    assert np.all(np.isfinite(s.cv_mse)) and s.recommended["simplest"].degree <= 6
    assert s.effective_df[6, -1] < s.effective_df[6, 0]
    with pytest.raises(core.ParameterError, match=r"Parameter 'mix': expected a number in \(0, 1\]"):
        core.fit(x, y, 2, 1.0, penalty="elastic", mix=0.0)
