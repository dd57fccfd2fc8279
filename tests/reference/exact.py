"""An exact reference for the cross-validated ridge surface, in 120-digit arithmetic.

Follows the model's definition literally (raw powers x^k, centred and scaled
by the training rows' weighted mean and population SD, ridge on the
standardized coefficients), but in mpmath at 120 significant digits, where
forming power sums of x^20 costs nothing in accuracy. Float inputs convert to
mpf exactly. Slow; use small n.
"""

from __future__ import annotations

import mpmath
import numpy as np


def _fit(xs, ys, ws, degree, lam, intercept):
    W = mpmath.fsum(ws)
    p = [[x ** k for k in range(degree + 1)] for x in xs]
    mean = [mpmath.fsum(w * r[k] for w, r in zip(ws, p)) / W for k in range(degree + 1)]
    ybar = mpmath.fsum(w * y for w, y in zip(ws, ys)) / W
    cov = mpmath.zeros(degree + 1, degree + 1)
    for j in range(1, degree + 1):
        for k in range(j, degree + 1):
            v = mpmath.fsum(w * (r[j] - mean[j]) * (r[k] - mean[k]) for w, r in zip(ws, p)) / W
            cov[j, k] = cov[k, j] = v
    sig = [None] + [mpmath.sqrt(cov[k, k]) for k in range(1, degree + 1)]
    if degree == 0:
        return [ybar if intercept else mpmath.mpf(0)]
    d = degree
    A = mpmath.zeros(d, d)
    rhs = mpmath.zeros(d, 1)
    for j in range(1, d + 1):
        for k in range(1, d + 1):
            if intercept:
                A[j - 1, k - 1] = W * cov[j, k] / (sig[j] * sig[k])
            else:
                A[j - 1, k - 1] = mpmath.fsum(w * r[j] * r[k] for w, r in zip(ws, p)) / (sig[j] * sig[k])
        A[j - 1, j - 1] += lam
        if intercept:
            rhs[j - 1] = mpmath.fsum(w * (r[j] - mean[j]) * (y - ybar) for w, r, y in zip(ws, p, ys)) / sig[j]
        else:
            rhs[j - 1] = mpmath.fsum(w * r[j] * y for w, r, y in zip(ws, p, ys)) / sig[j]
    b = mpmath.lu_solve(A, rhs)
    a = [mpmath.mpf(0)] + [b[k - 1] / sig[k] for k in range(1, d + 1)]
    if intercept:
        a[0] = ybar - mpmath.fsum(a[k] * mean[k] for k in range(1, d + 1))
    return a


def _mse(a, xs, ys, ws):
    W = mpmath.fsum(ws)
    sse = mpmath.fsum(w * (y - mpmath.fsum(c * x ** k for k, c in enumerate(a))) ** 2
                      for x, y, w in zip(xs, ys, ws))
    return sse / W


def exact_fold_mse(x, y, w, labels, degree, lam, intercept=True, dps=120):
    """(held-out MSE per fold, training MSE per fold) as floats, for one labels row."""
    with mpmath.workdps(dps):
        X = [mpmath.mpf(float(v)) for v in x]
        Y = [mpmath.mpf(float(v)) for v in y]
        Wt = [mpmath.mpf(float(v)) for v in (np.ones(len(x)) if w is None else w)]
        lab = np.asarray(labels)
        lam = mpmath.mpf(float(lam))
        cv, tr = [], []
        for f in np.unique(lab[lab >= 0]):
            tri = [i for i in range(len(X)) if lab[i] >= 0 and lab[i] != f]
            hoi = [i for i in range(len(X)) if lab[i] == f]
            a = _fit([X[i] for i in tri], [Y[i] for i in tri], [Wt[i] for i in tri], degree, lam, intercept)
            cv.append(float(_mse(a, [X[i] for i in hoi], [Y[i] for i in hoi], [Wt[i] for i in hoi])))
            tr.append(float(_mse(a, [X[i] for i in tri], [Y[i] for i in tri], [Wt[i] for i in tri])))
        return np.array(cv), np.array(tr)


def exact_predict(x, y, w, degree, lam, grid, intercept=True, dps=120):
    """Predictions at ``grid`` of the fit to all rows, as floats."""
    with mpmath.workdps(dps):
        X = [mpmath.mpf(float(v)) for v in x]
        Y = [mpmath.mpf(float(v)) for v in y]
        Wt = [mpmath.mpf(float(v)) for v in (np.ones(len(x)) if w is None else w)]
        a = _fit(X, Y, Wt, degree, mpmath.mpf(float(lam)), intercept)
        return np.array([float(mpmath.fsum(c * mpmath.mpf(float(g)) ** k for k, c in enumerate(a)))
                         for g in grid])


def check_against(ours, sklearn_value, exact, rtol_sklearn=1e-8, rtol_exact=1e-10):
    """Assert ours equals scikit-learn to ``rtol_sklearn``; where it does not, the exact
    reference (a callable giving the same array) must side with ours to ``rtol_exact``.

    Returns the number of entries settled by the exact reference.
    """
    ours = np.asarray(ours, dtype=float)
    ref = np.asarray(sklearn_value, dtype=float)
    off = ~np.isclose(ours, ref, rtol=rtol_sklearn, atol=0)
    if off.any():
        np.testing.assert_allclose(ours, exact(), rtol=rtol_exact)
    return int(off.sum())
