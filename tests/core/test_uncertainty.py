"""Intervals, bootstrap bands and the bias / variance / noise split."""

import numpy as np
import pytest
from scipy.stats import norm

import core
from core.uncertainty import bias_variance, bootstrap_curves, bootstrap_band, smoother

f_true = lambda t: 1 + 0.5 * t - 0.3 * t ** 2          # noqa: E731  (invented known curve)


def test_lambda_zero_intervals_match_statsmodels_wls():
    """statsmodels WLS get_prediction: the curve band and, for a reading of weight 1 (statsmodels' obs interval
    for WLS assumes unit weight for the new observation), the reading band (invented weighted data)."""
    import statsmodels.api as sm

    rng = np.random.default_rng(4)
    x = rng.uniform(0, 2, 50)
    w = rng.uniform(0.5, 3, 50)
    y = f_true(x) + rng.normal(size=50) / np.sqrt(w) * 0.1
    r = core.fit(x, y, 2, weights=w)
    g = np.linspace(0, 2, 6)
    ref = sm.WLS(y, np.vander(x, 3, increasing=True), weights=w).fit().get_prediction(
        np.vander(g, 3, increasing=True)).summary_frame(alpha=0.05)
    _, lo, hi = r.predict(g, band="curve")
    np.testing.assert_allclose(lo, ref.mean_ci_lower, rtol=1e-10)
    _, lo, hi = r.predict(g, band="reading", reading_weight=1.0)
    np.testing.assert_allclose(hi, ref.obs_ci_upper, rtol=1e-10)


def test_lambda_zero_intervals_match_statsmodels_on_pontius():
    """NIST StRD Pontius through statsmodels OLS (raw powers; statsmodels itself rounds at ~1e-9 here)."""
    import statsmodels.api as sm

    d = np.genfromtxt(__import__("pathlib").Path(__file__).parents[1] / "reference" / "nist_strd" / "Pontius.csv",
                      delimiter=",", names=True)
    r = core.fit(d["x"], d["y"], 2)
    g = np.linspace(d["x"].min(), d["x"].max(), 5)
    ref = sm.OLS(d["y"], np.vander(d["x"], 3, increasing=True)).fit().get_prediction(
        np.vander(g, 3, increasing=True)).summary_frame(alpha=0.05)
    _, lo, hi = r.predict(g, band="reading")
    np.testing.assert_allclose(lo, ref.obs_ci_lower, rtol=1e-7)


def test_bootstrap_prediction_interval_coverage_by_simulation():
    """A 95% bootstrap prediction interval at lambda = 0.05 covers 93-97% of new observations.

    Simulation: 300 invented data sets (n = 60, x ~ U(0, 3), known quadratic, noise SD 0.2),
    degree 2, B = 199 resamples each, 5 x points; coverage per interval is the exact
    probability that a new observation falls inside (1500 intervals in all)."""
    g = np.array([0.3, 1.0, 1.5, 2.2, 2.8])
    rng = np.random.default_rng(123)
    cov = []
    for s in range(300):
        x = rng.uniform(0, 3, 60)
        y = f_true(x) + 0.2 * rng.normal(size=60)
        _, lo, hi = bootstrap_band(x, y, 2, 0.05, g, B=199, seed=s)
        cov.append(norm.cdf((hi - f_true(g)) / 0.2) - norm.cdf((lo - f_true(g)) / 0.2))
    assert 0.93 <= np.mean(cov) <= 0.97


