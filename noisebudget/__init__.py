"""noisebudget: transmission loss, interior noise and mass budgets of cabin sidewall packages.

Time convention ``exp(+j omega t)`` throughout; SI units inside the library.

The public names load their module on first use (PEP 562), so ``import noisebudget``
and the command line's ``--help`` and ``--version`` do not import numpy.
"""

from __future__ import annotations

import sys
import types
from importlib import import_module
from typing import TYPE_CHECKING

__version__ = "0.1.0"

_WHERE = {  # public name -> module that defines it
    "a_weighting": "bands", "c_weighting": "bands", "octave_bands": "bands",
    "third_octave_bands": "bands", "InputError": "errors", "InputErrors": "errors",
    "ModelRangeWarning": "errors", "Panel": "finite_size", "AirGap": "layers",
    "Plate": "layers", "Porous": "layers", "Sandwich": "layers", "Screen": "layers",
    "Septum": "layers", "Solid": "layers", "Air": "media",
    "standard_atmosphere": "media", "ratings": "ratings", "Stack": "stack",
    "load_stack": "stackfile", "parse_stack": "stackfile", "load_study": "study",
    "parse_study": "study", "run_study": "study", "run_sweep": "trade.sweep",
    "run_optimization": "trade.optimize",
}
_SUBPACKAGES = ("trade",)  # nb.trade.sweep_study and the rest of the trade engine

if TYPE_CHECKING:  # for editors and type checkers; nothing is imported at run time
    from .bands import a_weighting, c_weighting, octave_bands, third_octave_bands
    from .errors import InputError, InputErrors, ModelRangeWarning
    from .finite_size import Panel
    from .layers import AirGap, Plate, Porous, Sandwich, Screen, Septum, Solid
    from .media import Air, standard_atmosphere
    from .ratings import ratings
    from .stack import Stack
    from .stackfile import load_stack, parse_stack
    from .study import load_study, parse_study, run_study
    from .trade.optimize import run_optimization
    from .trade.sweep import run_sweep


def __getattr__(name):
    """Load a public name's module (or the ``trade`` subpackage) on first use."""
    if name in _WHERE:
        value = getattr(import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    if name in _SUBPACKAGES:
        return import_module(f".{name}", __name__)
    raise AttributeError(f"module 'noisebudget' has no attribute {name!r}")


def __dir__():
    return sorted([*globals(), *_WHERE, *_SUBPACKAGES])


class _Package(types.ModuleType):
    """The package module. Loading the submodule ``noisebudget.ratings`` would bind the
    module to the package attribute of the same name; the public name is the function."""

    def __setattr__(self, name, value):
        if name in _WHERE and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package


__all__ = ["a_weighting", "c_weighting", "octave_bands", "ratings", "third_octave_bands",
           "Air", "AirGap", "InputError", "InputErrors", "ModelRangeWarning", "Panel", "Plate",
           "Porous", "Sandwich", "Screen", "Septum", "Solid", "Stack", "__version__",
           "load_stack", "load_study", "run_optimization", "run_study", "run_sweep",
           "parse_stack", "parse_study", "standard_atmosphere"]
