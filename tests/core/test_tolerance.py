"""Tolerance decisions: expanded uncertainty of each error and the two ILAC-G8 decision rules.

References: the standard uncertainty of one new reading about an ordinary least-squares curve is
statsmodels' prediction SE for a new observation, sqrt(se_mean^2 + s^2) (reference implementation);
U = k u with k = 2 (GUM, JCGM 100:2008, sec. 6.2-6.3; k = 2 is common practice); simple acceptance
|e| <= T and guarded acceptance |e| <= T - U as ILAC-G8:09/2019 defines them.
"""

import numpy as np
import pytest

import core
from app.cli import main
from core.choice_build import make_choice
from core.tolerance import tolerance_check

DATA = {"file": "invented.csv", "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
        "x_column": "x", "y_column": "y", "x_unit": None, "y_unit": None}


@pytest.fixture(scope="module")
def line():
    rng = np.random.default_rng(8)
    x = np.repeat(np.linspace(0, 10, 11), 2)
    y = 1.0 + 0.5 * x + rng.normal(0, 0.05, x.size)
    s = core.sweep(x, y, [1, 2], [0.0], folds=5, seed=2)
    return make_choice(x, y, s, 1, 0.0, rule="manual", data=DATA), x, y


def test_expanded_uncertainty_is_twice_statsmodels_prediction_se(line):
    import statsmodels.api as sm

    c, x, y = line
    xs = np.array([0.5, 3.0, 9.5])
    res = sm.OLS(y, sm.add_constant(x)).fit()
    pr = res.get_prediction(sm.add_constant(xs)).summary_frame()
    se_obs = np.sqrt(pr["mean_se"].to_numpy() ** 2 + res.scale)
    tc = tolerance_check(c, xs, c.predict(xs), 1.0)
    assert [r["expanded_uncertainty"] for r in tc["rows"]] == pytest.approx(2 * se_obs, rel=1e-9)


def test_simple_and_guarded_decisions_follow_their_rules(line):
    c, _, _ = line
    xs = np.full(4, 5.0)
    U = 2 * c.prediction_sd(xs)[0]
    T = 3 * U
    errors = np.array([0.5 * U, 1.9 * U, 2.1 * U, -3.5 * U])   # inside guard, inside T only, between, beyond T
    ys = c.predict(xs) + errors
    simple = tolerance_check(c, xs, ys, T, rule="simple")
    guarded = tolerance_check(c, xs, ys, T, rule="guarded")
    assert [r["pass"] for r in simple["rows"]] == [True, True, True, False]
    assert [r["pass"] for r in guarded["rows"]] == [True, True, False, False]
    assert simple["overall"] == guarded["overall"] == "fail"
    assert guarded["rows"][0]["acceptance_limit"] == pytest.approx(T - U, rel=1e-12)


def test_relative_tolerance_is_a_fraction_of_the_prediction(line):
    c, _, _ = line
    xs = np.array([2.0, 8.0])
    p = c.predict(xs)
    tc = tolerance_check(c, xs, p * 1.015, 0.02, relative=True)
    assert [r["tolerance"] for r in tc["rows"]] == pytest.approx(0.02 * p, rel=1e-12)
    assert tc["overall"] == "pass"
    assert tolerance_check(c, xs, p * 1.025, 0.02, relative=True)["overall"] == "fail"


def test_guard_band_wider_than_the_tolerance_is_said(line):
    c, _, _ = line
    xs = np.array([5.0])
    tc = tolerance_check(c, xs, c.predict(xs), 0.1 * c.prediction_sd(xs)[0], rule="guarded")
    assert tc["guard_band_exceeds_tolerance"] == 1 and tc["overall"] == "fail"


@pytest.mark.parametrize("kwargs, field", [({"tolerance": -1.0}, "--tolerance"), ({"tolerance": 1.5, "relative": True},
                                           "--relative"), ({"tolerance": 1.0, "rule": "lenient"}, "--decision")])
def test_bad_tolerance_options_are_refused_by_name(line, kwargs, field):
    c, x, y = line
    with pytest.raises(core.ParameterError, match=field):
        tolerance_check(c, x, y, **kwargs)


def test_check_command_exit_code_says_pass_or_fail(line, tmp_path, capsys):
    c, x, y = line
    choice = tmp_path / "c.json"
    c.save(choice)
    data = tmp_path / "new.csv"
    xs = np.array([1.0, 4.0, 7.0])
    data.write_text("x,y\n" + "".join(f"{a},{b}\n" for a, b in zip(xs, c.predict(xs) + [0.01, -0.02, 0.3])))
    assert main(["check", str(choice), str(data), "--x", "x", "--y", "y", "--tolerance", "0.05",
                 "--out", str(tmp_path / "d.csv")]) == 1
    out = capsys.readouterr().out
    assert "FAIL: 2 row(s) pass, 1 fail" in out and "row 4:" in out
    assert (tmp_path / "d.csv").read_text().splitlines()[0] == "x,y,prediction,error,expanded_uncertainty," \
                                                                "acceptance_limit,pass"
    assert main(["check", str(choice), str(data), "--x", "x", "--y", "y", "--tolerance", "0.5"]) == 0
    assert main(["check", str(choice), str(data), "--x", "x", "--y", "y", "--relative"]) == 2
    assert "--tolerance T as well" in capsys.readouterr().err


def test_check_report_records_rule_verdict_and_escapes_file_text(line, tmp_path):
    import html.parser

    c, x, y = line
    choice = tmp_path / "c.json"
    doc = c.to_dict()
    doc["data"]["x_column"] = "<script>alert(1)</script>"
    from core.choice import Choice
    from core.choice_check import content_digest

    doc["digest"]["value"] = content_digest(doc)
    Choice.from_dict(doc).save(choice)
    data = tmp_path / "<b>new.csv"
    data.write_text("x,y\n1,1.5\n4,3.0\n7,9.0\n")
    rep = tmp_path / "r.html"
    assert main(["check", str(choice), str(data), "--x", "x", "--y", "y", "--tolerance", "0.2", "--decision", "guarded",
                 "--report", str(rep)]) == 1
    text = rep.read_text()
    assert "<script>" not in text and "&lt;script&gt;" in text and "&lt;b&gt;new.csv" in text
    assert "guarded acceptance (ILAC-G8:09/2019)" in text and "FAIL: " in text and "Caution." in text
    html.parser.HTMLParser().feed(text)
