"""curvewright's compute core: regularized polynomial fits, one-pass cross-validation,
learning curves and recommendations. Imports numpy, scipy and mpmath only (never a UI)."""

from .basis import Domain
from .calibrate import lack_of_fit
from .choice import Choice
from . import choice_build
from .crossval import build_engine, sweep
from .curve import Curve
from .curves import SizeCurve, size_curve
from .engine import FoldEngine, ScoringEngine, engine_from_moments
from .errors import CurvewrightError, DataError, NumericalWarning, ParameterError
from .fit import FitOutcome, fit, fit_from_engine
from .folds import FoldPlan, make_plan
from .limits import detection_limits
from .loo import LooEngine
from .moments import Accumulator, Moments, accumulate
from .readback import ReadBack, read_back
from .select import Recommendation, SealedTest, Surface, surface_from_engine
from .solve import FoldSolver
from .tolerance import tolerance_check
from .transforms import Transform

__version__ = "0.1.0"

__all__ = [
    "Accumulator", "Choice", "Curve", "CurvewrightError", "DataError", "Domain", "FitOutcome", "FoldEngine",
    "FoldPlan", "FoldSolver", "LooEngine", "Moments", "NumericalWarning", "ParameterError", "Recommendation",
    "ScoringEngine", "SealedTest", "SizeCurve", "Surface", "accumulate", "build_engine", "engine_from_moments",
    "fit", "fit_from_engine", "make_plan", "size_curve", "surface_from_engine", "sweep", "__version__",
    "ReadBack", "Transform", "detection_limits", "lack_of_fit", "read_back", "tolerance_check",
]
