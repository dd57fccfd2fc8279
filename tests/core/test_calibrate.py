"""Using a chosen curve: reading x back, lack of fit, detection limits.

References (each check names its own):
* Draper & Smith, Applied Regression Analysis, 3rd ed. (1998), sec. 3.2: the straight line's inverse
  interval is the set of x with (y0 - a - b x)^2 <= t^2 s^2 (1/m + 1/n + (x - xbar)^2 / Sxx), a quadratic
  in x whose roots are computed here with numpy.roots, independently of curvewright.
* Eurachem/CITAC guide "Quantifying Uncertainty in Analytical Measurement", 3rd ed. (2012), appendix E.3:
  u(x0) = (s / b) sqrt(1/m + 1/n + (x0 - xbar)^2 / Sxx).
* NIST/SEMATECH e-Handbook of Statistical Methods, section 4.6.1 (load-cell calibration, the data of
  NIST StRD Pontius): straight-line lack-of-fit F = 214.7464 on (18, 20) degrees of freedom.
* statsmodels (OLS prediction intervals; ANOVA of nested models) as reference implementations.
* ICH Q2(R2) (2023): DL = 3.3 sigma / S, QL = 10 sigma / S; Hubaux & Vos (1970), Anal. Chem. 42, 849.
"""

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

import core
from core.calibrate import lack_of_fit
from core.limits import detection_limits
from core.readback import read_back

PONTIUS = Path(__file__).resolve().parents[1] / "reference" / "nist_strd" / "Pontius.csv"


def line_data(seed=3, levels=6, reps=3, sd=0.1):
    """Invented straight-line calibration with replicates, starting at a blank (x = 0)."""
    rng = np.random.default_rng(seed)
    x = np.repeat(np.linspace(0, 10, levels), reps)
    return x, 2 + 0.8 * x + rng.normal(0, sd, x.size)


def line_summary(x, y):
    n = x.size
    xb = x.mean()
    sxx = float(((x - xb) ** 2).sum())
    b, a = np.polyfit(x, y, 1)
    s = float(np.sqrt(((y - a - b * x) ** 2).sum() / (n - 2)))
    return n, xb, sxx, a, b, s


def fieller_roots(y0, x, y, m, coverage=0.95):
    """The Draper & Smith quadratic's roots (numpy.roots), sorted."""
    n, xb, sxx, a, b, s = line_summary(x, y)
    t2s2 = stats.t.ppf(0.5 + coverage / 2, n - 2) ** 2 * s ** 2
    A = b ** 2 - t2s2 / sxx
    B = -2 * b * (y0 - a) + 2 * t2s2 * xb / sxx
    C = (y0 - a) ** 2 - t2s2 * (1 / m + 1 / n + xb ** 2 / sxx)
    return np.sort(np.roots([A, B, C]).real)


@pytest.mark.parametrize("m", [1, 3])
def test_straight_line_read_back_is_the_fieller_interval_and_eurachem_uncertainty(m):
    x, y = line_data()
    f = core.fit(x, y, 1)
    ys = np.array([3.5, 5.0, 7.3, 8.9])
    rb = read_back(f.curve, f.legendre_cov, f.reading, ys, x_range=f.x_range, replicates=m)
    n, xb, sxx, a, b, s = line_summary(x, y)
    for i, y0 in enumerate(ys):
        lo, hi = fieller_roots(y0, x, y, m)
        assert rb.interval[i] == "bounded"
        assert rb.x_low[i] == pytest.approx(lo, rel=1e-9)          # Draper & Smith sec. 3.2
        assert rb.x_high[i] == pytest.approx(hi, rel=1e-9)
        x0 = (y0 - a) / b
        assert rb.x_estimate[i] == pytest.approx(x0, rel=1e-9)
        u = s / b * np.sqrt(1 / m + 1 / n + (x0 - xb) ** 2 / sxx)  # Eurachem/CITAC appendix E.3
        assert rb.x_standard_uncertainty[i] == pytest.approx(u, rel=1e-9)


def test_read_back_says_one_sided_and_empty_instead_of_inventing_bounds():
    x, y = line_data()
    f = core.fit(x, y, 1)
    rb = read_back(f.curve, f.legendre_cov, f.reading, [2.0, 9.95, -5.0, 50.0], x_range=f.x_range)
    assert list(rb.interval) == ["one-sided", "one-sided", "empty", "empty"]
    assert np.isnan(rb.x_low[0]) and rb.x_high[0] == pytest.approx(fieller_roots(2.0, x, y, 1)[1], rel=1e-9)
    assert np.isnan(rb.x_high[1]) and rb.x_low[1] == pytest.approx(fieller_roots(9.95, x, y, 1)[0], rel=1e-9)
    assert np.all(np.isnan(rb.x_estimate[2:]))


def test_read_back_unbounded_when_the_slope_is_not_significant():
    # Draper & Smith: g = t^2 s^2 / (b^2 Sxx) >= 1 gives no bounded interval
    rng = np.random.default_rng(0)
    x = np.linspace(0, 1, 8)
    y = 0.01 * x + rng.normal(0, 1.0, x.size)
    f = core.fit(x, y, 1)
    rb = read_back(f.curve, f.legendre_cov, f.reading, [float(np.mean(y))], x_range=f.x_range)
    assert rb.interval[0] == "unbounded"


