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
