"""Streamed sweeps against pyarrow's own readers plus the in-memory sweep, measured in one run.

Writes an invented CSV of --rows rows (x, y; default 5e6, about 92 MB) and a Parquet copy into a
temporary folder. Each measurement runs in a fresh child process and is its wall time from before
its imports to its end, with its peak RSS:

* reference, CSV: ``pyarrow.csv.read_csv`` of the file, then ``core.sweep`` of its rows in memory
  with the options of the command below (degrees 0-15, the command line's folds, sealed share and
  penalty, the lambda grid scaled to the data); run with the default BLAS threads and with one
  (OPENBLAS_NUM_THREADS=1: on a busy machine a second BLAS thread can stall the in-memory sweep
  many times over), the faster of the two being the reference;
* ``curvewright sweep FILE --stream --degrees 0-15`` (both reads by the fast reader);
* the same two for the Parquet copy (reference: ``pyarrow.parquet.read_table`` + ``core.sweep``);
* with --careful, the streamed command by the careful reader alone, for comparison.

Prints each ratio streamed / reference (targets: CSV <= 2, Parquet <= 1.5), peak RSS, and rows/s of
the streamed command after its imports.
The machine may be shared: --repeat N repeats every measurement N times and prints each run's
ratios, all measured in that run.

Usage: python bench/bench_stream.py [--rows 5000000] [--repeat 2] [--careful]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]

PRELUDE = "import resource, sys, time; t0 = time.perf_counter(); sys.path.insert(0, {root!r}); "
# (imports, work): the child prints its wall time, the time of the work alone and its peak RSS
COMMAND = ("from app.cli import main; import os, pyarrow.csv",
           "code = main(['sweep', {path!r}, '--x', 'x', '--y', 'y', '--stream', '--degrees', '0-15'], "
           "out=open(os.devnull, 'w')); assert code == 0, code")
CAREFUL = ("from core import defaults; from core.stream import sweep_file",
           "sweep_file({path!r}, range(16), None, x='x', y='y', folds=defaults.FOLDS, seed=defaults.SEED, "
           "test_fraction=defaults.TEST_FRACTION, penalty=defaults.PENALTY, reader='careful')")
REFERENCE = ("import numpy as np, core, pyarrow.csv as pcsv, pyarrow.parquet as pq; from core import defaults",
             "tab = {read}({path!r}); x = tab.column('x').to_numpy(); y = tab.column('y').to_numpy(); "
             "core.sweep(x, y, range(16), None, folds=defaults.FOLDS, seed=defaults.SEED, "
             "test_fraction=defaults.TEST_FRACTION, penalty=defaults.PENALTY, row_keys=np.arange(2, x.size + 2))")
READ = {"csv": "pcsv.read_csv", "parquet": "pq.read_table"}
REPORT = ("; print(time.perf_counter() - t0, time.perf_counter() - t1, "
          "resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)")


def write_csv(path: Path, n: int) -> None:
    rng = np.random.default_rng(4)
    with path.open("w") as fh:
        fh.write("x,y\n")
        for start in range(0, n, 1_000_000):
            m = min(1_000_000, n - start)
            x = rng.uniform(0, 10, m)
            y = np.sin(x) + 0.2 * rng.normal(size=m)
            np.savetxt(fh, np.column_stack([x, y]), delimiter=",", fmt="%.6f")


def child(code: tuple, **env) -> tuple[float, float, float]:
    """(wall seconds, seconds after the imports, peak RSS in MB) of a fresh Python running ``code``."""
    imports, work = code
    script = PRELUDE.format(root=str(ROOT)) + imports + "; t1 = time.perf_counter(); " + work + REPORT
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, cwd=ROOT,
                         env={**os.environ, **env})
    if out.returncode:
        raise SystemExit(out.stderr[-2000:])
    secs, work_secs, kb = out.stdout.strip().splitlines()[-1].split()
    return float(secs), float(work_secs), int(kb) / 1024


def filled(code: tuple, **fields) -> tuple:
    return code[0], code[1].format(**fields)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=int, default=5_000_000)
    ap.add_argument("--repeat", type=int, default=2)
    ap.add_argument("--careful", action="store_true", help="also time the careful reader alone")
    a = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        csv, parquet = Path(tmp) / "big.csv", Path(tmp) / "big.parquet"
        t0 = time.perf_counter()
        write_csv(csv, a.rows)
        import pyarrow.csv as pcsv
        import pyarrow.parquet as pq

        pq.write_table(pcsv.read_csv(csv), parquet)
        print(f"wrote {a.rows:,} rows: CSV {csv.stat().st_size / 2**20:.0f} MB, Parquet "
              f"{parquet.stat().st_size / 2**20:.0f} MB, in {time.perf_counter() - t0:.0f} s")
        for run in range(1, a.repeat + 1):
            print(f"run {run}:")
            for kind, path, target in (("csv", csv, 2.0), ("parquet", parquet, 1.5)):
                code = filled(REFERENCE, read=READ[kind], path=str(path))
                refs = [child(code), child(code, OPENBLAS_NUM_THREADS="1")]
                ref, _, ref_rss = min(refs)
                got, work, rss = child(filled(COMMAND, path=str(path)))
                print(f"  {kind:8s} sweep --stream {got:5.1f} s ({work:4.1f} s after the imports: "
                      f"{a.rows / work / 1e6:4.1f} M rows/s; peak RSS {rss:4.0f} MB); pyarrow read + in-memory sweep "
                      f"{ref:5.1f} s ({refs[0][0]:.1f} s with the default BLAS threads, {refs[1][0]:.1f} s with one; "
                      f"peak RSS {ref_rss:4.0f} MB); ratio {got / ref:.2f} (target <= {target})")
                if a.careful and kind == "csv":
                    slow, slow_work, slow_rss = child(filled(CAREFUL, path=str(path)))
                    print(f"  {kind:8s} careful reader alone {slow:5.1f} s ({slow_work:4.1f} s after the imports: "
                          f"{a.rows / slow_work / 1e6:4.1f} M rows/s; peak RSS {slow_rss:4.0f} MB); "
                          f"{slow_work / work:.1f} times the fast reader's")


if __name__ == "__main__":
    main()
