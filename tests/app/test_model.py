"""The page model without a browser: its outputs equal core's."""

import json
import math
import subprocess
import sys
from pathlib import Path

import jsonschema
import numpy as np
import pytest

import core
from app.model import PageModel
from app.session import LOG_LAMBDA_OFF, Session
from core.choice import SCHEMA, Choice

ROOT = Path(__file__).resolve().parents[2]
FURNACE = ROOT / "sample_sets" / "furnace_yield.csv"


@pytest.fixture
def page():
    """(session, model) on the invented furnace data set, scored with ridge (compared with core's defaults)."""
    s = Session(penalty="ridge")
    return s, PageModel(s, FURNACE)


def test_default_penalty_is_curvature_and_equals_core_fit():
    """The page opens with the curvature penalty; its curve is core.fit's curvature fit on the training rows,
    over the sweep's domain (the integral's range)."""
    s = Session()
    m = PageModel(s, FURNACE)
    assert s.penalty == "curvature" and m.engine.penalty == "curvature"
    x, y, _ = m.training_rows()
    for d, loglam in ((3, -2.0), (7, 0.0)):
        s.degree, s.log_lambda = d, loglam
        ref = core.fit(x, y, d, 10 ** loglam, penalty="curvature", domain=m.engine.domain)
        np.testing.assert_allclose(m.out["curve"], ref.predict(m.out["grid"]), rtol=1e-9)


def test_curve_equals_core_fit_on_training_rows(page):
    """Moving degree and lambda gives core.fit's curve for the same training rows."""
    s, m = page
    x, y, _ = m.training_rows()
    for d, loglam in ((2, -3.0), (5, -1.0), (7, 1.0)):
        s.degree, s.log_lambda = d, loglam
        ref = core.fit(x, y, d, 10 ** loglam)
        np.testing.assert_allclose(m.out["curve"], ref.predict(m.out["grid"]), rtol=1e-9)
        assert m.out["effective_df"] == pytest.approx(ref.effective_df, rel=1e-9)


def test_cv_numbers_equal_core_sweep(page):
    """The live CV MSE equals core.sweep with the page's folds, seed and sealed fraction."""
    s, m = page
    s.degree, s.log_lambda = 4, -2.0
    t = m.table
    ref = core.sweep(t.x.values, t.y.values, [4], [1e-2], folds=s.folds, seed=s.seed,
                     test_fraction=s.test_fraction, row_keys=t.row_numbers)
    assert m.out["cv_mse"] == pytest.approx(ref.cv_mse[0, 0], rel=1e-12)
    assert m.out["cv_mse_se"] == pytest.approx(ref.cv_mse_se[0, 0], rel=1e-12)


def test_lambda_slider_left_end_is_exactly_zero(page):
    """The slider's left end means lambda = 0: the curve is core.fit's least-squares curve."""
    s, m = page
    s.log_lambda = LOG_LAMBDA_OFF
    assert s.lam == 0.0
    x, y, _ = m.training_rows()
    np.testing.assert_allclose(m.out["curve"], core.fit(x, y, s.degree, 0.0).predict(m.out["grid"]), rtol=1e-9)


def test_recommend_jumps_to_the_rule(page):
    """A suggestion button moves degree and lambda to the surface's recommendation."""
    s, m = page
    m.recommend("simplest")
    rec = m.surface.recommended["simplest"]
    assert s.degree == rec.degree and s.lam == pytest.approx(rec.lam, rel=1e-12)
    assert m.out["degree"] == rec.degree


def test_new_folds_rebuild_statistics(page):
    """A new seed builds new folds and new CV numbers."""
    s, m = page
    before = m.out["cv_mse"]
    s.seed = 7
    assert m.engine.plan.seed == 7 and m.out["cv_mse"] != before


def test_training_fraction_sets_rows_aside(page):
    """A training fraction below 1 sets rows aside (drawn, never in the folds)."""
    s, m = page
    s.train_fraction = 0.5
    n_aside = m.out["aside_x"].size
    assert 15 < n_aside < 45 and m.engine.plan.n == 60 - n_aside


