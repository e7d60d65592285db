"""Layer families. ``LAYER_TYPES`` maps a stack file's ``type`` to its class."""

from .base import Field, FluidElement, Layer, LayerValueError, SheetElement
from .elastic import BiotElement, Solid, SolidElement
from .fluid import AirGap
from .panels import Plate, Sandwich, Septum
from .porous import Porous
from .resonators import Cell, Tile
from .screens import Screen

LAYER_TYPES = {cls.type_name: cls
               for cls in (AirGap, Porous, Septum, Plate, Sandwich, Screen, Tile, Solid)}

__all__ = ["LAYER_TYPES", "AirGap", "BiotElement", "Cell", "Field", "FluidElement", "Layer",
           "LayerValueError", "Plate", "Porous", "Sandwich", "Screen", "Septum", "SheetElement",
           "Solid", "SolidElement", "Tile"]
