"""Bands for the curve and for a new reading, by weights kind, against closed forms, statsmodels and simulation."""

import numpy as np
import pytest
from scipy import stats

import core
from core.choice_build import make_choice


def truth(x):
    return 0.5 + 1.1 * x - 0.04 * x ** 2


def u_of(x):
    """Stated standard uncertainty rising with x (invented heteroscedastic calibration)."""
    return 0.02 + 0.01 * x


def invented(seed, n=60):
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(0, 10, n))
    u = u_of(x)
    return x, truth(x) + u * rng.normal(size=n), u


def test_stated_uncertainty_band_is_the_closed_form():
    """With stated u (weights 1/u^2, not rescaled) the reading band at x0 is 1.96 sqrt(u(x0)^2 + v'(X'WX)^-1 v)
    (CALIBRATION note sec. 1; GUM 5.1): raw powers solved directly (x in [0, 10], degree 2 is safe), to 1e-9."""
    x, y, u = invented(1)
    r = core.fit(x, y, 2, weights=1 / u ** 2, weight_kind="uncertainty")
    X = np.vander(x, 3, increasing=True)
    cov = np.linalg.inv(X.T @ (X / u[:, None] ** 2))
    g = np.array([0.5, 3.0, 9.5])
    V = np.vander(g, 3, increasing=True)
    var_curve = np.einsum("ij,jk,ik->i", V, cov, V)
    _, lo, hi = r.predict(g, band="reading")
    np.testing.assert_allclose((hi - lo) / 2, 1.959963984540054 * np.sqrt(u_of(g) ** 2 + var_curve), rtol=1e-9)
    _, lo, hi = r.predict(g, band="curve")
    np.testing.assert_allclose((hi - lo) / 2, 1.959963984540054 * np.sqrt(var_curve), rtol=1e-9)
    assert r.chi_square_p == pytest.approx(stats.chi2.sf(r.sse, 57), rel=1e-12)


def test_birge_scaling_scales_covariance_and_reading():
    """On request the covariance and the reading's u^2 are scaled by chi2/(n - p) and the quantile is Student's t."""
    x, y, u = invented(2)
    plain = core.fit(x, y, 2, weights=1 / u ** 2, weight_kind="uncertainty")
    birge = core.fit(x, y, 2, weights=1 / u ** 2, weight_kind="uncertainty", scale_by_birge=True)
    chi2_red = plain.sse / 57
    np.testing.assert_allclose(birge.legendre_cov, plain.legendre_cov * chi2_red, rtol=1e-12)
    _, lo, hi = birge.predict([4.0], band="reading")
    V = core.Curve(plain.domain, [0, 0, 0]).basis([4.0])
    var = (V @ birge.legendre_cov @ V.T)[0, 0] + u_of(4.0) ** 2 * chi2_red
    assert (hi - lo)[0] / 2 == pytest.approx(stats.t.ppf(0.975, 57) * np.sqrt(var), rel=1e-10)


def test_relative_weights_reading_of_unit_weight_equals_statsmodels_wls():
    """Relative weights: a reading of weight 1 gets statsmodels WLS get_prediction's observation interval
    (which uses unit weight); by default the reading has the rows' median weight, as stated."""
    import statsmodels.api as sm

    x, y, u = invented(3)
    w = 1 / u ** 2 / np.mean(1 / u ** 2)
    r = core.fit(x, y, 2, weights=w)
    g = np.array([1.0, 5.0, 9.0])
    ref = sm.WLS(y, np.vander(x, 3, increasing=True), weights=w).fit().get_prediction(
        np.vander(g, 3, increasing=True)).summary_frame(alpha=0.05)
    _, lo, hi = r.predict(g, band="reading", reading_weight=1.0)
    np.testing.assert_allclose(lo, ref.obs_ci_lower, rtol=1e-9)
    _, lo2, hi2 = r.predict(g, band="reading")
    s2 = r.residual_sd ** 2
    np.testing.assert_allclose(((hi2 - lo2) / 2) ** 2 - ((hi - lo) / 2) ** 2,
                               stats.t.ppf(0.975, 57) ** 2 * s2 * (1 / np.median(w) - 1), rtol=1e-9)
    assert "median weight" in r.reading.describe()


def _coverage(choices_and_data, points):
    hits = total = 0
    for c, rng in choices_and_data:
        _, lo, hi = c.predict(points, band="reading")
        new = truth(points) + u_of(points) * rng.normal(size=points.size)
        hits += int(np.sum((new >= lo) & (new <= hi)))
        total += points.size
    return hits / total


def test_reading_bands_cover_nominal_by_simulation():
    """Simulation (seeded): 95% reading bands of choices exported from invented heteroscedastic data with stated u
    cover 93-97% of fresh readings, at lambda = 0 (classical) and at lambda > 0 (bootstrap covariance + the
    reading's stated u)."""
    points = np.array([1.0, 3.0, 5.0, 7.0, 9.0])
    exact, boot = [], []
    for i in range(150):
        x, y, u = invented(100 + i, n=40)
        w = 1 / u ** 2
        s = core.sweep(x, y, [2], [0.0, 1e-4], folds=4, seed=i, weights=w, penalty="curvature")
        data = {"file": None, "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
                "x_column": "x", "y_column": "y", "x_unit": None, "y_unit": None}
        rng = np.random.default_rng([i, 5])
        exact.append((make_choice(x, y, s, 2, 0.0, rule="manual", data=data, weights=w, weight_column="u",
                                  weight_kind="uncertainty"), rng))
        if i < 100:
            c = make_choice(x, y, s, 2, 1e-4, rule="manual", data=data, weights=w, weight_column="u",
                            weight_kind="uncertainty")
            assert c.doc["model"]["uncertainty"]["method"] == "bootstrap"
            boot.append((c, np.random.default_rng([i, 6])))
    assert 0.93 <= _coverage(exact, points) <= 0.97
    assert 0.93 <= _coverage(boot, points) <= 0.97
