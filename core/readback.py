"""Reading x back from a measured y (inverse prediction), with its interval and standard uncertainty.

For a reading y0 (or the mean of m replicate readings) and a curve f with coefficient covariance
Cov, the interval is the exact inversion of the band for a new reading (CALIBRATION note sec. 2):

    { x in the calibrated range : |y0 - f(x)| <= q sqrt(g(x)' Cov g(x) + var_reading(x) / m) },

q the normal or Student quantile of the curve's reading model (``core.bands``). It can be
bounded, reach an end of the calibrated range ("one-sided": the set may go on beyond it, so only
the inner bound is given), span the whole range ("unbounded"), be empty (the reading lies outside
the band everywhere in the range), or fall apart into several pieces ("several", where the curve or
its band is not monotone): it says which instead of inventing bounds. For a straight line this is
the Fieller-type interval of Draper & Smith (Applied Regression Analysis, 3rd ed., sec. 3.2)
restricted to the range.

The estimate solves f(x) = y0; where more than one x in the range does, or the interval falls apart
into pieces (the reading could come from more than one stretch of the range), every solution is
listed and no single estimate is given. Its standard uncertainty is the first-order propagation
sqrt(g' Cov g + var_reading / m) / |f'(x)| (Eurachem/CITAC guide "Quantifying Uncertainty in
Analytical Measurement", 3rd ed., appendix E.3, for the straight line).

Vectorized over readings: f and the band's two edges are tabulated once on a fine grid and split
into monotone pieces; each reading is located in each piece by binary search and refined by Newton
steps on the exact functions; the interval's ends are the edges' crossings, sorted per reading, and
which stretches between them lie inside the band is decided for all readings at once.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from .basis import legendre_columns
from .errors import ParameterError, message
from .params import check

__all__ = ["ReadBack", "read_back", "KINDS"]

KINDS = ("bounded", "one-sided", "unbounded", "empty", "several")
GRID = 4097
NEWTON_STEPS = 3
BLOCK = 65_536          # readings per block: bounds the memory of the (readings x crossings) tables
MAX_REPLICATES = 10_000


@dataclass(frozen=True)
class ReadBack:
    """Read-back of many readings (arrays of shape (m,); NaN where a value does not exist).

    ``several`` maps the index of each reading with more than one solution, or an interval in
    several pieces, to ``(solutions, pieces)``.
    """

    reading: np.ndarray = field(repr=False)
    replicates: np.ndarray = field(repr=False)
    x_estimate: np.ndarray = field(repr=False)
    x_low: np.ndarray = field(repr=False)
    x_high: np.ndarray = field(repr=False)
    x_standard_uncertainty: np.ndarray = field(repr=False)
    interval: np.ndarray = field(repr=False)
    several: dict = field(repr=False)
    coverage: float = 0.95

    def rows(self) -> list[dict]:
        """One dict per reading with the JSON keys (None for values that do not exist)."""
        def num(v):
            return None if not np.isfinite(v) else float(v)
        out = []
        for i in range(self.reading.size):
            row = {"reading": float(self.reading[i]), "replicates": int(self.replicates[i]),
                   "x_estimate": num(self.x_estimate[i]), "x_low": num(self.x_low[i]),
                   "x_high": num(self.x_high[i]),
                   "x_standard_uncertainty": num(self.x_standard_uncertainty[i]),
                   "interval": str(self.interval[i])}
            if i in self.several:
                sols, pieces = self.several[i]
                row["solutions"] = [float(v) for v in sols]
                row["pieces"] = [[float(a), float(b)] for a, b in pieces]
            out.append(row)
        return out


def _legendre_derivatives(t, degree):
    """P_j(t) and dP_j/dt, j = 0..degree (P'_{j+1} = P'_{j-1} + (2j + 1) P_j)."""
    P = legendre_columns(t, degree)
    dP = np.zeros_like(P)
    if degree >= 1:
        dP[:, 1] = 1.0
    for j in range(1, degree):
        dP[:, j + 1] = dP[:, j - 1] + (2 * j + 1) * P[:, j]
    return P, dP


class _Band:
    """f, the band's half-width for one new reading (mean of m) and their derivatives at raw x."""

    def __init__(self, curve, cov, reading, q, m, reading_u, reading_weight, step):
        self.curve, self.cov, self.reading, self.q, self.m = curve, cov, reading, q, m
        self.reading_u, self.reading_weight, self.step = reading_u, reading_weight, step
        self.h = curve.domain.half_width

    def f(self, x):
        return self.curve(x)

    def f_and_slope(self, x):
        P, dP = _legendre_derivatives(self.curve.domain.map(x), self.curve.degree)
        return P @ self.curve.coef, dP @ self.curve.coef / self.h

    def fprime(self, x):
        _, dP = _legendre_derivatives(self.curve.domain.map(x), self.curve.degree)
        return dP @ self.curve.coef / self.h

    def var(self, x, basis=None):
        """(variance of f(x) plus a reading's variance / m, its derivative in x)."""
        P, dP = basis if basis is not None else _legendre_derivatives(self.curve.domain.map(x), self.curve.degree)
        CP = P @ self.cov
        v = np.einsum("ij,ij->i", CP, P)
        dv = 2.0 * np.einsum("ij,ij->i", CP, dP) / self.h
        r = self.reading.reading_variance(x, self.reading_u, self.reading_weight)
        if self.reading.kind == "uncertainty" and self.reading_u is None:    # interpolated u: slope by difference
            e = self.step
            dr = (self.reading.reading_variance(x + e, None, None) - self.reading.reading_variance(x - e, None, None)) / (2 * e)
        else:
            dr = 0.0
        return v + r / self.m, dv + dr / self.m

    def edges(self, x):
        """f - h, f + h (h = q sd) and their derivatives."""
        P, dP = _legendre_derivatives(self.curve.domain.map(x), self.curve.degree)
        f, fp = P @ self.curve.coef, dP @ self.curve.coef / self.h
        v, dv = self.var(x, (P, dP))
        sd = np.sqrt(np.maximum(v, 0.0))
        h = self.q * sd
        dh = self.q * dv / (2.0 * np.maximum(sd, 1e-300))
        return (f - h, f + h), (fp - dh, fp + dh)


