"""Rows per second of the partition-independent engines, and memory of true streaming.

1. 8 invented Parquet (or, with --format csv, CSV) files (total --rows, default 8e6):
   `engine="local"` in this process, then `engine="dask"` on a LocalCluster with 1 and with 2
   workers; rows/s and the ratio to the single process, peak RSS of driver and workers, and a
   check that all surfaces agree. Skipped with --only-stream.
2. 1e8 rows generated on the fly (never stored) through `sweep_chunks` in a child
   process: peak RSS (target < 1 GB) and rate (target >= 5 M rows/s), generation included,
   and for reference the rate of generating the rows alone.

Usage: python bench/bench_distributed.py [--rows 8000000] [--format parquet|csv] [--stream-rows 100000000]
                                          [--only-stream]
"""

from __future__ import annotations

import argparse
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

LAMS = np.logspace(-6, 4, 30)


def write_parts(folder: Path, rows: int, parts: int = 8, kind: str = "parquet") -> list[Path]:
    import pandas as pd

    rng = np.random.default_rng(5)
    paths = []
    for i in range(parts):
        n = rows // parts
        x = rng.uniform(0, 10, n)
        y = np.sin(x) + 0.2 * rng.normal(size=n)
        p = folder / f"part{i}.{kind}"
        frame = pd.DataFrame({"x": x, "y": y})
        frame.to_parquet(p) if kind == "parquet" else frame.to_csv(p, index=False, float_format="%.6f")
        paths.append(p)
    return paths


def rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


STREAM_CHILD = """
import resource, sys, time
import numpy as np
sys.path.insert(0, {root!r})
from core.basis import Domain
from core.distributed import sweep_chunks
N, C = {rows}, 1_000_000
def chunks():
    rng = np.random.default_rng(1)
    for a in range(0, N, C):
        x = rng.uniform(0, 10, min(C, N - a))
        yield x, np.sin(x) + 0.2 * rng.normal(size=x.size)
t0 = time.perf_counter()
s = sweep_chunks(chunks(), range(0, 16), np.logspace(-6, 4, 30), domain=Domain.from_range(0, 10), folds=5)
dt = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
t0 = time.perf_counter()
for _ in chunks():
    pass
print(dt, peak, s.recommended["simplest"].degree, time.perf_counter() - t0)
"""


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=int, default=8_000_000)
    ap.add_argument("--format", choices=("parquet", "csv"), default="parquet")
    ap.add_argument("--stream-rows", type=int, default=100_000_000)
    ap.add_argument("--only-stream", action="store_true")
    a = ap.parse_args()
    if not a.only_stream:
        files(a)
    out = subprocess.run([sys.executable, "-c", STREAM_CHILD.format(root=str(ROOT), rows=a.stream_rows)],
                         capture_output=True, text=True, check=True)
    dt, peak, deg, gen = out.stdout.split()
    print(f"on-the-fly stream of {a.stream_rows:,} rows: {a.stream_rows / float(dt):,.0f} rows/s (target >= "
          f"5,000,000; generating the rows alone {a.stream_rows / float(gen):,.0f} rows/s), "
          f"peak RSS {float(peak):.0f} MB (target < 1024 MB)")


def files(a):
    from distributed import Client, LocalCluster

    from core.distributed import sweep_files

    with tempfile.TemporaryDirectory() as tmp:
        paths = write_parts(Path(tmp), a.rows, kind=a.format)
        t0 = time.perf_counter()
        ref, _ = sweep_files(paths, range(0, 16), LAMS, x="x", y="y", folds=5, engine="local")
        t_local = time.perf_counter() - t0
        print(f"local engine: {a.rows / t_local:,.0f} rows/s ({t_local:.1f} s), driver peak RSS {rss_mb():.0f} MB")
        for workers in (1, 2):
            cluster = LocalCluster(n_workers=workers, threads_per_worker=1, host="127.0.0.1", dashboard_address=None)
            client = Client(cluster)
            try:
                t0 = time.perf_counter()
                got, _ = sweep_files(paths, range(0, 16), LAMS, x="x", y="y", folds=5, engine="dask", client=client)
                dt = time.perf_counter() - t0
                peaks = client.run(lambda: resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)
                same = np.array_equal(got.fold_mse, ref.fold_mse)
                print(f"dask, {workers} worker(s): {a.rows / dt:,.0f} rows/s ({dt:.1f} s), ratio to local "
                      f"{t_local / dt:.2f}x, worker peak RSS {max(peaks.values()):.0f} MB, identical surface: {same}")
            finally:
                client.close()
                cluster.close()


if __name__ == "__main__":
    main()
