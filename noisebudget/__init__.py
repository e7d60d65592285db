"""noisebudget: transmission loss, interior noise and mass budgets of cabin sidewall packages.

Time convention ``exp(+j omega t)`` throughout; SI units inside the library.
"""

from .bands import a_weighting, c_weighting, octave_bands, third_octave_bands
from .errors import InputError, InputErrors, ModelRangeWarning
from .layers import AirGap, Plate, Porous, Screen, Septum
from .media import Air, standard_atmosphere
from .ratings import ratings
from .stack import Stack
from .stackfile import load_stack, parse_stack

__version__ = "0.1.0"


def __getattr__(name):
    """Study functions import pandas; load them on first use so the package imports fast."""
    if name in ("load_study", "run_study"):
        from . import study

        return getattr(study, name)
    if name in ("run_sweep", "run_optimization", "trade"):
        from . import trade

        return trade if name == "trade" else getattr(trade, name)
    raise AttributeError(f"module 'noisebudget' has no attribute {name!r}")

__all__ = ["a_weighting", "c_weighting", "octave_bands", "ratings", "third_octave_bands",
           "Air", "AirGap", "InputError", "InputErrors", "ModelRangeWarning", "Plate",
           "Porous", "Screen", "Septum", "Stack", "__version__", "load_stack", "load_study",
           "run_optimization", "run_study", "run_sweep", "parse_stack",
           "standard_atmosphere"]
