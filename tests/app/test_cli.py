"""The command line: tables, JSON outputs, exit code 2 with a message for bad input."""

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from app.cli import main, parse_degrees, parse_grid
from core.errors import ParameterError

ROOT = Path(__file__).resolve().parents[2]
FURNACE = ROOT / "sample_sets" / "furnace_yield.csv"
PONTIUS = ROOT / "tests" / "reference" / "nist_strd" / "Pontius.csv"


def run(args, capsys):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def test_fit_prints_table_and_writes_json(tmp_path, capsys):
    """NIST StRD Pontius through the CLI: certified B2 in the JSON (LRE >= 9)."""
    out = tmp_path / "fit.json"
    code, text, _ = run(["fit", PONTIUS, "--x", "x", "--y", "y", "--degree", 2, "--json", out], capsys)
    assert code == 0 and "x^2" in text and "residual SD" in text and "standard error" in text
    doc = json.loads(out.read_text())
    b2 = doc["power_coefficients"][2]
    assert b2["power"] == 2
    assert abs(b2["value"] + 0.316081871345029e-14) / 0.316081871345029e-14 < 1e-9
    for key in ("residual_sd", "r_squared", "residual_df", "effective_df"):
        assert key in doc


def test_sweep_json_layout(tmp_path, capsys):
    """sweep --json holds the degrees, lambdas (0 first with --with-zero), the CV surface and both recommendations."""
    out = tmp_path / "s.json"
    code, text, _ = run(["sweep", FURNACE, "--x", 1, "--y", "yield", "--degrees", "0-6",
                         "--lambdas", "1e-4:1e2:7", "--with-zero", "--folds", 5, "--json", out], capsys)
    assert code == 0 and "recommended (simplest)" in text
    doc = json.loads(out.read_text())
    assert doc["degrees"] == list(range(7)) and len(doc["lambdas"]) == 8 and doc["lambdas"][0] == 0
    assert np.array(doc["cv_mse"]).shape == (7, 8)
    assert set(doc["recommended"]) == {"lowest", "simplest"}
    assert {"degree", "lambda", "cv_mse"} <= set(doc["recommended"]["lowest"])


def test_learn_prints_core_learning_curve(capsys, tmp_path):
    """learn prints, size by size, the numbers of core.learning_curve on the same rows (and its JSON holds them)."""
    import core
    from core.table import read_table

    out = tmp_path / "lc.json"
    code, text, _ = run(["learn", FURNACE, "--x", 1, "--y", 2, "--degree", 3, "--lambda", 0.01,
                         "--sizes", "0.2:1:5", "--repeats", 2, "--json", out], capsys)
    assert code == 0
    t = read_table(FURNACE, x=1, y=2)
    ref = core.size_curve(t.x.values, t.y.values, 3, 0.01, sizes=np.linspace(0.2, 1, 5), repeats=2)
    doc = json.loads(out.read_text())
    np.testing.assert_allclose(doc["cv_mse"], ref.cv_mse, rtol=1e-12)
    rows = [ln.split() for ln in text.splitlines() if ln[:6].strip() in {"0.2", "0.4", "0.6", "0.8", "1"}]
    assert [float(r[3]) for r in rows] == pytest.approx(ref.cv_mse.tolist(), rel=1e-9)


def test_existing_output_is_not_overwritten_without_force(tmp_path, capsys):
    """An existing output is kept without --force and replaced with it."""
    out = tmp_path / "fit.json"
    out.write_text("keep me")
    code, _, err = run(["fit", PONTIUS, "--x", "x", "--y", "y", "--degree", 1, "--json", out], capsys)
    assert code == 2 and "pass --force to overwrite" in err
    assert out.read_text() == "keep me"
    code, _, _ = run(["fit", PONTIUS, "--x", "x", "--y", "y", "--degree", 1, "--json", out, "--force"], capsys)
    assert code == 0 and json.loads(out.read_text())["degree"] == 1