def test_bad_file_keeps_previous_data(page, tmp_path):
    """A file that cannot be read leaves the data as it was and names the bad row in the status."""
    _, m = page
    bad = tmp_path / "bad.csv"
    bad.write_text("a,b\n1,x\n2,3\n")
    before, engine = m.table, m.engine
    assert not m.load_bytes(bad.read_bytes(), "bad.csv")
    assert m.table is before and m.engine is engine
    assert "Could not load bad.csv" in m.status and "row 2" in m.status


def test_reveal_is_recorded_in_the_export(page):
    """Revealing the sealed test replaces the surface by the revealed one; the export records it."""
    s, m = page
    s.degree, s.log_lambda = 3, -2.0
    doc = m.choice().to_dict()
    assert doc["validation"]["sealed_test"]["revealed"] is False
    before = m.surface
    mse = m.reveal_test()
    assert not before.sealed.revealed and m.surface.sealed.revealed
    assert mse == pytest.approx(m.engine.test_mse(3, 1e-2), rel=1e-12)
    doc = m.choice("checked by A. Tester").to_dict()
    st = doc["validation"]["sealed_test"]
    assert st["revealed"] and st["mse"] == mse and st["revealed_at"]
    assert doc["notes"] == "checked by A. Tester"


def test_export_validates_and_predicts_like_the_fit(page, tmp_path):
    """The exported JSON matches the shipped schema; loaded back it predicts like core.fit."""
    s, m = page
    m.recommend("lowest")
    c = m.choice()
    jsonschema.validate(json.loads(c.to_json()), SCHEMA)
    x, y, _ = m.training_rows()
    ref = core.fit(x, y, s.degree, s.lam)
    path = c.save(tmp_path / "c.json")
    loaded = Choice.load(path)
    grid = np.linspace(600, 950, 101)
    assert np.array_equal(loaded.predict(grid), ref.predict(grid))
    assert c.doc["validation"]["rule"] == "lowest"
    assert c.doc["validation"]["cv_rmse"] == pytest.approx(math.sqrt(m.out["cv_mse"]))


def test_sessions_are_independent():
    """Two sessions on the same file do not share inputs or outputs."""
    a, b = Session(), Session()
    ma, mb = PageModel(a, FURNACE), PageModel(b, FURNACE)
    a.degree = 8
    assert b.degree == 3 and mb.out["degree"] == 3 and ma.out["degree"] == 8


def test_penalty_switch_equals_core_lasso(page):
    """Switching to the lasso: the live curve equals core.fit(penalty="lasso") on the training rows."""
    s, m = page
    s.penalty = "lasso"
    s.degree, s.log_lambda = 3, -1.0
    x, y, _ = m.training_rows()
    ref = core.fit(x, y, 3, 0.1, penalty="lasso")
    np.testing.assert_allclose(m.out["curve"], ref.predict(m.out["grid"]), rtol=1e-8)
    assert m.choice().doc["model"]["penalty"] == "lasso"


def test_penalty_switch_builds_new_engines_and_leaves_the_first_alone(page):
    """ridge -> lasso -> ridge: each switch builds a new engine and surface; the first engine still
    scores ridge, and every step's CV numbers equal core.sweep(..., penalty=...) on the same rows."""
    s, m = page
    t = m.table
    first, first_surface = m.engine, m.surface
    s.degree, s.log_lambda = 3, -1.0

    def sweep(penalty):
        return core.sweep(t.x.values, t.y.values, [3], [0.1], folds=s.folds, seed=s.seed,
                          test_fraction=s.test_fraction, penalty=penalty, row_keys=t.row_numbers)

    ridge_cv = m.out["cv_mse"]
    assert ridge_cv == pytest.approx(sweep("ridge").cv_mse[0, 0], rel=1e-12)
    s.penalty = "lasso"
    lasso = m.engine
    assert lasso is not first and m.surface is not first_surface and lasso.penalty == "lasso"
    assert m.surface.engine is lasso
    assert m.out["cv_mse"] == pytest.approx(sweep("lasso").cv_mse[0, 0], rel=1e-9)
    s.penalty = "ridge"
    assert m.engine is not first and m.engine is not lasso and m.engine.penalty == "ridge"
    assert first.penalty == "ridge" and first.mix == 0.0 and first_surface.engine is first
    assert lasso.penalty == "lasso"
    assert first.cv_mean(3, 0.1) == ridge_cv
    assert m.out["cv_mse"] == pytest.approx(ridge_cv, rel=1e-12)


