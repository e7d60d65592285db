"""Elastic media: the isotropic elastic solid layer and the elements of elastic layers.

Time convention ``exp(+j omega t)``: a loss factor enters as a complex modulus
``E (1 + j eta)``, so wavenumbers have negative imaginary parts.

Layers whose frame carries shear and compression cannot be cascaded as 2x2 fluid
matrices; they return a :class:`SolidElement` (state vector of 4: two velocities, two
stresses) or a :class:`BiotElement` (state vector of 6), and a stack holding one is solved
by :mod:`noisebudget.multilayer` (Allard & Atalla, Propagation of Sound in Porous Media,
2nd ed. 2009, ch. 11).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from .base import Field, Layer, LayerValueError, require

__all__ = ["BiotElement", "Solid", "SolidElement", "lame_constants"]


def lame_constants(youngs_modulus, poisson_ratio, loss_factor=0.0):
    """Complex Lamé constants ``(lambda, mu)`` of an isotropic solid.

    ``mu = E (1 + j eta) / (2 (1 + nu))``,
    ``lambda = E nu (1 + j eta) / ((1 + nu) (1 - 2 nu))`` (a hysteretic loss factor on
    both moduli; Allard & Atalla 2009, ch. 4 and 11).
    """
    e = youngs_modulus * (1.0 + 1j * loss_factor)
    nu = poisson_ratio
    return e * nu / ((1 + nu) * (1 - 2 * nu)), e / (2 * (1 + nu))


@dataclass(frozen=True)
class SolidElement:
    """Isotropic elastic solid of ``thickness``: density and complex Lamé constants."""

    density: float
    lame_lambda: complex
    lame_mu: complex
    thickness: float


@dataclass(frozen=True)
class BiotElement:
    """Poroelastic (Biot) layer of ``thickness``.

    ``p, q, r`` are Biot's elastic coefficients and ``n`` the frame's shear modulus
    (complex, broadcast like omega); ``rho11, rho12, rho22`` the dynamic densities;
    ``porosity`` phi. Stresses: ``sigma_s = [(P - 2N) div u_s + Q div u_f] I + 2 N eps_s``,
    ``sigma_f = (Q div u_s + R div u_f) I = -phi p I`` (Biot 1956; Allard & Atalla 2009,
    ch. 6).
    """

    p: np.ndarray
    q: np.ndarray
    r: np.ndarray
    n: np.ndarray
    rho11: np.ndarray
    rho12: np.ndarray
    rho22: np.ndarray
    porosity: float
    thickness: float


@dataclass(frozen=True)
class Solid(Layer):
    """Isotropic elastic solid layer (rubber, viscoelastic sheet, glass, polymer).

    Parameters
    ----------
    layer_thickness : float
        d in m.
    density : float
        rho in kg/m^3.
    youngs_modulus : float
        E in Pa.
    poisson_ratio : float
        nu, in [0, 0.5).
    loss_factor : float
        eta, hysteretic (complex moduli ``E (1 + j eta)``).

    Notes
    -----
    Exact plane-strain elastodynamics: a compressional wave ``kL^2 = omega^2 rho /
    (lambda + 2 mu)`` and a shear wave ``kT^2 = omega^2 rho / mu`` in each direction, state
    vector ``(v_x, v_z, sigma_zz, sigma_xz)`` (Allard & Atalla 2009, ch. 11; Brekhovskikh,
    Waves in Layered Media). Unlike the ``plate`` sheet it includes shear, rotary inertia
    and thickness resonances, so a thin solid tends to the Kirchhoff plate (mass law and
    coincidence) and a thick one shows its standing waves. At normal incidence only the
    compressional wave is excited: the layer acts as a fluid layer of impedance
    ``rho cL``. Bonded faces carry shear to the neighbouring elastic layers.
    """

    layer_thickness: float = 0.0
    density: float = 0.0
    youngs_modulus: float = 0.0
    poisson_ratio: float = 0.3
    loss_factor: float = 0.01
    type_name = "solid"
    elastic: ClassVar[bool] = True

    def __post_init__(self):
        if not 0.0 <= self.poisson_ratio < 0.5:
            raise LayerValueError("poisson_ratio", f"must lie in [0, 0.5), got "
                                                   f"{self.poisson_ratio}")
        for key in ("density", "youngs_modulus"):
            require(key, getattr(self, key), above=True)
        require("thickness", self.layer_thickness)
        require("loss_factor", self.loss_factor, high=2.0)

    @property
    def thickness(self):
        return self.layer_thickness

    @property
    def areal_mass(self):
        return self.density * self.layer_thickness

    def element(self, omega, kt, air) -> SolidElement:
        lam, mu = lame_constants(self.youngs_modulus, self.poisson_ratio, self.loss_factor)
        return SolidElement(self.density, lam, mu, self.layer_thickness)

    def trace_resonances(self, omega):
        """Thin-plate bending wavenumber ``(omega^2 rho h / D)^(1/4)`` and the real
        compressional and shear wavenumbers (nf, 3): the layer's coincidence and its
        critical angles."""
        omega = np.asarray(omega, dtype=float)
        lam, mu = lame_constants(self.youngs_modulus, self.poisson_ratio)
        kl = omega * np.sqrt(self.density / (lam.real + 2 * mu.real))
        kt = omega * np.sqrt(self.density / mu.real)
        h = max(self.layer_thickness, 1e-9)
        d = self.youngs_modulus * h**3 / (12 * (1 - self.poisson_ratio**2))
        kb = np.sqrt(omega) * (self.density * h / d) ** 0.25
        return np.concatenate([kb, kl, kt], axis=-1)

    @classmethod
    def from_values(cls, values):
        return cls(values["thickness"], values["density"], values["youngs_modulus"],
                   values["poisson_ratio"], values.get("loss_factor", 0.01))


Solid.schema = {
    "thickness": Field("length", required=True, allow_zero=True, doc="layer thickness"),
    "density": Field("density", required=True, doc="material density"),
    "youngs_modulus": Field("modulus", required=True, doc="Young's modulus E"),
    "poisson_ratio": Field("number", required=True, allow_zero=True, lt=0.5,
                           doc="Poisson's ratio nu"),
    "loss_factor": Field("number", allow_zero=True, le=2.0, default=0.01,
                         doc="structural loss factor eta"),
}
