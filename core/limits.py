"""Detection and quantification limits of a calibration that starts at zero (a blank, x = 0).

Two methods, each labelled with what it assumes (CALIBRATION note sec. 4):

* **ICH Q2(R2)** (2023, validation of analytical procedures): detection limit DL = 3.3 sigma / S and
  quantitation limit QL = 10 sigma / S, with S the curve's slope at x = 0 and sigma the standard
  deviation of one reading at x = 0 by the curve's weights (for an unweighted fit, the residual SD
  of the regression: one of the choices the guideline lists; it is stated which).
* **Hubaux & Vos** (1970, Anal. Chem. 42, 849-855): the decision level y_C is the one-sided upper
  prediction limit (risk alpha) for a reading of the blank; x_C is where the curve reaches y_C; the
  detection limit x_D is the x whose one-sided lower prediction limit (risk beta) equals y_C. The
  prediction band is the curve's reading band (``core.bands``) for the mean of m readings.

For a falling curve (signal decreasing with x) the one-sided limits mirror. Limits are computed
only when x = 0 lies in the calibrated range (extrapolating to a blank that was never measured
would be a guess) and say so otherwise; a detection limit beyond the range is reported as such.
"""

from __future__ import annotations

import numpy as np
from scipy import optimize, stats

from .basis import legendre_columns

__all__ = ["detection_limits", "ICH_DL_FACTOR", "ICH_QL_FACTOR"]

ICH_DL_FACTOR = 3.3
ICH_QL_FACTOR = 10.0


def _slope(curve, x):
    from numpy.polynomial import legendre as L

    d = L.legder(curve.coef) / curve.domain.half_width if curve.degree else np.zeros(1)
    return float(L.legval(curve.domain.map(np.asarray(x, dtype=float)), d))


def _pred_sd(curve, cov, reading, x, m):
    """SD of the mean of m new readings at x about the curve: sqrt(g' Cov g + var_reading / m)."""
    x = np.atleast_1d(np.asarray(x, dtype=float))
    P = legendre_columns(curve.domain.map(x), curve.degree)
    v = np.einsum("ij,jk,ik->i", P, cov, P) + reading.reading_variance(x) / m
    return np.sqrt(np.maximum(v, 0.0))


def _quantile(reading, p):
    return float(stats.norm.ppf(p) if reading.df is None else stats.t.ppf(p, reading.df))


def detection_limits(curve, cov, reading, x_range, *, alpha: float = 0.05, beta: float = 0.05,
                     replicates: int = 1) -> dict:
    """Both methods' limits, or the reason they were not computed.

    Returns ``{"ich_q2": {...} | None, "hubaux_vos": {...} | None, "note": str | None}``.
    """
    lo, hi = float(x_range[0]), float(x_range[1])
    if not (lo <= 0.0 <= hi):
        return {"ich_q2": None, "hubaux_vos": None,
                "note": f"not computed: the calibrated range [{lo:.6g}, {hi:.6g}] does not include x = 0 (a blank); "
                        "detection limits need calibration rows at zero"}
    S = _slope(curve, 0.0)
    sigma = float(np.sqrt(reading.reading_variance(np.zeros(1))[0]))
    sigma_from = {"none": "residual SD of the regression",
                  "relative": "SD of one reading at x = 0 by the curve's relative weights",
                  "uncertainty": "stated standard uncertainty of a reading at x = 0"
                                 + (" (Birge-scaled)" if reading.birge_scaled else "")}[reading.kind]
    if S == 0 or not np.isfinite(S):
        return {"ich_q2": None, "hubaux_vos": None, "note": "not computed: the curve is flat at x = 0"}
    ich = {"method": "ICH Q2(R2): DL = 3.3 sigma / S, QL = 10 sigma / S", "sigma": sigma, "sigma_from": sigma_from,
           "slope": S, "slope_at": 0.0, "detection_limit": ICH_DL_FACTOR * sigma / abs(S),
           "quantitation_limit": ICH_QL_FACTOR * sigma / abs(S)}
    cov = np.asarray(cov, dtype=float)
    s = 1.0 if S > 0 else -1.0
    m = int(replicates)
    y_c = float(curve(np.zeros(1))[0] + s * _quantile(reading, 1 - alpha) * _pred_sd(curve, cov, reading, 0.0, m)[0])
    q_b = _quantile(reading, 1 - beta)
    grid = np.linspace(0.0, hi, 4097)

    def first_root(g):
        vals = g(grid)
        idx = np.flatnonzero(np.sign(vals[1:]) != np.sign(vals[:-1]))
        idx = idx[vals[idx] != 0] if idx.size else idx
        if vals[0] == 0:
            return 0.0
        if not idx.size:
            return None
        k = int(idx[0])
        return float(optimize.brentq(lambda z: float(g(np.array([z]))[0]), grid[k], grid[k + 1], xtol=1e-14 * max(hi, 1),
                                     rtol=4 * np.finfo(float).eps))

    x_c = first_root(lambda z: s * (curve(z) - y_c))
    x_d = first_root(lambda z: s * (curve(z) - s * q_b * _pred_sd(curve, cov, reading, z, m) - y_c))
    hv = {"method": "Hubaux & Vos (1970): decision level from the one-sided upper prediction limit at the blank; "
                    "detection limit where the lower prediction limit reaches it",
          "alpha": alpha, "beta": beta, "replicates": m, "decision_level_y": y_c,
          "decision_limit_x": x_c, "detection_limit_x": x_d}
    note = None
    if x_d is None:
        note = "the Hubaux & Vos detection limit lies beyond the calibrated range"
    return {"ich_q2": ich, "hubaux_vos": hv, "note": note}