def test_interval_band_at_lambda_zero_equals_core(page):
    """At lambda = 0 the drawn prediction band is core.fit's; the invented outliers are flagged."""
    s, m = page
    s.log_lambda = LOG_LAMBDA_OFF
    x, y, _ = m.training_rows()
    _, lo, hi = core.fit(x, y, s.degree, 0.0).predict(m.out["grid"], band="reading")
    np.testing.assert_allclose(m.out["interval"][0], lo, rtol=1e-9)
    np.testing.assert_allclose(m.out["interval"][1], hi, rtol=1e-9)
    assert m.out["influential"].any()


def test_excluded_rows_are_recorded(page):
    """Rows excluded on request leave the table and are recorded in the export; a bad row is named."""
    s, m = page
    s.exclude = "11, 33"
    assert m.table.n == 58 and m.choice().doc["data"]["excluded_rows"] == [11, 33]
    s.exclude = "999"
    assert "Could not exclude row 999" in m.status


def test_bootstrap_band_belongs_to_its_setting(page):
    """The bootstrap band is shown for the setting it was computed for and cleared when the setting moves;
    it equals core.uncertainty.bootstrap_band on the training rows with the page's seed."""
    from core.uncertainty import bootstrap_band

    s, m = page
    s.degree, s.log_lambda = 2, 0.0
    assert m.out["interval"] is None
    m.bootstrap_band(B=60)
    lo, hi = m.out["interval"]
    x, y, w = m.training_rows()
    _, rlo, rhi = bootstrap_band(x, y, 2, 1.0, m.out["grid"], B=60, seed=s.seed, weights=w)
    np.testing.assert_allclose(lo, rlo, rtol=1e-12)
    s.degree = 1
    assert m.out["interval"] is None                    # the band belongs to degree 2


def test_loo_gcv_and_reduced_chi_square_in_the_page():
    """Invented thermistor set with standard uncertainties: the page's reduced chi-square equals
    core.fit's, its LOO equals core.sweep(folds='loo') on the same rows, its GCV the closed form."""
    s = Session(weight_kind="uncertainty", weight_column="u_resistance [ohm]")
    m = PageModel(s, ROOT / "sample_sets" / "thermistor_bench.csv")
    s.degree, s.log_lambda = 6, LOG_LAMBDA_OFF
    x, y, w = m.training_rows()
    assert w is not None and x.size == m.engine.n_train
    assert m.out["reduced_chi_square"] == pytest.approx(core.fit(x, y, 6, weights=w).reduced_chi_square, rel=1e-8)
    loo = core.sweep(x, y, [6], [0.0], folds="loo", weights=w)
    assert m.out["loo_mse"] == pytest.approx(loo.cv_mse[0, 0], rel=1e-9)
    ref = core.fit(x, y, 6, 0.0, weights=w)
    # GCV (Golub, Heath & Wahba 1979): (SSE/W) / (1 - df/n)^2 with df = 7 coefficients at lambda = 0
    assert m.out["gcv_mse"] == pytest.approx(ref.train_mse / (1 - 7 / x.size) ** 2, rel=1e-9)


