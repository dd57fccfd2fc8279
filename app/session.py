"""What the user has asked for on one page: the inputs, nothing derived.

A ``Session`` holds the slider and field values of one browser tab. The page's
model (``app.model.PageModel``) watches it and derives everything shown; the
views bind their widgets to it. Defaults come from ``core.defaults``, the ones
the command line uses too. Imports param and core only.
"""

from __future__ import annotations

import param

from core import defaults

__all__ = ["LOG_LAMBDA_OFF", "Session", "lam_of"]

LOG_LAMBDA_OFF = -9.0         # slider position meaning lambda = 0 exactly


def lam_of(log_lam: float) -> float:
    """lambda for a slider position: 10 ** log_lam, or exactly 0 at the left end."""
    return 0.0 if log_lam <= LOG_LAMBDA_OFF else 10.0 ** log_lam


class Session(param.Parameterized):
    """The inputs of one page session (see module docstring)."""

    degree = param.Integer(3, bounds=(0, defaults.MAX_DEGREE), doc="polynomial degree")
    log_lambda = param.Number(-3.0, bounds=(LOG_LAMBDA_OFF, 6.0), step=0.1,
                              doc="log10 of lambda; the left end means lambda = 0")
    train_fraction = param.Number(1.0, bounds=(0.1, 1.0), step=0.05,
                                  doc="share of the training rows used for the fit")
    folds = param.Integer(defaults.FOLDS, bounds=(2, 20))
    seed = param.Integer(defaults.SEED, bounds=(0, 10**6))
    test_fraction = param.Number(defaults.TEST_FRACTION, bounds=(0.0, 0.5), step=0.05)
    x_column = param.String("")
    y_column = param.String("")
    weight_column = param.String("")
    weight_kind = param.Selector(default="relative", objects=["relative", "uncertainty"],
                                 doc="the weight column holds relative weights, or standard uncertainties "
                                     "(w = 1/u^2)")
    group_column = param.String("", doc="rows sharing a value stay in one fold")
    fold_column = param.String("", doc="column giving each row's fold (explicit folds)")
    x_transform = param.Selector(default="none", objects=["none", "log", "reciprocal", "sqrt"])
    y_transform = param.Selector(default="none", objects=["none", "log", "reciprocal", "sqrt"])
    through_origin = param.Boolean(False, doc="the curve passes through (0, 0): no constant term")
    loo = param.Boolean(False, doc="leave-one-out instead of k folds")
    repeats = param.Integer(defaults.REPEATS, bounds=(1, 20))
    penalty = param.Selector(default=defaults.PENALTY, objects=["curvature", "ridge", "lasso", "elastic"])
    mix = param.Number(0.5, bounds=(0.05, 1.0), step=0.05, doc="elastic net: share of the L1 term")
    exclude = param.String("", doc="spreadsheet rows left out on request, e.g. '7, 19' (recorded)")
    readings = param.String("", doc="readings to read x back from: one per line, or several on a line "
                                    "(replicates of one unknown)")
    replicates = param.Integer(1, bounds=(1, 1000), doc="each reading is already the mean of this many")
    tolerance = param.Number(0.0, bounds=(0.0, None), doc="largest acceptable |error| (0: no check)")
    tolerance_relative = param.Boolean(False, doc="the tolerance is a share of the prediction")
    tolerance_rule = param.Selector(default="simple", objects=["simple", "guarded"])

    @property
    def lam(self) -> float:
        """lambda of the current slider position (0 at the left end)."""
        return lam_of(self.log_lambda)
