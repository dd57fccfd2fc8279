"""curvewright's compute core: regularized polynomial fits, one-pass cross-validation,
learning curves and recommendations. Imports numpy, scipy and mpmath only (never a UI)."""

from .basis import Domain
from .curves import LearningCurve, describe_learning_curve, learning_curve
from .errors import CurvewrightError, DataError, NumericalWarning, ParameterError
from .fit import FitResult, fit
from .folds import FoldPlan, make_plan
from .moments import Accumulator, Moments, accumulate
from .select import Engine, Recommendation, SealedTest, Surface, build_engine, surface_from_engine, sweep
from .solve import FoldSolver, GradientDescentResult, gradient_descent

__version__ = "0.1.0"

__all__ = [
    "Accumulator", "CurvewrightError", "DataError", "Domain", "Engine", "FitResult", "FoldPlan",
    "FoldSolver", "GradientDescentResult", "LearningCurve", "Moments", "NumericalWarning",
    "ParameterError", "Recommendation", "SealedTest", "Surface", "accumulate", "build_engine",
    "describe_learning_curve", "fit", "gradient_descent", "learning_curve", "make_plan",
    "surface_from_engine", "sweep", "__version__",
]