def test_bootstrap_band_tightens_with_lambda_and_groups_resample_together():
    """A flexible degree-9 curve on a straight-line truth: raising lambda narrows the band of
    refits (variance falls). The bootstrap equals refitting resampled rows directly."""
    rng = np.random.default_rng(1)
    x = rng.uniform(0, 3, 80)
    y = 1 + 0.5 * x + 0.2 * rng.normal(size=80)
    g = np.linspace(0, 3, 25)
    loose = bootstrap_curves(x, y, 9, 1e-6, g, B=100).std(axis=0).mean()
    tight = bootstrap_curves(x, y, 9, 1.0, g, B=100).std(axis=0).mean()
    assert tight < 0.7 * loose
    first = bootstrap_curves(x, y, 3, 0.1, g, B=10, seed=4)[0]
    counts = np.random.default_rng([4, 29]).multinomial(80, np.full(80, 1 / 80), size=10)[0]
    idx = np.repeat(np.arange(80), counts)
    np.testing.assert_allclose(first, core.fit(x[idx], y[idx], 3, 0.1).predict(g), rtol=1e-9)
    grouped = bootstrap_curves(x, y, 3, 0.1, g, B=50, groups=np.arange(80) // 4)
    assert grouped.shape == (50, 25)


def test_smoother_reproduces_the_fit():
    rng = np.random.default_rng(2)
    x = rng.uniform(0, 3, 40)
    y = np.cos(x) + 0.1 * rng.normal(size=40)
    g = np.linspace(0, 3, 9)
    for lam in (0.0, 0.3):
        np.testing.assert_allclose(smoother(x, None, 4, lam, g) @ y, core.fit(x, y, 4, lam).predict(g),
                                   rtol=1e-10, atol=1e-12)


def test_bias_variance_against_the_analytic_split():
    """Fixed design, known curve and noise: (1) a correct model at lambda = 0 has zero bias and
    variance sigma^2 * mean_g p(g)'(X'X)^-1 p(g) (formed here with raw powers, safe at degree 2);
    (2) a straight line on a quadratic has bias^2 = mean_g (projection - f)^2; the seeded
    simulation of 4000 data sets agrees with both within Monte Carlo error."""
    x = np.linspace(0, 3, 40)
    g = np.linspace(0, 3, 31)
    X = np.vander(x, 3, increasing=True)
    Xg = np.vander(g, 3, increasing=True)
    bv = bias_variance(x, f_true, 0.2, 2, 0.0, g, n_sets=4000)
    var = 0.04 * np.einsum("ij,jk,ik->i", Xg, np.linalg.inv(X.T @ X), Xg).mean()
    assert bv.bias2 < 1e-20 and bv.variance == pytest.approx(var, rel=1e-10)
    assert bv.simulated_variance == pytest.approx(var, rel=0.05) and bv.noise == pytest.approx(0.04)
    X1, Xg1 = X[:, :2], Xg[:, :2]
    proj = Xg1 @ np.linalg.lstsq(X1, f_true(x), rcond=None)[0]
    line = bias_variance(x, f_true, 0.2, 1, 0.0, g, n_sets=4000)
    assert line.bias2 == pytest.approx(np.mean((proj - f_true(g)) ** 2), rel=1e-10)
    assert line.simulated_bias2 == pytest.approx(line.bias2, rel=0.05)


def test_bias_variance_from_user_supplied_sets_matches_the_analytic_split():
    """150 invented replicate data sets on one design: the spread of their fits matches the
    analytic variance and, given the true curve, the analytic bias^2 (too-stiff degree 1)."""
    from core.uncertainty import bias_variance_from_sets

    x = np.linspace(0, 3, 40)
    g = np.linspace(0, 3, 31)
    rng = np.random.default_rng(8)
    sets = [(x, f_true(x) + 0.2 * rng.normal(size=x.size)) for _ in range(150)]
    est = bias_variance_from_sets(sets, 1, 0.0, g, truth=f_true)
    ref = bias_variance(x, f_true, 0.2, 1, 0.0, g)
    assert est["variance"] == pytest.approx(ref.variance, rel=0.25)
    assert est["bias2"] == pytest.approx(ref.bias2, rel=0.1)
    assert est["noise"] > 0.04                      # a too-stiff line leaves bias in its residuals
    assert bias_variance_from_sets(sets[:5], 2, 0.0, g)["bias2"] is None


def test_curvature_smoother_reproduces_the_fit_and_known_noise_is_the_stated_u():
    """The smoother of the curvature penalty maps y to core.fit's curvature predictions (same domain); with
    stated uncertainties the bias/variance split's noise is the mean u^2 and its variance sum S^2 u^2."""
    rng = np.random.default_rng(12)
    x = rng.uniform(0, 4, 70)
    u = 0.05 + 0.02 * x
    y = f_true(x) + u * rng.normal(size=x.size)
    dom = core.Domain.from_range(0.0, 4.0)
    g = np.linspace(0, 4, 9)
    S = smoother(x, 1 / u ** 2, 5, 1e-3, g, domain=dom, penalty="curvature")
    ref = core.fit(x, y, 5, 1e-3, weights=1 / u ** 2, penalty="curvature", domain=dom)
    np.testing.assert_allclose(S @ y, ref.predict(g), rtol=1e-9)
    bv = bias_variance(x, f_true, 1.0, 5, 1e-3, g, weights=1 / u ** 2, penalty="curvature", domain=dom,
                       weight_kind="uncertainty", n_sets=50)
    assert bv.noise == pytest.approx(np.mean(u ** 2), rel=1e-12)
    assert bv.variance == pytest.approx(np.mean((S * S) @ (u * u)), rel=1e-12)
