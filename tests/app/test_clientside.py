"""The factorization shipped to the browser reproduces the all-rows fit at any lambda.

``_decode`` does in Python what the page's JavaScript does with the shipped numbers
(app/clientside.py); each result is compared with an outside reference named in the test.
Data are invented (seeded generator).
"""

import numpy as np
import pytest
from numpy.polynomial import legendre as npleg

import core
from app.clientside import factorization


def _rows(n=300, seed=3):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0.0, 2.0, n)
    y = np.exp(0.7 * x) + 0.2 * np.sin(5 * x) + 0.05 * rng.normal(size=n)
    return x, y


def _engine(penalty, test_fraction=0.2):
    x, y = _rows()
    e = core.build_engine(x, y, max_degree=8, folds=5, seed=1, test_fraction=test_fraction, penalty=penalty)
    train = ~e.plan.test_mask
    return e, x[train], y[train]


def _decode(F, d, lam, xs):
    """(curve at xs, training SSE, effective df): the page's JavaScript, line for line."""
    c, h = F["center"][d], F["half"][d]
    P = npleg.legvander((np.asarray(xs) - c) / h, d)
    if lam == 0 or d == 0:
        th = np.array(F["zero"][d], float)
        edf = 1.0 + d
    else:
        s2 = np.asarray(F["s2"][d])
        f = np.where(s2 < 0, 1.0, np.where(s2 > 0, s2 / (s2 + lam), 0.0))
        tw = np.asarray(F["riu"][d]).reshape(d, d) @ (f * np.asarray(F["uq"][d]))
        th = np.concatenate([[F["c0"][d] - tw @ np.asarray(F["mean"][d])], tw])
        edf = 1.0 + f.sum()
    G = np.asarray(F["gram"][d]).reshape(d + 1, d + 1)
    sse = max(F["yy"][d] - 2 * th @ np.asarray(F["cross"][d]) + th @ G @ th, 0.0)
    raw = th.copy()
    raw[0] += F["offset"][d]
    return P @ raw, sse, edf


def _rel(a, b):
    return np.max(np.abs(a - b)) / np.max(np.abs(b))


@pytest.mark.parametrize("d", [0, 1, 3, 6, 8])
def test_lambda_zero_matches_numpy_lstsq(d):
    """At lambda = 0 the shipped solution is least squares on the training rows
    (reference: numpy.linalg.lstsq on numpy.polynomial.legendre.legvander columns)."""
    e, x, y = _engine("curvature")
    F = factorization(e)
    grid = np.linspace(x.min(), x.max(), 50)
    got, sse, _ = _decode(F, d, 0.0, grid)
    c, h = F["center"][d], F["half"][d]
    coef = np.linalg.lstsq(npleg.legvander((x - c) / h, d), y, rcond=None)[0]
    want = npleg.legvander((grid - c) / h, d) @ coef
    assert _rel(got, want) < 1e-9
    resid = y - npleg.legvander((x - c) / h, d) @ coef
    assert sse == pytest.approx(resid @ resid, rel=1e-7)


@pytest.mark.parametrize("lam", [1e-4, 1e-2, 1.0, 100.0])
def test_ridge_matches_scikit_learn(lam):
    """Ridge on standardized powers: reference sklearn.linear_model.Ridge (alpha = lambda) on the
    powers x^1..x^d, each centred and divided by its population standard deviation."""
    from sklearn.linear_model import Ridge

    d = 5
    e, x, y = _engine("ridge")
    F = factorization(e)
    X = np.column_stack([x ** k for k in range(1, d + 1)])
    mu, sd = X.mean(axis=0), X.std(axis=0)
    model = Ridge(alpha=lam, fit_intercept=True, solver="svd").fit((X - mu) / sd, y)
    grid = np.linspace(x.min(), x.max(), 40)
    Xg = (np.column_stack([grid ** k for k in range(1, d + 1)]) - mu) / sd
    got, _, edf = _decode(F, d, lam, grid)
    assert _rel(got, model.predict(Xg)) < 1e-9
    # effective df: trace of the hat matrix, 1 + sum s^2 / (s^2 + lambda) (ESL eq. 3.50)
    s = np.linalg.svd((X - mu) / sd, compute_uv=False)
    assert edf == pytest.approx(1 + np.sum(s ** 2 / (s ** 2 + lam)), rel=1e-9)


@pytest.mark.parametrize("lam", [1e-3, 0.1, 10.0])
def test_curvature_matches_augmented_least_squares(lam):
    """Curvature penalty, (1/W) sum r^2 + lambda * integral_{-1}^{1} f''(t)^2 dt on the engine's mapped x:
    reference numpy.linalg.lstsq on rows stacked with sqrt(lambda W) times a square root of the penalty,
    whose matrix is built here by Gauss-Legendre quadrature of numpy.polynomial.legendre.legder."""
    d = 6
    e, x, y = _engine("curvature")
    F = factorization(e)
    c, h = e.domain.center, e.domain.half_width
    nodes, wq = npleg.leggauss(d + 2)
    D2 = np.array([npleg.legval(nodes, npleg.legder(np.eye(d + 1)[j], 2)) for j in range(d + 1)])
    Omega = (D2 * wq) @ D2.T
    ev, V = np.linalg.eigh(Omega)
    root = (V * np.sqrt(np.clip(ev, 0, None))).T
    A = np.vstack([npleg.legvander((x - c) / h, d), np.sqrt(lam * x.size) * root])
    b = np.concatenate([y, np.zeros(d + 1)])
    coef = np.linalg.lstsq(A, b, rcond=None)[0]
    grid = np.linspace(x.min(), x.max(), 40)
    got, _, _ = _decode(F, d, lam, grid)
    assert _rel(got, npleg.legval((grid - c) / h, coef)) < 1e-9


def test_band_at_zero_matches_statsmodels():
    """95% band for a new reading at lambda = 0: reference statsmodels OLS get_prediction
    (obs_ci_lower / obs_ci_upper), from the shipped (P'WP)^-1 and t quantile."""
    import statsmodels.api as sm

    d = 4
    e, x, y = _engine("curvature")
    F = factorization(e)
    c, h = F["center"][d], F["half"][d]
    grid = np.linspace(x.min(), x.max(), 30)
    yg, sse, _ = _decode(F, d, 0.0, grid)
    P = npleg.legvander((grid - c) / h, d)
    Gi = np.asarray(F["ginv"][d]).reshape(d + 1, d + 1)
    s2 = sse / (x.size - d - 1)
    half = F["tq"][d] * np.sqrt(s2 * (1 + np.einsum("ij,jk,ik->i", P, Gi, P)))
    fit = sm.OLS(y, npleg.legvander((x - c) / h, d)).fit()
    frame = fit.get_prediction(P).summary_frame(alpha=0.05)
    assert _rel(yg - half, frame["obs_ci_lower"].to_numpy()) < 1e-9
    assert _rel(yg + half, frame["obs_ci_upper"].to_numpy()) < 1e-9


@pytest.mark.parametrize("penalty", ["lasso", "elastic"])
def test_nothing_shipped_without_a_closed_form(penalty):
    """The lasso and elastic net have no closed form in lambda: no factorization, the server answers."""
    e, _, _ = _engine(penalty)
    assert factorization(e)["ok"] == []
    assert factorization(None)["ok"] == []
