"""Penalties on the statistics: ridge and curvature filters, and the lasso and elastic net.

Ridge: on the standardized design A = U S V' (``core.solve``) the penalized fit
keeps each singular component scaled by the filter factor s^2 / (s^2 + lambda)
(``ridge_filter``; Hastie, Tibshirani & Friedman, ESL sec. 3.4.1).

Curvature: lambda times the integral over the mapped range t in [-1, 1] of f''(t)^2,
a roughness penalty (Green & Silverman, Nonparametric Regression and Generalized
Linear Models, 1994, ch. 2; Eilers & Marx 1996, Stat. Sci. 11, 89-121, for its
discrete analogue). For f = sum theta_j P_j(t) it is theta' Omega theta with
Omega_jk = integral P_j'' P_k'' dt (``curvature_matrix``): zero in the rows and
columns of P_0 and P_1, so constants and straight lines are free and lambda -> inf
leaves the least-squares straight line. ``core.solve`` turns it into the same
filter form as ridge, with factors 1 / (1 + lambda mu) for the eigenvalues mu of
the penalty in the data's own orthonormal coordinates.

Lasso and elastic net, by coordinate descent (covariance updates) and an exact active-set method.

Objective on the standardized powers (as for ridge, ``core.solve``):

    minimise  sum w (y - yhat)^2 + lambda * (mix * sum |b_j| + (1 - mix) * sum b_j^2)

mix = 1 is the lasso, mix = 0 ridge. With Gs = Z'WZ and c = Z'Wy (centred) only
the d x d statistics are touched, never the rows, so the one-pass design holds.
Two solvers share that form: coordinate descent with covariance updates
(Friedman, Hastie & Tibshirani 2010: b_j = S(c_j - sum_{k != j} Gs_jk b_k,
lambda mix / 2) / (Gs_jj + lambda (1 - mix)), S the soft threshold), vectorized
over many problems, and, because standardized powers are so collinear that
coordinate descent can need millions of sweeps, an exact active-set solver
(feature-sign search, Lee, Battle, Raina & Ng 2007) that solves the small
system on the active set and checks the optimality conditions to 1e-12.
``penalized_coefficients`` uses the active-set solver and coordinate descent as
its cross-check in the tests.

scikit-learn's ``ElasticNet`` minimises (1/2n)||y - Xb||^2 + alpha l1 ||b||_1 +
alpha (1 - l1)/2 ||b||^2; it is the same problem for unit weights with
alpha = lambda (1 - mix/2) / n and l1_ratio = mix / (2 - mix).

Effective degrees of freedom: 1 (intercept) + tr(G_AA (G_AA + lambda (1 - mix) I)^-1)
over the active set A (Zou, Hastie & Tibshirani 2007 for the lasso: |A|; Zou &
Hastie 2005 for the elastic net).
"""

from __future__ import annotations

import warnings

import numpy as np
from scipy.linalg import solve_triangular

from .errors import NumericalWarning

__all__ = ["ridge_filter", "curvature_matrix", "coordinate_descent", "active_set", "penalized_coefficients",
           "MAX_CONDITION", "QUADRATIC"]

QUADRATIC = ("ridge", "curvature")      # penalties whose fit is linear in y (filters, hat matrix)


def ridge_filter(s2: np.ndarray, lams: np.ndarray) -> np.ndarray:
    """Filter factors s^2 / (s^2 + lambda), shape (..., len(lams), len(s2)); 0 where s = 0,
    1 where s = inf (a direction the penalty leaves free).

    ``s2`` may carry leading batch axes (folds): shape (..., d) gives (..., nl, d).
    """
    s2 = np.asarray(s2, dtype=float)[..., None, :]
    lams = np.asarray(lams, dtype=float)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(s2 > 0, s2 / (s2 + lams), 0.0)
    return np.where(np.isinf(s2), 1.0, out)


