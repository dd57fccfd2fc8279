"""Uses of a chosen curve in calibration: lack of fit against pure error (more to come here:
read-back, detection limits, tolerance checks).

Lack of fit (NIST/SEMATECH e-Handbook of Statistical Methods, section 4.4.4 and the load-cell
case of section 4.6; Draper & Smith, Applied Regression Analysis, 3rd ed., sec. 2.1): with m
distinct x levels among n rows, SS_PE = sum over levels of sum w (y - level mean)^2 on n - m
degrees of freedom, SS_LOF = SSE - SS_PE on m - p, F = (SS_LOF / (m - p)) / (SS_PE / (n - m))
against F(m - p, n - m). Weighted sums throughout; for a penalized curve p is its effective
degrees of freedom and the F distribution an approximation.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

__all__ = ["lack_of_fit", "pure_error"]


def pure_error(x, y, weights=None) -> tuple[float, int, int] | None:
    """(SS_PE, df_PE, number of distinct x levels), or None when no x value repeats."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=float)
    levels, inv, counts = np.unique(x, return_inverse=True, return_counts=True)
    df = x.size - levels.size
    if df <= 0:
        return None
    wsum = np.bincount(inv, weights=w)
    mean = np.bincount(inv, weights=w * y) / wsum
    ss = float(np.sum(w * (y - mean[inv]) ** 2))
    return ss, int(df), int(levels.size)


def lack_of_fit(x, y, curve, n_params: float, weights=None) -> dict | None:
    """The lack-of-fit F test of ``curve`` (callable) on rows x, y against pure error.

    Returns ``{"F", "df_lack", "df_pure", "p_value", "pure_error_sd"}`` or None when x does
    not repeat or no degrees of freedom are left for lack of fit.
    """
    pe = pure_error(x, y, weights)
    if pe is None:
        return None
    ss_pe, df_pe, m = pe
    w = np.ones(len(x)) if weights is None else np.asarray(weights, dtype=float)
    r = np.asarray(y, dtype=float) - curve(np.asarray(x, dtype=float))
    sse = float(np.sum(w * r * r))
    df_lof = m - n_params
    if df_lof <= 1e-9 or ss_pe <= 0:
        return None
    ss_lof = max(sse - ss_pe, 0.0)
    F = (ss_lof / df_lof) / (ss_pe / df_pe)
    return {"F": float(F), "df_lack": float(df_lof), "df_pure": int(df_pe),
            "p_value": float(stats.f.sf(F, df_lof, df_pe)), "pure_error_sd": float(np.sqrt(ss_pe / df_pe))}
