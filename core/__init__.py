"""curvewright's compute core: regularized polynomial fits, one-pass cross-validation,
learning curves and recommendations. Imports numpy, scipy and mpmath only (never a UI)."""

from .basis import Domain
from .choice import Choice
from .crossval import build_engine, sweep
from .curve import Curve
from .curves import LearningCurve, describe_learning_curve, learning_curve
from .descent import GradientDescentResult, gradient_descent
from .engine import FoldEngine, ScoringEngine, engine_from_moments
from .errors import CurvewrightError, DataError, NumericalWarning, ParameterError
from .fit import FitResult, fit, fit_from_engine
from .folds import FoldPlan, make_plan
from .loo import LooEngine
from .moments import Accumulator, Moments, accumulate
from .select import Recommendation, SealedTest, Surface, surface_from_engine
from .solve import FoldSolver

__version__ = "0.1.0"

__all__ = [
    "Accumulator", "Choice", "Curve", "CurvewrightError", "DataError", "Domain", "FitResult", "FoldEngine",
    "FoldPlan", "FoldSolver", "GradientDescentResult", "LearningCurve", "LooEngine", "Moments",
    "NumericalWarning", "ParameterError", "Recommendation", "ScoringEngine", "SealedTest", "Surface",
    "accumulate", "build_engine", "describe_learning_curve", "engine_from_moments", "fit", "fit_from_engine",
    "gradient_descent", "learning_curve", "make_plan", "surface_from_engine", "sweep", "__version__",
]