def _monotone_pieces(values: np.ndarray) -> list[tuple[int, int, int]]:
    """(start, stop, sign) index ranges of ``values`` that are monotone (+1 rising, -1 falling)."""
    d = np.sign(np.diff(values))
    turns = [0]
    cur = 0
    for i, s in enumerate(d):
        if s == 0:
            continue
        if cur != 0 and s != cur:
            turns.append(i)
        cur = s if s != 0 else cur
    turns.append(values.size - 1)
    out = []
    for a, b in zip(turns[:-1], turns[1:]):
        s = np.sign(values[b] - values[a])
        out.append((a, b + 1, int(s) if s else 1))
    return out


def _crossings(grid, values, target, fd, lo, hi):
    """Columns (one per monotone piece of ``values``) of the x in that piece where fun(x) = target,
    NaN where the piece does not reach the target."""
    cols = []
    for a, b, sign in _monotone_pieces(values):
        g, v = grid[a:b], values[a:b]
        vs, gs = (v, g) if sign > 0 else (v[::-1], g[::-1])
        inside = (target >= vs[0]) & (target <= vs[-1])
        x = np.full(target.size, np.nan)
        if inside.any():
            tt = target[inside]
            k = np.clip(np.searchsorted(vs, tt), 1, vs.size - 1)
            dv = vs[k] - vs[k - 1]
            with np.errstate(divide="ignore", invalid="ignore"):
                frac = np.where(dv != 0, (tt - vs[k - 1]) / dv, 0.0)
            xi = gs[k - 1] + frac * (gs[k] - gs[k - 1])
            plo, phi = max(min(g[0], g[-1]), lo), min(max(g[0], g[-1]), hi)
            for _ in range(NEWTON_STEPS):
                fx, dx = fd(xi)
                with np.errstate(divide="ignore", invalid="ignore"):
                    step = np.where(dx != 0, (fx - tt) / dx, 0.0)
                xi = np.clip(xi - np.where(np.isfinite(step), step, 0.0), plo, phi)
            x[inside] = xi
        cols.append(x)
    return np.column_stack(cols)


