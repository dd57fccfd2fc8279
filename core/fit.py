"""One fit of the model to in-memory rows: coefficients, errors, summary statistics.

See ``core.solve`` for the model. For lambda = 0 (ordinary or weighted least
squares) the fit is computed from the rows themselves: least squares on the
Legendre columns of mapped x (condition number near that of a well-spread
design), refined twice with residuals evaluated in extended precision
(``numpy.longdouble``), so exact-fit data give residuals near zero rather than
near float rounding of y. Raw-x power coefficients and their standard errors
are then converted from the Legendre form in high-precision arithmetic.
For lambda > 0 the penalized solution comes from the rows' statistics (``core.solve``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats
from scipy.linalg import solve_triangular

from .bands import ReadingModel, band_limits, u_table
from .basis import Domain, legendre_columns, legendre_cov_to_power_se, legendre_to_power
from .curve import Curve
from .errors import DataError, ParameterError, message
from .moments import accumulate
from .params import check, combination
from .batch import solve_sets
from .solve import FoldSolver
from .validate import check_xyw, require_spread

__all__ = ["FitOutcome", "fit", "fit_from_engine", "least_squares_rows", "reading_model"]


@dataclass(frozen=True)
class FitOutcome:
    """A fitted curve and its summary.

    Attributes
    ----------
    degree, lam, intercept : the configuration.
    curve : Curve
        The fitted curve in the stable form (domain map + Legendre coefficients);
        ``domain`` and ``legendre`` are its parts.
    power : ndarray of shape (degree + 1,)
        Raw-x form: yhat = power[0] + power[1] x + ... + power[d] x^d (power[0] = 0
        without intercept).
    standard_errors : ndarray of shape (degree + 1,) or None
        Classical standard errors of ``power`` (lambda = 0 only; NaN for the
        absent intercept).
    residual_sd : float
        sqrt(SSE / residual_df), SSE weighted.
    r_squared : float
        1 - SSE / SST; SST centred with intercept, uncentred (sum w y^2) without.
    residual_df : float
        n - p at lambda = 0, n - effective_df otherwise.
    effective_df : float
        sum s_j^2 / (s_j^2 + lambda) over the standardized design's singular
        values, plus one for the intercept (ESL eq. 3.50); p at lambda = 0.
    n : int
    sse : float
    train_mse : float
        SSE / sum(w) (the plain mean squared error for unit weights).
    weighted : bool
    x_range : (float, float)
    """

    degree: int
    lam: float
    intercept: bool
    curve: Curve
    power: np.ndarray = field(repr=False)
    standard_errors: np.ndarray | None = field(repr=False)
    residual_sd: float
    r_squared: float
    residual_df: float
    effective_df: float
    n: int
    sse: float
    train_mse: float
    weighted: bool
    x_range: tuple
    legendre_cov: np.ndarray | None = field(default=None, repr=False)
    penalty: str = "ridge"
    mix: float = 0.0
    reading: ReadingModel = field(default_factory=ReadingModel, repr=False)
    covariance_method: str | None = None       # "classical" (lambda = 0) or "bootstrap"

    @property
    def weight_kind(self) -> str:
        """"none", "relative" or "uncertainty" (see ``core.bands``)."""
        return self.reading.kind

    @property
    def chi_square(self) -> float:
        """sum w r^2 (with stated uncertainties, the chi-square of the fit)."""
        return self.sse

    @property
    def chi_square_p(self) -> float | None:
        """With stated uncertainties: P(chi2 >= observed) on residual_df degrees of freedom (small: the scatter
        is larger than the stated u say); None otherwise."""
        if self.weight_kind != "uncertainty" or not self.residual_df > 0:
            return None
        return float(stats.chi2.sf(self.sse, self.residual_df))

    @property
    def domain(self) -> Domain:
        return self.curve.domain

    @property
    def legendre(self) -> np.ndarray:
        return self.curve.coef

    @property
    def reduced_chi_square(self) -> float:
        """SSE_w / residual_df: with weights 1/u^2 (standard uncertainties) it should be near 1
        when the curve and the stated uncertainties agree (common practice in calibration)."""
        return self.residual_sd ** 2

    def predict(self, x, band: str | None = None, coverage: float = 0.95, *, reading_u=None,
                reading_weight=None):
        """Predictions at raw x from the stable form.

        Parameters
        ----------
        x : array_like of shape (m,)
        band : {None, "curve", "reading"}
            The band where the fitted curve itself lies ("curve") or where one new reading
            lies ("reading"); see ``core.bands`` for what each weights kind assumes.
        coverage : float
            Share of cases the band covers, e.g. 0.95.
        reading_u, reading_weight : float or array_like, optional
            The new reading's own standard uncertainty (stated-uncertainty fits) or weight
            (relative weights); defaults are stated in ``core.bands``.

        Returns
        -------
        ndarray of shape (m,), or (prediction, low, high) with a band.
        """
        yhat = self.curve(x)
        if band is None:
            return yhat
        x = np.asarray(x, dtype=float)
        return (yhat, *band_limits(yhat, self.domain.map(x), self.legendre_cov, self.reading, band, coverage,
                                   x=x, reading_u=reading_u, reading_weight=reading_weight))

    def power_rows(self) -> list[dict]:
        """The raw-x power form: [{"power": k, "value": a_k, "standard_error": se or None}, ...]."""
        first = 0 if self.intercept else 1
        out = []
        for k in range(first, self.degree + 1):
            se = None if self.standard_errors is None else float(self.standard_errors[k])
            out.append({"power": k, "value": float(self.power[k]), "standard_error": se})
        return out

    def to_dict(self) -> dict:
        return {
            "degree": self.degree, "lambda": self.lam, "intercept": self.intercept,
            "penalty": self.penalty, "mix": self.mix, "reduced_chi_square": self.reduced_chi_square,
            "n": self.n, "weighted": self.weighted,
            "power_coefficients": self.power_rows(),
            "legendre_coefficients": [float(v) for v in self.legendre],
            "domain": self.domain.to_dict(),
            "residual_sd": self.residual_sd, "r_squared": self.r_squared,
            "residual_df": self.residual_df, "effective_df": self.effective_df,
            "sse": self.sse, "train_mse": self.train_mse,
            "x_range": list(self.x_range),
        }


def least_squares_rows(x, y, w, degree, intercept, domain, *, power: bool = True):
    """Least squares on Legendre columns of these rows with extended-precision refinement:
    (Legendre coefficients for raw y, raw-x power coefficients, SSE, unscaled covariance, p0).

    ``power=False`` skips the high-precision conversion to raw-x powers (None in its place):
    scoring needs only the Legendre form, and the conversion costs tens of milliseconds a degree.
    """
    sw = np.sqrt(w)
    ld = np.longdouble
    p0 = legendre_columns(np.array([domain.map(0.0)]), degree)[0]

    def design(t):
        P = legendre_columns(t, degree)
        return P if intercept else P[:, 1:] - p0[1:].astype(t.dtype)

    X = design(domain.map(x))
    Xw = X * sw[:, None]
    theta = np.linalg.lstsq(Xw, y * sw, rcond=None)[0].astype(ld)
    X_ld = design(domain.map(x, ld))
    y_ld = y.astype(ld)
    w_ld = w.astype(ld)
    R = np.linalg.qr(Xw, mode="r")
    # Corrected semi-normal equations: the correction solves R'R d = X'W r with X'W r formed in
    # extended precision. (Solving for d from r itself in float64 would limit d to ~eps |r|,
    # which for a poor fit, as NIST Wampler5, is far above the coefficients' own accuracy.)
    for _ in range(3):
        r = y_ld - X_ld @ theta
        g = (X_ld * w_ld[:, None]).T @ r
        delta = solve_triangular(R, solve_triangular(R.T, g.astype(np.float64), lower=True))
        theta = theta + delta.astype(ld)
    r = y_ld - X_ld @ theta
    sse = float(np.sum(w_ld * r * r))
    Rinv = solve_triangular(R, np.eye(R.shape[0]))
    cov_unscaled = Rinv @ Rinv.T
    if intercept:
        legendre = theta.astype(np.float64)
        return legendre, legendre_to_power(domain, theta) if power else None, sse, cov_unscaled, None
    # theta_L = J theta_Q with J = [-p0[1:]; I]: carry the covariance to the Legendre form
    J = np.vstack([-p0[1:][None, :], np.eye(degree)])
    cov_unscaled = (J, cov_unscaled)
    legendre = np.empty(degree + 1)
    legendre[1:] = theta.astype(np.float64)
    legendre[0] = float(-(theta @ p0[1:].astype(ld)))
    raw = np.concatenate([[0.0], legendre_to_power(domain, theta, first=1)]) if power else None
    return legendre, raw, sse, cov_unscaled, p0


def fit(x, y, degree: int, lam: float = 0.0, *, weights=None, intercept: bool = True,
        penalty: str = "ridge", mix: float = 0.5, domain: Domain | None = None,
        weight_kind: str | None = None, scale_by_birge: bool = False) -> FitOutcome:
    """Fit the regularized polynomial of one degree and lambda to all given rows.

    Parameters
    ----------
    x, y : array_like of shape (n,)
        Raw input and response.
    degree : int
        0 (constant) to 30.
    lam : float
        Penalty strength; 0 is ordinary (weighted) least squares.
    weights : array_like of shape (n,), optional
        Positive row weights (default 1).
    intercept : bool
        False fits through the origin (yhat(0) = 0).
    penalty : {"ridge", "curvature", "lasso", "elastic"}
        Ridge, lasso and elastic net: lambda * (mix * sum |b| + (1 - mix) * sum b^2) on the
        standardized coefficients; ridge is mix = 0, lasso mix = 1. Curvature:
        (1/W) sum w r^2 + lambda * integral over t in [-1, 1] of f''(t)^2 (``core.penalties``).
    mix : float
        The elastic net's L1 share.
    domain : Domain, optional
        The x -> t map (default: the rows' own range). The curvature penalty integrates over
        its window, so a fit that must match a sweep's curve passes the sweep's domain.
    weight_kind : {"relative", "uncertainty"}, optional
        What ``weights`` are (default "relative"): relative weights, or 1/u^2 for stated standard
        uncertainties u, whose covariance is used as given (``core.bands``).
    scale_by_birge : bool
        With stated uncertainties, scale the covariance by the reduced chi-square (Birge ratio squared).

    Returns
    -------
    FitOutcome

    Raises
    ------
    DataError
        Non-finite values, non-positive weights, fewer distinct x than needed.
    ParameterError
        Degree or lambda out of range.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.arange(10.0); r = fit(x, 1 + 2 * x, 1)
    >>> np.round(r.power, 12).tolist()
    [1.0, 2.0]
    """
    p = check(degree=degree, lam=lam, intercept=intercept)
    degree, lam, intercept = p.degree, p.lam, p.intercept
    mix_ = combination(penalty=penalty, mix=mix)
    kind = "none" if weights is None else check(weight_kind=weight_kind or "relative").weight_kind
    x, y, w = check_xyw(x, y, weights)
    require_spread(x)
    weighted = weights is not None
    n = x.size
    npar = degree + 1 if intercept else degree
    if lam == 0:
        distinct = np.unique(x).size
        if degree >= distinct:
            raise DataError(message(f"Degree {degree} at lambda = 0", f"at least {degree + 1} distinct x values",
                                    distinct, "Lower the degree or use lambda > 0"))
        if n <= npar:
            raise DataError(message(f"Rows for degree {degree}", f"more than {npar} rows", n))
    domain = Domain.from_range(x.min(), x.max()) if domain is None else domain
    ybar = np.average(y, weights=w)
    if intercept:
        sst = float(np.sum(w.astype(np.longdouble) * (y.astype(np.longdouble) - np.longdouble(ybar)) ** 2))
    else:
        sst = float(np.sum(w.astype(np.longdouble) * y.astype(np.longdouble) ** 2))
    se = None
    leg_cov = None
    if lam == 0.0:
        legendre, power, sse, cov_u, _ = least_squares_rows(x, y, w, degree, intercept, domain)
        df_res = float(n - npar)
        edf = float(npar)
        resid_sd = float(np.sqrt(sse / df_res))
        # stated uncertainties are taken as given unless scaled on request; otherwise s^2 (X'WX)^-1
        factor = 1.0 if kind == "uncertainty" and not scale_by_birge else resid_sd ** 2
        if intercept:
            leg_cov = factor * cov_u
            se = legendre_cov_to_power_se(domain, leg_cov)
        else:
            J, cq = cov_u
            se = np.concatenate([[np.nan], legendre_cov_to_power_se(domain, factor * cq, first=1)])
            leg_cov = factor * (J @ cq @ J.T)
        curve = Curve(domain, legendre, through_origin=not intercept)
    else:
        M = accumulate(x, y, labels=np.zeros((1, n), dtype=np.int16), n_cells=1,
                       domain=domain, max_degree=degree, weights=w)
        solver = FoldSolver(M.gram[0], domain, M.y_shift, intercept)
        th, df = solve_sets([solver], degree, np.array([lam]), penalty, mix_)
        if not np.all(np.isfinite(th)):
            raise ParameterError(message(f"Degree {degree} with the {penalty} penalty",
                                         "standardized powers that are not collinear to working precision",
                                         "a condition number above 1e14",
                                         "Use a lower degree or the ridge penalty"))
        curve = solver.curve(th[0, 0])
        edf = float(df[0, 0])
        r = y - curve(x)
        sse = float(np.sum(w * r * r))
        df_res = float(n - edf)
        resid_sd = float(np.sqrt(sse / df_res)) if df_res > 0 else float("nan")
        power = curve.power_form()
    r2 = 1.0 - sse / sst if sst > 0 else float("nan")
    reading = reading_model(kind, x, w, resid_sd ** 2, df_res, scale_by_birge)
    return FitOutcome(degree, lam, bool(intercept), curve, np.asarray(power, float), se, resid_sd, float(r2),
                      df_res, edf, int(n), float(sse), float(sse / np.sum(w)), weighted,
                      (float(x.min()), float(x.max())), leg_cov, penalty, mix_, reading,
                      "classical" if leg_cov is not None else None)


def reading_model(kind: str, x, w, residual_var: float, residual_df: float, birge: bool = False) -> ReadingModel:
    """What a reading band needs for these rows' weights kind (see ``core.bands``)."""
    if kind == "uncertainty":
        return ReadingModel("uncertainty", residual_var, residual_df if birge else None, None,
                            u_table(x, 1.0 / np.sqrt(w)), birge)
    if kind == "relative":
        return ReadingModel("relative", residual_var, residual_df, float(np.median(w)))
    return ReadingModel("none", residual_var, residual_df, 1.0)


def fit_from_engine(engine, degree: int, lam: float = 0.0, weight_kind: str | None = None) -> FitOutcome:
    """The fit on an engine's training rows, from its statistics alone (no rows needed).

    Used when the rows were streamed from a file. At lambda = 0 the coefficient
    covariance is s^2 (J' P'WP J)^-1 in the Legendre form (J = I with intercept,
    the through-origin map otherwise), or (J' P'WP J)^-1 for stated uncertainties, so
    standard errors and bands match ``fit`` to rounding; the row-based refinement of
    ``fit`` is not available, nor the table of the rows' u (a reading's own u must then
    be given).
    """
    kind = "none" if not engine.weighted else (weight_kind or "relative")
    curve = engine.curve(degree, lam)
    lam = float(lam)
    sv = engine.full
    S = engine.full_stats
    W = float(S[0, 0])
    train_mse = float(engine.train_mse(degree, [lam])[0])
    sse = train_mse * W
    n = engine.n_train
    npar = degree + 1 if sv.intercept else degree
    edf = float(engine.effective_df(degree, [lam])[0])
    sst = float(sv.yy_centred) if sv.intercept else float(S[-1, -1])
    domain = engine.domain
    se = leg_cov = None
    if lam == 0.0:
        df_res = float(n - npar)
        resid_sd = float(np.sqrt(sse / df_res))
        G = S[:degree + 1, :degree + 1]
        factor = 1.0 if kind == "uncertainty" else resid_sd ** 2
        if sv.intercept:
            leg_cov = factor * np.linalg.inv(G)
            se = legendre_cov_to_power_se(domain, leg_cov)
        else:
            p0 = legendre_columns(np.array([domain.map(0.0)]), degree)[0]
            J = np.vstack([-p0[1:][None, :], np.eye(degree)])
            cov_q = np.linalg.inv(J.T @ G @ J)
            se = np.concatenate([[np.nan], legendre_cov_to_power_se(domain, factor * cov_q, first=1)])
            leg_cov = factor * (J @ cov_q @ J.T)
    else:
        df_res = float(n - edf)
        resid_sd = float(np.sqrt(sse / df_res)) if df_res > 0 else float("nan")
    lo = domain.center - domain.half_width
    hi = domain.center + domain.half_width
    reading = ReadingModel(kind, resid_sd ** 2, None if kind == "uncertainty" else df_res,
                           None if kind != "relative" else 1.0)
    return FitOutcome(degree, lam, sv.intercept, curve, curve.power_form(), se, resid_sd,
                      float(1 - sse / sst) if sst > 0 else float("nan"), df_res, edf, int(n), sse,
                      train_mse, engine.weighted, (float(lo), float(hi)), leg_cov, engine.penalty, engine.mix,
                      reading, "classical" if leg_cov is not None else None)
