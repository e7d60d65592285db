"""Thin panels as impedance sheets: the limp septum and the thin isotropic plate.

Time convention ``exp(+j omega t)``; a loss factor enters as ``D (1 + j eta)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .base import Field, Layer, LayerValueError, SheetElement

__all__ = ["Plate", "Septum"]


@dataclass(frozen=True)
class Septum(Layer):
    """Limp mass sheet (barrier vinyl, loaded film, foil).

    Parameters
    ----------
    surface_density : float
        kg/m^2.
    sheet_thickness : float
        m, for drawings and totals only.

    Notes
    -----
    ``Z = j omega m``; between equal half-spaces
    ``tau(theta) = |1 + j omega m cos(theta) / (2 rho c)|^-2``
    (Vigran, Building Acoustics, 2008, eq. 6.109).
    """

    surface_density: float = 0.0
    sheet_thickness: float = 0.0
    type_name = "septum"

    @property
    def thickness(self):
        return self.sheet_thickness

    @property
    def areal_mass(self):
        return self.surface_density

    def element(self, omega, kt, air):
        return SheetElement(1j * omega * self.surface_density)

    @classmethod
    def from_values(cls, values):
        return cls(surface_density=values["surface_density"],
                   sheet_thickness=values.get("thickness", 0.0))


Septum.schema = {
    "surface_density": Field("surface_density", required=True, doc="mass per unit area m"),
    "thickness": Field("length", doc="sheet thickness, for drawings and totals"),
}


@dataclass(frozen=True)
class Plate(Layer):
    """Thin isotropic plate (Kirchhoff bending and mass) as a locally reacting sheet.

    Parameters
    ----------
    surface_density : float
        m in kg/m^2.
    bending_stiffness : float
        D in N m; for a homogeneous plate ``D = E h^3 / (12 (1 - nu^2))``.
    loss_factor : float
        eta, the structural loss factor (complex stiffness D (1 + j eta)).
    plate_thickness : float
        h in m.

    Notes
    -----
    Bending wave impedance of an infinite plate at trace wavenumber kt
    (Cremer, Heckl & Petersson, Structure-Borne Sound; Vigran 2008 eq. 6.108):
    ``Z = j omega m + D (1 + j eta) kt^4 / (j omega)``,
    which at kt = k0 sin(theta) is ``j omega m [1 - (f/fc)^2 sin^4(theta) (1 + j eta)]``
    with the coincidence frequency ``fc = (c^2 / 2 pi) sqrt(m / D)``. An equivalent plate
    for a sandwich panel (given m and D) neglects core shear and dilatation, so it puts
    coincidence too low and is conservative above it.
    """

    surface_density: float = 0.0
    bending_stiffness: float = 0.0
    loss_factor: float = 0.01
    plate_thickness: float = 0.0
    type_name = "plate"

    @classmethod
    def from_material(cls, thickness, density, youngs_modulus, poisson_ratio=0.3,
                      loss_factor=0.01) -> Plate:
        """Homogeneous plate from its material constants."""
        d = youngs_modulus * thickness**3 / (12.0 * (1.0 - poisson_ratio**2))
        return cls(density * thickness, d, loss_factor, thickness)

    @property
    def thickness(self):
        return self.plate_thickness

    @property
    def areal_mass(self):
        return self.surface_density

    def coincidence_frequency(self, sound_speed: float) -> float:
        """``fc = (c^2 / 2 pi) sqrt(m / D)`` in Hz."""
        return sound_speed**2 / (2.0 * np.pi) * np.sqrt(self.surface_density
                                                      / self.bending_stiffness)

    def element(self, omega, kt, air):
        d = self.bending_stiffness * (1.0 + 1j * self.loss_factor)
        return SheetElement(1j * omega * self.surface_density + d * kt**4 / (1j * omega))

    def trace_resonances(self, omega):
        """Free bending wavenumber ``kB = (omega^2 m / D)^(1/4)`` (nf, 1)."""
        return np.sqrt(omega) * (self.surface_density / self.bending_stiffness) ** 0.25

    @classmethod
    def from_values(cls, values):
        material = ("density", "youngs_modulus")
        direct = ("surface_density", "bending_stiffness")
        eta = values.get("loss_factor", 0.01)
        if all(k in values for k in direct) and not any(k in values for k in material):
            return cls(values["surface_density"], values["bending_stiffness"], eta,
                       values.get("thickness", 0.0))
        for k in ("thickness", *material):
            if k not in values:
                raise LayerValueError(k, "missing: a plate needs thickness, density and "
                                         "youngs_modulus (or surface_density and "
                                         "bending_stiffness)")
        mixed = [k for k in direct if k in values]
        if mixed:  # one set or the other: a value of the other set would be ignored
            raise LayerValueError(mixed[0], "give density and youngs_modulus, or "
                                            "surface_density and bending_stiffness, not both")
        nu = values.get("poisson_ratio", 0.3)
        if not 0.0 <= nu < 0.5:
            raise LayerValueError("poisson_ratio", f"must lie in [0, 0.5), got {nu}")
        return cls.from_material(values["thickness"], values["density"],
                                 values["youngs_modulus"], nu, eta)


Plate.schema = {
    "thickness": Field("length", doc="plate thickness h"),
    "density": Field("density", doc="material density (with thickness and youngs_modulus)"),
    "youngs_modulus": Field("modulus", doc="Young's modulus E"),
    "poisson_ratio": Field("number", allow_zero=True, lt=0.5, default=0.3,
                           doc="Poisson's ratio nu"),
    "loss_factor": Field("number", allow_zero=True, le=2.0, default=0.01,
                         doc="structural loss factor eta"),
    "surface_density": Field("surface_density",
                             doc="mass per unit area m (instead of density and thickness)"),
    "bending_stiffness": Field("bending_stiffness",
                               doc="bending stiffness D (instead of youngs_modulus)"),
}
