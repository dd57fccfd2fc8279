"""The choice file: schema round trip, tamper detection, bit-identical predictions, export."""

import copy
import json
from pathlib import Path

import jsonschema
import numpy as np
import pytest

import core
from app.cli import main
from core.choice import SCHEMA, Choice
from core.choice_build import make_choice, score
from core.errors import DataError
from core.files import FileExistsRefused, write_atomic

ROOT = Path(__file__).resolve().parents[2]


def invented(n=120, seed=0):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 5, n)
    return x, 1 + 0.5 * x - 0.2 * x ** 2 + 0.05 * rng.normal(size=n)


def choice_for(lam=0.0, degree=2, test_fraction=0.25):
    x, y = invented()
    s = core.sweep(x, y, range(0, 6), [1e-3, 1e-1, 10.0], folds=5, test_fraction=test_fraction, seed=1)
    data = {"file": "invented.csv", "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
            "x_column": "x", "y_column": "y", "x_unit": None, "y_unit": None}
    return make_choice(x, y, s, degree, lam, rule="manual", data=data), s, x, y


def test_round_trip_predicts_bit_for_bit(tmp_path):
    c, s, x, y = choice_for(lam=0.1)
    train = ~s.engine.plan.test_mask
    fit = core.fit(x[train], y[train], 2, 0.1)
    loaded = Choice.load(c.save(tmp_path / "c.json"))
    grid = np.linspace(-1, 6, 333)
    assert np.array_equal(loaded.predict(grid), fit.predict(grid))
    jsonschema.validate(json.loads((tmp_path / "c.json").read_text()), SCHEMA)
    assert loaded.to_dict() == c.to_dict()


def tampered(doc, path, value):
    d = copy.deepcopy(doc)
    node = d
    for key in path[:-1]:
        node = node[key]
    if value is KeyError:
        del node[path[-1]]
    else:
        node[path[-1]] = value
    return d


@pytest.mark.parametrize("path, value, text", [
    (("version",), 3, "Choice file field 'version': expected 1 or 2, got 3."),
    (("model", "degree"), "three", "Choice file field 'model/degree'"),
    (("model", "lambda"), -1.0, "Choice file field 'model/lambda'"),
    (("model", "penalty"), "magic", "Choice file field 'model/penalty'"),
    (("data",), KeyError, "Choice file field '(top level)'"),
    (("model", "legendre_coefficients"), [1.0, 2.0], "Choice file field 'model/legendre_coefficients': expected 3 numbers for degree 2, got 2."),
    (("validation", "cv_rmse"), 123.0, "Choice file field 'validation/cv_rmse': expected the square root of cv_mse, got 123.0."),
    (("model", "intercept"), "yes", "Choice file field 'model/intercept'"),
    (("format",), "something-else", "Choice file field 'format'"),
])
def test_tampered_files_name_the_field(path, value, text):
    c, *_ = choice_for()
    with pytest.raises(DataError) as err:
        Choice.from_dict(tampered(c.to_dict(), path, value))
    assert str(err.value).startswith(text)


def test_loading_never_executes_code(tmp_path):
    """A pickle or a Python literal in the file is only data: refused as invalid JSON."""
    import pickle

    (tmp_path / "evil.json").write_bytes(pickle.dumps({"format": "curvewright-choice"}))
    with pytest.raises(DataError, match="Choice file: expected valid JSON"):
        Choice.load(tmp_path / "evil.json")


def test_intervals_stored_at_lambda_zero_match_statsmodels():
    """Prediction intervals from a saved lambda = 0 choice equal statsmodels OLS get_prediction
    (invented data with x near zero, where the raw-power reference is accurate)."""
    import statsmodels.api as sm

    c, s, x, y = choice_for(lam=0.0, test_fraction=0.0)
    grid = np.linspace(0, 5, 9)
    yhat, lo, hi = c.predict(grid, band="reading")
    ref = sm.OLS(y, np.vander(x, 3, increasing=True)).fit().get_prediction(np.vander(grid, 3, increasing=True))
    frame = ref.summary_frame(alpha=0.05)
    np.testing.assert_allclose(lo, frame.obs_ci_lower, rtol=1e-10)
    np.testing.assert_allclose(hi, frame.obs_ci_upper, rtol=1e-10)
    boot = choice_for(lam=0.1)[0]
    assert boot.has_band and boot.doc["model"]["uncertainty"]["method"] == "bootstrap"


