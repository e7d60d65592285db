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
from .study import load_study, run_study

__version__ = "0.1.0"

__all__ = ["a_weighting", "c_weighting", "octave_bands", "ratings", "third_octave_bands",
           "Air", "AirGap", "InputError", "InputErrors", "ModelRangeWarning", "Plate",
           "Porous", "Screen", "Septum", "Stack", "__version__", "load_stack", "load_study",
           "run_study", "parse_stack", "standard_atmosphere"]
