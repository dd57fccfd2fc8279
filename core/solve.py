"""Ridge solves from sufficient statistics, and plain gradient descent as a cross-check.

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
``R^-1 U diag(s^2 / (s^2 + lambda)) U' q``; for lambda = 0 this is the plain
least-squares solution ``R^-1 q``, computed directly. Leading blocks of the
factors are the lower-degree quantities, so one Cholesky serves all degrees.
"""

from __future__ import annotations

import functools
import warnings
from dataclasses import dataclass, field

import numpy as np
from scipy.linalg import solve_triangular

from .basis import Domain, legendre_columns, power_in_legendre
from .errors import NumericalWarning, ParameterError, message
from .moments import unshift

__all__ = ["FoldSolver", "GradientDescentResult", "gradient_descent", "check_degree", "check_lambdas"]

_RANK_TOL = 1e-11


def check_degree(degree, max_degree: int = 30) -> int:
    ok = isinstance(degree, (int, np.integer)) and not isinstance(degree, bool)
    if not ok or not (0 <= degree <= max_degree):
        raise ParameterError(message("Parameter 'degree'", f"an integer from 0 to {max_degree}", degree))
    return int(degree)


def check_lambdas(lams) -> np.ndarray:
    arr = np.atleast_1d(np.asarray(lams, dtype=float))
    if arr.ndim != 1 or arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr < 0):
        raise ParameterError(message("Parameter 'lambda'", "finite numbers >= 0", lams))
    return arr


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


@dataclass
class _Degree:
    """Per-degree factorization: everything needed for any lambda."""
    R: np.ndarray | None       # upper factor (None on the rank-deficient path)
    K: np.ndarray              # standardized power -> Legendre map for this degree
    U: np.ndarray
    s: np.ndarray
    Vt: np.ndarray
    Uq: np.ndarray
    q: np.ndarray
    exact0: np.ndarray | None  # lambda = 0 solution in the working coordinates
    RiU: np.ndarray | None     # R^-1 U: maps filtered components to coefficients


class FoldSolver:
    """Factorized training statistics; solves any degree <= D and any lambda.

    Parameters
    ----------
    S : ndarray of shape (D + 2, D + 2)
        Training statistics (see ``core.moments``), response shifted by y_shift.
    domain : Domain
    y_shift : float
    intercept : bool

    Notes
    -----
    Coefficients come back as Legendre coefficients *in working coordinates*:
    for intercept models the response is the shifted one (add ``offset`` to
    coefficient 0 for raw y), for through-origin models it is raw y.
    ``working(M)`` converts any statistics matrix to the same coordinates, so
    ``sse(M, theta)`` scores held-out rows without cancellation from the shift.
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
        self._ycw = s[D + 1] / self.W            # weighted mean of working response
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
        self._cache: dict[int, _Degree] = {}
        self._warned = False

    # --- coordinates -----------------------------------------------------
    def working(self, M: np.ndarray) -> np.ndarray:
        """Statistics matrix in this solver's working response coordinates."""
        return M if self.intercept else unshift(M, self.y_shift)

    def _dim(self, degree: int) -> int:
        return degree if self.intercept else degree + 1

    # --- factorization -----------------------------------------------------
    def _prepare(self, degree: int) -> _Degree:
        got = self._cache.get(degree)
        if got is not None:
            return got
        n = self._dim(degree)
        rows = slice(1, degree + 1) if self.intercept else slice(0, degree + 1)
        sig = self.sigma[:degree]
        if degree and np.any(sig <= 0):
            raise ParameterError(message(f"x in the {self.label}", "at least two distinct values", "one"))
        K = self.T[rows, 1:degree + 1] / sig if degree else np.zeros((n, 0))
        g = self.g[:n]
        exact0 = None
        if self.rank >= n:
            R = self.L[:n, :n].T
            q = self.qfull[:n]
            A = R @ K
            exact0 = self._exact0(degree, q)
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
        got = _Degree(R, K, U, s, Vt, U.T @ q, q, exact0, RiU)
        self._cache[degree] = got
        return got

    def _exact0(self, degree: int, q: np.ndarray) -> np.ndarray:
        """The lambda = 0 solution: R^-1 q, or its projection for through-origin models."""
        n = self._dim(degree)
        Ri = self.Rinv[:n, :n]
        if self.intercept:
            return Ri @ q
        if degree == 0:
            return np.zeros(1)
        nv = self.nfull[:n]
        return Ri @ (q - nv * (nv @ q) / (nv @ nv))

    def _K(self, degree: int) -> np.ndarray:
        rows = slice(1, degree + 1) if self.intercept else slice(0, degree + 1)
        return self.T[rows, 1:degree + 1] / self.sigma[:degree]

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
        return self._prepare(check_degree(degree, self.D)).s.copy()

    def coefficients(self, degree: int, lams) -> np.ndarray:
        """Legendre coefficients (working coordinates), shape (len(lams), degree + 1)."""
        degree = check_degree(degree, self.D)
        lams = check_lambdas(lams)
        f = self._prepare(degree)
        n = self._dim(degree)
        out = np.zeros((lams.size, degree + 1))
        if n == 0 or degree == 0 and not self.intercept:
            theta_w = np.zeros((lams.size, n))
        else:
            s2 = f.s ** 2
            with np.errstate(divide="ignore", invalid="ignore"):
                filt = s2 / (s2 + lams[:, None])
            if f.R is not None:
                theta_w = (filt * f.Uq) @ f.RiU.T                 # (nl, n)
                zero = lams == 0
                if zero.any():
                    theta_w[zero] = f.exact0
            else:
                with np.errstate(divide="ignore", invalid="ignore"):
                    inv = np.where(f.s > 0, f.s / (s2 + lams[:, None]), 0.0)
                b = (inv * f.Uq) @ f.Vt                           # (nl, d)
                theta_w = b @ f.K.T
        if self.intercept:
            out[:, 1:] = theta_w
            out[:, 0] = self._ycw - theta_w @ self.mean[1:degree + 1]
        else:
            out[:, :] = theta_w
        return out

    def effective_df(self, degree: int, lams) -> np.ndarray:
        """sum s_j^2 / (s_j^2 + lambda) (ESL eq. 3.50), plus one for the intercept."""
        f = self._prepare(check_degree(degree, self.D))
        lams = check_lambdas(lams)
        s2 = f.s ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            filt = np.where(s2 > 0, s2 / (s2 + lams[:, None]), 0.0)
        return filt.sum(axis=1) + (1.0 if self.intercept else 0.0)

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


