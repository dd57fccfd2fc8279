"""How sure is the curve: bootstrap bands and intervals, and the bias / variance / noise split.

* ``bootstrap_curves``: refit the configuration on B resamples of the rows (or of
  whole groups) drawn with replacement by ``default_rng([seed, 29])``; each
  resample's statistics are the original rows' weighted by their counts, so no
  row is copied. The spread of the curves shows variance directly.
* ``bootstrap_band``: percentile bands from those refits; the band for a new
  reading adds to each refit a residual of the original fit drawn at random
  (centred and leverage-corrected).
  Used for lambda > 0, where the classical t interval does not apply.
* ``bias_variance``: for a fixed design and a known (or the fitted) curve f, ridge
  predictions are linear in y, yhat = S y, so over repeated data sets
  y = f + noise the expected squared error at a grid point splits exactly into
  bias^2 = (S f - f)^2, variance = sigma^2 sum_j S_j^2 and noise sigma^2. Both the
  closed form and a seeded simulation of repeated data sets are returned.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .basis import Domain, legendre_columns
from .errors import ParameterError, message
from .fit import fit as _fit
from .params import check, combination
from .penalties import ridge_filter
from .batch import solve_sets
from .solve import FoldSolver
from .validate import check_xyw

__all__ = ["bootstrap_curves", "bootstrap_coefficients", "bootstrap_covariance", "bootstrap_band", "bias_variance",
           "bias_variance_from_sets", "BiasVariance"]


def _design(x, y, w, degree, domain):
    B = np.empty((x.size, degree + 2))
    legendre_columns(domain.map(x), degree, out=B[:, :degree + 1])
    y0 = float(np.average(y, weights=w))
    B[:, degree + 1] = y - y0
    return B, y0


def bootstrap_coefficients(x, y, degree: int, lam: float, *, B: int = 400, seed: int = 0, weights=None,
                           groups=None, intercept: bool = True, penalty: str = "ridge", mix: float = 0.5,
                           domain: Domain | None = None) -> tuple[np.ndarray, Domain]:
    """Legendre coefficients (raw y) of B bootstrap refits, shape (B_fitted, degree + 1), and their domain.

    Rows (or whole groups) are resampled with replacement by ``default_rng([seed, 29])``; each
    resample's statistics are the rows' weighted by their counts (no row is copied), formed
    ``CHUNK`` resamples at a time so memory stays bounded. Resamples that cannot be fitted
    (a single distinct x) are left out.
    """
    p = check(degree=degree, lam=lam, B=B, seed=seed, intercept=intercept)
    degree, lam, B = p.degree, p.lam, p.B
    mix_ = combination(penalty=penalty, mix=mix)
    x, y, w = check_xyw(x, y, weights)
    domain = Domain.from_range(x.min(), x.max()) if domain is None else domain
    D, y0 = _design(x, y, w, degree, domain)
    rng = np.random.default_rng([seed, 29])
    if groups is None:
        counts = rng.multinomial(x.size, np.full(x.size, 1.0 / x.size), size=B)
    else:
        uniq, inv = np.unique(np.asarray(groups), return_inverse=True)
        counts = rng.multinomial(uniq.size, np.full(uniq.size, 1.0 / uniq.size), size=B)[:, inv]
    out = np.full((B, degree + 1), np.nan)
    for start in range(0, B, CHUNK):
        part = counts[start:start + CHUNK].astype(float)
        grams = np.einsum("bn,ni,nj->bij", part * w, D, D, optimize=True)
        for i, G in enumerate(grams):
            try:
                sv = FoldSolver(G, domain, y0, intercept, label="bootstrap resample")
                theta = solve_sets([sv], degree, np.array([lam]), penalty, mix_)[0][0, 0]
            except (ParameterError, np.linalg.LinAlgError):
                continue            # a resample with a single distinct x cannot be fitted
            out[start + i] = sv.raw(theta)
    return out[np.isfinite(out).all(axis=1)], domain


CHUNK = 25      # resamples whose statistics are formed at once (memory: CHUNK x rows)


def bootstrap_curves(x, y, degree: int, lam: float, grid, *, B: int = 400, seed: int = 0, weights=None,
                     groups=None, intercept: bool = True, penalty: str = "ridge", mix: float = 0.5) -> np.ndarray:
    """Curves of B bootstrap refits at ``grid``: ndarray of shape (B_fitted, len(grid))."""
    coef, domain = bootstrap_coefficients(x, y, degree, lam, B=B, seed=seed, weights=weights, groups=groups,
                                          intercept=intercept, penalty=penalty, mix=mix)
    return coef @ legendre_columns(domain.map(np.asarray(grid, dtype=float)), coef.shape[1] - 1).T


def bootstrap_covariance(x, y, degree: int, lam: float, *, domain: Domain, B: int = 399, seed: int = 0,
                         weights=None, groups=None, intercept: bool = True, penalty: str = "ridge",
                         mix: float = 0.5) -> tuple[np.ndarray, int]:
    """(covariance of the Legendre coefficients in ``domain``'s coordinates, refits used): the
    spread of B bootstrap refits, for curves whose penalty has no classical covariance."""
    coef, _ = bootstrap_coefficients(x, y, degree, lam, B=B, seed=seed, weights=weights, groups=groups,
                                     intercept=intercept, penalty=penalty, mix=mix, domain=domain)
    if coef.shape[0] < 20:
        raise ParameterError(message("Bootstrap", f"at least 20 of the {B} resamples to be fitted",
                                     coef.shape[0], "Lower the degree, or use another penalty at this degree"))
    return np.atleast_2d(np.cov(coef, rowvar=False)), int(coef.shape[0])


def bootstrap_band(x, y, degree: int, lam: float, grid, *, band: str = "reading", coverage: float = 0.95,
                   B: int = 399, seed: int = 0, weights=None, groups=None, intercept: bool = True,
                   penalty: str = "ridge", mix: float = 0.5, weight_kind: str | None = None,
                   reading_u=None, reading_weight=None):
    """(fit, low, high) at ``grid`` by the percentile bootstrap (see module docstring).

    ``band="curve"``: where the fitted curve lies; ``band="reading"``: where one new reading lies,
    with the reading's noise as ``core.bands`` states it for the weights kind: a resampled residual
    of the fit (none), one scaled to the reading's weight (relative; default the median weight),
    or a normal draw with the reading's stated uncertainty (uncertainty; default interpolated).
    """
    if band not in ("curve", "reading"):
        raise ParameterError(message("Parameter 'band'", "'curve' or 'reading'", repr(band)))
    level = check(coverage=coverage).coverage
    x, y, w = check_xyw(x, y, weights)
    grid = np.asarray(grid, dtype=float)
    f = _fit(x, y, degree, lam, weights=weights, intercept=intercept, penalty=penalty, mix=mix,
             weight_kind=weight_kind)
    curves = bootstrap_curves(x, y, degree, lam, grid, B=B, seed=seed, weights=weights, groups=groups,
                              intercept=intercept, penalty=penalty, mix=mix)
    if curves.shape[0] < 20:
        raise ParameterError(message("Bootstrap", f"at least 20 of the {B} resamples to be fitted",
                                     curves.shape[0], "Lower the degree, or use ridge at this degree"))
    yhat = f.predict(grid)
    a = (1 - level) / 2
    if band == "curve":
        lo, hi = _order_quantiles(curves, a)
        return yhat, lo, hi
    # prediction error delta* = (yhat + e*) - yhat*, e* a leverage-modified residual
    # (Davison & Hinkley 1997, sec. 6.3.3): y_new lies in yhat + [q_a, q_(1-a)] of delta*
    rng = np.random.default_rng([seed, 31])
    if f.weight_kind == "uncertainty":
        sd = np.sqrt(f.reading.reading_variance(grid, reading_u))
        noise = rng.standard_normal(curves.shape) * sd[None, :]
    else:
        e = (y - f.predict(x)) * np.sqrt(w)            # residuals of unit weight
        if penalty == "ridge" and x.size <= 5000:
            S = smoother(x, w, degree, lam, x, intercept=intercept)
            h = np.clip(np.diag(S) * 1.0, 0.0, 0.99)
        else:
            h = np.full(x.size, min(f.effective_df / x.size, 0.99))
        r = e / np.sqrt(1.0 - h)
        r = r - r.mean()
        w0 = 1.0 if f.weight_kind == "none" else (reading_weight if reading_weight is not None
                                                    else f.reading.median_weight)
        noise = rng.choice(r, size=curves.shape, replace=True) / np.sqrt(w0)
    delta = yhat[None, :] + noise - curves
    lo, hi = _order_quantiles(delta, a)
    return yhat, yhat + lo, yhat + hi


def _order_quantiles(draws: np.ndarray, a: float):
    """The (B + 1) a -th smallest and largest draws (the usual bootstrap convention, which keeps
    the expected coverage at the nominal level; interpolated sample quantiles run ~1% short at B ~ 200)."""
    B = draws.shape[0]
    k = max(1, int(np.floor((B + 1) * a)))
    srt = np.sort(draws, axis=0)
    return srt[k - 1], srt[B - k]


@dataclass(frozen=True)
class BiasVariance:
    """Averages over the grid (and per grid point) of the expected squared-error split."""

    bias2: float
    variance: float
    noise: float
    simulated_bias2: float
    simulated_variance: float
    n_sets: int
    per_point: dict = field(repr=False)

    @property
    def expected_mse(self) -> float:
        return self.bias2 + self.variance + self.noise

    def to_dict(self) -> dict:
        return {"bias2": self.bias2, "variance": self.variance, "noise": self.noise,
                "expected_mse": self.expected_mse, "simulated_bias2": self.simulated_bias2,
                "simulated_variance": self.simulated_variance, "n_sets": self.n_sets}


def smoother(x, w, degree: int, lam: float, grid, *, intercept: bool = True, domain=None,
             penalty: str = "ridge") -> np.ndarray:
    """Smoother S of shape (len(grid), n) of a quadratic penalty (ridge or curvature): predictions at
    grid = S y for any y. The curvature penalty integrates over ``domain``'s window (pass the sweep's)."""
    x = np.asarray(x, dtype=float)
    w = np.ones_like(x) if w is None else np.asarray(w, dtype=float)
    domain = domain or Domain.from_range(x.min(), x.max())
    P = legendre_columns(domain.map(x), degree)
    G = np.zeros((degree + 2, degree + 2))
    G[:degree + 1, :degree + 1] = (P * w[:, None]).T @ P
    G[:degree + 1, -1] = G[-1, :degree + 1] = 0.0
    sv = FoldSolver(G, domain, 0.0, intercept)
    f = sv.factor(degree, penalty)
    Pg = legendre_columns(domain.map(np.asarray(grid, dtype=float)), degree)
    filt = ridge_filter(f.s2, np.array([float(lam)]))[0] if degree else np.zeros(0)
    if intercept:
        mean = sv.mean[1:degree + 1]
        Pc, Pgc = P[:, 1:] - mean, Pg[:, 1:] - mean
        S = np.outer(np.ones(Pg.shape[0]), w / w.sum())
        if degree:
            S = S + (Pgc @ f.RiU * filt) @ (f.RiU.T @ (Pc * w[:, None]).T)
        return S
    return (Pg @ f.RiU * filt) @ (f.RiU.T @ (P * w[:, None]).T)


def bias_variance(x, truth, noise_sd: float, degree: int, lam: float, grid=None, *, weights=None,
                  n_sets: int = 500, seed: int = 0, intercept: bool = True, penalty: str = "ridge",
                  domain=None, weight_kind: str | None = None) -> BiasVariance:
    """The expected-error split for design x and true curve ``truth`` (a callable of x).

    ``truth`` may be a fitted curve's ``predict`` to study the chosen fit itself. Noise per row:
    ``noise_sd / sqrt(w)`` (no or relative weights), or the stated u = 1/sqrt(w) itself when
    ``weight_kind`` is "uncertainty" (``noise_sd`` then unused; the noise term is the mean u^2).
    """
    x, _, w = check_xyw(x, np.zeros_like(np.asarray(x, dtype=float)), weights)
    p = check(noise_sd=noise_sd, degree=degree, lam=lam, seed=seed)
    noise_sd, degree, lam = p.noise_sd, p.degree, p.lam
    grid = np.linspace(x.min(), x.max(), 101) if grid is None else np.asarray(grid, dtype=float)
    S = smoother(x, w, degree, lam, grid, intercept=intercept, penalty=penalty, domain=domain)
    f_x, f_g = np.asarray(truth(x), dtype=float), np.asarray(truth(grid), dtype=float)
    known = weight_kind == "uncertainty" and weights is not None
    sd = 1.0 / np.sqrt(w) if known else noise_sd / np.sqrt(w)     # weights as inverse variances
    bias = S @ f_x - f_g
    var = (S * S) @ (sd * sd)
    rng = np.random.default_rng([seed, 37])
    Y = f_x[:, None] + sd[:, None] * rng.normal(size=(x.size, n_sets))
    pred = S @ Y
    sim_bias2 = float(np.mean((pred.mean(axis=1) - f_g) ** 2))
    sim_var = float(np.mean(pred.var(axis=1, ddof=1)))
    noise = float(np.mean(sd ** 2)) if known else float(noise_sd ** 2)
    return BiasVariance(float(np.mean(bias ** 2)), float(np.mean(var)), noise, sim_bias2,
                        sim_var, int(n_sets), {"grid": grid, "bias2": bias ** 2, "variance": var})


def bias_variance_from_sets(sets, degree: int, lam: float, grid, *, truth=None, intercept: bool = True,
                            penalty: str = "ridge", mix: float = 0.5) -> dict:
    """The split estimated from repeated data sets the user supplies (e.g. replicate runs).

    Each set (x, y) is fitted separately; at each grid point the variance is the spread of
    the sets' predictions (ddof = 1) and the noise the mean of the sets' residual variances.
    Bias needs the true curve: with ``truth`` (a callable) bias^2 is (mean prediction - truth)^2,
    without it bias^2 is reported as None (it cannot be told apart from the truth itself).
    """
    sets = list(sets)
    if len(sets) < 2:
        raise ParameterError(message("Repeated data sets", "at least 2", len(sets)))
    grid = np.asarray(grid, dtype=float)
    preds, noise = [], []
    for xs, ys in sets:
        f = _fit(xs, ys, degree, lam, intercept=intercept, penalty=penalty, mix=mix)
        preds.append(f.predict(grid))
        noise.append(f.residual_sd ** 2)
    P = np.array(preds)
    out = {"n_sets": len(sets), "variance": float(np.mean(P.var(axis=0, ddof=1))), "noise": float(np.mean(noise)),
           "bias2": None}
    if truth is not None:
        out["bias2"] = float(np.mean((P.mean(axis=0) - np.asarray(truth(grid), dtype=float)) ** 2))
    return out
