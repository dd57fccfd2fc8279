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
    assert code == 0 and "x^2" in text and "residual SD" in text
    doc = json.loads(out.read_text())
    b2 = doc["power_coefficients"][2]
    assert b2["term"] == "x^2"
    assert abs(b2["estimate"] + 0.316081871345029e-14) / 0.316081871345029e-14 < 1e-9
    for key in ("residual_sd", "r_squared", "df_residual", "effective_df"):
        assert key in doc


def test_sweep_json_layout(tmp_path, capsys):
    out = tmp_path / "s.json"
    code, text, _ = run(["sweep", FURNACE, "--x", 1, "--y", "yield", "--degrees", "0-6",
                         "--lambdas", "1e-4:1e2:7", "--with-zero", "--folds", 5, "--json", out], capsys)
    assert code == 0 and "recommended (1se)" in text
    doc = json.loads(out.read_text())
    assert doc["degrees"] == list(range(7)) and len(doc["lambdas"]) == 8 and doc["lambdas"][0] == 0
    assert np.array(doc["cv_mse"]).shape == (7, 8)
    assert set(doc["recommended"]) == {"min", "1se"}
    assert {"degree", "lambda", "cv_mse"} <= set(doc["recommended"]["min"])


def test_learn_runs(capsys):
    code, text, _ = run(["learn", FURNACE, "--x", 1, "--y", 2, "--degree", 3, "--lambda", 0.01,
                         "--sizes", "0.2:1:5", "--repeats", 2], capsys)
    assert code == 0 and text.count("\n") >= 7


def test_existing_output_is_not_overwritten_without_force(tmp_path, capsys):
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
    code, _, err = run(args, capsys)
    assert code == 2 and text in err and "Traceback" not in err


def test_console_script_exit_code():
    """The installed entry point (not only main()) returns 2 and no traceback."""
    p = subprocess.run([sys.executable, "-m", "app.cli", "fit", "nope.csv", "--x", "x", "--y", "y",
                        "--degree", "1"], capture_output=True, text=True, cwd=ROOT)
    assert p.returncode == 2 and "Traceback" not in p.stderr


def test_grid_parsers():
    assert parse_degrees("0-3,7") == [0, 1, 2, 3, 7]
    np.testing.assert_allclose(parse_grid("1e-2:1e2:5", log=True, option="--lambdas"), [1e-2, 1e-1, 1, 10, 100])
    with pytest.raises(ParameterError):
        parse_degrees("0-31")
