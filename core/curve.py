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
from fractions import Fraction

import numpy as np

from .basis import Domain, legendre_columns, legendre_to_power, legval

__all__ = ["Curve", "centred_form", "power_form_digits", "horner", "digits_kept"]


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


def _legendre_to_monomial(n: int) -> list[list[Fraction]]:
    """Exact rational matrix M with P_j(t) = sum_k M[j][k] t^k, j, k < n (Bonnet's recurrence)."""
    rows = [[Fraction(1)] + [Fraction(0)] * (n - 1)]
    if n > 1:
        rows.append([Fraction(0), Fraction(1)] + [Fraction(0)] * (n - 2))
    for j in range(1, n - 1):
        nxt = [Fraction(0)] * n
        for k in range(n - 1):
            nxt[k + 1] += Fraction(2 * j + 1, j + 1) * rows[j][k]
        for k in range(n):
            nxt[k] -= Fraction(j, j + 1) * rows[j - 1][k]
        rows.append(nxt)
    return rows[:n]


def horner(coef, s) -> np.ndarray:
    """sum_k coef[k] s^k by Horner's rule in double precision (as firmware or a spreadsheet would)."""
    s = np.asarray(s, dtype=float)
    out = np.zeros_like(s)
    for c in reversed(list(coef)):
        out = out * s + c
    return out


def digits_kept(reference: np.ndarray, approx: np.ndarray) -> float:
    """Significant digits ``approx`` keeps of ``reference``: -log10(max |difference| / max |reference|),
    capped at 17 (agreement to the last bit)."""
    scale = float(np.max(np.abs(reference))) if reference.size else 0.0
    diff = float(np.max(np.abs(np.asarray(approx) - np.asarray(reference)))) if reference.size else 0.0
    if diff == 0.0 or scale == 0.0:
        return 17.0
    return float(min(17.0, max(0.0, -np.log10(diff / scale))))


def centred_form(curve: Curve) -> tuple[float, float, np.ndarray]:
    """(c, s, b) with f(x) = sum_k b[k] ((x - c) / s)^k: the power form in the mapped variable, whose
    coefficients stay modest for any data range (c and s are the domain's center and half width).
    The Legendre-to-monomial conversion is done in exact rational arithmetic."""
    n = curve.degree + 1
    M = _legendre_to_monomial(n)
    coef = [Fraction(float(v)) for v in curve.coef]
    b = [float(sum(coef[j] * M[j][k] for j in range(n))) for k in range(n)]
    return curve.domain.center, curve.domain.half_width, np.array(b)


def power_form_digits(curve: Curve, lo: float, hi: float, points: int = 2001) -> dict:
    """How many significant digits the raw-x power form and the centred form keep over [lo, hi] when
    evaluated in double precision (Horner), against the stable form:
    ``{"raw": digits, "centred": digits}`` (CALIBRATION note sec. 8)."""
    x = np.linspace(lo, hi, points)
    ref = curve(x)
    c, s, b = centred_form(curve)
    return {"raw": digits_kept(ref, horner(curve.power_form(), x)),
            "centred": digits_kept(ref, horner(b, (x - c) / s))}
