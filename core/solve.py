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

import functools
import warnings
from dataclasses import dataclass

import numpy as np
from scipy.linalg import solve_triangular

from .basis import Domain, legendre_columns, power_in_legendre
from .curve import Curve
from .errors import NumericalWarning, ParameterError, message
from .moments import unshift
from .penalties import penalized_coefficients, ridge_filter

__all__ = ["FoldSolver", "FoldBatch", "DegreeFactor", "solve_sets"]

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
    """Per-degree factorization of one training set: everything needed for any lambda.

    ``R`` is None on the rank-deficient (eigen) path; ``exact0`` is the lambda = 0
    solution in working coordinates there too (None when not unique);
    ``RiU`` = R^-1 U maps filtered components to coefficients.
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
                 label: str = "training rows"):
        self.D = S.shape[0] - 2
        self.domain = domain
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
        self.L, self.rank = _chol_rank(self.G)
        r = self.rank
        # Leading blocks of R^-1 and of q = R^-T g are the lower-degree ones: invert once.
        self.Rinv = solve_triangular(self.L[:r, :r].T, np.eye(r), check_finite=False) if r else np.zeros((0, 0))
        self.qfull = self.Rinv.T @ self.g[:r]
        self.nfull = self.Rinv.T @ self.p0[:r] if not intercept else None
        self._cache: dict[int, DegreeFactor] = {}
        self._warned = False

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
    def factor(self, degree: int) -> DegreeFactor:
        """The per-degree factorization (cached)."""
        got = self._cache.get(degree)
        if got is not None:
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
        got = DegreeFactor(R, K, U, s, Vt, U.T @ q, q, exact0, RiU)
        self._cache[degree] = got
        return got

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
            distinct = self.rank + (1 if self.intercept else 0)
            warnings.warn(
                f"The {self.label} have about {distinct} distinct x values, fewer than "
                f"degree + 1 = {degree + 1}: the fit is not unique at lambda = 0 and a "
                "minimum-norm solution is used; prefer a lower degree or a larger lambda.",
                NumericalWarning, stacklevel=4)
            self._warned = True

    # --- solutions ----------------------------------------------------------
    def singular_values(self, degree: int) -> np.ndarray:
        """Singular values of the standardized design (their squares are X'WX's eigenvalues)."""
        return self.factor(degree).s.copy()

    def coefficients(self, degree: int, lams: np.ndarray) -> np.ndarray:
        """Ridge Legendre coefficients (working coordinates), shape (len(lams), degree + 1)."""
        lams = np.asarray(lams, dtype=float)
        f = self.factor(degree)
        n = self.dim(degree)
        if n == 0 or degree == 0:
            return self.assemble(np.zeros((lams.size, 0)), degree)
        filt = ridge_filter(f.s ** 2, lams)
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

    def effective_df(self, degree: int, lams: np.ndarray) -> np.ndarray:
        """sum s_j^2 / (s_j^2 + lambda) (ESL eq. 3.50), plus one for the intercept."""
        f = self.factor(degree)
        return ridge_filter(f.s ** 2, lams).sum(axis=-1) + (1.0 if self.intercept else 0.0)

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


class FoldBatch:
    """The same degree solved for many training sets at once (stacked arrays, no Python loop).

    Solvers on the rank-deficient path are solved one by one and filled in.
    """

    def __init__(self, solvers: list[FoldSolver], degree: int):
        self.solvers = solvers
        self.degree = degree
        self.intercept = solvers[0].intercept
        self.n = n = solvers[0].dim(degree)
        self.RiU = self.Uq = self.s2 = self.exact0 = None
        self.slow = [i for i, sv in enumerate(solvers) if sv.rank < n]
        for i in self.slow:
            solvers[i].factor(degree)      # warns once, caches the fallback
        if n and degree:
            # rank-deficient sets borrow a sound one's shapes here and are overwritten later
            donor = next((sv for sv in solvers if sv.rank >= n), None)
            fast = [sv if sv.rank >= n else donor for sv in solvers]
            if donor is None:                    # every set is rank deficient
                self.slow = list(range(len(solvers)))
            else:
                if any(np.any(sv.sigma[:degree] <= 0) for sv in fast):
                    raise ParameterError(message("x in the training rows", "at least two distinct x values", "one"))
                R = np.stack([sv.L[:n, :n].T for sv in fast])
                Ri = np.stack([sv.Rinv[:n, :n] for sv in fast])
                K = np.stack([sv.power_map(degree) for sv in fast])
                q = np.stack([sv.qfull[:n] for sv in fast])
                U, sv_, _ = np.linalg.svd(np.matmul(R, K), full_matrices=False)
                self.RiU = np.matmul(Ri, U)
                self.Uq = np.matmul(np.swapaxes(U, 1, 2), q[:, :, None])[..., 0]
                self.s2 = sv_ ** 2
                self.exact0 = np.stack([sv.exact_solution(degree, qq) for sv, qq in zip(fast, q)])
        self.mean = np.stack([sv.mean[1:degree + 1] for sv in solvers])
        self.ycw = np.array([sv.response_mean for sv in solvers])

    def coefficients(self, lams: np.ndarray) -> np.ndarray:
        """Legendre coefficients in working coordinates, shape (sets, len(lams), degree + 1)."""
        F, d = len(self.solvers), self.degree
        out = np.zeros((F, lams.size, d + 1))
        if d == 0 or self.n == 0:
            if self.intercept:
                out[:, :, 0] = self.ycw[:, None]
            return out
        if self.RiU is None:
            for i in range(F):
                out[i] = self.solvers[i].coefficients(d, lams)
            return out
        filt = ridge_filter(self.s2, lams)                              # (F, nl, n)
        theta_w = np.matmul(filt * self.Uq[:, None, :], np.swapaxes(self.RiU, 1, 2))
        zero = lams == 0
        if zero.any():
            theta_w[:, zero, :] = self.exact0[:, None, :]
        if self.intercept:
            out[:, :, 1:] = theta_w
            out[:, :, 0] = self.ycw[:, None] - np.matmul(theta_w, self.mean[:, :, None])[..., 0]
        else:
            out[:] = theta_w
        for i in self.slow:
            out[i] = self.solvers[i].coefficients(d, lams)
        return out

    def effective_df(self, lams: np.ndarray) -> np.ndarray:
        """df(lambda) of every set, shape (sets, len(lams))."""
        if self.s2 is None:
            return np.stack([sv.effective_df(self.degree, lams) for sv in self.solvers])
        out = ridge_filter(self.s2, lams).sum(axis=-1) + (1.0 if self.intercept else 0.0)
        for i in self.slow:
            out[i] = self.solvers[i].effective_df(self.degree, lams)
        return out

    @staticmethod
    def sse(M: np.ndarray, theta: np.ndarray) -> np.ndarray:
        """Weighted SSE per set and lambda: M (sets, p, p) working stats, theta (sets, nl, n)."""
        n = theta.shape[2]
        G = M[:, :n, :n]
        g = M[:, :n, -1]
        quad = np.sum(np.matmul(theta, G) * theta, axis=2)
        lin = np.sum(theta * g[:, None, :], axis=2)
        return np.maximum(M[:, -1, -1][:, None] - 2.0 * lin + quad, 0.0)


def solve_sets(solvers: list[FoldSolver], degree: int, lams: np.ndarray, penalty: str = "ridge",
               mix: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Working coefficients (S, nl, d + 1) and effective df (S, nl) of several training sets
    under one penalty: the one place a penalty name turns into a solver."""
    if penalty == "ridge":
        if len(solvers) == 1:
            sv = solvers[0]
            return sv.coefficients(degree, lams)[None], sv.effective_df(degree, lams)[None]
        batch = FoldBatch(solvers, degree)
        return batch.coefficients(lams), batch.effective_df(lams)
    return penalized_coefficients(solvers, degree, lams, mix)