def test_to_sklearn_predicts_the_same():
    c, *_ = choice_for(lam=0.1, degree=3)
    pipe = c.to_sklearn()
    grid = np.linspace(0, 5, 50)
    np.testing.assert_allclose(pipe.predict(grid[:, None]), c.predict(grid), rtol=1e-12, atol=1e-12)


def test_score_on_new_rows():
    c, *_ = choice_for(lam=0.1)
    x = np.array([0.5, 1.5, 6.0])
    y = c.predict(x) + np.array([0.1, -0.1, 0.3])
    sc = score(c, x, y)
    assert sc["rmse"] == pytest.approx(np.sqrt((0.01 + 0.01 + 0.09) / 3))
    assert sc["max_abs_error"] == pytest.approx(0.3) and sc["bias"] == pytest.approx(0.1)
    assert sc["outside_fitted_range"] == 1


def test_write_atomic_refuses_and_leaves_no_temporary(tmp_path):
    p = tmp_path / "keep.json"
    p.write_text("original")
    with pytest.raises(FileExistsRefused):
        write_atomic(p, "new")
    assert p.read_text() == "original" and [q.name for q in tmp_path.iterdir()] == ["keep.json"]
    write_atomic(p, "new", force=True)
    assert p.read_text() == "new" and len(list(tmp_path.iterdir())) == 1


def test_cli_save_apply_check_round_trip(tmp_path, capsys):
    """sweep --save, then apply flags extrapolated rows and check scores new rows."""
    data = ROOT / "sample_sets" / "beam_deflection.csv"
    choice = tmp_path / "beam.json"
    assert main(["sweep", str(data), "--x", "load", "--y", "deflection", "--degrees", "0-4", "--with-zero",
                 "--folds", "5", "--group", "run", "--save", str(choice), "--pick-degree", "2",
                 "--pick-lambda", "0", "--folds", "3", "--test-fraction", "0"]) == 0
    doc = json.loads(choice.read_text())
    assert doc["validation"]["scheme"] == "group" and doc["model"]["uncertainty"] is not None
    new = tmp_path / "new.csv"
    new.write_text("load [kN],note\n0.0,zero\n6.0,mid\n20.0,far\n")
    out = tmp_path / "pred.csv"
    capsys.readouterr()
    assert main(["apply", str(choice), str(new), "--x", "load", "--out", str(out)]) == 0
    err = capsys.readouterr().err
    assert "2 row(s) lie outside the fitted x range" in err
    import pandas as pd

    pred = pd.read_csv(out)
    assert list(pred.columns) == ["load [kN]", "note", "prediction", "reading_low_95", "reading_high_95",
                                  "outside_fitted_range"]
    assert pred["outside_fitted_range"].tolist() == [True, False, True]
    np.testing.assert_array_equal(pred["prediction"], Choice.load(choice).predict([0.0, 6.0, 20.0]))
    assert main(["apply", str(choice), str(new), "--x", "load", "--out", str(out)]) == 2
    assert main(["check", str(choice), str(data), "--x", "load", "--y", "deflection"]) == 0
    text = capsys.readouterr()
    assert "RMSE" in text.out and "same fingerprint" in text.err


DATA = Path(__file__).resolve().parent / "data"


