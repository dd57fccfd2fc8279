"""The page model's controls: each one reaches the exported choice, columns apply at once, rows left out
are named, and the read-back and tolerance check use the chosen curve."""

from pathlib import Path

import numpy as np
import pytest

import core
from app.model import PageModel
from app.panels import rows_md
from app.session import Session

SAMPLES = Path(__file__).resolve().parents[2] / "sample_sets"


@pytest.mark.parametrize("setting, value, field, expected", [
    ("through_origin", True, ("model", "intercept"), False),
    ("x_transform", "sqrt", ("model", "transforms", "x"), "sqrt"),
    ("y_transform", "log", ("model", "transforms", "y"), "log"),
    ("group_column", "run", ("validation", "groups_from"), "run"),
    ("fold_column", "run", ("validation", "folds_given_by"), "run"),
    ("repeats", 3, ("validation", "repeats"), 3),
    ("loo", True, ("validation", "scheme"), "loo"),
    ("penalty", "ridge", ("model", "penalty"), "ridge"),
    ("folds", 4, ("validation", "k"), 4),
])
def test_every_control_reaches_the_choice(setting, value, field, expected):
    """Setting a control on the session changes the matching field of the exported choice (the beam set:
    three runs, so grouped and explicit folds exist; fewer folds so three groups suffice)."""
    s = Session(folds=3, test_fraction=0.0)
    m = PageModel(s, SAMPLES / "beam_deflection.csv")
    setattr(s, setting, value)
    assert not m.status.startswith("Could not"), m.status
    doc = m.choice().doc
    for key in field:
        doc = doc[key]
    assert doc == expected


def test_column_choice_applies_at_once_and_weights_kind_is_recorded():
    """Choosing another y column re-reads the file without any further step; the weights kind is recorded."""
    s = Session()
    m = PageModel(s, SAMPLES / "thermistor_bench.csv")
    assert (s.x_column, s.y_column, s.weight_column) == ("probe_T [degC]", "resistance [ohm]", "u_resistance [ohm]")
    s.x_column = "probe_T [K]"
    assert m.table.x.name == "probe_T [K]"
    doc = m.choice().doc
    assert doc["data"]["x_column"] == "probe_T [K]" and doc["model"]["weighting"]["kind"] == "uncertainty"


def test_rows_skipped_and_excluded_are_named(tmp_path):
    """A row with a blank cell is skipped and named; an excluded row is named; sealed rows are listed only
    after the reveal."""
    f = tmp_path / "bench.csv"
    rows = ["load [kN],deflection [mm]"] + [f"{i},{2 * i + 0.1 * (-1) ** i}" for i in range(1, 30)]
    rows[5] = "5,"
    f.write_text("\n".join(rows) + "\n")
    s = Session()
    m = PageModel(s, f)
    assert "rows 6)" in m.status and "blank cell" in m.status
    s.exclude = "9"
    text = rows_md(m)
    assert "rows 6" in text and "excluded on request (recorded in the export): rows 9" in text
    assert "listed after the reveal" in text
    m.reveal_test()
    sealed = ", ".join(map(str, m.sealed_rows()))
    assert f"revealed: rows {sealed}" in rows_md(m)


def test_read_back_and_tolerance_use_the_exported_curve():
    """The read-back rows equal core.Choice.invert of the exported choice (the inversion is checked against
    Draper & Smith's closed form in tests/core); the tolerance check equals core.tolerance_check on the rows."""
    s = Session()
    m = PageModel(s, SAMPLES / "assay_calibration.csv")
    s.readings = "0.2\n0.30 0.31 0.29"
    c = m.choice()
    ref = c.invert([0.2, 0.3], replicates=np.array([1, 3])).rows()
    assert m.readback == ref
    assert any("Hubaux & Vos" in t for t in m.calibration) and any("Lack of fit" in t for t in m.calibration)
    s.tolerance = 0.01
    t = m.table
    train = ~m.engine.plan.test_mask
    want = core.tolerance_check(c, t.x.values[train], t.y.values[train], 0.01)
    assert m.tolerance_result["passed"] == want["passed"] and m.tolerance_result["failed"] == want["failed"]


def test_suggestions_carry_their_residual_checks():
    """Beside each suggestion the page shows core.checks' verdict for it (runs test of Wald & Wolfowitz 1940
    and the shift from least squares, tested in tests/core) and which one to prefer."""
    from core.checks import advice, check_recommendations
    from app.panels import suggestions_md

    s = Session()
    m = PageModel(s, SAMPLES / "furnace_yield.csv")
    x, y, w = m.training_rows()
    ref = check_recommendations(m.surface, x, y, w)
    checks, prefer = m.suggestion_checks
    assert {k: c.passed for k, c in checks.items()} == {k: c.passed for k, c in ref.items()}
    assert prefer == advice(ref)
    text = suggestions_md(m)
    rec = m.surface.recommended["simplest"]
    assert f"degree {rec.degree}" in text and "residual checks:" in text


def test_save_beside_is_named_after_file_and_configuration(tmp_path):
    """The choice saved next to the data file carries the same name as the download."""
    import shutil

    src = tmp_path / "beam_deflection.csv"
    shutil.copy(SAMPLES / "beam_deflection.csv", src)
    s = Session(log_lambda=-2.0, degree=2)
    m = PageModel(s, src)
    target = m.save_beside()
    assert target.name == "beam_deflection_deg2_lam1e-2_choice.json" and target.is_file()