def _brute_force(x, y, degree, y0, lo, hi, coverage=0.95, points=400_001):
    """Invert statsmodels' prediction interval for one new observation on a fine grid."""
    import statsmodels.api as sm

    X = np.vander(x, degree + 1, increasing=True)
    res = sm.OLS(y, X).fit()
    g = np.linspace(lo, hi, points)
    fr = res.get_prediction(np.vander(g, degree + 1, increasing=True)).summary_frame(alpha=1 - coverage)
    inside = (fr["obs_ci_lower"].to_numpy() <= y0) & (y0 <= fr["obs_ci_upper"].to_numpy())
    edges = np.flatnonzero(np.diff(inside.astype(int)))
    return g, inside, edges, fr["mean"].to_numpy()


def test_polynomial_read_back_matches_brute_force_inversion_of_statsmodels_band():
    rng = np.random.default_rng(11)
    x = np.linspace(-1, 3.5, 40)
    y = 1 + 2 * x - 1.5 * x ** 2 + 0.3 * x ** 3 + rng.normal(0, 0.05, x.size)   # falls between x = 0.9 and 2.4
    f = core.fit(x, y, 3)
    lo, hi = f.x_range
    step = (hi - lo) / 400_000
    kinds = []
    for y0 in (0.0, 1.2, 1.55, 1.75, 2.3):
        rb = read_back(f.curve, f.legendre_cov, f.reading, [y0], x_range=f.x_range)
        g, inside, edges, mean = _brute_force(x, y, 3, y0, lo, hi)
        runs = np.split(np.flatnonzero(inside), np.flatnonzero(np.diff(np.flatnonzero(inside)) > 1) + 1)
        runs = [r for r in runs if r.size]
        row = rb.rows()[0]
        if len(runs) > 1:
            assert row["interval"] == "several"
            assert len(row["pieces"]) == len(runs)
            for (a, b), r in zip(row["pieces"], runs):
                assert a == pytest.approx(g[r[0]], abs=2 * step) and b == pytest.approx(g[r[-1]], abs=2 * step)
        else:
            r = runs[0]
            assert row["interval"] in ("bounded", "one-sided", "unbounded")
            a = lo if row["x_low"] is None else row["x_low"]
            b = hi if row["x_high"] is None else row["x_high"]
            assert a == pytest.approx(g[r[0]], abs=2 * step) and b == pytest.approx(g[r[-1]], abs=2 * step)
        crossings = np.flatnonzero(np.diff(np.sign(mean - y0)))
        if crossings.size > 1 or len(runs) > 1:
            assert row["x_estimate"] is None and len(row["solutions"]) == crossings.size
            for v, k in zip(row["solutions"], crossings):
                assert v == pytest.approx(g[k], abs=2 * step)
        else:
            assert row["x_estimate"] == pytest.approx(g[crossings[0]], abs=2 * step)
        kinds.append(row["interval"])
    assert "several" in kinds and "bounded" in kinds


def test_read_back_vectorized_equals_one_at_a_time():
    x, y = line_data(levels=8)
    f = core.fit(x, y, 2)
    ys = np.random.default_rng(2).uniform(1.0, 11.0, 300)
    together = read_back(f.curve, f.legendre_cov, f.reading, ys, x_range=f.x_range).rows()
    alone = [read_back(f.curve, f.legendre_cov, f.reading, [v], x_range=f.x_range).rows()[0] for v in ys[:40]]
    assert together[:40] == alone


def test_read_back_with_stated_uncertainty_of_the_reading():
    # var = g' Cov g + u0^2 / m with the stated-u covariance (X'WX)^-1 (GUM; CALIBRATION note sec. 1), normal quantile
    x, y = line_data(sd=0.05)
    u = np.full(x.size, 0.05)
    f = core.fit(x, y, 1, weights=1 / u ** 2, weight_kind="uncertainty")
    rb = read_back(f.curve, f.legendre_cov, f.reading, [5.0], x_range=f.x_range, reading_u=0.2)
    n, xb, sxx, a, b, _ = line_summary(x, y)
    z2 = stats.norm.ppf(0.975) ** 2
    var_b, var_a0 = 0.05 ** 2 / sxx, 0.05 ** 2 / n
    A = b ** 2 - z2 * var_b
    B = -2 * b * (5.0 - a) + 2 * z2 * var_b * xb
    C = (5.0 - a) ** 2 - z2 * (0.2 ** 2 + var_a0 + var_b * xb ** 2)
    lo, hi = np.sort(np.roots([A, B, C]).real)
    assert rb.x_low[0] == pytest.approx(lo, rel=1e-9) and rb.x_high[0] == pytest.approx(hi, rel=1e-9)


