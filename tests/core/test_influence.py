"""Influence measures against statsmodels OLSInfluence (lambda = 0)."""

import numpy as np
import pytest

import core
from core.influence import row_influence


def test_matches_statsmodels_ols_influence():
    """statsmodels OLSInfluence: hat_matrix_diag, resid_studentized_internal, cooks_distance."""
    import statsmodels.api as sm
    from statsmodels.stats.outliers_influence import OLSInfluence

    rng = np.random.default_rng(3)
    x = rng.uniform(0, 4, 80)
    y = 1 + x - 0.3 * x ** 2 + 0.1 * rng.normal(size=80)
    y[7] += 1.5
    r = core.fit(x, y, 2)
    got = row_influence(r, x, y)
    ref = OLSInfluence(sm.OLS(y, np.vander(x, 3, increasing=True)).fit())
    np.testing.assert_allclose(got.leverage, ref.hat_matrix_diag, rtol=1e-9)
    np.testing.assert_allclose(got.studentized_residual, ref.resid_studentized_internal, rtol=1e-9)
    np.testing.assert_allclose(got.cook_d, ref.cooks_distance[0], rtol=1e-9)
    assert 7 in got.flagged


def test_penalized_fit_is_refused():
    x = np.linspace(0, 1, 20)
    with pytest.raises(core.ParameterError, match="Influence measures: expected a lambda = 0 fit"):
        row_influence(core.fit(x, x ** 2, 2, 0.1), x, x ** 2)
