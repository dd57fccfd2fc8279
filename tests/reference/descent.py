"""Plain batch gradient descent on the standardized ridge objective: a test-side cross-check that
the closed-form solver (core.solve) minimises the objective it claims to. Not part of the tool.

Objective, per unit of total weight W: F(b0, b) = [sum w (y - b0 - z'b)^2 + lambda ||b||^2] / W,
worked from the statistics (Z'WZ = K' Gc K, Z'Wy = K' g), so one step costs O(d^2).
"""

from __future__ import annotations

import numpy as np

from core.solve import FoldSolver


def descend(solver: FoldSolver, degree: int, lam: float, rate: float, steps: int):
    """(Legendre coefficients of the last iterate (raw y), objective per step, objective at the
    closed-form minimiser, largest stable rate, diverged?)."""
    f = solver.factor(degree)
    W = solver.W
    ZZ = f.K.T @ solver.G[:degree, :degree] @ f.K / W
    Zy = f.K.T @ solver.g[:degree] / W
    ybar = solver.response_mean
    base = solver.yy_centred / W

    def objective(b0, b):
        return base - 2 * b @ Zy + b @ ZZ @ b + (ybar - b0) ** 2 + lam * b @ b / W

    closed_b = (f.s / (f.s ** 2 + lam) * f.Uq) @ f.Vt
    largest = float(f.s.max() ** 2) / W + lam / W          # largest curvature / 2 of F in b
    stable = 1.0 / max(largest, 1.0)                        # F'' = 2 * curvature: stable below 2 / F''
    b0, b = 0.0, np.zeros(degree)
    trace = [objective(b0, b)]
    diverged = False
    for _ in range(steps):
        b0 += rate * 2 * (ybar - b0)
        b = b - rate * 2 * (ZZ @ b - Zy + lam * b / W)
        trace.append(objective(b0, b))
        if not np.isfinite(trace[-1]) or trace[-1] > 1e6 * max(trace[0], 1e-300):
            diverged = True
            break
    theta = np.zeros(degree + 1)
    theta[1:] = f.K @ b
    theta[0] = b0 - theta[1:] @ solver.mean[1:degree + 1] + solver.offset
    return theta, np.array(trace), objective(ybar, closed_b), stable, diverged
