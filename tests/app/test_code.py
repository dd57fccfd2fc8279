"""``curvewright code``: the deployed forms agree with ``curvewright apply`` on their test vectors.

Outside references: the system C compiler and C library (the C form is compiled and run), the Python
interpreter (the Python form is executed), and the ``formulas`` package, an independent spreadsheet
formula engine (the spreadsheet form is evaluated there). Required agreement: 1e-12 relative for C
and Python, 1e-9 for the spreadsheet formula (issue requirement); the lookup table's measured
linear-interpolation error must stay below the bound written in its file.
"""

import csv
import os
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

import core
from app.cli import main
from core.choice import Choice
from core.choice_build import make_choice
from core.transforms import get

DATA = {"file": "invented.csv", "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
        "x_column": "x", "y_column": "y", "x_unit": None, "y_unit": None}


def _choice(x, y, degree, lam=0.0, transforms=("none", "none")):
    tx, ty = (get(n) for n in transforms)
    u, v = tx.forward(x), ty.forward(y)
    s = core.sweep(u, v, range(0, degree + 1), [0.0, 1e-4], folds=5, seed=3)
    return make_choice(u, v, s, degree, lam, rule="manual", data=DATA, transforms=transforms)


def _curves():
    """Invented curves: a curved assay-like line, a penalized degree-6 curve on offset x (time stamps),
    a thermistor-like curve in ln R and 1/T, a constant."""
    rng = np.random.default_rng(21)
    x1 = np.linspace(0, 80, 30)
    yield "assay", _choice(x1, 0.05 + 0.024 * x1 - 6e-5 * x1 ** 2 + rng.normal(0, 0.003, x1.size), 2)
    x2 = 1.7e9 + np.linspace(0, 86400, 60)
    s = (x2 - x2.mean()) / 43200
    yield "offset", _choice(x2, np.sin(2 * s) + 0.2 * s ** 3 + rng.normal(0, 0.01, x2.size), 6, lam=1e-4)
    R = np.geomspace(500, 200_000, 40)
    T = 1 / (1.13e-3 + 2.34e-4 * np.log(R) + 8.8e-8 * np.log(R) ** 3) * (1 + rng.normal(0, 1e-5, R.size))
    yield "thermistor", _choice(R, T, 3, transforms=("log", "reciprocal"))
    yield "constant", _choice(np.linspace(1, 2, 10), 3 + rng.normal(0, 0.1, 10), 0)


CURVES = dict(_curves())


def _write(tmp_path, name, lang, *extra):
    c = CURVES[name]
    cpath = tmp_path / f"{name}.json"
    c.save(cpath, force=True)
    out = tmp_path / f"{name}_{lang}.{ {'c': 'c', 'python': 'py', 'spreadsheet': 'txt', 'table': 'csv'}[lang] }"
    assert main(["code", str(cpath), "--lang", lang, "--out", str(out), *extra]) == 0
    vec = out.with_name(out.stem + ".vectors.csv")
    rows = list(csv.reader(vec.open()))
    assert rows[0] == ["x", "expected"]
    xs = np.array([float(r[0]) for r in rows[1:]])
    ys = np.array([float(r[1]) for r in rows[1:]])
    assert np.array_equal(ys, Choice.load(cpath).predict(xs))       # the vectors are what apply gives
    return c, out, xs, ys


def _cc():
    cc = shutil.which("cc") or shutil.which("gcc")
    if cc is None:
        if os.environ.get("CI"):
            pytest.fail("CI must provide a C compiler (cc) for the deployed-code tests")
        pytest.skip("no C compiler on this machine")
    return cc


@pytest.mark.parametrize("name", list(CURVES))
def test_c_code_compiles_and_agrees_with_apply(name, tmp_path):
    cc = _cc()
    _, src, xs, ys = _write(tmp_path, name, "c")
    main_c = tmp_path / "main.c"
    main_c.write_text(src.read_text() + "\n#include <stdio.h>\n#include <stdlib.h>\n"
                      "int main(int argc, char **argv) { for (int i = 1; i < argc; i++) "
                      "printf(\"%.17g\\n\", curve_eval(strtod(argv[i], NULL))); return 0; }\n")
    exe = tmp_path / "curve"
    subprocess.run([cc, "-std=c99", "-O2", "-Wall", "-Werror", "-Wno-unused-variable", "-o", str(exe), str(main_c),
                    "-lm"], check=True, capture_output=True)
    run = subprocess.run([str(exe), *[repr(v) for v in xs.tolist()]], check=True, capture_output=True, text=True)
    got = np.array([float(v) for v in run.stdout.split()])
    assert got == pytest.approx(ys, rel=1e-12, abs=1e-12 * np.max(np.abs(ys)))