def curvature_matrix(degree: int, a: float = -1.0, b: float = 1.0, scale: float = 1.0) -> np.ndarray:
    """Omega of shape (degree + 1, degree + 1): Omega_jk = scale * integral_a^b P_j''(s) P_k''(s) ds.

    P_j'' has degree j - 2, so Gauss-Legendre quadrature with degree + 1 nodes on [a, b]
    integrates every product exactly. The default is the whole mapped range [-1, 1];
    another interval and a scale express the same integral in other coordinates.
    """
    n = degree + 1
    nodes, weights = np.polynomial.legendre.leggauss(max(n, 2))
    s = 0.5 * (b - a) * nodes + 0.5 * (a + b)
    d2 = np.empty((n, s.size))
    for j in range(n):
        c = np.zeros(n)
        c[j] = 1.0
        d2[j] = np.polynomial.legendre.legval(s, np.polynomial.legendre.legder(c, 2)) if j >= 2 else 0.0
    m = scale * 0.5 * (b - a) * (d2 * weights) @ d2.T
    return 0.5 * (m + m.T)


def coordinate_descent(G, c, lam, mix, *, tol=1e-13, max_sweeps=20000):
    """Solve P problems at once: G (P, d, d), c (P, d), lam (P,). Returns (b, converged)."""
    P, d = c.shape
    b = np.zeros((P, d))
    diag = np.einsum("pjj->pj", G)
    thr = lam * mix / 2.0
    denom = diag + (lam * (1.0 - mix))[:, None]
    r = c.copy()                       # r = c - G b, kept current
    done = np.zeros(P, dtype=bool)
    scale = np.maximum(np.abs(c).max(axis=1), 1e-300)
    for _ in range(max_sweeps):
        delta = np.zeros(P)
        for j in range(d):
            old = b[:, j]
            z = r[:, j] + diag[:, j] * old
            new = np.sign(z) * np.maximum(np.abs(z) - thr, 0.0) / denom[:, j]
            step = new - old
            if np.any(step):
                r -= step[:, None] * G[:, :, j]
                b[:, j] = new
            delta = np.maximum(delta, np.abs(step) * diag[:, j])
        done = delta <= tol * scale
        if done.all():
            break
    return b, done


MAX_CONDITION = 1e14


def active_set(G, c, lam, mix, *, tol=1e-12, max_iter=100, design=None):
    """Exact solution of one problem by feature-sign search. Returns (b, converged).

    Minimises 0.5 b'G b - c'b + 0.5 lambda (1 - mix) ||b||^2 + (lambda mix / 2) ||b||_1.
    ``design = (B, r)`` with G = B'B and c = B'r lets every sub-problem be solved by a QR
    factorization of B's active columns (condition of B, not of B'B) and gradients be
    formed from residuals; without it B is the Cholesky factor of G.
    """
    d = c.size
    thr = lam * mix / 2.0
    lam2 = lam * (1.0 - mix)
    if design is None:
        B = np.linalg.cholesky(G + 1e-300 * np.eye(d)).T if d else np.zeros((0, 0))
        r = solve_triangular(B, c, trans="T") if d else np.zeros(0)
    else:
        B, r = design
    scale = max(float(np.abs(c).max()), 1e-300)
    x = np.zeros(d)
    sign = np.zeros(d)
    active = np.zeros(d, dtype=bool)

    def gradient(v):
        return B.T @ (B @ v - r) + lam2 * v

    def objective(v):
        e = B @ v - r
        return 0.5 * e @ e + 0.5 * lam2 * v @ v + thr * np.abs(v).sum()

    def solve(A):
        C = B[:, A]
        rhs = r
        if lam2 > 0:
            C = np.vstack([C, np.sqrt(lam2) * np.eye(A.size)])
            rhs = np.concatenate([r, np.zeros(A.size)])
        Q, R = np.linalg.qr(C)
        if np.any(np.abs(np.diag(R)) <= 1e-300):
            return np.linalg.lstsq(C.T @ C, C.T @ rhs - thr * sign[A], rcond=None)[0]
        # R'R x = R'Q'rhs - thr s  =>  R x = Q'rhs - R^-T (thr s)
        z = Q.T @ rhs - solve_triangular(R, thr * sign[A], trans="T")
        return solve_triangular(R, z)

    for _ in range(max_iter):
        grad = gradient(x)
        free = ~active
        if free.any():
            i = np.flatnonzero(free)[np.argmax(np.abs(grad[free]))]
            if abs(grad[i]) > thr + tol * scale:
                sign[i] = -np.sign(grad[i])
                active[i] = True
        for _inner in range(4 * d + 10):
            A = np.flatnonzero(active)
            if A.size == 0:
                break
            xa = solve(A)
            cur = x[A]
            # the objective is smooth along the segment until a coefficient changes sign
            cands = [xa]
            flips = np.flatnonzero(np.sign(xa) != sign[A])
            for k in flips:
                if cur[k] != xa[k]:
                    t = cur[k] / (cur[k] - xa[k])
                    if 0.0 <= t <= 1.0:
                        pt = cur + t * (xa - cur)
                        pt[k] = 0.0
                        cands.append(pt)
            best = min(cands, key=lambda v: objective(np.where(np.isin(np.arange(d), A), 0, x)
                                                      + np.bincount(A, weights=v, minlength=d)))
            x[:] = 0.0
            x[A] = best
            nz = x != 0
            active &= nz
            sign = np.sign(x)
            A = np.flatnonzero(active)
            g = gradient(x)
            if A.size == 0 or np.all(np.abs(g[A] + thr * sign[A]) <= tol * scale):
                break
        grad = gradient(x)
        zero = ~active
        if np.all(np.abs(grad[zero]) <= thr + tol * scale) and \
                np.all(np.abs(grad[active] + thr * sign[active]) <= 1e3 * tol * scale):
            return x, True
    return x, False


