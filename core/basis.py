"""The polynomial basis: x mapped to t in [-1, 1], Legendre columns, exact conversions.

The model is stated in powers of the user's raw x (see ``core.fit``), but raw
powers are never formed in floating point. Instead x is mapped affinely to
``t = (x - center) / half_width`` (so the data's range becomes [-1, 1]) and
every computation works with Legendre polynomials P_0(t) .. P_D(t), whose
columns are well conditioned for spread-out data.

The monomials are carried through exactly: ``x**k = sum_j T[j, k] P_j(t)``
with an upper-triangular matrix T (``power_in_legendre``). Going back from
Legendre coefficients to raw-x power coefficients inverts T, which cancels
heavily when the data sit far from x = 0; that step is done in high-precision
arithmetic (mpmath) on the small coefficient vectors.
"""

from __future__ import annotations

from dataclasses import dataclass

import mpmath
import numpy as np

from .errors import DataError, message
from .validate import single_x

__all__ = ["Domain", "legendre_columns", "power_in_legendre", "legendre_to_power",
           "legendre_cov_to_power_se", "legval"]


@dataclass(frozen=True)
class Domain:
    """Affine map of raw x onto t in [-1, 1]: ``t = (x - center) / half_width``."""

    center: float
    half_width: float

    @classmethod
    def from_range(cls, xmin: float, xmax: float) -> "Domain":
        """Domain whose window [-1, 1] is the interval [xmin, xmax]."""
        xmin, xmax = float(xmin), float(xmax)
        if not (np.isfinite(xmin) and np.isfinite(xmax)):
            raise DataError(message("x range", "finite numbers", f"[{xmin}, {xmax}]"))
        if xmax <= xmin:
            raise single_x("Column x", xmin)
        center = 0.5 * xmin + 0.5 * xmax
        half = 0.5 * xmax - 0.5 * xmin
        return cls(center, half)

    def map(self, x: np.ndarray, dtype=np.float64) -> np.ndarray:
        """t for raw x (``dtype`` may be ``np.longdouble`` for refinement)."""
        x = np.asarray(x, dtype=dtype)
        return (x - dtype(self.center)) / dtype(self.half_width)

    def to_dict(self) -> dict:
        return {"center": self.center, "half_width": self.half_width}


def legendre_columns(t: np.ndarray, degree: int, out: np.ndarray | None = None) -> np.ndarray:
    """Legendre values P_0(t) .. P_degree(t) by the three-term recurrence.

    Parameters
    ----------
    t : ndarray of shape (m,)
        Mapped inputs.
    degree : int
        Highest degree D.
    out : ndarray of shape (m, D + 1), optional
        Where to write (avoids an allocation per chunk).

    Returns
    -------
    ndarray of shape (m, D + 1), same dtype as ``t``.
    """
    t = np.asarray(t)
    m = t.shape[0]
    if out is None:
        out = np.empty((m, degree + 1), dtype=t.dtype)
    out[:, 0] = 1.0
    if degree >= 1:
        out[:, 1] = t
    for j in range(1, degree):
        # (j+1) P_{j+1} = (2j+1) t P_j - j P_{j-1}
        np.multiply(out[:, j], t, out=out[:, j + 1])
        out[:, j + 1] *= (2 * j + 1) / (j + 1)
        out[:, j + 1] -= (j / (j + 1)) * out[:, j - 1]
    return out


def legval(t: np.ndarray, coef: np.ndarray) -> np.ndarray:
    """Evaluate ``sum_j coef[j] P_j(t)`` by Clenshaw's recurrence (stable, O(m D))."""
    return np.polynomial.legendre.legval(np.asarray(t), np.asarray(coef))


def _times_t(v: list) -> list:
    """Legendre coefficients of t * p(t) given those of p (exact in the input's arithmetic).

    Uses t P_j = ((j + 1) P_{j+1} + j P_{j-1}) / (2j + 1).
    """
    out = [0 * v[0]] * (len(v) + 1)
    for j, vj in enumerate(v):
        if vj == 0:
            continue
        out[j + 1] = out[j + 1] + vj * (j + 1) / (2 * j + 1)
        if j >= 1:
            out[j - 1] = out[j - 1] + vj * j / (2 * j + 1)
    return out


