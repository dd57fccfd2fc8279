"""Curves in transformed variables: prediction, bands and read-back mapped back to raw units.

References: numpy.polynomial and statsmodels fitted on the transformed variables (reference
implementations); the Steinhart-Hart thermistor equation 1/T = A + B ln R + C (ln R)^3 (Steinhart &
Hart 1968, Deep-Sea Research 15, 497-503), a cubic in ln R, so a cubic in ln R with 1/T recovers it.
The coefficients below are the ones commonly quoted for a 10 kOhm NTC thermistor (from memory; any
values of that size serve the check).
"""

import numpy as np
import pytest
from scipy import stats

import core
from core.choice_build import make_choice
from core.errors import DataError
from core.table import transform_table
from core.transforms import TRANSFORMS, apply, get

SH = (1.129148e-3, 2.34125e-4, 8.76741e-8)
DATA = {"file": "invented.csv", "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
        "x_column": "R", "y_column": "T", "x_unit": "ohm", "y_unit": "K"}


def steinhart_hart_T(R):
    L = np.log(R)
    return 1.0 / (SH[0] + SH[1] * L + SH[2] * L ** 3)


def choice_in(x, y, degree, transforms, lam=0.0):
    tx, ty = (get(n) for n in transforms)
    u, v = tx.forward(x), ty.forward(y)
    s = core.sweep(u, v, range(0, degree + 2), [0.0], folds=5, seed=1)
    return make_choice(u, v, s, degree, lam, rule="manual", data=DATA, transforms=transforms)


@pytest.mark.parametrize("name", list(TRANSFORMS))
def test_each_transform_inverts_itself_and_its_slope_is_the_derivative(name):
    t = get(name)
    v = np.array([0.3, 1.0, 2.5, 40.0])
    u = t.forward(v)
    assert np.allclose(t.inverse(u), v, rtol=1e-15)
    h = 1e-6 * np.maximum(np.abs(u), 1.0)
    assert np.allclose(t.inverse_slope(u), (t.inverse(u + h) - t.inverse(u - h)) / (2 * h), rtol=1e-6)
    lo, hi = t.interval(u - 0.01, u + 0.01)
    assert np.all(lo < hi)


def test_thermistor_curve_recovers_steinhart_hart():
    R = np.geomspace(300.0, 300_000.0, 40)
    T = steinhart_hart_T(R)
    c = choice_in(R, T, 3, ("log", "reciprocal"))
    assert c.doc["model"]["transforms"] == {"x": "log", "y": "reciprocal"}
    assert c.x_range == pytest.approx((300.0, 300_000.0), rel=1e-12)
    R_new = np.geomspace(400.0, 250_000.0, 57)
    assert c.predict(R_new) == pytest.approx(steinhart_hart_T(R_new), rel=1e-9)
    # read back R from a temperature: the Steinhart-Hart curve inverted
    back = c.invert(steinhart_hart_T(R_new))
    assert back.x_estimate == pytest.approx(R_new, rel=1e-7)


def test_log_y_prediction_and_band_are_the_transformed_space_ones_mapped_back():
    import statsmodels.api as sm

    rng = np.random.default_rng(4)
    x = np.linspace(1.0, 9.0, 45)
    y = np.exp(0.3 + 0.4 * x - 0.02 * x ** 2 + rng.normal(0, 0.05, x.size))
    c = choice_in(x, y, 2, ("none", "log"))
    res = sm.OLS(np.log(y), np.vander(x, 3, increasing=True)).fit()
    xs = np.linspace(1.5, 8.5, 11)
    fr = res.get_prediction(np.vander(xs, 3, increasing=True)).summary_frame(alpha=0.05)
    yhat, lo, hi = c.predict(xs, band="reading")
    assert yhat == pytest.approx(np.exp(fr["mean"].to_numpy()), rel=1e-9)          # the median of y
    assert lo == pytest.approx(np.exp(fr["obs_ci_lower"].to_numpy()), rel=1e-9)
    assert hi == pytest.approx(np.exp(fr["obs_ci_upper"].to_numpy()), rel=1e-9)


def test_reciprocal_x_swaps_the_read_back_interval_ends():
    rng = np.random.default_rng(6)
    x = np.linspace(1.0, 5.0, 30)
    y = 2.0 + 3.0 / x + rng.normal(0, 0.02, x.size)
    c = choice_in(x, y, 1, ("reciprocal", "none"))
    rb = c.invert([3.0])
    f = core.fit(1 / x, y, 1)
    ref = f.curve, f.legendre_cov
    from core.readback import read_back

    ru = read_back(*ref, f.reading, [3.0], x_range=(1 / 5.0, 1.0))
    assert rb.x_estimate[0] == pytest.approx(1 / ru.x_estimate[0], rel=1e-9)
    assert rb.x_low[0] == pytest.approx(1 / ru.x_high[0], rel=1e-9)
    assert rb.x_high[0] == pytest.approx(1 / ru.x_low[0], rel=1e-9)
    # first-order propagation through x = 1/u: u_x = u_u / u^2
    assert rb.x_standard_uncertainty[0] == pytest.approx(ru.x_standard_uncertainty[0] / ru.x_estimate[0] ** 2, rel=1e-9)


def test_a_transform_refuses_rows_outside_its_domain_by_row_number():
    with pytest.raises(DataError, match=r"Column 'c' in 'f.csv', row 4.*positive number for the log transform"):
        apply(get("log"), [1.0, 2.0, -1.0], column="c", file="f.csv", rows=np.array([2, 3, 4]))
    with pytest.raises(DataError, match="one sign"):
        apply(get("reciprocal"), [1.0, 2.0, -1.0], column="c", file="f.csv", rows=np.array([2, 3, 4]))


def test_stated_uncertainties_with_a_y_transform_are_refused(tmp_path):
    from core.table import read_table

    p = tmp_path / "u.csv"
    p.write_text("x,y,u\n1,2,0.1\n2,3,0.1\n3,5,0.1\n")
    t = read_table(p, x="x", y="y", uncertainty="u")
    with pytest.raises(DataError, match="--y-transform"):
        transform_table(t, "none", "log")


def test_choice_invert_refuses_readings_outside_the_y_transform():
    x = np.linspace(1.0, 9.0, 20)
    y = np.exp(0.1 * x)
    c = choice_in(x, y * (1 + 0.01 * np.sin(7 * x)), 1, ("none", "log"))
    with pytest.raises(core.ParameterError, match="Reading 2"):
        c.invert([1.5, -2.0])