@pytest.mark.parametrize("name", ["choice_v1_lambda0", "choice_v1_ridge"])
def test_version_1_files_load_with_todays_names_and_predict_bit_identically(name):
    """Files written by curvewright 0.1 (kept as fixtures) load with a notice, carry today's keys, and predict
    exactly numpy's Legendre series of the numbers stored in the file (the 0.1 evaluation)."""
    raw = json.loads((DATA / f"{name}.json").read_text())
    c = Choice.load(DATA / f"{name}.json")
    assert c.notices and "curvewright 0.1" in c.notices[0]
    assert c.doc["version"] == 2 and set(c.doc["validation"]["recommendation"]) == {"lowest", "simplest"}
    assert c.doc["validation"]["rule"] in ("lowest", "simplest", "manual")
    assert all(set(row) == {"power", "value", "standard_error"} for row in c.doc["model"]["power_coefficients"])
    jsonschema.validate(c.doc, SCHEMA)
    m = raw["model"]
    grid = np.linspace(-30, 130, 77)
    t = (grid - m["domain"]["center"]) / m["domain"]["half_width"]
    assert np.array_equal(c.predict(grid), np.polynomial.legendre.legval(t, np.array(m["legendre_coefficients"])))


@pytest.mark.parametrize("name", ["choice_v1_lambda0", "choice_v1_ridge"])
def test_apply_on_version_1_files_gives_the_numbers_0_1_wrote(name, tmp_path, capsys):
    """apply on a 0.1 choice file writes the predictions and band limits that curvewright 0.1's own apply wrote
    (its output is kept as a fixture), and says the file was read with today's names."""
    import pandas as pd

    readings = DATA / ("furnace_new_v1.csv" if name.endswith("lambda0") else "readings_v1.csv")
    out = tmp_path / "p.csv"
    assert main(["apply", str(DATA / f"{name}.json"), str(readings), "--x", "1", "--out", str(out)]) == 0
    assert "curvewright 0.1" in capsys.readouterr().err
    old = pd.read_csv(DATA / f"apply_v1_{name.split('_')[-1]}.csv")
    new = pd.read_csv(out)
    np.testing.assert_array_equal(new["prediction"], old["prediction"])
    np.testing.assert_array_equal(new["reading_low_95"], old["prediction_lower_95"])
    np.testing.assert_array_equal(new["reading_high_95"], old["prediction_upper_95"])


def test_shipped_schema_is_the_generated_one():
    """core/choice_schema.json equals core.choice_schema.schema() (regenerate with python -m core.choice_schema)."""
    from core.choice_schema import schema

    shipped = json.loads((ROOT / "core" / "choice_schema.json").read_text())
    assert shipped == schema() == SCHEMA


def test_saved_choice_carries_only_todays_names(tmp_path):
    """A saved choice has none of the 0.1 key names anywhere in it."""
    c, *_ = choice_for()
    text = c.to_json()
    for old in ('"min"', '"1se"', '"term"', '"estimate"', '"std_error"', '"interval"', '"df_residual"',
                '"fold_column"', '"weights_column"', '"group_column"', '"weights_kind"'):
        assert old not in text, old


def test_nan_and_infinity_literals_are_refused():
    """JSON has no NaN or Infinity; a file holding them is refused by name before the schema is consulted."""
    c, *_ = choice_for()
    text = c.to_json().replace(f'"cv_mse": {c.doc["validation"]["cv_mse"]!r}', '"cv_mse": NaN', 1)
    with pytest.raises(DataError, match=r"Choice file: expected finite numbers \(JSON has no NaN or Infinity\), got NaN"):
        Choice.from_json(text)


