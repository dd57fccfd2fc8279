"""The Curve value object, its power forms and the digits they keep."""

import numpy as np
import pytest

import core
from core.curve import centred_form, horner, power_form_digits


def timestamps(seed=0, n=300):
    """Invented logger readings against Unix time stamps (x near 1.7e9 s over a month)."""
    rng = np.random.default_rng(seed)
    x = 1.7e9 + np.sort(rng.uniform(0, 86400 * 30, n))
    return x, 3.5 + 0.2 * np.sin((x - x[0]) / 3e5) + 0.01 * rng.normal(size=n)


def test_raw_power_form_of_time_stamps_keeps_few_digits_and_the_centred_form_all():
    """Degree 4 on time stamps: the raw-x power form evaluated in double precision keeps under 10 digits of the
    stable form (CALIBRATION note sec. 8), the centred form ((x - c)/s)^k evaluates to 1e-12 relative."""
    x, y = timestamps()
    r = core.fit(x, y, 4)
    d = power_form_digits(r.curve, x.min(), x.max())
    assert d["raw"] < 10 and d["centred"] > 13
    c, s, b = centred_form(r.curve)
    g = np.linspace(x.min(), x.max(), 997)
    np.testing.assert_allclose(horner(b, (g - c) / s), r.curve(g), rtol=1e-12)
    # an independent check of the centred coefficients: least squares on ((x - c)/s)^k by numpy
    ref = np.polynomial.polynomial.polyfit((x - c) / s, y, 4)
    np.testing.assert_allclose(b, ref, rtol=1e-6, atol=1e-9)


def test_choice_records_power_form_digits_and_sklearn_uses_the_centred_form(tmp_path):
    """The choice file states the digits of both forms; to_sklearn predicts the stable form to 1e-12 even for
    time stamps (a scaler maps x to t first), where the raw power form would be off by far more than the data."""
    x, y = timestamps(1)
    s = core.sweep(x, y, range(0, 6), [0.0], folds=5)
    data = {"file": None, "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
            "x_column": "t [s]", "y_column": "v", "x_unit": "s", "y_unit": None}
    c = core.choice_build.make_choice(x, y, s, 4, 0.0, rule="manual", data=data)
    pf = c.doc["model"]["power_form"]
    assert pf["digits"] < 10 and pf["centred"]["digits"] > 13
    g = np.linspace(x.min(), x.max(), 101)
    np.testing.assert_allclose(c.to_sklearn().predict(g[:, None]), c.predict(g), rtol=1e-12)
    raw = horner([r["value"] for r in c.doc["model"]["power_coefficients"]], g)
    assert np.max(np.abs(raw - c.predict(g))) > 1e-3


def test_curve_is_a_value():
    """A Curve's coefficients cannot be changed in place (a value the fit, the engine and the file share)."""
    cv = core.Curve(core.Domain(0.0, 1.0), [1.0, 2.0])
    with pytest.raises(ValueError):
        cv.coef[0] = 5.0
    assert cv(np.array([0.5])) == pytest.approx(2.0)
