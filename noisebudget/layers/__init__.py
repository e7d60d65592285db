"""Layer families. ``LAYER_TYPES`` maps a stack file's ``type`` to its class."""

from .base import Field, FluidElement, Layer, LayerValueError, SheetElement
from .fluid import AirGap
from .panels import Plate, Sandwich, Septum
from .porous import Porous
from .resonators import Cell, Tile
from .screens import Screen

LAYER_TYPES = {cls.type_name: cls
               for cls in (AirGap, Porous, Septum, Plate, Sandwich, Screen, Tile)}

__all__ = ["LAYER_TYPES", "AirGap", "Cell", "Field", "FluidElement", "Layer", "LayerValueError",
           "Plate", "Porous", "Sandwich", "Screen", "Septum", "SheetElement", "Tile"]