def test_c_range_guard_returns_nan_outside(tmp_path):
    cc = _cc()
    _, src, xs, _ = _write(tmp_path, "assay", "c", "--range-guard")
    main_c = tmp_path / "g.c"
    main_c.write_text(src.read_text() + "\n#include <stdio.h>\nint main(void) { printf(\"%g %g\\n\", "
                      "curve_eval(-1.0), curve_eval(40.0)); return 0; }\n")
    subprocess.run([cc, "-std=c99", "-o", str(tmp_path / "g"), str(main_c), "-lm"], check=True, capture_output=True)
    a, b = subprocess.run([str(tmp_path / "g")], check=True, capture_output=True, text=True).stdout.split()
    assert a in ("nan", "-nan") and np.isfinite(float(b))


@pytest.mark.parametrize("name", list(CURVES))
def test_python_function_agrees_with_apply(name, tmp_path):
    _, src, xs, ys = _write(tmp_path, name, "python")
    space: dict = {}
    exec(compile(src.read_text(), str(src), "exec"), space)           # one function, nothing imported outside it
    assert set(space) - {"__builtins__"} == {"curve_eval"}
    got = np.array([space["curve_eval"](float(v)) for v in xs])
    assert got == pytest.approx(ys, rel=1e-12, abs=1e-12 * np.max(np.abs(ys)))


@pytest.mark.parametrize("name", ["assay", "thermistor", "constant"])
def test_spreadsheet_formula_agrees_in_a_formula_engine(name, tmp_path):
    import formulas

    _, src, xs, ys = _write(tmp_path, name, "spreadsheet", "--cell", "B2")
    text = src.read_text().strip()
    fn = formulas.Parser().ast(text)[1].compile()
    assert list(fn.inputs) == ([] if CURVES[name].doc["model"]["degree"] == 0 else ["B2"])
    args = (lambda v: ()) if not fn.inputs else (lambda v: (float(v),))
    got = np.array([float(np.asarray(fn(*args(v))).ravel()[0]) for v in xs[::5]])
    assert got == pytest.approx(ys[::5], rel=1e-9, abs=1e-9 * np.max(np.abs(ys)))


def test_spreadsheet_is_refused_when_the_centred_form_loses_digits(tmp_path, capsys):
    from core.choice_check import content_digest

    doc = CURVES["assay"].to_dict()
    doc["model"]["power_form"]["centred"]["digits"] = 7.5      # as a badly conditioned curve would state
    doc["digest"]["value"] = content_digest(doc)
    Choice.from_dict(doc).save(tmp_path / "o.json")
    assert main(["code", str(tmp_path / "o.json"), "--lang", "spreadsheet"]) == 2
    assert "10 significant digits" in capsys.readouterr().err


@pytest.mark.parametrize("name", ["assay", "offset", "thermistor"])
def test_table_interpolation_error_is_below_its_stated_bound(name, tmp_path):
    c, table, _, _ = _write(tmp_path, name, "table")
    lines = table.read_text().splitlines()
    bound_line = next(line for line in lines if "stays within" in line)
    bound = float(bound_line.split("stays within ")[1].split(" ")[0])
    data = np.array([[float(v) for v in line.split(",")] for line in lines if line and line[0] not in "#x"])
    lo, hi = c.x_range
    dense = np.unique(np.concatenate([np.linspace(lo, hi, 200_003), np.geomspace(lo, hi, 200_003) if lo > 0 else []]))
    err = np.max(np.abs(np.interp(dense, data[:, 0], data[:, 1]) - c.predict(dense)))
    assert err <= bound
    assert data[0, 0] == lo and data[-1, 0] == hi


def test_code_refuses_to_overwrite_the_vectors_without_force(tmp_path, capsys):
    c = CURVES["assay"]
    c.save(tmp_path / "a.json")
    (tmp_path / "a.vectors.csv").write_text("mine\n")
    assert main(["code", str(tmp_path / "a.json"), "--lang", "c", "--out", str(tmp_path / "a.c")]) == 2
    assert (tmp_path / "a.vectors.csv").read_text() == "mine\n" and not (tmp_path / "a.c").exists()
    assert "--force" in capsys.readouterr().err