def test_sealed_record_lists_rows_and_flags_a_curve_chosen_after_the_reveal():
    """The choice lists the sealed rows by their keys (spreadsheet row numbers when given), says whether the
    exported curve differs from the one the sealed result was revealed for, and how surprising the sealed error
    is: P(chi2_n >= n MSE_sealed / MSE_cv) for n sealed rows."""
    from scipy import stats

    x, y = invented()
    rows = np.arange(2, 122)
    s = core.sweep(x, y, range(0, 6), [1e-3, 1e-1], folds=5, test_fraction=0.25, seed=1, row_keys=rows)
    data = {"file": "invented.csv", "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
            "x_column": "x", "y_column": "y", "x_unit": None, "y_unit": None}
    sealed = rows[s.engine.plan.test_mask].tolist()
    c = make_choice(x, y, s, 2, 0.1, rule="manual", data=data)
    st = c.doc["validation"]["sealed_test"]
    assert st["rows"] == sealed and st["revealed"] is False and st["chosen_after_reveal"] is False
    r = s.reveal_test(2, 0.1)
    st = make_choice(x, y, r, 2, 0.1, rule="manual", data=data).doc["validation"]["sealed_test"]
    assert st["revealed"] and not st["chosen_after_reveal"]
    cv = r.engine.cv_mean(2, 0.1)
    assert st["gap"]["p_value"] == pytest.approx(stats.chi2.sf(st["n"] * st["mse"] / cv, st["n"]), rel=1e-12)
    after = make_choice(x, y, r, 3, 0.1, rule="manual", data=data).doc["validation"]["sealed_test"]
    assert after["chosen_after_reveal"] is True and after["degree"] == 2


def test_refit_on_all_kept_rows_is_recorded_and_equals_core_fit():
    """On request the exported curve is refitted on every kept row (cross-validation and sealed), recorded as
    such; by default it is fitted on the rows it was scored on."""
    x, y = invented()
    s = core.sweep(x, y, range(0, 6), [0.0, 1e-1], folds=5, test_fraction=0.25, seed=1)
    data = {"file": None, "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
            "x_column": "x", "y_column": "y", "x_unit": None, "y_unit": None}
    c = make_choice(x, y, s, 2, 0.0, rule="manual", data=data, refit_all=True)
    assert c.doc["data"]["fit_rows"] == "all kept rows" and c.doc["data"]["rows_used"] == x.size
    np.testing.assert_array_equal(c.predict(x), core.fit(x, y, 2, 0.0).predict(x))
    d = make_choice(x, y, s, 2, 0.0, rule="manual", data=data)
    assert d.doc["data"]["fit_rows"] == "cross-validation rows" and d.doc["data"]["rows_used"] == s.n_train


def test_choice_carries_the_recommendation_checks():
    """The export states each pick's residual checks and which rule to prefer (core.checks)."""
    from core.checks import advice, check_recommendations

    c, s, x, y = choice_for()
    ch = c.doc["validation"]["checks"]
    train = ~s.engine.plan.test_mask
    want = check_recommendations(s, x[train], y[train])
    assert c.doc["validation"]["advice"] == advice(want)
    for rule in ("lowest", "simplest"):
        assert ch[rule] == json.loads(json.dumps(want[rule].to_dict()))


def redigest(doc):
    from core.choice_check import content_digest

    doc["digest"]["value"] = content_digest(doc)
    return doc


@pytest.mark.parametrize("edit, field", [
    (lambda d: d["model"]["legendre_coefficients"].__setitem__(1, d["model"]["legendre_coefficients"][1] + 100),
     "model/legendre_coefficients' and 'model/power_coefficients"),
    (lambda d: d["model"]["domain"].__setitem__("center", d["model"]["domain"]["center"] + 1),
     "model/legendre_coefficients' and 'model/power_coefficients"),
    (lambda d: d["model"]["uncertainty"]["legendre_covariance"][0].__setitem__(0, 2.0 * d["model"]["uncertainty"]
                                                                               ["legendre_covariance"][0][0]),
     "digest"),
    (lambda d: d["validation"].__setitem__("cv_mse", d["validation"]["cv_mse"] * 0.5) or
     d["validation"].__setitem__("cv_rmse", d["validation"]["cv_mse"] ** 0.5), "digest"),
    (lambda d: redigest(d) if d["model"]["power_coefficients"][1].__setitem__("value", 7.0) is None else d,
     "model/legendre_coefficients' and 'model/power_coefficients"),
    (lambda d: redigest(d) if d["model"]["power_form"]["centred"]["coefficients"].__setitem__(0, 9.0) is None else d,
     "model/legendre_coefficients' and 'model/power_form/centred"),
    (lambda d: redigest(d) if d["model"]["uncertainty"].__setitem__("legendre_covariance", [[1.0]]) is None else d,
     "model/uncertainty/legendre_covariance"),
    (lambda d: redigest(d) if d["model"]["uncertainty"].__setitem__(
        "legendre_covariance", (-np.eye(3)).tolist()) is None else d, "model/uncertainty/legendre_covariance"),
])
def test_any_edit_to_a_number_is_refused_naming_the_field(edit, field):
    """The whole file is tamper-evident: an edited number breaks the digest; an edit that also rewrites the
    digest is caught by the consistency checks (power form against the stable form, covariance shape and
    positive semi-definiteness), each refusal naming the field."""
    c, *_ = choice_for()
    doc = c.to_dict()
    edit(doc)
    with pytest.raises(DataError, match=f"Choice file field '{field}'"):
        Choice.from_dict(doc)
    assert Choice.from_dict(c.to_dict()).doc == c.doc          # the untouched file still loads


