"""Bands around a curve: where the curve itself lies, and where one new reading lies.

Two kinds of weights mean different things, and every band says which it uses
(CALIBRATION note sec. 1; GUM, JCGM 100:2008, sec. 5.1-5.2 and 6):

* **stated standard uncertainties** u (weights 1/u^2, absolute): the scatter is taken as
  known, the curve's covariance is (X'WX)^-1 as given, and a new reading at x0 with its own
  standard uncertainty u0 has variance u0^2 + g(x0)' Cov g(x0); the quantile is the normal
  one. The reduced chi-square chi2 / (n - p) and its p-value say whether the scatter agrees
  with the stated u; on request both covariance and u0^2 are scaled by the Birge ratio squared
  chi2 / (n - p) (Birge 1932, Phys. Rev. 40, 207), and the quantile becomes Student's t.
  By default u0 is interpolated from the calibration rows' u at x0.
* **relative weights** (only their ratios matter), or none: s^2 = chi2 / (n - p) and
  Cov = s^2 (X'WX)^-1; a new reading of weight w0 has variance s^2 / w0 + g' Cov g, w0
  given or, by default, the rows' median weight (1 without weights); Student's t quantile.

The covariance may come from the classical formula (lambda = 0) or from bootstrap refits
(``core.uncertainty.bootstrap_covariance``) for penalized curves; the band is then labelled so.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from .basis import legendre_columns
from .errors import ParameterError, message
from .params import check

__all__ = ["ReadingModel", "band_limits", "BANDS", "u_table"]

BANDS = ("curve", "reading")
TABLE_POINTS = 256


def u_table(x: np.ndarray, u: np.ndarray, points: int = TABLE_POINTS) -> tuple[list, list]:
    """A compact (x, u) table of the calibration rows' stated uncertainties for interpolation:
    the mean u at each distinct x, averaged into at most ``points`` x-ordered groups."""
    order = np.argsort(x, kind="stable")
    xs, us = np.asarray(x, float)[order], np.asarray(u, float)[order]
    levels, inv = np.unique(xs, return_inverse=True)
    um = np.bincount(inv, weights=us) / np.bincount(inv)
    if levels.size > points:
        groups = np.array_split(np.arange(levels.size), points)
        levels = np.array([levels[g].mean() for g in groups])
        um = np.array([um[g].mean() for g in groups])
    return levels.tolist(), um.tolist()


@dataclass(frozen=True)
class ReadingModel:
    """What a band for one new reading needs besides the curve's covariance.

    Attributes
    ----------
    kind : {"none", "relative", "uncertainty"}
    residual_var : float
        s^2 = chi2 / (n - p) (per unit weight): the reading variance for kind "none", divided by w0
        for "relative"; for "uncertainty" the Birge factor when ``birge_scaled``, else unused.
    df : float or None
        Degrees of freedom of Student's t quantile; None for the normal quantile (stated u, unscaled).
    median_weight : float or None
        Default weight of a new reading (kind "relative").
    table : (list, list) or None
        (x, u) of the calibration rows' stated uncertainties (kind "uncertainty").
    birge_scaled : bool
    """

    kind: str = "none"
    residual_var: float = 0.0
    df: float | None = None
    median_weight: float | None = None
    table: tuple | None = field(default=None, repr=False)
    birge_scaled: bool = False

    def reading_variance(self, x, reading_u=None, reading_weight=None) -> np.ndarray:
        """Variance of one new reading at each x (y units squared)."""
        x = np.asarray(x, dtype=float)
        if self.kind == "uncertainty":
            if reading_u is None:
                tx, tu = self.table
                u0 = np.interp(x, tx, tu)
            else:
                u0 = np.broadcast_to(np.asarray(reading_u, dtype=float), x.shape)
            return u0 ** 2 * (self.residual_var if self.birge_scaled else 1.0)
        w0 = reading_weight if reading_weight is not None else (self.median_weight or 1.0)
        return np.broadcast_to(self.residual_var / np.asarray(w0, dtype=float), x.shape)

    def describe(self, reading_u=None, reading_weight=None) -> str:
        """One line saying what a reading band assumes about the new reading."""
        if self.kind == "uncertainty":
            src = "as given" if reading_u is not None else "interpolated from the calibration rows"
            return (f"new reading with its own stated standard uncertainty ({src})"
                    + (", scaled by the Birge ratio" if self.birge_scaled else ""))
        if self.kind == "relative":
            w0 = reading_weight if reading_weight is not None else self.median_weight
            how = "as given" if reading_weight is not None else "the rows' median weight"
            return f"new reading of weight {np.asarray(w0).ravel()[0]:.4g} ({how})"
        return "new reading with the rows' residual scatter"

    def to_dict(self) -> dict:
        return {"kind": self.kind, "residual_var": float(self.residual_var),
                "df": None if self.df is None else float(self.df),
                "median_weight": None if self.median_weight is None else float(self.median_weight),
                "u_table": None if self.table is None else {"x": list(self.table[0]), "u": list(self.table[1])},
                "birge_scaled": bool(self.birge_scaled)}

    @classmethod
    def from_dict(cls, d: dict) -> "ReadingModel":
        t = d.get("u_table")
        return cls(d["kind"], float(d["residual_var"]), d.get("df"), d.get("median_weight"),
                   None if t is None else (list(t["x"]), list(t["u"])), bool(d.get("birge_scaled", False)))


def band_limits(yhat, t, cov, reading: ReadingModel, band: str, coverage: float, x=None,
                reading_u=None, reading_weight=None):
    """(low, high) of the band at mapped t (raw x given as ``x`` for the reading's variance).

    ``band="curve"``: where the fitted curve itself lies (its covariance only);
    ``band="reading"``: where one new reading lies (adds the reading's variance, see ``ReadingModel``).
    """
    if band not in BANDS:
        raise ParameterError(message("Parameter 'band'", "'curve' or 'reading'", repr(band)))
    coverage = check(coverage=coverage).coverage
    if cov is None:
        raise ParameterError(message("Band", "a curve with a covariance (every saved curve has one)",
                                     "none", "Fit at lambda = 0, or let the export compute a bootstrap covariance"))
    P = legendre_columns(np.atleast_1d(np.asarray(t, dtype=float)), cov.shape[0] - 1)
    var = np.einsum("ij,jk,ik->i", P, cov, P)
    if band == "reading":
        var = var + reading.reading_variance(t if x is None else x, reading_u, reading_weight)
    q = stats.norm.ppf(0.5 + coverage / 2) if reading.df is None else stats.t.ppf(0.5 + coverage / 2, reading.df)
    half = q * np.sqrt(np.maximum(var, 0.0))
    return yhat - half, yhat + half
