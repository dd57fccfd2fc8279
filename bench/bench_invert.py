"""Reading x back from one million readings, against a plain numpy root-finding loop.

Invented calibration: a degree-3 curve fitted to 40 rows. Times ``Choice.invert`` on 1e6 readings
(estimate, both interval ends, standard uncertainty, interval kind) and, in the same run, a plain
vectorized numpy bisection (60 halvings for each of the three roots: f = y, lower edge = y, upper
edge = y) over the same readings, which finds the estimate and the ends of a monotone curve but
cannot tell one-sided, empty or split intervals. Prints both times, their ratio, the median of
five repeats, and whether the target (< 2 s for 1e6 readings) holds; also the largest difference
between the two on readings where both give bounded intervals.

Usage: python bench/bench_invert.py [--readings 1000000] [--repeats 5]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import core  # noqa: E402
from core.basis import legendre_columns  # noqa: E402
from core.choice_build import make_choice  # noqa: E402

DATA = {"file": "invented.csv", "file_sha256": None, "columns_sha256": "0" * 64, "rows_dropped": [],
        "x_column": "x", "y_column": "y", "x_unit": None, "y_unit": None}


def invented_choice():
    rng = np.random.default_rng(7)
    x = np.repeat(np.linspace(0, 50, 10), 4)
    y = 0.1 + 0.04 * x - 2e-4 * x ** 2 + 1e-6 * x ** 3 + rng.normal(0, 0.004, x.size)
    s = core.sweep(x, y, [1, 2, 3], [0.0], folds=5, seed=1)
    return make_choice(x, y, s, 3, 0.0, rule="manual", data=DATA)


def bisection(c, y, iters=60):
    """Plain numpy: the x where f, f - h and f + h reach y, by bisection over the range (rising curve)."""
    lo, hi = c.x_range
    cov = c.covariance
    r = c.reading
    from scipy import stats

    q = stats.t.ppf(0.975, r.df)

    def parts(x):
        P = legendre_columns(c.domain.map(x), cov.shape[0] - 1)
        sd = np.sqrt(np.einsum("ij,jk,ik->i", P, cov, P) + r.reading_variance(x))
        f = P @ c.legendre
        return f, f - q * sd, f + q * sd

    out = []
    for k in range(3):
        a = np.full(y.size, lo)
        b = np.full(y.size, hi)
        for _ in range(iters):
            m = 0.5 * (a + b)
            below = parts(m)[k] < y
            a = np.where(below, m, a)
            b = np.where(below, b, m)
        out.append(0.5 * (a + b))
    return out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--readings", type=int, default=1_000_000)
    ap.add_argument("--repeats", type=int, default=5)
    a = ap.parse_args()
    c = invented_choice()
    lo, hi = c.x_range
    y = np.random.default_rng(3).uniform(float(c.predict(lo + 2.0)), float(c.predict(hi - 2.0)), a.readings)
    ours, base = [], []
    for _ in range(a.repeats):
        t0 = time.perf_counter()
        rb = c.invert(y)
        ours.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        est, x_hi, x_lo = bisection(c, y)
        base.append(time.perf_counter() - t0)
    m_ours, m_base = statistics.median(ours), statistics.median(base)
    ok = rb.interval == "bounded"
    diff = max(float(np.max(np.abs(rb.x_estimate - est))), float(np.max(np.abs(rb.x_low[ok] - x_lo[ok]))),
               float(np.max(np.abs(rb.x_high[ok] - x_hi[ok]))))
    print(f"invert {a.readings:,} readings: median {m_ours:.3f} s over {a.repeats} runs "
          f"(min {min(ours):.3f}, max {max(ours):.3f}); target < 2 s: {'met' if m_ours < 2 else 'NOT met'}")
    print(f"numpy bisection (estimate and two ends only): median {m_base:.3f} s; ratio {m_ours / m_base:.2f}x")
    print(f"largest difference from bisection on {int(ok.sum()):,} bounded readings: {diff:.2e} (x range "
          f"{hi - lo:g})")


if __name__ == "__main__":
    main()
