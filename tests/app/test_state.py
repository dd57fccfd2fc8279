"""The workbench state without a browser: its outputs equal core's."""

import json
import math
from pathlib import Path

import jsonschema
import numpy as np
import pytest

import core
from app.state import LOG_LAMBDA_OFF, Workbench
from core.choice import SCHEMA, Choice

ROOT = Path(__file__).resolve().parents[2]
FURNACE = ROOT / "sample_sets" / "furnace_yield.csv"


@pytest.fixture
def wb():
    return Workbench(FURNACE)


def training_rows(wb):
    keep = wb._keep
    rows = np.flatnonzero(keep)[~wb.engine.plan.test_mask]
    return wb.table.x.values[rows], wb.table.y.values[rows]


def test_curve_equals_core_fit_on_training_rows(wb):
    """Moving degree and lambda gives core.fit's curve for the same training rows."""
    x, y = training_rows(wb)
    for d, loglam in ((2, -3.0), (5, -1.0), (7, 1.0)):
        wb.degree, wb.log_lambda = d, loglam
        ref = core.fit(x, y, d, 10 ** loglam)
        np.testing.assert_allclose(wb.out["curve"], ref.predict(wb.out["grid"]), rtol=1e-9)
        assert wb.out["effective_df"] == pytest.approx(ref.effective_df, rel=1e-9)


def test_cv_numbers_equal_core_sweep(wb):
    """The live CV MSE equals core.sweep with the page's folds, seed and sealed fraction."""
    wb.degree, wb.log_lambda = 4, -2.0
    t = wb.table
    s = core.sweep(t.x.values, t.y.values, [4], [1e-2], folds=wb.folds, seed=wb.seed,
                   test_fraction=wb.test_fraction)
    assert wb.out["cv_mse"] == pytest.approx(s.cv_mse[0, 0], rel=1e-12)
    assert wb.out["cv_mse_se"] == pytest.approx(s.cv_mse_se[0, 0], rel=1e-12)


def test_lambda_slider_left_end_is_exactly_zero(wb):
    wb.log_lambda = LOG_LAMBDA_OFF
    assert wb.lam == 0.0
    x, y = training_rows(wb)
    np.testing.assert_allclose(wb.out["curve"], core.fit(x, y, wb.degree, 0.0).predict(wb.out["grid"]), rtol=1e-9)


def test_recommend_jumps_to_the_rule(wb):
    wb.recommend("1se")
    rec = wb.surface.recommended["1se"]
    assert wb.degree == rec.degree and wb.lam == pytest.approx(rec.lam, rel=1e-12)


def test_new_folds_rebuild_statistics(wb):
    before = wb.out["cv_mse"]
    wb.seed = 7
    assert wb.engine.plan.seed == 7 and wb.out["cv_mse"] != before


def test_training_fraction_sets_rows_aside(wb):
    wb.train_fraction = 0.5
    n_aside = wb.out["aside_x"].size
    assert 15 < n_aside < 45 and wb.engine.plan.n == 60 - n_aside