def _dedupe_sorted(P, tol):
    """Rows of ``P`` sorted, with values within ``tol`` of the previous one set to NaN (sorted to the end)."""
    P = np.sort(P, axis=1)
    close = np.zeros_like(P, dtype=bool)
    close[:, 1:] = np.diff(P, axis=1) <= tol
    P[close] = np.nan
    return np.sort(P, axis=1)


def _block(band, grid, tables, y, lo, hi):
    """Read-back of the readings ``y`` (one block) against one band."""
    n = y.size
    tol = 1e-12 * (hi - lo)
    (low_g, high_g), fg = tables

    def lower(x):
        (e, _), (d, _) = band.edges(x)
        return e, d

    def upper(x):
        (_, e), (_, d) = band.edges(x)
        return e, d

    ends = np.hstack([_crossings(grid, low_g, y, lower, lo, hi),
                      _crossings(grid, high_g, y, upper, lo, hi),
                      np.full((n, 1), lo), np.full((n, 1), hi)])
    P = _dedupe_sorted(ends, tol)
    mids = 0.5 * (P[:, :-1] + P[:, 1:])
    ok = np.isfinite(mids)
    inside = np.zeros(mids.shape, dtype=bool)
    if ok.any():
        rows = np.nonzero(ok)[0]
        (le, he), _ = band.edges(mids[ok])
        inside[ok] = (le <= y[rows]) & (y[rows] <= he)
    starts = inside & ~np.hstack([np.zeros((n, 1), dtype=bool), inside[:, :-1]])
    runs = starts.sum(axis=1)
    first = np.argmax(inside, axis=1)
    last = inside.shape[1] - 1 - np.argmax(inside[:, ::-1], axis=1)
    a = np.take_along_axis(P, first[:, None], axis=1)[:, 0]
    b = np.take_along_axis(P, (last + 1)[:, None], axis=1)[:, 0]
    one = runs == 1
    at_lo, at_hi = one & (a <= lo + tol), one & (b >= hi - tol)
    kind = np.where(runs == 0, "empty", np.where(runs > 1, "several",
                    np.where(at_lo & at_hi, "unbounded", np.where(at_lo | at_hi, "one-sided", "bounded"))))
    x_low = np.where(one & ~at_lo, a, np.nan)
    x_high = np.where(one & ~at_hi, b, np.nan)

    R = _dedupe_sorted(_crossings(grid, fg, y, band.f_and_slope, lo, hi), tol)
    nroots = np.isfinite(R).sum(axis=1)
    # one answer only where exactly one x solves f(x) = y and the interval is in one piece
    est = np.where((nroots == 1) & (runs <= 1), R[:, 0], np.nan)
    several = {}
    for i in np.flatnonzero((runs > 1) | (nroots > 1)):
        pieces = []
        for j in np.flatnonzero(inside[i]):
            if pieces and abs(pieces[-1][1] - P[i, j]) <= tol:
                pieces[-1] = (pieces[-1][0], P[i, j + 1])
            else:
                pieces.append((P[i, j], P[i, j + 1]))
        several[int(i)] = (R[i][np.isfinite(R[i])], pieces)
    u = np.full(n, np.nan)
    good = np.isfinite(est)
    if good.any():
        v, _ = band.var(est[good])
        u[good] = np.sqrt(v) / np.abs(band.fprime(est[good]))
    return est, x_low, x_high, u, kind, several


