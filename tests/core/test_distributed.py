"""The Dask engine equals the single-process engine exactly, whatever the partitioning, and
survives a worker killed mid-run (LocalCluster on 127.0.0.1)."""

import os
import threading
import time

import numpy as np
import pandas as pd
import pytest

from core.distributed import sweep_files
from core.errors import DataError

distributed = pytest.importorskip("distributed")


@pytest.fixture(scope="module")
def client():
    from distributed import Client, LocalCluster

    cluster = LocalCluster(n_workers=2, threads_per_worker=1, host="127.0.0.1", dashboard_address=None,
                           processes=True)
    c = Client(cluster)
    yield c
    c.close()
    cluster.close()


def write_parts(folder, x, y, cuts, fmt="csv"):
    paths = []
    for i, (a, b) in enumerate(zip(cuts[:-1], cuts[1:])):
        p = folder / f"part{i:03d}.{fmt}"
        frame = pd.DataFrame({"t [s]": x[a:b], "v [V]": y[a:b]})
        frame.to_csv(p, index=False) if fmt == "csv" else frame.to_parquet(p)
        paths.append(p)
    return paths


@pytest.fixture(scope="module")
def data():
    rng = np.random.default_rng(7)
    x = rng.uniform(0, 20, 60000)
    return x, np.sqrt(x) * np.sin(x / 3) + 0.3 * rng.normal(size=x.size)


LAMS = np.logspace(-6, 3, 7)


def test_dask_equals_local_for_any_partitioning(client, data, tmp_path):
    """Rows split into 1, 3 and 8 files (Parquet and CSV): every fold MSE agrees to 1e-12."""
    x, y = data
    (tmp_path / "one").mkdir()
    ref, info = sweep_files(write_parts(tmp_path / "one", x, y, [0, x.size]), range(0, 12), LAMS, x="t", y="v",
                            folds=5, test_fraction=0.1, engine="local")
    for name, cuts, fmt in (("three", [0, 17000, 17001, x.size], "parquet"),
                            ("eight", list(np.linspace(0, x.size, 9).astype(int)), "csv")):
        (tmp_path / name).mkdir()
        paths = write_parts(tmp_path / name, x, y, cuts, fmt)
        got, ginfo = sweep_files(paths, range(0, 12), LAMS, x="t", y="v", folds=5, test_fraction=0.1,
                                 engine="dask", client=client)
        np.testing.assert_allclose(got.fold_mse, ref.fold_mse, rtol=1e-12, atol=0)
        assert ginfo["rows_used"] == x.size and got.engine.n_test == ref.engine.n_test
        assert got.recommended["simplest"].degree == ref.recommended["simplest"].degree


def test_worker_killed_mid_run_gives_correct_result(client, data, tmp_path):
    """One worker process is killed while file tasks run: Dask recomputes its tasks; the surface
    still equals the single-process one (or the run fails loudly), never silently differs."""
    x, y = data
    xx, yy = np.tile(x, 4), np.tile(y, 4)
    paths = write_parts(tmp_path, xx, yy, list(np.linspace(0, xx.size, 13).astype(int)))
    ref, _ = sweep_files(paths, range(0, 8), LAMS, x="t", y="v", folds=4, engine="local")
    victim = list(client.scheduler_info()["workers"])[0]
    result = {}

    def run():
        try:
            result["surface"] = sweep_files(paths, range(0, 8), LAMS, x="t", y="v", folds=4, engine="dask",
                                            client=client)[0]
        except Exception as exc:  # a loud failure is acceptable; a wrong surface is not
            result["error"] = exc

    th = threading.Thread(target=run)
    th.start()
    deadline = time.time() + 30
    while time.time() < deadline and th.is_alive():
        busy = client.processing(workers=[victim]).get(victim, ())
        if any("_file_stats" in str(k) for k in busy):
            break
        time.sleep(0.02)
    killed = th.is_alive()
    try:
        client.run(os._exit, 1, workers=[victim])
    except Exception:  # the worker dies before answering: that is the point
        pass
    th.join(timeout=180)
    assert killed, "the run ended before a worker could be killed; make the data larger"
    assert not th.is_alive()
    print("outcome:", "recomputed" if "surface" in result else f"error: {result.get('error')}")
    if "surface" in result:
        np.testing.assert_allclose(result["surface"].fold_mse, ref.fold_mse, rtol=1e-12, atol=0)
    else:
        assert str(result["error"])
    client.wait_for_workers(2, timeout=60)


def test_bad_row_in_a_partition_names_file_and_row(client, tmp_path):
    (tmp_path / "a.csv").write_text("x,y\n" + "".join(f"{i},{i * 2}\n" for i in range(50)))
    (tmp_path / "b.csv").write_text("x,y\n" + "".join(f"{i},{i * 2}\n" for i in range(30)) + "31,bad\n")
    with pytest.raises(DataError, match=r"File 'b.csv' column 'y' row 32: expected a number, got 'bad'"):
        sweep_files([tmp_path / "a.csv", tmp_path / "b.csv"], [1], [1.0], x="x", y="y", folds=3, engine="dask",
                    client=client)
