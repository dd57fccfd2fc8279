"""Lasso and elastic net from the statistics, against scikit-learn's ElasticNet."""

import numpy as np
import pytest
from sklearn.linear_model import ElasticNet

import core
from core.penalties import active_set, coordinate_descent


def invented(n=200, seed=2):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 3, n)
    return x, np.sin(2 * x) + 0.1 * rng.normal(size=n)


@pytest.mark.parametrize("penalty, mix", [("lasso", 1.0), ("elastic", 0.5), ("elastic", 0.2)])
def test_predictions_equal_sklearn_elasticnet(penalty, mix):
    """scikit-learn ElasticNet(alpha = lambda (1 - mix/2) / n, l1_ratio = mix / (2 - mix)) on the
    standardized powers: predictions to 1e-6 where scikit-learn converges; elsewhere our
    objective is never worse than scikit-learn's."""
    x, y = invented()
    n = x.size
    g = np.linspace(0, 3, 25)
    for d in (2, 4, 6):
        Z = np.column_stack([x ** k for k in range(1, d + 1)])
        mu, sd = Z.mean(0), Z.std(0)
        Zs = (Z - mu) / sd
        Gs = (np.column_stack([g ** k for k in range(1, d + 1)]) - mu) / sd
        for lam in (0.01, 0.3, 3.0):
            r = core.fit(x, y, d, lam, penalty=penalty, mix=mix)
            m = ElasticNet(alpha=lam * (1 - mix / 2) / n, l1_ratio=mix / (2 - mix), tol=1e-14,
                           max_iter=200000).fit(Zs, y)
            if m.n_iter_ < 200000:
                np.testing.assert_allclose(r.predict(g), m.predict(Gs), rtol=1e-6, atol=1e-9)
            ours = r.predict(x)
            b = np.linalg.lstsq(Zs, ours - ours.mean(), rcond=None)[0]

            def objective(coef, resid):
                return resid @ resid + lam * (mix * np.abs(coef).sum() + (1 - mix) * coef @ coef)
            assert objective(b, y - ours) <= objective(m.coef_, y - m.predict(Zs)) * (1 + 1e-9)


def test_active_set_agrees_with_coordinate_descent_where_it_converges():
    rng = np.random.default_rng(3)
    A = rng.normal(size=(50, 4))
    G, c = A.T @ A, A.T @ rng.normal(size=50)
    for lam, mix in ((0.5, 1.0), (2.0, 0.5), (10.0, 1.0)):
        b1, ok1 = active_set(G, c, lam, mix)
        b2, ok2 = coordinate_descent(G[None], c[None], np.array([lam]), mix)
        assert ok1 and ok2[0]
        np.testing.assert_allclose(b1, b2[0], rtol=1e-9, atol=1e-11)


def test_lasso_surface_and_sparsity():
    """The lasso zeroes coefficients as lambda grows; the surface and recommendation work."""
    x, y = invented()
    s = core.sweep(x, y, range(0, 7), np.logspace(-4, 2, 9), folds=5, penalty="lasso")
    assert np.all(np.isfinite(s.cv_mse)) and s.recommended["simplest"].degree <= 6
    assert s.effective_df[6, -1] < s.effective_df[6, 0]
    with pytest.raises(core.ParameterError, match=r"Parameter 'mix': expected a number in \(0, 1\]"):
        core.fit(x, y, 2, 1.0, penalty="elastic", mix=0.0)


def test_curvature_matrix_equals_mpmath_quadrature():
    """Omega_jk = integral_{-1}^{1} P_j''(t) P_k''(t) dt: Gauss-Legendre here against mpmath's adaptive quadrature
    of the same integrand (mpmath's own Legendre polynomials, differentiated by mpmath), degrees 0..9."""
    import mpmath

    from core.penalties import curvature_matrix

    omega = curvature_matrix(9)
    with mpmath.workdps(30):
        for j in range(10):
            for k in range(j, 10):
                ref = mpmath.quad(lambda t: mpmath.diff(lambda u: mpmath.legendre(j, u), t, 2)
                                  * mpmath.diff(lambda u: mpmath.legendre(k, u), t, 2), [-1, 1])
                assert omega[j, k] == pytest.approx(float(ref), rel=1e-11, abs=1e-9)
                assert omega[k, j] == omega[j, k]
    assert not omega[:2].any() and not omega[:, :2].any()          # constants and lines are free