def _per_reading(value, n, name):
    """None, a scalar, or an array of n values (checked positive and finite)."""
    if value is None:
        return None
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.shape != (n,) or not np.all(np.isfinite(arr) & (arr > 0)):
        raise ParameterError(message(f"Parameter '{name}'", f"a positive number or one per reading ({n})",
                                     f"shape {arr.shape}" if arr.shape != (n,) else "a zero, negative or missing value"))
    return arr


def read_back(curve, cov, reading, y, *, x_range, replicates=1, coverage: float = 0.95,
              reading_u=None, reading_weight=None, grid_points: int = GRID) -> ReadBack:
    """Invert a curve for readings ``y`` (see the module docstring).

    Parameters
    ----------
    curve : core.Curve
    cov : ndarray of shape (degree + 1, degree + 1)
        Covariance of the curve's Legendre coefficients.
    reading : core.bands.ReadingModel
        What the curve's weights say about a new reading (quantile, variance).
    y : array_like of shape (m,)
        Readings (each the mean of its ``replicates`` readings of the unknown).
    x_range : (float, float)
        The calibrated range; nothing outside it is returned.
    replicates : int or array of m ints
        How many readings each value of ``y`` is the mean of.
    reading_u, reading_weight : float or array of m, optional
        A reading's own standard uncertainty (curves fitted with stated uncertainties) or weight
        (relative weights); default: what the curve's file says (``core.bands.ReadingModel``).
    """
    p = check(coverage=coverage)
    y = np.atleast_1d(np.asarray(y, dtype=float)).ravel()
    n = y.size
    if not np.all(np.isfinite(y)):
        raise ParameterError(message("Readings", "finite numbers", "a missing or infinite reading"))
    reps = np.broadcast_to(np.asarray(replicates), (n,))
    if not (np.issubdtype(reps.dtype, np.integer) and np.all((reps >= 1) & (reps <= MAX_REPLICATES))):
        raise ParameterError(message("Parameter 'replicates'", f"whole numbers from 1 to {MAX_REPLICATES}",
                                     repr(replicates if np.ndim(replicates) == 0 else "values outside that")))
    ru = _per_reading(reading_u, n, "reading_u")
    rw = _per_reading(reading_weight, n, "reading_weight")
    cov = np.asarray(cov, dtype=float)
    q = float(stats.norm.ppf(0.5 + p.coverage / 2) if reading.df is None
              else stats.t.ppf(0.5 + p.coverage / 2, reading.df))
    lo, hi = float(x_range[0]), float(x_range[1])
    grid = np.linspace(lo, hi, grid_points)
    fg = curve(grid)

    est, x_low, x_high, u = (np.full(n, np.nan) for _ in range(4))
    kind = np.empty(n, dtype=object)
    several = {}
    # readings sharing (replicates, u, weight) share one band
    keys = np.column_stack([reps.astype(float), np.zeros(n) if ru is None else ru, np.zeros(n) if rw is None else rw])
    if np.all(keys == keys[0]):
        uniq, inv = keys[:1], np.zeros(n, dtype=np.intp)
    else:
        uniq, inv = np.unique(keys, axis=0, return_inverse=True)
        inv = inv.ravel()
    for g, (m, uu, ww) in enumerate(uniq):
        band = _Band(curve, cov, reading, q, int(m), None if ru is None else uu, None if rw is None else ww,
                     step=1e-7 * (hi - lo))
        (low_g, high_g), _ = band.edges(grid)
        members = np.arange(n) if uniq.shape[0] == 1 else np.flatnonzero(inv == g)
        for s in range(0, members.size, BLOCK):
            idx = members[s:s + BLOCK]
            e, a, b, uu_, k, sev = _block(band, grid, ((low_g, high_g), fg), y[idx], lo, hi)
            est[idx], x_low[idx], x_high[idx], u[idx], kind[idx] = e, a, b, uu_, k
            several.update({int(idx[i]): v for i, v in sev.items()})
    return ReadBack(y, reps.astype(int), est, x_low, x_high, u, kind, several, p.coverage)
