"""The page model's learning curve: always present, recomputed for the setting in use."""

from pathlib import Path

import numpy as np
import pytest

import core
from app.model import PageModel
from app.session import Session
from app.text import learning_reading

FURNACE = Path(__file__).resolve().parents[2] / "sample_sets" / "furnace_yield.csv"


def test_learning_curve_is_there_after_loading_and_equals_core():
    """Right after a file loads the learning curve exists, for the current setting and penalty, and equals
    core.size_curve on the same rows (itself checked against dense penalized refits in tests/core)."""
    s = Session()
    m = PageModel(s, FURNACE)
    lc = m.learning
    assert lc is not None and lc.degree == s.degree and lc.lam == pytest.approx(s.lam)
    x, y, _ = m.plan_rows()
    ref = core.size_curve(x, y, s.degree, s.lam, folds=m.engine.plan.k, repeats=2, seed=s.seed,
                          test_fraction=s.test_fraction, penalty="curvature", domain=m.engine.domain)
    np.testing.assert_allclose(lc.cv_mse, ref.cv_mse, rtol=1e-12)


def test_learning_curve_follows_the_training_fraction_and_settle():
    """Changing the training fraction recomputes it on fewer rows; settling on a new degree recomputes it."""
    s = Session()
    m = PageModel(s, FURNACE)
    full = m.learning.n_train[-1]
    s.train_fraction = 0.5
    assert m.learning.n_train[-1] < 0.75 * full
    s.degree = 5
    m.settle()
    assert m.learning.degree == 5


def test_lasso_learning_curve_is_unpenalized_and_says_so():
    """The lasso has no subset fit from statistics: the curve shown is lambda = 0 and a note says so."""
    s = Session(penalty="lasso")
    m = PageModel(s, FURNACE)
    assert m.learning.lam == 0.0 and "lambda = 0" in m.learning_note


def test_learning_reading_follows_its_stated_rule():
    """The reading's three cases, on invented curves: a wide gap, a still-falling error, flat errors."""
    class LC:
        def __init__(self, cv, tr):
            self.cv_mse, self.train_mse = np.array(cv, float), np.array(tr, float)
    assert "probably bends to this sample's noise" in learning_reading(LC([3, 2, 2], [1, 1, 1]))
    assert "still fell" in learning_reading(LC([3, 2.0, 1.5], [1.4, 1.4, 1.4]))
    assert "flattened" in learning_reading(LC([1.02, 1.0, 1.0], [0.95, 0.95, 0.95]))
