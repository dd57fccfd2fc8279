"""Ridge solves from sufficient statistics.

The model for degree d and penalty lambda (with intercept): features
``z_k = (x**k - mu_k) / sigma_k`` for k = 1..d, with mu_k, sigma_k the weighted
mean and population standard deviation of x**k over the training rows, and

    minimise  sum_i w_i (y_i - b_0 - z_i' b)^2 + lambda * ||b||^2 .

Without intercept the features are ``x**k / sigma_k`` (sigma_k still the centred
standard deviation) and b_0 = 0. This is scikit-learn's
``PolynomialFeatures(d, include_bias=False) -> StandardScaler -> Ridge(alpha=lambda)``
(``StandardScaler(with_mean=False)`` and ``fit_intercept=False`` without intercept).

Nothing here forms powers of x. With Gc = R'R the Cholesky factor of the
centred Legendre Gram matrix and K = T diag(1/sigma) the exact map from
standardized powers to Legendre coordinates, the problem is
``min ||q - A b||^2 + lambda ||b||^2`` with A = R K and q = R^-T Pc'W y. One SVD
A = U S V' serves every lambda, and the curve's Legendre coefficients are
``R^-1 U diag(f) U' q`` with the ridge filter f = s^2 / (s^2 + lambda)
(``core.penalties.ridge_filter``); for lambda = 0 this is the plain
least-squares solution ``R^-1 q``, computed directly. Leading blocks of the
factors are the lower-degree quantities, so one Cholesky serves all degrees.

Inputs are trusted: degrees and lambdas are validated at the public entry points
(``core.params``).
"""

from __future__ import annotations

import dataclasses
import functools
import warnings
from dataclasses import dataclass

import numpy as np
from scipy.linalg import solve_triangular

from .basis import Domain, legendre_columns, power_in_legendre
from .curve import Curve
from .errors import NumericalWarning, ParameterError, message
from .moments import unshift
from .penalties import curvature_matrix, ridge_filter

__all__ = ["FoldSolver", "DegreeFactor"]


def _strengths(mu: np.ndarray) -> np.ndarray:
    """s2 = 1 / mu for penalty eigenvalues mu; inf (unpenalized) where mu is zero to rounding."""
    mu = np.asarray(mu, dtype=float)
    tiny = 1e-12 * max(float(np.abs(mu).max(initial=0.0)), 1e-300)
    with np.errstate(divide="ignore"):
        return np.where(mu > tiny, 1.0 / np.where(mu > tiny, mu, 1.0), np.inf)

_RANK_TOL = 1e-11


@functools.lru_cache(maxsize=64)
def _T(domain: Domain, degree: int) -> np.ndarray:
    return power_in_legendre(domain, degree, normalized=True)


def _chol_rank(G: np.ndarray) -> tuple[np.ndarray, int]:
    """Lower Cholesky factor of G and the number of leading pivots that are sound.

    A pivot whose square falls below ``_RANK_TOL`` times its diagonal entry
    marks the training rows as having too few distinct x for that degree.
    """
    n = G.shape[0]
    if n == 0:
        return np.zeros((0, 0)), 0
    diag = np.diag(G).copy()
    L = np.zeros_like(G)
    for j in range(n):
        v = G[j:, j] - L[j:, :j] @ L[j, :j]
        if not (v[0] > _RANK_TOL * max(diag[j], 1e-300)):
            return L, j
        L[j:, j] = v / np.sqrt(v[0])
    return L, n


@dataclass(frozen=True)
class DegreeFactor:
    """Per-degree factorization of one training set under one quadratic penalty.

    The penalized fit is ``R^-1 U diag(f) U' q`` with filter factors
    f = s2 / (s2 + lambda) (``core.penalties.ridge_filter``): for ridge, s2 are the
    squared singular values s^2 of the standardized design; for curvature, s2 = 1 / mu
    with mu the penalty's eigenvalues in the data's orthonormal coordinates (s2 = inf
    for the free constant and straight-line directions). ``R`` is None on the
    rank-deficient path; ``exact0`` is the lambda = 0 solution in working coordinates
    (None when not unique); ``RiU`` = R^-1 U maps filtered components to coefficients.
    ``K``, ``s``, ``Vt`` are the standardized design's (ridge, lasso and elastic net use them).
    """
    R: np.ndarray | None
    K: np.ndarray
    U: np.ndarray
    s: np.ndarray
    Vt: np.ndarray
    Uq: np.ndarray
    q: np.ndarray
    exact0: np.ndarray | None
    RiU: np.ndarray | None
    s2: np.ndarray | None = None
    penalty: str = "ridge"


