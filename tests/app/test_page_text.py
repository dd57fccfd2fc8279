"""The page's small text functions: column proposal, numbers with their standard error, download names,
messages in page words, pasted readings."""

import csv
from pathlib import Path

import numpy as np
import pytest

from app.columns import propose_columns
from app.fmt import lam_slug, lam_text, with_se
from app.names import download_name, page_words
from app.uses import parse_readings
from core.errors import DataError

SAMPLES = Path(__file__).resolve().parents[2] / "sample_sets"


@pytest.mark.parametrize("headers, x, y", [
    (["id", "Reading (mV)", "Temperature (C)"], "Temperature (C)", "Reading (mV)"),
    (["run", "deflection [mm]", "load [kN]"], "load [kN]", "deflection [mm]"),
    (["signal [AU]", "conc [ng/mL]"], "conc [ng/mL]", "signal [AU]"),
    (["batch", "output", "dose"], "dose", "output"),
    (["time [s]", "y"], "time [s]", "y"),
    (["a", "b", "c"], "a", "b"),
])
def test_columns_proposed_from_header_names(headers, x, y):
    """x is the header naming something set (temperature, load, dose, time...), y the one naming something
    measured (reading, deflection, signal, output...); bookkeeping columns are never proposed; without a
    recognised word the first two columns (the rule in app.columns' docstring)."""
    got = propose_columns(headers)
    assert (got["x"], got["y"]) == (x, y)


def test_uncertainty_column_proposed_as_weights():
    """A column named u_<y> is proposed as the standard uncertainties of y."""
    headers = next(csv.reader((SAMPLES / "assay_calibration.csv").open()))
    got = propose_columns(headers)
    assert got == {"x": "conc [ng/mL]", "y": "signal [AU]", "weights": "u_signal [AU]", "weight_kind": "uncertainty"}


@pytest.mark.parametrize("value, se, text", [
    (2.598, 0.5, "2.6 ± 0.5"),           # the example of the requirement
    (2.598, 0.15, "2.60 ± 0.15"),        # leading 1: two digits
    (123.456, 0.96, "123 ± 1"),          # rounds up into the next decade
    (0.012345, 0.00042, "0.0123 ± 0.0004"),
    (5.0, 0.0, "5"),
    (float("nan"), 0.1, "–"),
])
def test_value_with_standard_error(value, se, text):
    """The uncertainty to one or two significant digits and the value to the same place (JCGM 100:2008,
    sec. 7.2.6)."""
    assert with_se(value, se) == text


def test_lambda_as_written_and_in_file_names():
    """lambda is "0" at zero, never the slider's position; file names carry a short power of ten."""
    assert lam_text(0.0) == "0" and lam_text(0.00123) == "0.00123"
    assert [lam_slug(v) for v in (0.0, 1e-2, 0.0032, 1.0)] == ["0", "1e-2", "3.2e-3", "1e0"]


def test_download_names_follow_data_and_configuration():
    """Downloads are named after the data file's stem and the configuration; odd characters become '_'."""
    assert download_name("furnace_yield.csv", 3, 1e-2, "choice", "json") == "furnace_yield_deg3_lam1e-2_choice.json"
    assert (download_name("run <1>.xlsx", 2, 0.0, "report", "html", penalty="ridge", through_origin=True,
                          transforms=("none", "log")) == "run_1_deg2_lam0_ridge_origin_ylog_report.html")


def test_messages_in_page_words():
    """Option names become the page's control names; a temporary copy is named by the uploaded file."""
    msg = ("Option --y-transform: expected no stated uncertainties, got --uncertainty with the log transform. "
           "File '/tmp/tmpq1w2.csv' row 3.")
    got = page_words(msg, {"tmpq1w2.csv": "bench run.csv"})
    assert "--" not in got and "tmp" not in got
    assert got.startswith("Setting 'y transform': expected") and "File 'bench run.csv' row 3" in got


def test_few_groups_message_points_at_the_sealed_fraction():
    """With few groups the sealed test can leave too few for the folds: the message names that control too."""
    got = page_words("Group column: expected at least 2 distinct groups for 2 folds, got 1 groups. "
                     "Use fewer folds or ungrouped folds.")
    assert got.endswith("lower the sealed-test fraction too.")


def test_pasted_readings():
    """One reading per line; several on a line are replicates of one unknown (their mean and count)."""
    y, n = parse_readings("0.2\n\n0.30, 0.31\t0.29\n")
    np.testing.assert_allclose(y, [0.2, 0.3])
    assert n.tolist() == [1, 3]
    with pytest.raises(DataError, match="Readings, line 2: expected a number, got 'abc'"):
        parse_readings("1\nabc")


def test_a_refused_report_download_escapes_the_message(monkeypatch):
    """The report download is an HTML file: when the report is refused, the message inside it (which can
    quote a column name or cell) is HTML-escaped, not Markdown-escaped."""
    import app.report
    from app.model import PageModel
    from app.session import Session
    from app.views import Workspace
    from core.errors import DataError

    def refuse(*_):
        raise DataError('column \'<img src=x onerror="alert(1)">\' refused')

    monkeypatch.setattr(app.report, "report_in_subprocess", refuse)
    ws = Workspace(PageModel(Session(), SAMPLES / "furnace_yield.csv"))
    text = ws._report().getvalue()
    assert "<img" not in text and "&lt;img src=x onerror=&quot;alert(1)&quot;&gt;" in text
