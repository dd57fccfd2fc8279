"""Leverage, studentized residuals and Cook's distance of a lambda = 0 fit (from the rows).

For the weighted least-squares fit with design X (Legendre columns of mapped x,
or the through-origin basis), h_i = w_i x_i' (X'WX)^-1 x_i; the internally
studentized residual is r_i = sqrt(w_i) e_i / (s sqrt(1 - h_i)) and Cook's
distance D_i = r_i^2 h_i / (p (1 - h_i)). These are basis-invariant, so they
equal the textbook values for the raw power design.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.linalg import solve_triangular

from .basis import legendre_columns
from .errors import ParameterError, message
from .fit import FitOutcome
from .validate import check_xyw

__all__ = ["RowInfluence", "row_influence"]


@dataclass(frozen=True)
class RowInfluence:
    """Per-row influence measures; ``flagged`` uses Cook's D > 4 / n (common practice)."""

    leverage: np.ndarray = field(repr=False)
    studentized_residual: np.ndarray = field(repr=False)
    cook_d: np.ndarray = field(repr=False)
    threshold: float

    @property
    def flagged(self) -> np.ndarray:
        return np.flatnonzero(self.cook_d > self.threshold)


def row_influence(fit: FitOutcome, x, y, weights=None) -> RowInfluence:
    """Influence of each row on a lambda = 0 fit (the rows the fit was made on)."""
    if fit.lam != 0.0:
        raise ParameterError(message("Influence measures", "a lambda = 0 fit", f"lambda = {fit.lam:g}",
                                     "Refit at lambda = 0 to judge influence classically"))
    x, y, w = check_xyw(x, y, weights)
    t = fit.domain.map(x)
    P = legendre_columns(t, fit.degree)
    if not fit.intercept:
        p0 = legendre_columns(np.array([fit.domain.map(0.0)]), fit.degree)[0]
        P = P[:, 1:] - p0[1:]
    sw = np.sqrt(w)
    R = np.linalg.qr(P * sw[:, None], mode="r")
    Q = solve_triangular(R.T, (P * sw[:, None]).T, lower=True).T     # rows of sqrt(W) X R^-1
    h = np.sum(Q * Q, axis=1)
    e = y - fit.predict(x)
    p = P.shape[1]
    s = fit.residual_sd
    with np.errstate(divide="ignore", invalid="ignore"):
        r = sw * e / (s * np.sqrt(1.0 - h))
        d = r * r * h / (p * (1.0 - h))
    return RowInfluence(h, r, d, 4.0 / x.size)