def _condition(sv, degree) -> float:
    s = sv.factor(degree).s
    return float((s.max() / s.min()) ** 2) if s.size and s.min() > 0 else float("inf")


def _standardized(sv, degree):
    """(G, c, K, B, r): the standardized problem G = B'B, c = B'r with B = S V' and r = U'q
    from the design's SVD (accurate pieces; G itself is only used where squaring is harmless)."""
    f = sv.factor(degree)
    B = f.s[:, None] * f.Vt
    return B.T @ B, B.T @ f.Uq, f.K, B, f.Uq


def penalized_coefficients(solvers, degree: int, lams, mix: float):
    """Legendre coefficients (working coordinates), shape (len(solvers), nl, degree + 1),
    and effective df, shape (len(solvers), nl)."""
    lams = np.asarray(lams, dtype=float)
    F, nl = len(solvers), lams.size
    out = np.zeros((F, nl, degree + 1))
    edf = np.ones((F, nl)) if solvers[0].intercept else np.zeros((F, nl))
    if degree == 0:
        for i, sv in enumerate(solvers):
            out[i] = sv.assemble(np.zeros((nl, 0)), 0)
        return out, edf
    probs = [_standardized(sv, degree) for sv in solvers]
    worst = max(_condition(sv, degree) for sv in solvers)
    if worst > MAX_CONDITION:
        warnings.warn(
            f"The standardized powers up to degree {degree} are collinear (condition number {worst:.1e}): "
            f"the {'lasso' if mix == 1 else 'elastic net'} is not well defined in double precision there, "
            "so that degree is left out (NaN); use a lower degree or ridge.", NumericalWarning, stacklevel=3)
        return np.full((F, nl, degree + 1), np.nan), np.full((F, nl), np.nan)
    b = np.zeros((F * nl, degree))
    ok = np.ones(F * nl, dtype=bool)
    for i, (Gi, ci, _, Bi, ri) in enumerate(probs):
        for l_idx, lv in enumerate(lams):
            b[i * nl + l_idx], ok[i * nl + l_idx] = active_set(Gi, ci, float(lv), mix, design=(Bi, ri))
    if not ok.all():
        warnings.warn(f"The penalized solver did not fully converge for {int((~ok).sum())} of {ok.size} "
                      f"(fold, lambda) problems at degree {degree}; scores there are approximate.",
                      NumericalWarning, stacklevel=3)
    b = b.reshape(F, nl, -1)
    for i, (sv, (_, _, K, Bi, _)) in enumerate(zip(solvers, probs)):
        out[i] = sv.assemble(b[i] @ K.T, degree)
        for l_idx, lv in enumerate(lams):
            act = np.flatnonzero(b[i, l_idx])
            if act.size:
                ev = np.linalg.svd(Bi[:, act], compute_uv=False) ** 2
                edf[i, l_idx] += float(np.sum(ev / (ev + lv * (1.0 - mix)))) if mix < 1 else act.size
    return out, edf