def test_curvature_at_huge_lambda_is_the_least_squares_line():
    """lambda -> 1e12 leaves the weighted least-squares straight line (closed form: weighted means and
    Sxy / Sxx), never a shrunken gain; with no intercept, the line through the origin sum(wxy)/sum(wx^2)."""
    rng = np.random.default_rng(5)
    x = rng.uniform(20, 80, 120)
    y = 0.1 + 2.5e-3 * x + 1e-6 * x ** 2 + 0.002 * rng.normal(size=x.size)
    w = rng.uniform(0.5, 2, x.size)
    xm, ym = np.average(x, weights=w), np.average(y, weights=w)
    slope = np.sum(w * (x - xm) * (y - ym)) / np.sum(w * (x - xm) ** 2)
    for d in (2, 5, 9):
        r = core.fit(x, y, d, 1e12, weights=w, penalty="curvature")
        np.testing.assert_allclose(r.power[:2], [ym - slope * xm, slope], rtol=1e-9)
        np.testing.assert_allclose(r.power[2:], 0, atol=1e-9 * abs(slope))
        assert r.effective_df == pytest.approx(2.0, abs=1e-6)
    r = core.fit(x, y, 4, 1e12, weights=w, penalty="curvature", intercept=False)
    np.testing.assert_allclose(r.power[1], np.sum(w * x * y) / np.sum(w * x * x), rtol=1e-9)


@pytest.mark.parametrize("name, degree", [("Pontius", 2), ("Filip", 10)])
def test_curvature_at_lambda_zero_is_least_squares_of_the_degree(name, degree):
    """At lambda = 0 the curvature engine's curve is least squares: NIST StRD Pontius and Filip certified
    coefficients to 1e-11 relative, from the one-pass statistics."""
    import json
    from pathlib import Path

    ref = Path(__file__).resolve().parents[1] / "reference" / "nist_strd"
    data = np.genfromtxt(ref / f"{name}.csv", delimiter=",", names=True)
    cert = json.loads((ref / f"{name}.certified.json").read_text())
    e = core.build_engine(data["x"], data["y"], max_degree=degree, folds=2, penalty="curvature")
    got = e.curve(degree, 0.0).power_form()
    want = [p["estimate_float"] for p in cert["certified"]["parameters"]]
    np.testing.assert_allclose(got, want, rtol=1e-11)


def test_curvature_cross_validation_equals_refits():
    """The curvature surface's fold MSEs equal brute-force refits with core.fit on each fold's training rows
    (same domain, so the same integral), and the penalized curve equals the closed-form minimiser of
    (1/W) sum w r^2 + lambda theta' Omega theta solved densely in the Legendre basis."""
    from core.penalties import curvature_matrix

    rng = np.random.default_rng(9)
    x = rng.uniform(-3, 7, 150)
    y = np.tanh(x / 2) + 0.05 * rng.normal(size=x.size)
    lams = [1e-6, 1e-3, 1.0]
    s = core.sweep(x, y, [3, 6], lams, folds=5, seed=2, penalty="curvature")
    dom = core.Domain.from_range(x.min(), x.max())
    lab = s.engine.plan.labels[0]
    for i, d in enumerate((3, 6)):
        for j, lam in enumerate(lams):
            for f in range(5):
                r = core.fit(x[lab != f], y[lab != f], d, lam, penalty="curvature", domain=dom)
                e = y[lab == f] - r.predict(x[lab == f])
                assert s.fold_mse[i, j, f] == pytest.approx(np.mean(e ** 2), rel=1e-9)
    P = np.polynomial.legendre.legvander(dom.map(x), 6)
    theta = np.linalg.solve(P.T @ P / x.size + 1e-3 * curvature_matrix(6), P.T @ y / x.size)
    np.testing.assert_allclose(core.fit(x, y, 6, 1e-3, penalty="curvature").legendre, theta, rtol=1e-8)


def test_curvature_leave_one_out_equals_refits():
    """Leave-one-out with curvature through the hat matrix equals n refits whose penalty keeps the all-rows
    weight (lambda W_all / W_{-i} with W the total weight), as the shortcut requires."""
    rng = np.random.default_rng(4)
    x = rng.uniform(0, 5, 40)
    y = np.exp(-x) + 0.02 * rng.normal(size=x.size)
    s = core.sweep(x, y, [4], [1e-3], folds="loo", penalty="curvature")
    dom = core.Domain.from_range(x.min(), x.max())
    errs = []
    for i in range(x.size):
        m = np.arange(x.size) != i
        r = core.fit(x[m], y[m], 4, 1e-3 * x.size / (x.size - 1), penalty="curvature", domain=dom)
        errs.append((y[i] - r.predict(x[i:i + 1])[0]) ** 2)
    assert s.cv_mse[0, 0] == pytest.approx(np.mean(errs), rel=1e-9)
