"""The surface against an exact 120-digit reference where float references themselves round.

scikit-learn forms raw powers, which round badly for x far from zero; the
reference in ``exact.py`` follows the model's definition in 120-digit
arithmetic instead. Bar: 1e-10 relative on every fold's held-out MSE.
"""

import numpy as np
import pytest

import core
from tests.reference.exact import exact_fold_mse


@pytest.mark.parametrize("intercept", [True, False])
def test_offset_weighted_surface_equals_exact_reference(intercept):
    """Invented data, x in [1000, 1100], unequal weights, degrees to 10: every fold's held-out and
    training MSE to 1e-10."""
    rng = np.random.default_rng(5)
    n = 50
    x = rng.uniform(1000, 1100, n)
    y = np.cos((x - 1000) / 25) + 0.1 * rng.normal(size=n)
    w = rng.uniform(0.3, 3, n)
    lams = [1e-6, 1e-2, 1.0, 1e4]
    s = core.sweep(x, y, range(0, 11), lams, folds=5, seed=2, weights=w, intercept=intercept)
    lab = s.engine.plan.labels[0]
    for d in (0, 2, 5, 10):
        _, fold_train = s.engine.scores(d, lams)
        for j, lam in enumerate(lams):
            cv, tr = exact_fold_mse(x, y, w, lab, d, lam, intercept=intercept)
            np.testing.assert_allclose(s.fold_mse[d, j], cv, rtol=1e-10)
            np.testing.assert_allclose(fold_train[:, j], tr, rtol=1e-10)
            assert s.train_mse[d, j] == pytest.approx(tr.mean(), rel=1e-10)


def test_repeated_and_grouped_folds_equal_exact_reference():
    """Grouped folds (replicates kept together) and 2 repeats: each fold to 1e-10."""
    rng = np.random.default_rng(8)
    x = np.repeat(np.linspace(-1, 4, 15), 3)
    y = np.sqrt(x + 2) + 0.05 * rng.normal(size=x.size)
    g = np.repeat(np.arange(15), 3)
    s = core.sweep(x, y, [1, 3, 5], [1e-4, 1.0], folds=5, repeats=2, groups=g, seed=3)
    for r in range(2):
        lab = s.engine.plan.labels[r]
        for i, d in enumerate((1, 3, 5)):
            cv, _ = exact_fold_mse(x, y, None, lab, d, 1.0)
            np.testing.assert_allclose(s.fold_mse[i, 1, r * 5:(r + 1) * 5], cv, rtol=1e-10)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_folds_covering_little_of_the_range_equal_the_exact_reference(seed):
    """59 invented x in [0, 1] and one at 10: the fold that holds x = 10 out trains on a tenth of the range, and
    the others train on x crowded into a tenth of it. Every fold MSE (degrees 3, 5, 8) equals a brute-force
    refit with core.fit on the fold's rows to 1e-8 at lambda = 0 (and the 120-digit reference to 1e-7, the
    accuracy a double-precision refit of such crowded x reaches), and the 120-digit reference to 1e-8 at
    lambda = 1e-3; no message claims fewer distinct x values than there are."""
    import re
    import warnings

    rng = np.random.default_rng(0)
    x = np.concatenate([rng.uniform(0, 1, 59), [10.0]])
    y = np.sin(3 * x) + 0.05 * rng.normal(size=60)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        s = core.sweep(x, y, range(0, 9), [0.0, 1e-3], folds=5, seed=seed)
    lab = s.engine.plan.labels[0]
    for d in (3, 5, 8):
        refit = []
        for f in range(5):
            r = core.fit(x[lab != f], y[lab != f], d, 0.0)
            refit.append(np.mean((y[lab == f] - r.predict(x[lab == f])) ** 2))
        np.testing.assert_allclose(s.fold_mse[d, 0], refit, rtol=1e-8)
        np.testing.assert_allclose(s.fold_mse[d, 0], exact_fold_mse(x, y, None, lab, d, 0.0)[0], rtol=1e-7)
        np.testing.assert_allclose(s.fold_mse[d, 1], exact_fold_mse(x, y, None, lab, d, 1e-3)[0], rtol=1e-8)
    for w in caught:
        found = re.findall(r"have (\d+) distinct x values, fewer than degree \+ 1 = (\d+)", str(w.message))
        assert all(int(a) < int(b) for a, b in found), str(w.message)