def test_notes_may_be_edited_without_breaking_the_digest():
    """The digest covers every field that affects a number; the free-text notes are outside it."""
    c, *_ = choice_for()
    doc = c.to_dict()
    doc["notes"] = "reviewed on site"
    assert Choice.from_dict(doc).doc["notes"] == "reviewed on site"


@pytest.mark.parametrize("text, got", [
    ("[" * 100_000 + "]" * 100_000, "nesting too deep"),
    ('{"format": "curvewright-choice", "version": ' + "9" * 5001 + "}", "digits"),
])
def test_hostile_json_is_refused_with_a_message(text, got):
    """A choice file nested 100,000 deep or holding a 5,001-digit integer gives a DataError, not a crash."""
    with pytest.raises(DataError, match=got):
        Choice.from_json(text)


def test_apply_writes_nothing_from_a_refused_file(tmp_path, capsys):
    """apply and check refuse an edited choice file and write no output."""
    c, *_ = choice_for()
    doc = c.to_dict()
    doc["model"]["legendre_coefficients"][0] += 1.0
    bad = tmp_path / "edited.json"
    bad.write_text(json.dumps(doc))
    rows = tmp_path / "rows.csv"
    rows.write_text("x,y\n1,2\n2,3\n")
    out = tmp_path / "out.csv"
    assert main(["apply", str(bad), str(rows), "--x", "x", "--out", str(out)]) == 2
    assert main(["check", str(bad), str(rows), "--x", "x", "--y", "y", "--json", str(tmp_path / "c.json")]) == 2
    assert "Choice file field 'model/legendre_coefficients'" in capsys.readouterr().err
    assert not out.exists() and not (tmp_path / "c.json").exists()


from hypothesis import given, settings, strategies as st  # noqa: E402


@settings(max_examples=60, deadline=None)
@given(st.data())
def test_fuzzed_choice_files_only_raise_project_errors(data):
    """Hypothesis mutates a valid choice document (replacing a field anywhere with random JSON values):
    loading gives a Choice or a DataError, never another exception."""
    c, *_ = choice_for_cached()
    doc = c.to_dict()
    paths = list(_paths(doc))
    path = data.draw(st.sampled_from(paths))
    value = data.draw(st.recursive(st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False)
                                   | st.text(max_size=5), lambda kids: st.lists(kids, max_size=3)
                                   | st.dictionaries(st.text(max_size=3), kids, max_size=3), max_leaves=6))
    node = doc
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    try:
        Choice.from_json(json.dumps(doc))
    except DataError:
        pass


_CACHE = {}


def choice_for_cached():
    if "c" not in _CACHE:
        _CACHE["c"] = choice_for()
    return _CACHE["c"]


def _paths(node, prefix=()):
    if isinstance(node, dict):
        for k, v in node.items():
            yield prefix + (k,)
            yield from _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node[:3]):
            yield prefix + (i,)
            yield from _paths(v, prefix + (i,))
