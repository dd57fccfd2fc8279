"""The ``Curve`` value object: a domain map and stable-basis coefficients that travel together.

A curve is ``f(x) = sum_j coef[j] P_j((x - center) / half_width)``: Legendre
polynomials of the mapped variable t, with the response in the user's own units
(any shift used while accumulating statistics is already folded in). As in
numpy.polynomial, the map travels with the coefficients, so nobody evaluates the
coefficients against the wrong variable. Calling a curve evaluates it (Clenshaw);
``power_form`` converts to coefficients of raw x in high precision.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .basis import Domain, legendre_columns, legendre_to_power, legval

__all__ = ["Curve"]


@dataclass(frozen=True, eq=False)
class Curve:
    """A fitted curve in the stable form.

    Attributes
    ----------
    domain : Domain
        The map of raw x onto t in [-1, 1].
    coef : ndarray of shape (degree + 1,)
        Legendre coefficients on t (response in raw units).
    through_origin : bool
        True for a curve constrained to f(0) = 0 (its power form has no constant term).
    """

    domain: Domain
    coef: np.ndarray = field(repr=False)
    through_origin: bool = False

    def __post_init__(self):
        c = np.array(self.coef, dtype=float)
        c.setflags(write=False)
        object.__setattr__(self, "coef", c)

    @property
    def degree(self) -> int:
        return int(self.coef.size - 1)

    def __call__(self, x) -> np.ndarray:
        """f at raw x (ndarray of the same shape as ``x``)."""
        return legval(self.domain.map(np.asarray(x, dtype=float)), self.coef)

    def basis(self, x) -> np.ndarray:
        """Legendre columns of mapped x, shape (len(x), degree + 1): f(x) = basis(x) @ coef."""
        return legendre_columns(self.domain.map(np.atleast_1d(np.asarray(x, dtype=float))), self.degree)

    def power_form(self) -> np.ndarray:
        """Coefficients a_0..a_d of raw x: f(x) = a_0 + a_1 x + ... + a_d x^d.

        Converted in high precision (``core.basis.legendre_to_power``); for a
        through-origin curve a_0 is exactly 0 and the rest come from the
        coefficients of P_j(t) - P_j(t_0) (t_0 the image of x = 0), which is exact.
        """
        if self.through_origin:
            if self.degree == 0:
                return np.zeros(1)
            return np.concatenate([[0.0], legendre_to_power(self.domain, self.coef[1:], first=1)])
        return legendre_to_power(self.domain, self.coef)

    def to_dict(self) -> dict:
        return {"domain": self.domain.to_dict(), "legendre_coefficients": [float(v) for v in self.coef]}