@dataclass(frozen=True)
class GradientDescentResult:
    """Outcome of plain batch gradient descent on the standardized ridge cost.

    Attributes
    ----------
    intercept : float
    coef : ndarray of shape (degree,)
        Coefficients on the standardized (normalized) powers.
    theta : ndarray of shape (degree + 1,)
        The same curve as Legendre coefficients of mapped x (raw y).
    cost : ndarray of shape (iterations + 1,)
        J after each step, J = (1/2m) [sum w (y - yhat)^2 + lambda ||b||^2], m = sum w.
    closed_form_cost : float
        J at the closed-form minimizer.
    diverged : bool
    message : str
    """

    intercept: float
    coef: np.ndarray = field(repr=False)
    theta: np.ndarray = field(repr=False)
    cost: np.ndarray = field(repr=False)
    closed_form_cost: float
    diverged: bool
    learning_rate: float
    max_stable_rate: float
    message: str

    def to_dict(self) -> dict:
        return {"intercept": self.intercept, "coef": self.coef.tolist(),
                "cost": self.cost.tolist(), "closed_form_cost": self.closed_form_cost,
                "diverged": self.diverged, "learning_rate": self.learning_rate,
                "max_stable_rate": self.max_stable_rate, "message": self.message}


def gradient_descent(solver: FoldSolver, degree: int, lam: float, *, learning_rate: float,
                     iterations: int = 1000) -> GradientDescentResult:
    """Batch gradient descent from zeros on J(b0, b) = (1/2m)[SSE + lambda ||b||^2].

    Works from the statistics (Z'WZ = K'GcK and Z'Wy = K'g), so it costs
    O(d^2) per step whatever n is. Converges when the learning rate is below
    2 / L with L = (s_max^2 + lambda) / m the largest curvature; otherwise the
    cost grows and ``diverged`` is set with a message saying so.
    """
    if not solver.intercept:
        raise ParameterError("Gradient descent: expected an intercept model, got a through-origin one.")
    degree = check_degree(degree, solver.D)
    lam = float(check_lambdas(lam)[0])
    if not (learning_rate > 0 and np.isfinite(learning_rate)):
        raise ParameterError(message("Parameter 'learning_rate'", "a positive number", learning_rate))
    if not (isinstance(iterations, (int, np.integer)) and 1 <= iterations <= 10_000_000):
        raise ParameterError(message("Parameter 'iterations'", "an integer from 1 to 10000000", iterations))
    f = solver._prepare(degree)
    m = solver.W
    ZZ = f.K.T @ solver.G[:degree, :degree] @ f.K
    Zy = f.K.T @ solver.g[:degree]
    ybar = solver._ycw
    b_cf = (f.s / (f.s ** 2 + lam) * f.Uq) @ f.Vt if degree else np.zeros(0)
    L = (float(f.s.max() ** 2) if degree else 0.0) + lam
    max_rate = 2.0 * m / max(L, m) if degree else 2.0
    b0, b = 0.0, np.zeros(degree)
    # J(b0, b) = (1/2m) [yyc - 2 b'Zy + b'ZZ b + m (ybar - b0)^2 + lam b'b]
    def cost(b0_, b_):
        return (-2 * b_ @ Zy + b_ @ ZZ @ b_ + m * (ybar - b0_) ** 2 + lam * b_ @ b_) / (2 * m)

    base = solver.yy_centred / (2 * m)
    costs = np.empty(iterations + 1)
    costs[0] = cost(b0, b) + base
    diverged = False
    for it in range(1, iterations + 1):
        g0 = -(ybar - b0)
        gb = (ZZ @ b - Zy + lam * b) / m
        b0 -= learning_rate * g0
        b = b - learning_rate * gb
        costs[it] = cost(b0, b) + base
        if not np.isfinite(costs[it]) or costs[it] > 1e6 * max(costs[0], 1e-300):
            costs[it + 1:] = np.nan
            diverged = True
            break
    closed = cost(ybar, b_cf) + base
    theta = np.zeros(degree + 1)
    theta[1:] = f.K @ b
    theta[0] = b0 - theta[1:] @ solver.mean[1:degree + 1] + solver.offset
    if diverged:
        msg = (f"Gradient descent diverged at step {it}: learning rate {learning_rate:g} is too "
               f"large for this design; it converges below about {max_rate:.3g}.")
    else:
        gap = costs[iterations] - closed
        msg = (f"After {iterations} steps the cost is {costs[iterations]:.6g}, "
               f"{gap:.3g} above the closed-form minimum {closed:.6g}.")
    return GradientDescentResult(b0 + solver.offset, b, theta, costs, float(closed), diverged,
                                 float(learning_rate), float(max_rate), msg)


