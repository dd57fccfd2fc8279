"""Closed-form facts about the ridge solver and the gradient-descent cross-check."""

import numpy as np
import pytest

import core
from core.errors import ParameterError


def data(n=200, seed=0):
    rng = np.random.default_rng(seed)
    x = rng.uniform(2, 7, n)
    y = np.log(x) + 0.1 * rng.normal(size=n)
    return x, y, rng.uniform(0.5, 2, n)


def engine(x, y, w=None, D=6):
    return core.build_engine(x, y, max_degree=D, folds=2, weights=w)


def test_effective_df_is_esl_3_50():
    """df(lambda) = sum d_j^2 / (d_j^2 + lambda) + 1 (ESL eq. 3.50, intercept counted),
    with d_j the singular values of the centred standardized design formed directly
    (x in [2, 7] at degree 4 is safe for raw powers)."""
    x, y, _ = data()
    for lam in (0.0, 0.1, 10.0, 1e3):
        r = core.fit(x, y, 4, lam)
        Z = np.column_stack([x ** k for k in range(1, 5)])
        Z = (Z - Z.mean(0)) / Z.std(0)
        d = np.linalg.svd(Z, compute_uv=False)
        assert r.effective_df == pytest.approx(1 + np.sum(d ** 2 / (d ** 2 + lam)), rel=1e-9)


def test_huge_lambda_gives_weighted_mean():
    """lambda -> 1e10 shrinks every slope to zero: the constant weighted mean of y."""
    x, y, w = data()
    r = core.fit(x, y, 8, 1e10, weights=w)
    np.testing.assert_allclose(r.predict(np.linspace(2, 7, 9)), np.average(y, weights=w), rtol=1e-7)
    assert r.effective_df == pytest.approx(1.0, abs=1e-6)


def test_lambda_zero_equals_weighted_least_squares():
    """lambda = 0 is weighted least squares: statsmodels WLS as the reference (degree 3)."""
    import statsmodels.api as sm

    x, y, w = data()
    r = core.fit(x, y, 3, 0.0, weights=w)
    ref = sm.WLS(y, np.vander(x, 4, increasing=True), weights=w).fit()
    beta = ref.params
    np.testing.assert_allclose(r.standard_errors, ref.bse, rtol=1e-8)
    np.testing.assert_allclose(r.power, beta, rtol=1e-9)


def test_closed_form_is_where_gradient_descent_settles():
    """Plain gradient descent from zeros on the ridge objective (tests/reference/descent.py) never rises
    at a stable rate and settles on the closed-form minimum and curve: the solver minimises what it claims."""
    from tests.reference.descent import descend

    x, y, _ = data()
    e = engine(x, y, D=3)
    _, _, _, stable, _ = descend(e.full, 3, 0.5, 1e-9, 1)
    theta, trace, closed, _, diverged = descend(e.full, 3, 0.5, 0.9 * stable, 50000)
    assert not diverged and np.all(np.diff(trace) <= 1e-12)
    assert trace[-1] == pytest.approx(closed, rel=1e-10)
    np.testing.assert_allclose(theta, e.curve(3, 0.5).coef, rtol=1e-6, atol=1e-9)
    _, _, _, _, diverged = descend(e.full, 3, 0.0, 50.0, 500)
    assert diverged                                         # far above the stable rate the objective grows


def test_bad_degree_and_lambda_are_named():
    x, y, _ = data()
    with pytest.raises(ParameterError, match=r"Parameter 'degree': expected an integer from 0 to 30, got 31"):
        core.fit(x, y, 31)
    with pytest.raises(ParameterError, match=r"Parameter 'lambda': expected finite numbers >= 0"):
        core.fit(x, y, 2, -1.0)


def test_too_few_distinct_x_at_lambda_zero_is_refused():
    x = np.repeat([1.0, 2.0, 3.0], 5)
    y = x ** 2
    with pytest.raises(core.DataError, match=r"Degree 3 at lambda = 0: expected at least 4 distinct x values, got 3"):
        core.fit(x, y, 3, 0.0)


def test_rank_deficient_fold_warns_and_ridge_still_solves():
    """Replicates with few distinct x: lambda > 0 is still defined; a NumericalWarning says why."""
    x = np.repeat([1.0, 2.0, 3.0, 4.0], 10)
    y = np.sqrt(x) + np.random.default_rng(1).normal(scale=0.01, size=x.size)
    with pytest.warns(core.NumericalWarning, match="distinct x values"):
        s = core.sweep(x, y, range(0, 7), [1e-3, 1.0], folds=4)
    assert np.all(np.isfinite(s.cv_mse))
