"""Streaming a file chunk by chunk gives the in-memory sweep's surface and fingerprint."""

import numpy as np
import pandas as pd
import pytest

import core
from core.errors import DataError
from core.stream import sweep_file
from core.table import read_table


@pytest.fixture
def csv(tmp_path):
    rng = np.random.default_rng(2)
    x = rng.uniform(-2, 3, 2000)
    y = np.tanh(x) + 0.1 * rng.normal(size=x.size)
    w = rng.uniform(0.5, 2, x.size)
    p = tmp_path / "log [s].csv"
    pd.DataFrame({"time [s]": x, "signal [V]": y, "w": w}).to_csv(p, index=False)
    return p


@pytest.mark.parametrize("chunk_rows", [37, 1000, 100000])
def test_streamed_surface_equals_in_memory(csv, chunk_rows):
    """Streamed in chunks of any size, the surface and fingerprints equal the in-memory sweep's."""
    t = read_table(csv, x="time", y="signal", weights="w")
    lams = [1e-4, 1e-2, 1.0]
    ref = core.sweep(t.x.values, t.y.values, range(0, 9), lams, folds=5, seed=3, weights=t.weights, row_keys=t.row_numbers,
                     test_fraction=0.2)
    s, sc = sweep_file(csv, range(0, 9), lams, x="time", y="signal", weights="w", folds=5, seed=3,
                       test_fraction=0.2, chunk_rows=chunk_rows)
    np.testing.assert_array_equal(s.fold_mse, ref.fold_mse)      # canonical blocks: the same bits
    assert sc.columns_sha256 == t.columns_sha256 and sc.file_sha256 == t.file_sha256
    assert sc.rows_used == 2000 and s.recommended["simplest"].degree == ref.recommended["simplest"].degree


def test_parquet_streams_too(csv, tmp_path):
    """A Parquet copy of the CSV streams to the same CV surface."""
    frame = pd.read_csv(csv)
    pq = tmp_path / "log.parquet"
    frame.to_parquet(pq)
    a, _ = sweep_file(csv, [1, 3], [0.1], x=1, y=2, folds=4, chunk_rows=300)
    b, _ = sweep_file(pq, [1, 3], [0.1], x=1, y=2, folds=4, chunk_rows=300)
    np.testing.assert_allclose(a.cv_mse, b.cv_mse, rtol=1e-12)


def test_bad_cell_in_a_later_chunk_names_its_row(tmp_path):
    """A bad cell in a later chunk is reported with its spreadsheet row."""
    lines = ["x,y"] + [f"{i},{2 * i}" for i in range(500)]
    lines[401] = "400,oops"
    p = tmp_path / "d.csv"
    p.write_text("\n".join(lines) + "\n")
    with pytest.raises(DataError, match=r"File 'd.csv' column 'y' row 402: expected a number, got 'oops'"):
        sweep_file(p, [1], [1.0], x="x", y="y", chunk_rows=64)


def test_fit_from_statistics_matches_rows(csv):
    """A fit from the per-fold statistics equals the fit from the rows."""
    from core.fit import fit_from_engine

    t = read_table(csv, x="time", y="signal")
    e = core.build_engine(t.x.values, t.y.values, max_degree=5, folds=3)
    a, b = fit_from_engine(e, 5, 0.0), core.fit(t.x.values, t.y.values, 5, 0.0)
    np.testing.assert_allclose(a.power, b.power, rtol=1e-10)
    np.testing.assert_allclose(a.standard_errors, b.standard_errors, rtol=1e-10)
    assert a.residual_sd == pytest.approx(b.residual_sd, rel=1e-10)
