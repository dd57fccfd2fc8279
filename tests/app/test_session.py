"""The page session: the user's inputs only, with the defaults the command line uses."""

import numpy as np

from app.session import LOG_LAMBDA_OFF, Session, lam_of
from core import defaults


def test_defaults_come_from_core_defaults():
    """Folds, seed, sealed fraction and repeats start at core.defaults' values."""
    s = Session()
    assert (s.folds, s.seed, s.test_fraction, s.repeats) == (defaults.FOLDS, defaults.SEED,
                                                             defaults.TEST_FRACTION, defaults.REPEATS)
    assert s.param.degree.bounds == (0, defaults.MAX_DEGREE)


def test_lambda_slider_positions():
    """The left end of the lambda slider is exactly 0; elsewhere lambda = 10 ** position."""
    assert lam_of(LOG_LAMBDA_OFF) == 0.0
    assert lam_of(-2.0) == 10.0 ** -2.0
    s = Session(log_lambda=LOG_LAMBDA_OFF)
    assert s.lam == 0.0
    s.log_lambda = 1.5
    assert np.isclose(s.lam, 10 ** 1.5)


def test_sessions_hold_inputs_only():
    """A session has no outputs: status, engine and results live in the page model."""
    names = set(Session.param) - {"name"}
    assert names == {"degree", "log_lambda", "train_fraction", "folds", "seed", "test_fraction", "x_column",
                     "y_column", "weight_column", "weight_kind", "group_column", "repeats", "penalty", "mix",
                     "exclude", "fold_column", "x_transform", "y_transform", "through_origin", "loo", "readings",
                     "replicates", "tolerance", "tolerance_relative", "tolerance_rule"}