def test_large_file_streams_into_statistics_with_progress(tmp_path, monkeypatch):
    """Above the size limit the page streams the file (progress: rows done, rate, time left) and
    then works from the statistics; numbers equal core.stream.sweep_file's."""
    from core import defaults
    from core.stream import sweep_file

    rng = np.random.default_rng(3)
    x = rng.uniform(0, 10, 30000)
    p = tmp_path / "log.csv"
    p.write_text("t [s],v [V]\n" + "".join(f"{a:.6f},{b:.6f}\n" for a, b in zip(x, np.sin(x) + 0.2 * rng.normal(size=x.size))))
    monkeypatch.setattr(defaults, "STREAM_BYTES", 1000)
    seen = []
    s = Session()
    m = PageModel(s)
    m.param.watch(lambda e: seen.append(e.new), "progress_text")
    assert m.load_path(p)
    assert any("rows/s" in t and "left" in t for t in seen) and "streamed into the statistics" in m.progress_text
    assert not m.has_rows and m.training_rows()[0].size == 0
    s.degree, s.log_lambda = 4, -2.0
    ref, _ = sweep_file(p, range(0, 16), [1e-2], x=1, y=2, folds=10, seed=0, test_fraction=0.2,
                        penalty="curvature")
    assert m.out["cv_mse"] == pytest.approx(ref.engine.cv_summary(4, [1e-2])[0][0], rel=1e-12)
    assert m.choice().doc["data"]["x_column"] == "t [s]"


def test_model_modules_import_no_ui_package():
    """The session, the model and the modules it is split into load without panel or bokeh
    (checked in a fresh interpreter)."""
    code = ("import sys, app.session, app.model, app.loading, app.derive, app.actions; "
            "print(','.join(m for m in ('panel', 'bokeh') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT)
    assert out.stdout.strip() == ""


def test_uploaded_copies_are_deleted_when_the_page_closes():
    """An upload is kept as a temporary copy while the page may re-read its columns; closing the page (the
    browser session ending) deletes every copy, and messages never named them."""
    import tempfile

    m = PageModel(Session())
    assert m.load_bytes(b"load [kN],deflection [mm]\n1,0.5\n2,1.1\n3,1.4\n4,2.1\n5,2.4\n6,3.1\n7,3.4\n8,4.2\n"
                        b"9,4.4\n10,5.1\n11,5.5\n12,6.1\n", "beam.csv")
    assert m.load_bytes(b"x,y\n1,2\n2,n/a\n", "broken.csv") is False
    copies = [Path(tempfile.gettempdir(), t) for t in m._temp_names]
    assert len(copies) == 2 and all(p.exists() for p in copies)
    assert "broken.csv" in m.status and not any(p.name in m.status for p in copies)
    m.close()
    assert not any(p.exists() for p in copies)


def test_a_curve_fitted_on_a_share_of_the_rows_is_not_exported(page):
    """The choice file has no field for rows set aside by the training-fraction slider: below 1 the export
    is refused with the reason and the fix (never a curve from half the rows passed off as from all), and
    at 1 again it is exported from every kept row."""
    s, m = page
    s.train_fraction = 0.5
    with pytest.raises(core.errors.ParameterError, match="Training fraction: expected 1 for a choice"):
        m.choice()
    s.train_fraction = 1.0
    doc = json.loads(m.choice().to_json())
    assert doc["data"]["rows_used"] == m.engine.n_train == 60 - m.engine.n_test     # every non-sealed row


def test_a_jump_to_a_recommendation_brings_the_learning_curve_and_the_uses_along():
    """After a suggestion button the learning curve, the read-back and the calibration figures belong to the
    recommended setting, not the one before (the read-back equals Choice.invert of that setting's choice)."""
    s = Session(readings="0.2\n0.5")
    m = PageModel(s, ROOT / "sample_sets" / "assay_calibration.csv")
    s.degree, s.log_lambda = 5, -1.0
    m.settle()
    for rule in ("simplest", "lowest"):
        m.recommend(rule)
        rec = m.surface.recommended[rule]
        assert m.learning.degree == rec.degree and m.learning.lam == pytest.approx(rec.lam)
        assert m.use_choice.doc["model"]["degree"] == rec.degree
        assert m.use_choice.doc["model"]["lambda"] == pytest.approx(rec.lam, rel=1e-9)
        fresh = m.choice().invert([0.2, 0.5])
        assert [r["x_estimate"] for r in m.readback] == pytest.approx(list(fresh.x_estimate), rel=1e-12)
