"""Transforms of x and y: classic calibration laws are polynomials in transformed variables
(for a thermistor, 1/T against ln R; for many assays, log concentration).

A curve with transforms Tx and Ty is a polynomial f in u = Tx(x) with v = Ty(y) = f(u); its
prediction at raw x is Ty^-1(f(Tx(x))). Every transform here is strictly monotone on its domain,
so a band [v_lo, v_hi] maps to the band [Ty^-1(v_lo), Ty^-1(v_hi)] (ends swapped when the map
falls), and an interval in u maps to one in x the same way. Under a log y transform the
back-transformed curve is the median of y at x, not its mean (the mean of a log-normal reading is
larger by the factor exp(sigma^2 / 2)): outputs say so. ``log`` is the natural logarithm.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import DataError, ParameterError, message

__all__ = ["Transform", "TRANSFORMS", "get", "NAMES"]


@dataclass(frozen=True)
class Transform:
    """One monotone map: ``forward`` (raw -> transformed), ``inverse``, the derivative of the
    inverse, the domain it needs and whether it rises."""

    name: str
    needs: str             # words for the domain: "x > 0"
    rising: bool

    def valid(self, v) -> np.ndarray:
        v = np.asarray(v, dtype=float)
        if self.name == "log":
            return v > 0
        if self.name == "sqrt":
            return v >= 0
        if self.name == "reciprocal":
            return v != 0
        return np.isfinite(v)

    def forward(self, v):
        v = np.asarray(v, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.name == "log":
                return np.log(v)
            if self.name == "sqrt":
                return np.sqrt(v)
            if self.name == "reciprocal":
                return 1.0 / v
        return v

    def inverse(self, u):
        u = np.asarray(u, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if self.name == "log":
                return np.exp(u)
            if self.name == "sqrt":
                return np.where(u >= 0, u * u, np.nan)
            if self.name == "reciprocal":
                return 1.0 / u
        return u

    def inverse_slope(self, u):
        """d(raw)/d(transformed) at transformed u."""
        u = np.asarray(u, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if self.name == "log":
                return np.exp(u)
            if self.name == "sqrt":
                return 2.0 * u
            if self.name == "reciprocal":
                return -1.0 / (u * u)
        return np.ones_like(u)

    def interval(self, lo, hi):
        """Raw (low, high) of a transformed interval (ends swapped for a falling map; NaN kept)."""
        a, b = self.inverse(lo), self.inverse(hi)
        return (a, b) if self.rising else (b, a)

    @property
    def identity(self) -> bool:
        return self.name == "none"

    def label(self, what: str) -> str:
        """How the transformed variable reads: 'ln(x)', '1/x', 'sqrt(x)' or 'x'."""
        return {"none": what, "log": f"ln({what})", "reciprocal": f"1/{what}", "sqrt": f"sqrt({what})"}[self.name]


TRANSFORMS = {
    "none": Transform("none", "a finite number", True),
    "log": Transform("log", "a positive number", True),
    "sqrt": Transform("sqrt", "a number >= 0", True),
    "reciprocal": Transform("reciprocal", "a non-zero number of one sign", False),
}
NAMES = tuple(TRANSFORMS)


def get(name) -> Transform:
    if name not in TRANSFORMS:
        raise ParameterError(message("Transform", " | ".join(NAMES), repr(name)))
    return TRANSFORMS[name]


def apply(transform: Transform, values, *, column: str, file: str, rows=None) -> np.ndarray:
    """``values`` transformed, or a refusal naming the first rows the transform cannot take.

    Reciprocal needs values of one sign (1/x of mixed signs is not monotone over the data).
    """
    v = np.asarray(values, dtype=float)
    bad = ~transform.valid(v)
    if transform.name == "reciprocal" and not bad.any() and (v > 0).any() and (v < 0).any():
        bad = v < 0 if (v < 0).sum() <= (v > 0).sum() else v > 0
    if bad.any():
        idx = np.flatnonzero(bad)
        where = (f"row {int(rows[idx[0]])}" if rows is not None else f"value {idx[0] + 1}")
        more = f" (and {idx.size - 1} more)" if idx.size > 1 else ""
        raise DataError(message(f"Column '{column}' in '{file}', {where}{more}",
                                f"{transform.needs} for the {transform.name} transform",
                                f"{v[idx[0]]:g}", "Choose another transform, or leave those rows out"))
    return transform.forward(v)
