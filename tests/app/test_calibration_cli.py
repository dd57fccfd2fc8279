"""Lack of fit, detection limits and transforms through ``fit`` and ``sweep`` (JSON and text).

References: NIST/SEMATECH e-Handbook of Statistical Methods, sec. 4.6.1 (load-cell calibration =
NIST StRD Pontius): straight-line lack-of-fit F = 214.7464 on (18, 20) df; ICH Q2(R2) DL = 3.3 sigma / S
(closed form for a straight line through a blank).
"""

import json
from pathlib import Path

import numpy as np
import pytest

from app.cli import main
from core.choice import Choice

ROOT = Path(__file__).resolve().parents[2]
PONTIUS = ROOT / "tests" / "reference" / "nist_strd" / "Pontius.csv"
THERMISTOR = ROOT / "sample_sets" / "thermistor_bench.csv"
ASSAY = ROOT / "sample_sets" / "assay_calibration.csv"


def test_fit_json_gives_the_handbook_lack_of_fit(tmp_path, capsys):
    out = tmp_path / "f.json"
    assert main(["fit", str(PONTIUS), "--x", "x", "--y", "y", "--degree", "1", "--json", str(out)]) == 0
    lof = json.loads(out.read_text())["lack_of_fit"]
    assert lof["F"] == pytest.approx(214.7464, rel=5e-6) and (lof["df_lack"], lof["df_pure"]) == (18, 20)
    assert "lack of fit: F = 214.747 on (18, 20) df" in capsys.readouterr().out


def test_fit_json_gives_ich_limits_for_a_line_through_a_blank(tmp_path):
    rng = np.random.default_rng(5)
    x = np.repeat([0.0, 1, 2, 4, 8], 3)
    y = 0.02 + 0.5 * x + rng.normal(0, 0.01, x.size)
    p = tmp_path / "line.csv"
    p.write_text("x,y\n" + "".join(f"{a},{b}\n" for a, b in zip(x, y)))
    out = tmp_path / "f.json"
    assert main(["fit", str(p), "--x", "x", "--y", "y", "--degree", "1", "--json", str(out)]) == 0
    lim = json.loads(out.read_text())["limits"]
    b, a = np.polyfit(x, y, 1)
    s = np.sqrt(np.sum((y - a - b * x) ** 2) / (x.size - 2))
    assert lim["ich_q2"]["detection_limit"] == pytest.approx(3.3 * s / b, rel=1e-9)
    assert lim["ich_q2"]["sigma_from"] == "residual SD of the regression"
    assert lim["hubaux_vos"]["detection_limit_x"] > lim["hubaux_vos"]["decision_limit_x"] > 0


def test_thermistor_sample_in_one_over_T_against_ln_R(tmp_path, capsys):
    """The sample set's README example: 1/T as a cubic in ln R (the Steinhart-Hart form) through sweep --save,
    then apply and invert in raw units."""
    choice = tmp_path / "t.json"
    assert main(["sweep", str(THERMISTOR), "--x", "resistance", "--y", "probe_T [K]", "--x-transform", "log",
                 "--y-transform", "reciprocal", "--degrees", "1-4", "--lambdas", "0", "--pick-degree", "3",
                 "--pick-lambda", "0", "--save", str(choice)]) == 0
    c = Choice.load(choice)
    assert c.doc["model"]["transforms"] == {"x": "log", "y": "reciprocal"}
    lo, hi = c.x_range
    rows = np.genfromtxt(THERMISTOR, delimiter=",", names=True)
    assert (lo, hi) == (rows["resistance_ohm"].min(), rows["resistance_ohm"].max())
    T = c.predict(rows["resistance_ohm"])
    assert np.max(np.abs(T - rows["probe_T_K"])) < 0.5           # kelvin; invented data scatter ~0.05 K
    back = c.invert(T[5:8])
    assert back.x_estimate == pytest.approx(rows["resistance_ohm"][5:8], rel=1e-6)
    assert "fitting 1/probe_T [K] as a polynomial in ln(resistance [ohm])" in capsys.readouterr().err


def test_transform_refusals_name_row_and_option(tmp_path, capsys):
    p = tmp_path / "z.csv"
    p.write_text("x,y\n1,2\n0,3\n2,4\n")
    assert main(["fit", str(p), "--x", "x", "--y", "y", "--degree", "1", "--x-transform", "log"]) == 2
    assert "Column 'x' in 'z.csv', row 3" in capsys.readouterr().err
    assert main(["sweep", str(ASSAY), "--x", "conc", "--y", "signal", "--uncertainty", "u_signal",
                 "--y-transform", "log"]) == 2
    assert "Option --y-transform" in capsys.readouterr().err
    assert main(["sweep", str(p), "--x", "x", "--y", "y", "--stream", "--x-transform", "sqrt"]) == 2
    assert "--x-transform" in capsys.readouterr().err