def _power_matrix(domain: Domain, degree: int, num) -> list[list]:
    """Columns of T in a given number type ``num`` (float or mpmath.mpf).

    Built for |center| and then signed, so every arithmetic step adds
    non-negative terms (full relative accuracy); for center < 0,
    T[j, k] = (-1)^(j+k) T_|c|[j, k] because P_j(-t) = (-1)^j P_j(t).
    """
    c = num(abs(domain.center))
    h = num(domain.half_width)
    cols = [[num(1)]]
    for _ in range(degree):
        prev = cols[-1]
        shifted = _times_t(prev)
        new = [h * s for s in shifted]
        for j, pj in enumerate(prev):
            new[j] = new[j] + c * pj
        cols.append(new)
    if domain.center < 0:
        cols = [[v if (j + k) % 2 == 0 else -v for j, v in enumerate(col)]
                for k, col in enumerate(cols)]
    return cols


def power_in_legendre(domain: Domain, degree: int, *, normalized: bool = False) -> np.ndarray:
    """Upper-triangular T of shape (D + 1, D + 1): ``x**k = sum_j T[j, k] P_j(t)``.

    With ``normalized=True`` each column is divided by its largest entry, which
    keeps large |x| at high degree inside float range; the ridge model only
    needs T up to a per-column factor, because each power is standardized.
    """
    cols = _power_matrix(domain, degree, mpmath.mpf if normalized else float)
    T = np.zeros((degree + 1, degree + 1))
    for k, col in enumerate(cols):
        if normalized:
            top = max(abs(v) for v in col)
            col = [v / top for v in col]
        T[: len(col), k] = [float(v) for v in col]
    return T


def _mp_context(domain: Domain, degree: int) -> int:
    """Working digits for the conversion: enough to absorb T's cancellation."""
    ratio = 1.0 + abs(domain.center) / domain.half_width
    return int(40 + degree * max(1.0, np.log10(ratio) + 1.0))


def _mp_inverse_rows(domain: Domain, degree: int, first: int):
    """Rows of inv(T[first:, first:]) in mpmath (upper triangular back substitution)."""
    cols = _power_matrix(domain, degree, mpmath.mpf)
    n = degree + 1 - first
    T = mpmath.zeros(n, n)
    for k in range(first, degree + 1):
        for j in range(first, len(cols[k])):
            T[j - first, k - first] = cols[k][j]
    inv = mpmath.zeros(n, n)
    for col in range(n):  # solve T z = e_col
        for i in range(n - 1, -1, -1):
            acc = mpmath.mpf(1) if i == col else mpmath.mpf(0)
            for k in range(i + 1, n):
                acc -= T[i, k] * inv[k, col]
            inv[i, col] = acc / T[i, i]
    return inv


def legendre_to_power(domain: Domain, theta, first: int = 0) -> np.ndarray:
    """Raw-x power coefficients from Legendre coefficients, in high precision.

    Parameters
    ----------
    domain : Domain
    theta : sequence of length D + 1 - first
        Coefficients on P_first .. P_D (``first=1`` for a basis of the
        P_j(t) - P_j(t0) functions that vanish at x = 0, whose images are the
        powers x^1 .. x^D).
    first : int
        0 (intercept models) or 1 (through-origin models).

    Returns
    -------
    ndarray of shape (D + 1 - first,)
        Coefficients of x^first .. x^D.
    """
    theta = list(theta)
    degree = len(theta) - 1 + first
    with mpmath.workdps(_mp_context(domain, degree)):
        inv = _mp_inverse_rows(domain, degree, first)
        th = [mpmath.mpf(_exact(v)) for v in theta]
        n = len(th)
        return np.array([float(mpmath.fsum(inv[i, k] * th[k] for k in range(i, n)))
                         for i in range(n)])


def legendre_cov_to_power_se(domain: Domain, cov, first: int = 0) -> np.ndarray:
    """Standard errors of raw-x power coefficients from the Legendre-coefficient covariance.

    ``Cov(a) = inv(T) Cov(theta) inv(T)'``, evaluated in high precision; only
    the square roots of the diagonal are returned.
    """
    cov = np.asarray(cov)
    n = cov.shape[0]
    degree = n - 1 + first
    with mpmath.workdps(_mp_context(domain, degree)):
        inv = _mp_inverse_rows(domain, degree, first)
        C = [[mpmath.mpf(float(cov[i, j])) for j in range(n)] for i in range(n)]
        out = []
        for i in range(n):
            row = [inv[i, k] for k in range(n)]
            tmp = [mpmath.fsum(row[k] * C[k][j] for k in range(i, n)) for j in range(n)]
            var = mpmath.fsum(tmp[j] * row[j] for j in range(i, n))
            out.append(float(mpmath.sqrt(var)) if var > 0 else 0.0)
        return np.array(out)


def _exact(v) -> "mpmath.mpf":
    """Exact mpf of a float or long double (no rounding on the way in)."""
    if isinstance(v, np.longdouble):
        num, den = v.as_integer_ratio()
        return mpmath.mpf(num) / den
    return mpmath.mpf(float(v))
