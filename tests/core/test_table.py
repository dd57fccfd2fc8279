"""The file reader: formats, units, fingerprints, and fuzzing for stray exceptions."""

import io
import string
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from app.cli import main
from core.errors import DataError
from core.table import read_table, unit_of

ROOT = Path(__file__).resolve().parents[2]


def test_units_are_kept_from_headers():
    """Units written in headers ('load [kN]') are kept, and bare names find their columns."""
    assert unit_of("load [kN]") == "kN" and unit_of("T (degC)") == "degC" and unit_of("plain") is None
    t = read_table(ROOT / "sample_sets" / "beam_deflection.csv", x="load", y="deflection")
    assert (t.x.name, t.x.unit, t.y.unit) == ("load [kN]", "kN", "mm")


def test_xlsx_and_parquet_read_like_csv(tmp_path):
    """The same invented frame as .xlsx and .parquet reads to the CSV's values and fingerprint."""
    df = pd.DataFrame({"x [s]": np.arange(6.0), "y": np.arange(6.0) ** 2, "w": np.ones(6)})
    df.to_excel(tmp_path / "d.xlsx", index=False)
    df.to_parquet(tmp_path / "d.parquet")
    df.to_csv(tmp_path / "d.csv", index=False)
    ref = read_table(tmp_path / "d.csv", x="x", y="y", weights="w")
    for name in ("d.xlsx", "d.parquet"):
        t = read_table(tmp_path / name, x="x", y="y", weights="w")
        np.testing.assert_array_equal(t.x.values, ref.x.values)
        np.testing.assert_array_equal(t.y.values, ref.y.values)
        assert t.columns_sha256 == ref.columns_sha256      # same values, same fingerprint


def test_fingerprint_tracks_bytes_and_values(tmp_path):
    """The file fingerprint follows the bytes; the columns fingerprint follows the values."""
    a = tmp_path / "a.csv"; a.write_text("x,y\n1,2\n2,3\n")
    b = tmp_path / "b.csv"; b.write_text("x,y\n1.0,2.0\n2.0,3.0\n")
    ta, tb = read_table(a, x="x", y="y"), read_table(b, x="x", y="y")
    assert ta.file_sha256 != tb.file_sha256 and ta.columns_sha256 == tb.columns_sha256
    assert ta.fingerprint()["rows"] == 2 and ta.fingerprint()["x_max"] == 2.0


def test_uncertainty_becomes_inverse_square_weight(tmp_path):
    """An uncertainty column u becomes the weight 1/u^2."""
    p = tmp_path / "u.csv"; p.write_text("x,y,u\n1,2,0.5\n2,3,2\n")
    t = read_table(p, x="x", y="y", uncertainty="u")
    np.testing.assert_allclose(t.weights, [4.0, 0.25])


CSVISH = st.text(alphabet=string.digits + ".,;-+eE \t\nxyNaIinf\"'#", max_size=300)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=CSVISH)
def test_fuzz_csv_like_text_raises_only_data_errors(tmp_path, text):
    """Random CSV-like text: the reader either returns a table or raises DataError, nothing else."""
    p = tmp_path / "fuzz.csv"
    p.write_text(text)
    try:
        t = read_table(p, x=1, y=2, blank_rows="skip")
    except DataError as exc:
        assert str(exc) and "\n" not in str(exc)
    else:
        assert np.all(np.isfinite(t.x.values)) and t.n >= 1


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.binary(max_size=400), suffix=st.sampled_from([".csv", ".xlsx", ".parquet", ".tsv"]))
def test_fuzz_random_bytes_exit_2_without_traceback(tmp_path, capsys, data, suffix):
    """Random bytes under any supported name: exit 0 or 2 with a one-paragraph message."""
    p = tmp_path / ("fuzz" + suffix)
    p.write_bytes(data)
    code = main(["fit", str(p), "--x", "1", "--y", "2", "--degree", "1"])
    err = capsys.readouterr().err
    assert code in (0, 2)
    if code == 2:
        assert err.startswith("error: ") and "Traceback" not in err
        assert len(err.strip().splitlines()) == 1
