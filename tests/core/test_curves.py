"""Learning curves from the one-pass statistics."""

import numpy as np
import pytest

import core


def invented(n=400, seed=1):
    rng = np.random.default_rng(seed)
    x = rng.uniform(0, 1, n)
    return x, np.sin(6 * x) + 0.2 * rng.normal(size=n)


def test_full_size_point_equals_the_surface():
    """At size 1.0 the subset is the whole training fold, so CV and training MSE equal the
    surface's for the same folds (same seed and k)."""
    x, y = invented()
    lc = core.size_curve(x, y, 5, 1e-3, sizes=[0.5, 1.0], folds=5, repeats=1, seed=4)
    s = core.sweep(x, y, [5], [1e-3], folds=5, seed=4)
    assert lc.cv_mse[-1] == pytest.approx(s.cv_mse[0, 0], rel=1e-12)
    assert lc.train_mse[-1] == pytest.approx(s.train_mse[0, 0], rel=1e-12)


def test_subset_point_equals_a_direct_refit():
    """A partial-size point equals fitting the drawn rows directly and scoring the fold."""
    x, y = invented(200)
    lc = core.size_curve(x, y, 3, 0.1, sizes=[0.3, 1.0], folds=4, repeats=1, seed=2)
    plan = core.make_plan(x.size, folds=4, seed=2)
    u = np.random.default_rng([2, 17, 0]).random(x.size)
    cv = []
    for f in range(4):
        tr = (plan.labels[0] != f) & (u < 0.3)
        r = core.fit(x[tr], y[tr], 3, 0.1)
        te = plan.labels[0] == f
        cv.append(np.mean((y[te] - r.predict(x[te])) ** 2))
    assert lc.cv_mse[0] == pytest.approx(np.mean(cv), rel=1e-9)


def test_curve_shapes():
    """Training error rises and CV error falls with size for a flexible model (the usual pattern)."""
    x, y = invented(600)
    lc = core.size_curve(x, y, 9, 1e-6, repeats=3)
    assert lc.cv_mse[0] > lc.cv_mse[-1]
    assert lc.train_mse[0] < lc.train_mse[-1]


def hand_built(cv, train):
    n = len(cv)
    return core.SizeCurve(3, 0.0, np.linspace(0.1, 1, n), np.arange(1, n + 1) * 10.0, np.array(train, float),
                              np.zeros(n), np.array(cv, float), np.zeros(n), 5, 1, 0)


@pytest.mark.parametrize("cv, train, words", [
    ([4.0, 3.0, 2.0, 1.6], [0.5, 0.7, 0.9, 1.0], "following noise"),    # final gap 0.6/1.6 > 0.25
    ([4.0, 3.0, 2.0, 1.10], [0.9, 0.95, 1.0, 1.0], "still dropping"),   # gap 0.09, last < 0.97 x half-way
    ([1.2, 1.11, 1.10, 1.10], [1.0, 1.02, 1.04, 1.05], "levelled off"),  # gap 0.045, flat
])
def test_reading_follows_its_stated_rule(cv, train, words):
    """The reading is a fixed rule on the last points (gap (cv - train)/cv > 0.25; else CV still falling by
    more than 3% since half-way; else converged): hand-built curves give the stated branch."""
    assert words in hand_built(cv, train).reading().lower()


def test_sizes_are_validated():
    x, y = invented(50)
    with pytest.raises(core.ParameterError, match=r"Parameter 'sizes': expected fractions in \(0, 1\]"):
        core.size_curve(x, y, 1, 0.0, sizes=[0.0, 0.5])


def _dense_curvature_fit(t, y, degree, lam):
    """Legendre coefficients minimising (1/n) sum (y - f(t))^2 + lam * integral_{-1}^{1} f''(t)^2 dt, by a
    dense normal-equation solve; the penalty matrix from numpy.polynomial.legendre's derivative, product and
    integral (the roughness penalty of Green & Silverman 1994, sec. 1.2, over the mapped range)."""
    from numpy.polynomial import legendre as L

    P = L.legvander(t, degree)
    second = [L.legder(np.eye(degree + 1)[j], 2) for j in range(degree + 1)]
    omega = np.zeros((degree + 1, degree + 1))
    for j in range(degree + 1):
        for k in range(degree + 1):
            prod = L.legint(L.legmul(second[j], second[k]))
            omega[j, k] = L.legval(1.0, prod) - L.legval(-1.0, prod)
    n = t.size
    return np.linalg.solve(P.T @ P / n + lam * omega, P.T @ y / n)


def test_curvature_learning_curve_equals_dense_penalized_refits():
    """With penalty="curvature", the full-size point equals refitting each fold's training rows by a dense
    solve of the curvature-penalized least squares (numpy.polynomial.legendre for the penalty integral) and
    scoring the held-out fold."""
    x, y = invented(150)
    lam, degree = 1e-3, 5
    dom = core.Domain.from_range(-0.1, 1.1)
    lc = core.size_curve(x, y, degree, lam, sizes=[1.0], folds=4, repeats=1, seed=3, penalty="curvature",
                         domain=dom)
    labels = core.make_plan(x.size, folds=4, seed=3).labels[0]
    t = dom.map(x)
    mses = []
    for f in range(4):
        tr, te = labels != f, labels == f
        theta = _dense_curvature_fit(t[tr], y[tr], degree, lam)
        mses.append(np.mean((y[te] - np.polynomial.legendre.legval(t[te], theta)) ** 2))
    assert lc.cv_mse[-1] == pytest.approx(np.mean(mses), rel=1e-8)


def test_learning_curve_refuses_the_lasso():
    """The lasso has no fit from the statistics of a subset: refused by name."""
    x, y = invented(100)
    with pytest.raises(core.ParameterError, match="Penalty of a learning curve"):
        core.size_curve(x, y, 3, 0.1, penalty="lasso")


def test_a_gap_that_pure_noise_explains_is_not_called_noise_following():
    """A degree-3 curve on 8 training rows per fold: pure noise alone gives a gap of 2p/(n+p) = 8/12 (ESL
    sec. 7.4 optimism, p = 4); a gap of 0.5 is within it and is not read as following noise, while the same
    gap on 400 rows (allowance 8/404) is."""
    cv, tr = [4.0, 3.0, 2.0, 2.0], [1.0, 1.0, 1.0, 1.0]
    small = core.SizeCurve(3, 0.0, np.linspace(0.1, 1, 4), np.array([2, 4, 6, 8.0]), np.array(tr), np.zeros(4),
                           np.array(cv), np.zeros(4), 5, 1, 0)
    large = core.SizeCurve(3, 0.0, np.linspace(0.1, 1, 4), np.array([100, 200, 300, 400.0]), np.array(tr),
                           np.zeros(4), np.array(cv), np.zeros(4), 5, 1, 0)
    assert small.expected_gap() == pytest.approx(8 / 12) and large.expected_gap() == pytest.approx(8 / 404)
    assert "following noise" not in small.reading().lower()
    assert "following noise" in large.reading().lower()
