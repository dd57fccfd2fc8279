"""Peak memory and rate of sweeping a large CSV in chunks, against the file's own size.

Writes an invented 1e7-row CSV (x, y; ~250 MB) into a temporary folder, runs
`curvewright sweep --stream` on it in a child process and reports peak RSS, rows per
second, and for reference the RSS of the same child that only imports the package
(so the ratio shows what the sweep itself adds). Target: < 1.5 GB peak.

Usage: python bench/bench_stream.py [--rows 10000000]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def write_csv(path: Path, n: int) -> None:
    rng = np.random.default_rng(4)
    with path.open("w") as fh:
        fh.write("x,y\n")
        for start in range(0, n, 1_000_000):
            m = min(1_000_000, n - start)
            x = rng.uniform(0, 10, m)
            y = np.sin(x) + 0.2 * rng.normal(size=m)
            np.savetxt(fh, np.column_stack([x, y]), delimiter=",", fmt="%.6f")


def child(code: str) -> tuple[float, float]:
    wrapped = ("import resource, sys, time; t0 = time.perf_counter();" + code +
               "; print(time.perf_counter() - t0, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)")
    out = subprocess.run([sys.executable, "-c", wrapped], capture_output=True, text=True, check=True, cwd=ROOT)
    secs, kb = out.stdout.strip().splitlines()[-1].split()
    return float(secs), int(kb) / 1024


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=int, default=10_000_000)
    a = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "big.csv"
        t0 = time.perf_counter()
        write_csv(path, a.rows)
        print(f"wrote {a.rows:,} rows ({path.stat().st_size / 2**20:.0f} MB) in {time.perf_counter() - t0:.0f} s")
        _, base = child("import core, core.stream, pandas")
        secs, peak = child("import sys; sys.argv=['x']; from app.cli import main; "
                           f"main(['sweep', {str(path)!r}, '--x', 'x', '--y', 'y', '--stream', '--degrees', '0-15', "
                           "'--folds', '5'], out=open('/dev/null', 'w'))")
        print(f"streamed sweep: {secs:.1f} s ({a.rows / secs:,.0f} rows/s incl. two reads), peak RSS {peak:.0f} MB "
              f"(import alone {base:.0f} MB; ratio {peak / base:.1f}x; target < 1536 MB)")


if __name__ == "__main__":
    main()