@pytest.mark.parametrize("args, text", [
    (["fit", "missing.csv", "--x", "x", "--y", "y", "--degree", 1], "expected an existing file"),
    (["fit", PONTIUS, "--x", "load", "--y", "y", "--degree", 1], "Column 'load' (x) in 'Pontius.csv'"),
    (["fit", PONTIUS, "--x", "x", "--y", "y", "--degree", 40], "Parameter 'degree'"),
    (["sweep", PONTIUS, "--x", "x", "--y", "y", "--degrees", "a-b"], "Option --degrees"),
    (["sweep", PONTIUS, "--x", "x", "--y", "y", "--lambdas", "0:1:5"], "positive START and STOP"),
])
def test_bad_input_exits_2_with_message(args, text, capsys):
    """Bad paths, columns and options exit 2 with a message naming them."""
    code, _, err = run(args, capsys)
    assert code == 2 and text in err and "Traceback" not in err


def test_console_script_exit_code():
    """The installed entry point (not only main()) returns 2 and no traceback."""
    p = subprocess.run([sys.executable, "-m", "app.cli", "fit", "nope.csv", "--x", "x", "--y", "y",
                        "--degree", "1"], capture_output=True, text=True, cwd=ROOT)
    assert p.returncode == 2 and "Traceback" not in p.stderr


def test_grid_parsers():
    """Degree lists and log grids parse as written; degrees above the cap are refused."""
    assert parse_degrees("0-3,7") == [0, 1, 2, 3, 7]
    np.testing.assert_allclose(parse_grid("1e-2:1e2:5", log=True, option="--lambdas"), [1e-2, 1e-1, 1, 10, 100])
    with pytest.raises(ParameterError):
        parse_degrees("0-31")


def test_loo_sweep_saves_a_choice_and_refuses_statistics_up_front(tmp_path, capsys):
    """sweep --loo --save writes a schema-valid choice whose CV error is the LOO error of core.sweep;
    with --save-stats the refusal comes before any file is written."""
    import jsonschema

    import core
    from core.choice import SCHEMA
    from core.table import read_table

    choice = tmp_path / "c.json"
    code, _, _ = run(["sweep", FURNACE, "--x", 1, "--y", 2, "--loo", "--degrees", "0-5", "--lambdas", "1e-3:1:4",
                      "--with-zero", "--penalty", "ridge", "--save", choice, "--pick-degree", 3,
                      "--pick-lambda", 0.01], capsys)
    assert code == 0
    doc = json.loads(choice.read_text())
    jsonschema.validate(doc, SCHEMA)
    t = read_table(FURNACE, x=1, y=2)
    ref = core.sweep(t.x.values, t.y.values, [3], [0.01], folds="loo", test_fraction=0.2, row_keys=t.row_numbers)
    assert doc["validation"]["scheme"] == "loo" and doc["validation"]["k"] == ref.n_train
    assert doc["validation"]["cv_mse"] == pytest.approx(ref.cv_mse[0, 0], rel=1e-12)
    code, _, err = run(["sweep", FURNACE, "--x", 1, "--y", 2, "--loo", "--save", tmp_path / "c2.json",
                        "--save-stats", tmp_path / "s.json"], capsys)
    assert code == 2 and "Option --save-stats: expected k-fold cross-validation" in err
    assert not (tmp_path / "c2.json").exists() and not (tmp_path / "s.json").exists()


def test_streamed_lasso_equals_in_memory_lasso(tmp_path, capsys):
    """--stream --penalty lasso scores the lasso (not ridge): its surface equals core.sweep's lasso surface."""
    import core
    from core.table import read_table

    out = tmp_path / "s.json"
    code, _, _ = run(["sweep", FURNACE, "--x", 1, "--y", 2, "--stream", "--chunk-rows", 7, "--penalty", "lasso",
                      "--degrees", "0-4", "--lambdas", "1e-2:1e2:5", "--folds", 4, "--json", out], capsys)
    assert code == 0
    doc = json.loads(out.read_text())
    t = read_table(FURNACE, x=1, y=2)
    ref = core.sweep(t.x.values, t.y.values, range(0, 5), np.logspace(-2, 2, 5), folds=4, test_fraction=0.2,
                     penalty="lasso", row_keys=t.row_numbers)
    ridge = core.sweep(t.x.values, t.y.values, range(0, 5), np.logspace(-2, 2, 5), folds=4, test_fraction=0.2,
                       row_keys=t.row_numbers)
    assert doc["penalty"] == "lasso"
    np.testing.assert_allclose(doc["cv_mse"], ref.cv_mse, rtol=1e-10)
    assert not np.allclose(doc["cv_mse"], ridge.cv_mse, rtol=1e-3)