class FoldSolver:
    """Factorized training statistics; solves any degree <= D and any lambda.

    Parameters
    ----------
    S : ndarray of shape (D + 2, D + 2)
        Training statistics (see ``core.moments``), response shifted by y_shift.
    domain : Domain
    y_shift : float
    intercept : bool
    label : str
        What the rows are, for messages ("training rows of fold 3").

    Notes
    -----
    ``coefficients`` returns Legendre coefficients *in working coordinates*: for
    intercept models the response is the shifted one, for through-origin models
    raw y. ``raw`` (or ``curve``) converts to the user's response: the one place
    the shift is added back. ``working(M)`` converts any statistics matrix to the
    same coordinates, so ``sse(M, theta)`` scores held-out rows without
    cancellation from the shift.
    """

    def __init__(self, S: np.ndarray, domain: Domain, y_shift: float, intercept: bool = True,
                 label: str = "training rows", *, penalty_window: tuple | None = None, distinct: int | None = None,
                 rows_factor: tuple | None = None):
        self.D = S.shape[0] - 2
        self.domain = domain
        # where the curvature integral runs in this solver's own coordinates: (a, b, scale) when
        # its domain differs from the sweep's (see core.crossval); None means [-1, 1]
        self.penalty_window = penalty_window
        self.distinct = distinct
        self.y_shift = float(y_shift)
        self.intercept = bool(intercept)
        self.label = label
        self.offset = self.y_shift if intercept else 0.0
        S = self.working(S)
        D = self.D
        self.W = float(S[0, 0])
        s = S[0, :]
        self.mean = s / self.W
        T = _T(domain, D)
        self.T = T
        Gc = S[1:D + 1, 1:D + 1] - np.outer(s[1:D + 1], s[1:D + 1]) / self.W
        self.response_mean = s[D + 1] / self.W      # weighted mean of the working response
        self.yy_centred = float(S[D + 1, D + 1] - s[D + 1] ** 2 / self.W)
        var = np.einsum("jk,jl,lk->k", T[1:, 1:], Gc / self.W, T[1:, 1:]) if D else np.zeros(0)
        self.sigma = np.sqrt(np.maximum(var, 0.0))  # of normalized powers 1..D
        if intercept:
            self.G = Gc
            self.g = S[1:D + 1, D + 1] - s[1:D + 1] * s[D + 1] / self.W
        else:
            self.G = S[:D + 1, :D + 1]
            self.g = S[:D + 1, D + 1]
            self.p0 = legendre_columns(np.array([domain.map(0.0)]), D)[0]
        if rows_factor is None:
            self.L, self.rank = _chol_rank(self.G)
        else:   # R and Q'y from a QR of the rows themselves: the condition of R, not of R'R
            self.L = rows_factor[0].T
            # a QR pivot is accurate to about eps * cond(R), not eps * cond(R)^2: test it unsquared
            piv = np.diag(self.L) ** 2 > _RANK_TOL ** 2 * np.maximum(np.diag(self.G), 1e-300)
            self.rank = int(np.argmin(piv)) if not piv.all() else piv.size
        r = self.rank
        # Leading blocks of R^-1 and of q = R^-T g are the lower-degree ones: invert once.
        self.Rinv = solve_triangular(self.L[:r, :r].T, np.eye(r), check_finite=False) if r else np.zeros((0, 0))
        self.qfull = self.Rinv.T @ self.g[:r] if rows_factor is None else np.asarray(rows_factor[1])[:r]
        self.nfull = self.Rinv.T @ self.p0[:r] if not intercept else None
        self._cache: dict[tuple, DegreeFactor] = {}
        self._warned = False
        self._omega = None

    # --- coordinates -----------------------------------------------------
    def working(self, M: np.ndarray) -> np.ndarray:
        """Statistics matrix in this solver's working response coordinates."""
        return M if self.intercept else unshift(M, self.y_shift)

    def dim(self, degree: int) -> int:
        """Number of solved coefficients (the intercept's follows from the means)."""
        return degree if self.intercept else degree + 1

    def raw(self, theta: np.ndarray) -> np.ndarray:
        """Coefficients for the raw response from working ones (any leading shape)."""
        out = np.array(theta, dtype=float, copy=True)
        out[..., 0] += self.offset
        return out

    def curve(self, theta: np.ndarray) -> Curve:
        """The ``Curve`` of one working coefficient vector."""
        return Curve(self.domain, self.raw(theta), through_origin=not self.intercept)

    def assemble(self, theta_w: np.ndarray, degree: int) -> np.ndarray:
        """Full working coefficients (nl, degree + 1) from the solved part (nl, dim(degree)).

        With an intercept the constant coefficient follows from the weighted means
        (the fit passes through them); without one the solved part is the whole vector.
        """
        nl = theta_w.shape[0]
        out = np.zeros((nl, degree + 1))
        if self.intercept:
            out[:, 1:] = theta_w
            out[:, 0] = self.response_mean - theta_w @ self.mean[1:degree + 1]
        else:
            out[:, :theta_w.shape[1]] = theta_w
        return out

    def power_map(self, degree: int) -> np.ndarray:
        """K: standardized powers 1..degree -> working Legendre coordinates."""
        rows = slice(1, degree + 1) if self.intercept else slice(0, degree + 1)
        return self.T[rows, 1:degree + 1] / self.sigma[:degree]

    # --- factorization -----------------------------------------------------
    def penalty_matrix(self, degree: int) -> np.ndarray:
        """W * Omega in working coordinates (rows of P_1..P_d with an intercept, P_0..P_d without):
        the curvature penalty integral over the mapped range, weighted like the data term."""
        if self._omega is None:
            a, b, scale = self.penalty_window or (-1.0, 1.0, 1.0)
            self._omega = curvature_matrix(self.D, a, b, scale)
        rows = slice(1, degree + 1) if self.intercept else slice(0, degree + 1)
        return self.W * self._omega[rows, rows]

    def factor(self, degree: int, penalty: str = "ridge") -> DegreeFactor:
        """The per-degree factorization under a quadratic penalty (cached)."""
        got = self._cache.get((degree, penalty))
        if got is not None:
            return got
        if penalty == "curvature":
            got = self._curvature_factor(degree)
            self._cache[(degree, penalty)] = got
            return got
        n = self.dim(degree)
        sig = self.sigma[:degree]
        if degree and np.any(sig <= 0):
            raise ParameterError(message(f"x in the {self.label}", "at least two distinct x values", "one"))
        K = self.power_map(degree) if degree else np.zeros((n, 0))
        g = self.g[:n]
        exact0 = None
        if self.rank >= n:
            R = self.L[:n, :n].T
            q = self.qfull[:n]
            A = R @ K
            exact0 = self.exact_solution(degree, q)
        else:
            self._warn_rank(degree)
            lam_, Q = np.linalg.eigh(self.G[:n, :n])
            keep = lam_ > _RANK_TOL * max(lam_.max(), 1e-300)
            Q, root = Q[:, keep], np.sqrt(lam_[keep])
            R = None
            A = (root[:, None] * Q.T) @ K
            q = (Q.T @ g) / root
        if degree:
            U, s, Vt = np.linalg.svd(A, full_matrices=False)
        else:
            U, s, Vt = np.zeros((A.shape[0], 0)), np.zeros(0), np.zeros((0, 0))
        RiU = self.Rinv[:n, :n] @ U if (R is not None and degree) else None
        got = DegreeFactor(R, K, U, s, Vt, U.T @ q, q, exact0, RiU, s ** 2, "ridge")
        self._cache[(degree, "ridge")] = got
        return got

    def free_basis(self, degree: int) -> np.ndarray:
        """Orthonormal basis (n, m) of the working coordinates z = R theta a fit may use:
        everything with an intercept; the directions orthogonal to R^-T P(t0) through the origin."""
        n = self.dim(degree)
        if self.intercept or degree == 0:
            return np.eye(n)
        nv = self.nfull[:n]
        Q, _ = np.linalg.qr(np.column_stack([nv, np.eye(n)]))
        return Q[:, 1:n]

    def _curvature_factor(self, degree: int) -> DegreeFactor:
        ridge = self.factor(degree)          # the standardized design (for the lasso-style fields)
        n = self.dim(degree)
        if degree == 0:                      # a constant: nothing to penalize
            return dataclasses.replace(ridge, penalty="curvature")
        if ridge.R is None:
            return DegreeFactor(None, ridge.K, ridge.U, ridge.s, ridge.Vt, ridge.Uq, ridge.q, ridge.exact0,
                                None, None, "curvature")
        Ri = self.Rinv[:n, :n]
        B = self.free_basis(degree)
        mu, E = np.linalg.eigh(B.T @ (Ri.T @ self.penalty_matrix(degree) @ Ri) @ B)
        U = B @ E
        s2 = _strengths(mu)
        q = self.qfull[:n]
        return DegreeFactor(ridge.R, ridge.K, U, ridge.s, ridge.Vt, U.T @ q, q, ridge.exact0, Ri @ U, s2,
                            "curvature")

    def exact_solution(self, degree: int, q: np.ndarray) -> np.ndarray:
        """The lambda = 0 solution: R^-1 q, or its projection for through-origin models."""
        n = self.dim(degree)
        Ri = self.Rinv[:n, :n]
        if self.intercept:
            return Ri @ q
        if degree == 0:
            return np.zeros(1)
        nv = self.nfull[:n]
        return Ri @ (q - nv * (nv @ q) / (nv @ nv))

    def _warn_rank(self, degree: int) -> None:
        if not self._warned:
            if self.distinct is not None and self.distinct <= degree:
                why = f"have {self.distinct} distinct x values, fewer than degree + 1 = {degree + 1}"
            elif self.distinct is not None:
                why = (f"have {self.distinct} distinct x values, but so crowded into part of the x range that a "
                       f"degree-{degree} curve is not determined in double precision")
            else:
                why = (f"do not determine a degree-{degree} curve in double precision (too few distinct x "
                       "values, or x values crowded into a small part of the range)")
            warnings.warn(
                f"The {self.label} {why}: the fit is not unique at lambda = 0 and a minimum-norm solution is "
                "used; prefer a lower degree or a larger lambda.", NumericalWarning, stacklevel=4)
            self._warned = True

    # --- solutions ----------------------------------------------------------
    def singular_values(self, degree: int) -> np.ndarray:
        """Singular values of the standardized design (their squares are X'WX's eigenvalues)."""
        return self.factor(degree).s.copy()

    def coefficients(self, degree: int, lams: np.ndarray, penalty: str = "ridge") -> np.ndarray:
        """Penalized Legendre coefficients (working coordinates), shape (len(lams), degree + 1)."""
        lams = np.asarray(lams, dtype=float)
        f = self.factor(degree, penalty)
        n = self.dim(degree)
        if n == 0 or degree == 0:
            return self.assemble(np.zeros((lams.size, 0)), degree)
        if f.s2 is None:                              # curvature on rank-deficient rows
            return self.assemble(self._curvature_direct(degree, lams)[0], degree)
        filt = ridge_filter(f.s2, lams)
        if f.R is not None:
            theta_w = (filt * f.Uq) @ f.RiU.T                     # (nl, n)
            zero = lams == 0
            if zero.any():
                theta_w[zero] = f.exact0
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                b = (np.where(f.s > 0, filt / f.s, 0.0) * f.Uq) @ f.Vt   # (nl, d)
            theta_w = b @ f.K.T
        return self.assemble(theta_w, degree)

    def effective_df(self, degree: int, lams: np.ndarray, penalty: str = "ridge") -> np.ndarray:
        """Trace of the smoother: sum of the filter factors (ESL eq. 3.50 for ridge), plus one
        for the intercept."""
        f = self.factor(degree, penalty)
        one = 1.0 if self.intercept else 0.0
        if f.s2 is None and degree:
            return self._curvature_direct(degree, np.asarray(lams, dtype=float))[1] + one
        return ridge_filter(f.s2 if f.s2 is not None else f.s ** 2, lams).sum(axis=-1) + one

    def _curvature_direct(self, degree, lams: np.ndarray):
        """Curvature fits on rows with too few distinct x for an unpenalized fit, one lambda at a time:
        minimise over standardized power coefficients b (theta = K b) ||.||_G^2 + lambda b'K'(W Omega)K b.
        Returns (working coefficients (nl, n), effective df without the intercept (nl,))."""
        degree = int(degree)
        f = self.factor(degree)
        n = self.dim(degree)
        G, g, K = self.G[:n, :n], self.g[:n], f.K
        A, Pk, c = K.T @ G @ K, K.T @ self.penalty_matrix(degree) @ K, K.T @ g
        theta, edf = np.zeros((lams.size, n)), np.zeros(lams.size)
        for i, lam in enumerate(lams.tolist()):
            H = np.linalg.pinv(A + lam * Pk, hermitian=True)
            theta[i] = K @ (H @ c)
            edf[i] = np.trace(H @ A)
        return theta, edf

    @staticmethod
    def sse(M: np.ndarray, theta: np.ndarray) -> np.ndarray:
        """Weighted SSE of rows summarized by M (working coordinates), per theta row.

        ``sum w (y - P theta)^2 = v' M v`` with v = [-theta, 1].
        """
        theta = np.atleast_2d(theta)
        n = theta.shape[1]
        G = M[:n, :n]
        g = M[:n, -1]
        quad = np.sum((theta @ G) * theta, axis=1)
        return np.maximum(M[-1, -1] - 2.0 * (theta @ g) + quad, 0.0)