def test_bad_file_keeps_previous_data(wb, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("a,b\n1,x\n2,3\n")
    before = wb.table
    assert not wb.load_bytes(bad.read_bytes(), "bad.csv")
    assert wb.table is before
    assert "Could not load bad.csv" in wb.status and "row 2" in wb.status


def test_reveal_is_recorded_in_the_export(wb):
    wb.degree, wb.log_lambda = 3, -2.0
    doc = wb.choice().to_dict()
    assert doc["validation"]["sealed_test"]["revealed"] is False
    mse = wb.reveal_test()
    doc = wb.choice("checked by A. Tester").to_dict()
    st = doc["validation"]["sealed_test"]
    assert st["revealed"] and st["mse"] == mse and st["revealed_at"]
    assert doc["notes"] == "checked by A. Tester"


def test_export_validates_and_predicts_like_the_fit(wb, tmp_path):
    """The exported JSON matches the shipped schema; loaded back it predicts like core.fit."""
    wb.recommend("min")
    c = wb.choice()
    jsonschema.validate(json.loads(c.to_json()), SCHEMA)
    x, y = training_rows(wb)
    ref = core.fit(x, y, wb.degree, wb.lam)
    path = c.save(tmp_path / "c.json")
    loaded = Choice.load(path)
    grid = np.linspace(600, 950, 101)
    assert np.array_equal(loaded.predict(grid), ref.predict(grid))
    assert c.doc["validation"]["rule"] == "min"
    assert c.doc["validation"]["cv_rmse"] == pytest.approx(math.sqrt(wb.out["cv_mse"]))


def test_sessions_are_independent():
    a, b = Workbench(FURNACE), Workbench(FURNACE)
    a.degree = 8
    assert b.degree == 3 and b.out["degree"] == 3


def test_penalty_switch_equals_core_lasso(wb):
    """Switching to the lasso: the live curve equals core.fit(penalty="lasso") on the training rows."""
    wb.penalty = "lasso"
    wb.degree, wb.log_lambda = 3, -1.0
    x, y = training_rows(wb)
    ref = core.fit(x, y, 3, 0.1, penalty="lasso")
    np.testing.assert_allclose(wb.out["curve"], ref.predict(wb.out["grid"]), rtol=1e-8)
    assert wb.choice().doc["model"]["penalty"] == "lasso"


def test_interval_band_at_lambda_zero_equals_core(wb):
    wb.log_lambda = LOG_LAMBDA_OFF
    x, y = training_rows(wb)
    _, lo, hi = core.fit(x, y, wb.degree, 0.0).predict(wb.out["grid"], interval="prediction")
    np.testing.assert_allclose(wb.out["interval"][0], lo, rtol=1e-9)
    assert wb.out["influential"].any()          # the invented outliers are flagged


def test_excluded_rows_are_recorded(wb):
    wb.exclude = "11, 33"
    assert wb.table.n == 58 and wb.choice().doc["data"]["excluded_rows"] == [11, 33]
    wb.exclude = "999"
    assert "Could not exclude row 999" in wb.status


def test_bootstrap_band_and_gradient_descent_from_the_page(wb):
    wb.degree, wb.log_lambda = 2, 0.0
    assert wb.out["interval"] is None
    wb.bootstrap_band(B=60)
    lo, hi = wb.out["interval"]
    assert np.all(hi > lo)
    wb.degree, wb.gd_rate, wb.gd_iterations = 1, 0.9, 3000
    wb.run_gradient_descent()
    assert not wb.gd.diverged and wb.gd.cost[-1] == pytest.approx(wb.gd.closed_form_cost, rel=1e-8)
    wb.gd_rate = 5.0
    wb.run_gradient_descent()
    assert wb.gd.diverged and "too large" in wb.status


def test_loo_gcv_and_reduced_chi_square_in_the_page():
    """Invented thermistor set with standard uncertainties: the page's reduced chi-square equals
    core.fit's, its LOO equals core.sweep(folds='loo') on the same rows."""
    wb = Workbench(ROOT / "sample_sets" / "thermistor_bench.csv", weight_kind="uncertainty",
                   weight_column="u_resistance [ohm]")
    wb.degree, wb.log_lambda = 6, LOG_LAMBDA_OFF
    rows = np.flatnonzero(wb._keep)[~wb.engine.plan.test_mask]
    x, y, w = wb.table.x.values[rows], wb.table.y.values[rows], wb.table.weights[rows]
    assert wb.out["reduced_chi_square"] == pytest.approx(core.fit(x, y, 6, weights=w).reduced_chi_square, rel=1e-8)
    loo = core.sweep(x, y, [6], [0.0], folds="loo", weights=w)
    assert wb.out["loo_mse"] == pytest.approx(loo.cv_mse[0, 0], rel=1e-9)
    assert wb.out["gcv_mse"] > 0


def test_large_file_streams_into_statistics_with_progress(tmp_path, monkeypatch):
    """Above the size limit the page streams the file (progress: rows done, rate, time left) and
    then works from the statistics; numbers equal core.stream.sweep_file's."""
    from core.stream import sweep_file

    rng = np.random.default_rng(3)
    x = rng.uniform(0, 10, 30000)
    p = tmp_path / "log.csv"
    p.write_text("t [s],v [V]\n" + "".join(f"{a:.6f},{b:.6f}\n" for a, b in zip(x, np.sin(x) + 0.2 * rng.normal(size=x.size))))
    monkeypatch.setattr(Workbench, "stream_bytes", 1000)
    seen = []
    wb = Workbench()
    wb.param.watch(lambda e: seen.append(e.new), "progress_text")
    assert wb.load_path(p)
    assert any("rows/s" in t and "left" in t for t in seen) and "streamed into the statistics" in wb.progress_text
    wb.degree, wb.log_lambda = 4, -2.0
    ref, _ = sweep_file(p, range(0, 16), [1e-2], x=1, y=2, folds=10, seed=0, test_fraction=0.2)
    assert wb.out["cv_mse"] == pytest.approx(ref.engine.cv_summary(4, [1e-2])[0][0], rel=1e-12)
    assert wb.choice().doc["data"]["x_column"] == "t [s]"
