"""Plain batch gradient descent on the standardized ridge cost, as a cross-check of the solver."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import ParameterError, message
from .params import check
from .solve import FoldSolver

__all__ = ["GradientDescentResult", "gradient_descent"]


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
    p = check(degree=degree, lam=lam, learning_rate=learning_rate, iterations=iterations)
    degree, lam, learning_rate, iterations = p.degree, p.lam, p.learning_rate, p.iterations
    if degree > solver.D:
        raise ParameterError(message("Parameter 'degree'", f"an integer from 0 to {solver.D}", degree))
    f = solver.factor(degree)
    m = solver.W
    ZZ = f.K.T @ solver.G[:degree, :degree] @ f.K
    Zy = f.K.T @ solver.g[:degree]
    ybar = solver.response_mean
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
