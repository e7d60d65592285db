"""Air gap: a layer of the air that fills the stack. Time convention ``exp(+j omega t)``."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .base import Field, FluidElement, Layer

__all__ = ["AirGap"]


@dataclass(frozen=True)
class AirGap(Layer):
    """Lossless air gap of thickness ``d``.

    Parameters
    ----------
    gap : float
        Thickness in m (zero is allowed and changes nothing).

    Notes
    -----
    Fluid layer with rho = rho0 and K = gamma P0; oblique incidence enters through the
    normal wavenumber ``kz = sqrt(k0^2 - kt^2)`` (Allard & Atalla 2009, ch. 11). The gap
    is laterally unbounded: no frames or cavity partitions.
    """

    gap: float = 0.0
    type_name = "air"

    @property
    def thickness(self) -> float:
        return self.gap

    def element(self, omega, kt, air) -> FluidElement:
        return FluidElement(np.asarray(air.density, dtype=complex),
                            np.asarray(air.bulk_modulus, dtype=complex), self.gap)

    @classmethod
    def from_values(cls, values):
        return cls(gap=values["thickness"])


AirGap.schema = {"thickness": Field("length", required=True, allow_zero=True,
                                    doc="gap thickness (0 changes nothing)")}
