"""locate layer: single-ended, two-ended and model-matched fault location.

Entry point: :func:`locate_event` (one or two ends' :class:`TerminalPhasors`
and the network model in, a frozen :class:`LocationReport` out).
"""

from .api import CAUTION, LocateOptions, LocationReport, locate_event
from .estimate import LocatorEstimate
from .inputs import TerminalPhasors
from .model_fit import FitOptions, ModelFitResult, fit_fault

__all__ = ["CAUTION", "FitOptions", "LocateOptions", "LocationReport", "LocatorEstimate",
           "ModelFitResult", "TerminalPhasors", "fit_fault", "locate_event"]