def test_read_back_refuses_bad_input_by_name():
    x, y = line_data()
    f = core.fit(x, y, 1)
    with pytest.raises(core.ParameterError, match="replicates"):
        read_back(f.curve, f.legendre_cov, f.reading, [5.0], x_range=f.x_range, replicates=0)
    with pytest.raises(core.ParameterError, match="Readings"):
        read_back(f.curve, f.legendre_cov, f.reading, [np.nan], x_range=f.x_range)


# ---- lack of fit --------------------------------------------------------------------------------

def test_lack_of_fit_of_the_nist_load_cell_straight_line():
    """NIST/SEMATECH e-Handbook sec. 4.6.1: lack-of-fit F = 214.7464, critical F(0.05; 18, 20) = 2.15.

    The handbook's printed F agrees to six significant figures (curvewright and statsmodels' nested-model
    ANOVA both give 214.74692; the last printed digit differs, as a single-precision computation would)."""
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    d = np.genfromtxt(PONTIUS, delimiter=",", names=True)
    f = core.fit(d["x"], d["y"], 1)
    lof = lack_of_fit(d["x"], d["y"], f.curve, 2)
    assert lof["F"] == pytest.approx(214.7464, rel=5e-6)
    frame = pd.DataFrame({"x": d["x"], "y": d["y"], "xs": d["x"] / 1e6})
    table = anova_lm(smf.ols("y ~ xs", data=frame).fit(), smf.ols("y ~ C(x)", data=frame).fit())
    assert lof["F"] == pytest.approx(table["F"].iloc[1], rel=1e-9)
    assert (lof["df_lack"], lof["df_pure"]) == (18, 20)
    assert stats.f.ppf(0.95, 18, 20) == pytest.approx(2.15, abs=0.005)


def test_lack_of_fit_of_the_quadratic_equals_statsmodels_anova():
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    d = pd.read_csv(PONTIUS)
    f = core.fit(d["x"].to_numpy(), d["y"].to_numpy(), 2)
    lof = lack_of_fit(d["x"].to_numpy(), d["y"].to_numpy(), f.curve, 3)
    d["xs"] = d["x"] / 1e6
    small = smf.ols("y ~ xs + I(xs**2)", data=d).fit()
    full = smf.ols("y ~ C(x)", data=d).fit()
    table = anova_lm(small, full)
    assert lof["F"] == pytest.approx(table["F"].iloc[1], rel=1e-6)
    assert lof["p_value"] == pytest.approx(table["Pr(>F)"].iloc[1], rel=1e-6)
    assert lof["pure_error_sd"] == pytest.approx(np.sqrt(full.ssr / full.df_resid), rel=1e-9)


# ---- detection limits ---------------------------------------------------------------------------

def test_ich_limits_are_the_closed_form_for_a_straight_line():
    x, y = line_data()
    f = core.fit(x, y, 1)
    lim = detection_limits(f.curve, f.legendre_cov, f.reading, f.x_range)
    _, _, _, a, b, s = line_summary(x, y)
    assert lim["ich_q2"]["slope"] == pytest.approx(b, rel=1e-9)
    assert lim["ich_q2"]["sigma"] == pytest.approx(s, rel=1e-9)
    assert lim["ich_q2"]["detection_limit"] == pytest.approx(3.3 * s / b, rel=1e-9)   # ICH Q2(R2)
    assert lim["ich_q2"]["quantitation_limit"] == pytest.approx(10 * s / b, rel=1e-9)


@pytest.mark.parametrize("m", [1, 2])
def test_hubaux_vos_limits_are_the_closed_form_for_a_straight_line(m):
    """Hubaux & Vos (1970): y_C = a + t_(1-alpha) s sqrt(1/m + 1/n + xbar^2/Sxx); x_D solves
    a + b x_D - t_(1-beta) s sqrt(1/m + 1/n + (x_D - xbar)^2/Sxx) = y_C (the larger root of a quadratic)."""
    x, y = line_data()
    f = core.fit(x, y, 1)
    lim = detection_limits(f.curve, f.legendre_cov, f.reading, f.x_range, replicates=m)["hubaux_vos"]
    n, xb, sxx, a, b, s = line_summary(x, y)
    t = stats.t.ppf(0.95, n - 2)
    y_c = a + t * s * np.sqrt(1 / m + 1 / n + xb ** 2 / sxx)
    assert lim["decision_level_y"] == pytest.approx(y_c, rel=1e-12)
    assert lim["decision_limit_x"] == pytest.approx((y_c - a) / b, rel=1e-9)
    d = y_c - a
    t2s2 = t ** 2 * s ** 2
    roots = np.roots([b ** 2 - t2s2 / sxx, -2 * b * d + 2 * t2s2 * xb / sxx,
                      d ** 2 - t2s2 * (1 / m + 1 / n + xb ** 2 / sxx)]).real
    assert lim["detection_limit_x"] == pytest.approx(roots.max(), rel=1e-9)


def test_limits_are_not_invented_without_a_blank():
    x, y = line_data()
    keep = x > 0
    f = core.fit(x[keep], y[keep], 1)
    lim = detection_limits(f.curve, f.legendre_cov, f.reading, f.x_range)
    assert lim["ich_q2"] is None and lim["hubaux_vos"] is None and "x = 0" in lim["note"]
