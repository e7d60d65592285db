"""Thin resistive screens and films. Time convention ``exp(+j omega t)``."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .base import Field, Layer, SheetElement

__all__ = ["Screen"]


@dataclass(frozen=True)
class Screen(Layer):
    """Resistive screen (scrim, facing cloth, perforated film) of flow resistance R.

    Parameters
    ----------
    flow_resistance : float
        R in Pa s/m (rayl).
    surface_density : float
        m in kg/m^2; 0 means the screen does not move.

    Notes
    -----
    An immobile screen is the series sheet ``Z = R``; a limp screen that moves with the
    air is R in parallel with its mass reactance, ``Z = R j omega m / (R + j omega m)``
    (Allard & Atalla 2009, ch. 11, resistive screens; Ingard, Notes on Sound Absorption
    Technology, 1994). A screen acts the same at every angle (locally reacting).
    """

    flow_resistance: float = 0.0
    surface_density: float = 0.0
    screen_thickness: float = 0.0
    type_name = "screen"

    @property
    def thickness(self):
        return self.screen_thickness

    @property
    def areal_mass(self):
        return self.surface_density

    def element(self, omega, kt, air):
        r = self.flow_resistance
        if np.all(self.surface_density == 0.0):  # a number, or a batch's per-row numbers
            return SheetElement(r + 0j * omega)
        zm = 1j * omega * self.surface_density
        return SheetElement(r * zm / (r + zm))

    @classmethod
    def from_values(cls, values):
        return cls(values["flow_resistance"], values.get("surface_density", 0.0),
                   values.get("thickness", 0.0))


Screen.schema = {
    "flow_resistance": Field("flow_resistance", required=True, doc="flow resistance R"),
    "surface_density": Field("surface_density", allow_zero=True,
                             doc="mass per unit area m (0: the screen does not move)"),
    "thickness": Field("length", doc="screen thickness, for drawings and totals"),
}
