"""Many training sets solved at once, and the one place a penalty name turns into a solver.

``FoldBatch`` stacks the folds of a sweep (and its all-rows fit) for one degree so the
ridge SVDs and the filtered solutions are batched array operations; ``solve_sets``
dispatches ridge and curvature to the batch and the lasso and elastic net to their
exact solver (``core.penalties``).
"""

from __future__ import annotations

import numpy as np

from .errors import ParameterError, message
from .penalties import penalized_coefficients, ridge_filter
from .solve import FoldSolver

__all__ = ["FoldBatch", "solve_sets"]


class FoldBatch:
    """The same degree solved for many training sets at once (stacked arrays, no Python loop).

    Solvers on the rank-deficient path are solved one by one and filled in.
    """

    def __init__(self, solvers: list[FoldSolver], degree: int, penalty: str = "ridge"):
        self.solvers = solvers
        self.degree = degree
        self.penalty = penalty
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
            elif penalty == "curvature":
                fs = [sv.factor(degree, "curvature") for sv in fast]
                self.RiU = np.stack([f.RiU for f in fs])
                self.Uq = np.stack([f.Uq for f in fs])
                self.s2 = np.stack([f.s2 for f in fs])
                self.exact0 = np.stack([f.exact0 for f in fs])
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
                out[i] = self.solvers[i].coefficients(d, lams, self.penalty)
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
            out[i] = self.solvers[i].coefficients(d, lams, self.penalty)
        return out

    def effective_df(self, lams: np.ndarray) -> np.ndarray:
        """df(lambda) of every set, shape (sets, len(lams))."""
        if self.s2 is None:
            return np.stack([sv.effective_df(self.degree, lams, self.penalty) for sv in self.solvers])
        out = ridge_filter(self.s2, lams).sum(axis=-1) + (1.0 if self.intercept else 0.0)
        for i in self.slow:
            out[i] = self.solvers[i].effective_df(self.degree, lams, self.penalty)
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
    if penalty in ("ridge", "curvature"):
        if len(solvers) == 1:
            sv = solvers[0]
            return sv.coefficients(degree, lams, penalty)[None], sv.effective_df(degree, lams, penalty)[None]
        batch = FoldBatch(solvers, degree, penalty)
        return batch.coefficients(lams), batch.effective_df(lams)
    return penalized_coefficients(solvers, degree, lams, mix)