@pytest.mark.parametrize("extra", [["--loo"], ["--exclude", "7"], ["--group", "x"]])
def test_streamed_sweep_refuses_options_that_need_the_rows(extra, capsys):
    """--stream with leave-one-out, excluded rows or grouped folds is refused by name, never ignored."""
    code, _, err = run(["sweep", FURNACE, "--x", 1, "--y", 2, "--stream", *extra], capsys)
    assert code == 2 and "Option --stream: expected k-fold folds over every row" in err and extra[0] in err


def test_sweep_prints_the_checks_and_saves_a_band_for_a_penalized_pick(tmp_path, capsys):
    """sweep shows each pick's residual checks (core.checks) and which to prefer; the saved simplest pick
    (penalized) carries a bootstrap band that apply writes and labels."""
    from core.choice import Choice

    choice = tmp_path / "c.json"
    code, text, _ = run(["sweep", FURNACE, "--x", 1, "--y", 2, "--degrees", "0-6", "--save", choice], capsys)
    assert code == 0 and text.count("check: ") == 3 and "prefer" in text
    c = Choice.load(choice)
    assert c.doc["model"]["lambda"] > 0 and c.doc["model"]["uncertainty"]["method"] == "bootstrap"
    rows = tmp_path / "new.csv"
    rows.write_text("setting [degC]\n700\n800\n")
    code, out, err = run(["apply", choice, rows, "--x", 1], capsys)
    assert code == 0 and "reading_low_95" in out and "bootstrap" in err


def test_apply_takes_a_readings_own_uncertainty(tmp_path, capsys):
    """For a curve fitted with stated uncertainties, --reading-uncertainty (a number or a column) sets the new
    reading's u: the band half-width is 1.96 sqrt(u0^2 + var(curve)) (core.bands); the option is refused for
    a curve without stated uncertainties."""
    import pandas as pd

    from core.choice import Choice

    data = ROOT / "sample_sets" / "thermistor_bench.csv"
    choice = tmp_path / "t.json"
    assert run(["sweep", data, "--x", 1, "--y", 2, "--uncertainty", 3, "--degrees", "0-6", "--save", choice,
                "--pick-degree", 6, "--pick-lambda", 0], capsys)[0] == 0
    rows = tmp_path / "r.csv"
    rows.write_text("T [degC],u\n10,50\n40,5\n")
    out = tmp_path / "p.csv"
    assert run(["apply", choice, rows, "--x", 1, "--reading-uncertainty", "u", "--out", out], capsys)[0] == 0
    p = pd.read_csv(out)
    c = Choice.load(choice)
    _, lo, _ = c.predict([10.0, 40.0], band="curve")
    var_curve = ((c.predict([10.0, 40.0]) - lo) / 1.959963984540054) ** 2
    np.testing.assert_allclose((p["reading_high_95"] - p["prediction"]) / 1.959963984540054,
                               np.sqrt(np.array([50.0, 5.0]) ** 2 + var_curve), rtol=1e-9)
    code, _, err = run(["apply", ROOT / "tests" / "core" / "data" / "choice_v1_lambda0.json",
                        ROOT / "tests" / "core" / "data" / "furnace_new_v1.csv", "--x", 1,
                        "--reading-uncertainty", "0.5"], capsys)
    assert code == 2 and "Option --reading-uncertainty: expected a curve fitted with uncertainty weights" in err
