"""``curvewright invert``: reading x back through the command line on invented files.

The numbers themselves are checked against outside references in tests/core/test_calibrate.py
(Draper & Smith, Eurachem E.3, statsmodels); here the command is checked to give exactly
``Choice.invert`` on the file's readings, to average replicate groups, and to refuse bad input by
name without a traceback.
"""

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from app.cli import main
from core.choice import Choice

ROOT = Path(__file__).resolve().parents[2]
ASSAY = ROOT / "sample_sets" / "assay_calibration.csv"
UNKNOWNS = ROOT / "sample_sets" / "assay_unknowns.csv"


@pytest.fixture(scope="module")
def assay_choice(tmp_path_factory):
    d = tmp_path_factory.mktemp("inv")
    path = d / "assay.json"
    assert main(["sweep", str(ASSAY), "--x", "conc", "--y", "signal", "--uncertainty", "u_signal",
                 "--degrees", "1-3", "--lambdas", "0", "--save", str(path), "--pick-degree", "2",
                 "--pick-lambda", "0"]) == 0
    return path


def test_invert_writes_choice_invert_for_each_reading(assay_choice, tmp_path, capsys):
    out, js = tmp_path / "r.csv", tmp_path / "r.json"
    assert main(["invert", str(assay_choice), str(UNKNOWNS), "--y", "signal", "--out", str(out),
                 "--json", str(js)]) == 0
    got = pd.read_csv(out)
    c = Choice.load(assay_choice)
    raw = pd.read_csv(UNKNOWNS)
    ref = c.invert(raw["signal [AU]"].to_numpy())
    assert list(got["sample"]) == list(raw["sample"])                       # the input's columns kept
    assert np.array_equal(got["x_estimate"].to_numpy(), ref.x_estimate)
    assert np.array_equal(got["x_low"].to_numpy(), ref.x_low, equal_nan=True)
    assert list(got["interval"]) == list(ref.interval)
    doc = json.loads(js.read_text())
    assert set(doc["readings"][0]) >= {"reading", "x_estimate", "x_low", "x_high", "x_standard_uncertainty",
                                       "interval"}
    assert doc["choice_digest"] == c.doc["digest"]["value"]


def test_invert_groups_average_replicates_and_count_them(assay_choice, tmp_path):
    out = tmp_path / "g.csv"
    assert main(["invert", str(assay_choice), str(UNKNOWNS), "--y", "signal", "--group", "sample",
                 "--out", str(out)]) == 0
    got = pd.read_csv(out)
    raw = pd.read_csv(UNKNOWNS)
    means = raw.groupby("sample", sort=False)["signal [AU]"].mean()
    assert list(got["sample"]) == list(means.index)
    assert got["reading"].to_numpy() == pytest.approx(means.to_numpy(), rel=1e-15)
    assert list(got["replicates"]) == [3] * len(means)
    ref = Choice.load(assay_choice).invert(means.to_numpy(), replicates=3)
    assert got["x_standard_uncertainty"].to_numpy() == pytest.approx(ref.x_standard_uncertainty, rel=1e-12)
    # the mean of three readings is read back more tightly than one reading
    one = Choice.load(assay_choice).invert(means.to_numpy())
    assert np.all(ref.x_high - ref.x_low < one.x_high - one.x_low)


def test_invert_says_which_readings_fall_outside_the_calibration(assay_choice, tmp_path, capsys):
    p = tmp_path / "odd.csv"
    p.write_text("signal\n0.5\n-3\n9\n")
    assert main(["invert", str(assay_choice), str(p), "--y", "signal", "--out", str(tmp_path / "o.csv")]) == 0
    err = capsys.readouterr().err
    assert "2 reading(s) 'empty'" in err and "outside the calibration" in err
    got = pd.read_csv(tmp_path / "o.csv")
    assert list(got["interval"]) == ["bounded", "empty", "empty"]
    assert got["x_estimate"].isna().tolist() == [False, True, True]


@pytest.mark.parametrize("argv, expected", [
    (["--y", "nope"], "Column 'nope' (y) in 'assay_unknowns.csv'"),
    (["--y", "signal", "--replicates", "0"], "Option --replicates"),
    (["--y", "signal", "--reading-weight", "2"], "Option --reading-weight"),
    (["--y", "signal", "--coverage", "1.5"], "coverage"),
])
def test_invert_refuses_bad_options_by_name(assay_choice, argv, expected, capsys):
    assert main(["invert", str(assay_choice), str(UNKNOWNS), *argv]) == 2
    err = capsys.readouterr().err
    assert expected in err and "Traceback" not in err


def test_invert_guards_formula_like_group_labels(assay_choice, tmp_path):
    p = tmp_path / "evil.csv"
    p.write_text("sample,signal\n=HYPERLINK(\"x\"),0.3\n=HYPERLINK(\"x\"),0.31\n")
    out = tmp_path / "e.csv"
    assert main(["invert", str(assay_choice), str(p), "--y", "signal", "--group", "sample", "--out", str(out)]) == 0
    assert pd.read_csv(out)["sample"].tolist() == ["'=HYPERLINK(\"x\")"]


def test_invert_flags_readings_below_the_decision_level_for_their_replicates(assay_choice, tmp_path, capsys):
    """Hubaux & Vos (1970): y_C is the one-sided upper prediction limit of the blank for the mean of m readings."""
    from core.limits import detection_limits

    c = Choice.load(assay_choice)
    y_c1 = c.doc["calibration"]["limits"]["hubaux_vos"]["decision_level_y"]
    y_c3 = detection_limits(c.curve, c.covariance, c.reading, c.u_range, replicates=3)["hubaux_vos"]["decision_level_y"]
    assert y_c3 < y_c1
    mid = 0.5 * (y_c1 + y_c3)
    p = tmp_path / "blank.csv"
    p.write_text(f"sample,signal\nA,{mid}\nA,{mid}\nA,{mid}\nB,{mid}\n")
    out = tmp_path / "b.csv"
    assert main(["invert", str(assay_choice), str(p), "--y", "signal", "--group", "sample", "--out", str(out)]) == 0
    got = pd.read_csv(out)
    assert got["above_decision_level"].tolist() == [True, False]        # mean of 3 clears y_C(3); one reading not
    assert "1 reading(s) at or below the decision level" in capsys.readouterr().err
