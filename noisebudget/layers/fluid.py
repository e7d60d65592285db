"""Air gap: a layer of the air that fills the stack. Time convention ``exp(+j omega t)``."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .base import Field, FluidElement, Layer, require

__all__ = ["AirGap"]


@dataclass(frozen=True)
class AirGap(Layer):
    """Air gap of thickness ``d``, lossless unless given a loss factor.

    Parameters
    ----------
    gap : float
        Thickness in m (zero is allowed and changes nothing).
    loss_factor : float
        eta of a complex bulk modulus ``K = gamma P0 (1 + j eta)``, a small damping of
        the gap standing in for the absorption at its edges (frames, blanket edges,
        leaks); 0 by default.

    Notes
    -----
    Fluid layer with ``rho = rho0`` and ``K = gamma P0 (1 + j eta)``; oblique incidence
    enters through the normal wavenumber ``kz = sqrt(omega^2 rho / K - kt^2)`` (Allard &
    Atalla 2009, ch. 11). The wavenumber ``k0 (1 + j eta)^(-1/2) ~ k0 (1 - j eta / 2)``
    decays, so the gap is passive for eta >= 0 (a loss factor of a fluid as in Cremer,
    Heckl & Petersson, Structure-Borne Sound, ch. 3). The gap is laterally unbounded: no
    frames or cavity partitions, which is why a lossless gap between two leaves
    transmits almost everything at its oblique mass-air-mass resonances.
    """

    gap: float = 0.0
    loss_factor: float = 0.0
    type_name = "air"

    def __post_init__(self):
        require("thickness", self.gap)
        require("loss_factor", self.loss_factor, high=2.0)

    @property
    def thickness(self) -> float:
        return self.gap

    def element(self, omega, kt, air) -> FluidElement:
        bulk = air.bulk_modulus
        if np.any(self.loss_factor):  # a number, or per-row numbers of a batch
            bulk = bulk * (1 + 1j * self.loss_factor)
        return FluidElement(np.asarray(air.density, dtype=complex),
                            np.asarray(bulk, dtype=complex), self.gap)

    @classmethod
    def from_values(cls, values):
        return cls(gap=values["thickness"], loss_factor=values.get("loss_factor", 0.0))


AirGap.schema = {
    "thickness": Field("length", required=True, allow_zero=True,
                       doc="gap thickness (0 changes nothing)"),
    "loss_factor": Field("number", allow_zero=True, le=2.0, default=0.0,
                         doc="cavity loss eta: K = gamma P0 (1 + j eta), for the absorption "
                             "at the gap's edges"),
}
