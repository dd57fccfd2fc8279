"""Tolerance decisions for a saved curve checked against new labelled rows (CALIBRATION note sec. 7).

For each row (x, y): the error e = y - f(x), its standard uncertainty u (the curve's own, from the
saved covariance, combined with one reading's, as the curve's weights describe a reading:
``Choice.prediction_sd``) and the expanded uncertainty U = k u with k = 2 (GUM, JCGM 100:2008,
sec. 6.2-6.3; k = 2 for about 95 % is common practice). The tolerance T is absolute (y units) or,
with ``relative``, a fraction of |f(x)|.

Decision rules, after ILAC-G8:09/2019 (guidelines on decision rules and statements of conformity):

* **simple acceptance**: pass when |e| <= T (the measurement uncertainty is not used; the risk of a
  wrong pass near the limit can reach 50 %);
* **guarded acceptance**: pass when |e| <= T - U, a guard band of width U inside the limit; where
  U >= T no row can pass, and it is said so.
"""

from __future__ import annotations

import numpy as np

from .errors import ParameterError, message

__all__ = ["tolerance_check", "RULES", "K"]

K = 2.0
RULES = {
    "simple": "simple acceptance (ILAC-G8:09/2019): pass when |error| <= T; the uncertainty is not used",
    "guarded": "guarded acceptance (ILAC-G8:09/2019): pass when |error| <= T - U, a guard band of the expanded "
               "uncertainty U = 2u",
}


def tolerance_check(choice, x, y, tolerance: float, *, relative: bool = False, rule: str = "simple",
                    rows=None, reading_u=None, reading_weight=None) -> dict:
    """Per-row and overall pass/fail of ``choice`` on rows x, y (see the module docstring)."""
    if not (isinstance(tolerance, (int, float)) and np.isfinite(tolerance) and tolerance > 0):
        raise ParameterError(message("Option --tolerance", "a positive number", repr(tolerance)))
    if relative and tolerance >= 1:
        raise ParameterError(message("Option --tolerance with --relative", "a fraction below 1 (0.02 is 2 %)",
                                     repr(tolerance)))
    if rule not in RULES:
        raise ParameterError(message("Option --decision", "simple or guarded", repr(rule)))
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    pred = choice.predict(x)
    err = y - pred
    U = K * choice.prediction_sd(x, "reading", reading_u=reading_u, reading_weight=reading_weight) \
        if choice.has_band else np.full(x.size, np.nan)
    if rule == "guarded" and not choice.has_band:
        raise ParameterError(message("Option --decision guarded", "a curve with a covariance (for U)",
                                     "a curve saved without one", "Use --decision simple"))
    T = tolerance * np.abs(pred) if relative else np.full(x.size, float(tolerance))
    limit = T - U if rule == "guarded" else T
    ok = np.abs(err) <= limit
    lo, hi = choice.x_range
    rows = np.arange(1, x.size + 1) if rows is None else np.asarray(rows)
    out_rows = [{"row": int(r), "x": float(a), "y": float(b), "prediction": float(p), "error": float(e),
                 "expanded_uncertainty": None if not np.isfinite(u) else float(u), "tolerance": float(t),
                 "acceptance_limit": float(lim), "pass": bool(k), "outside_fitted_range": bool(a < lo or a > hi)}
                for r, a, b, p, e, u, t, lim, k in zip(rows, x, y, pred, err, U, T, limit, ok)]
    n_fail = int((~ok).sum())
    return {"tolerance": float(tolerance), "relative": bool(relative), "rule": rule, "rule_text": RULES[rule],
            "k": K, "rows": out_rows, "passed": int(ok.sum()), "failed": n_fail,
            "overall": "pass" if n_fail == 0 else "fail",
            "guard_band_exceeds_tolerance": int(np.sum(limit <= 0)) if rule == "guarded" else 0}