class FoldBatch:
    """The same degree solved for many folds at once (stacked arrays, no Python loop per fold).

    Folds on the rank-deficient path are solved one by one and filled in.
    """

    def __init__(self, solvers: list[FoldSolver], degree: int):
        self.solvers = solvers
        self.degree = degree = check_degree(degree, solvers[0].D)
        self.intercept = solvers[0].intercept
        self.n = n = solvers[0]._dim(degree)
        self.RiU = self.Uq = self.s2 = self.exact0 = None
        self.slow = [i for i, sv in enumerate(solvers) if sv.rank < n]
        for i in self.slow:
            solvers[i]._prepare(degree)      # warns once, caches the fallback
        if n and degree:
            # rank-deficient folds borrow a sound fold's shapes here and are overwritten later
            donor = next((sv for sv in solvers if sv.rank >= n), None)
            fast = [sv if sv.rank >= n else donor for sv in solvers]
            if donor is None:                    # every fold is rank deficient
                self.RiU = self.Uq = self.s2 = self.exact0 = None
                self.slow = list(range(len(solvers)))
            else:
                if any(np.any(sv.sigma[:degree] <= 0) for sv in fast):
                    raise ParameterError(message("x in the training rows", "at least two distinct values", "one"))
                R = np.stack([sv.L[:n, :n].T for sv in fast])
                Ri = np.stack([sv.Rinv[:n, :n] for sv in fast])
                K = np.stack([sv._K(degree) for sv in fast])
                q = np.stack([sv.qfull[:n] for sv in fast])
                U, sv_, _ = np.linalg.svd(np.matmul(R, K), full_matrices=False)
                self.RiU = np.matmul(Ri, U)
                self.Uq = np.matmul(np.swapaxes(U, 1, 2), q[:, :, None])[..., 0]
                self.s2 = sv_ ** 2
                self.exact0 = np.stack([sv._exact0(degree, qq) for sv, qq in zip(fast, q)])
        self.mean = np.stack([sv.mean[1:degree + 1] for sv in solvers])
        self.ycw = np.array([sv._ycw for sv in solvers])

    def coefficients(self, lams: np.ndarray) -> np.ndarray:
        """Legendre coefficients in working coordinates, shape (folds, len(lams), degree + 1).

        ``lams`` must already be a validated float array (``check_lambdas``)."""
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
        with np.errstate(divide="ignore", invalid="ignore"):
            filt = self.s2[:, None, :] / (self.s2[:, None, :] + lams[None, :, None])
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

    @staticmethod
    def sse(M: np.ndarray, theta: np.ndarray) -> np.ndarray:
        """Weighted SSE per fold and lambda: M (folds, p, p) working stats, theta (folds, nl, n)."""
        n = theta.shape[2]
        G = M[:, :n, :n]
        g = M[:, :n, -1]
        quad = np.sum(np.matmul(theta, G) * theta, axis=2)
        lin = np.sum(theta * g[:, None, :], axis=2)
        return np.maximum(M[:, -1, -1][:, None] - 2.0 * lin + quad, 0.0)
