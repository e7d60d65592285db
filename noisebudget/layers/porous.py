"""Porous layers: equivalent fluids (Delany-Bazley, Miki, JCA rigid and limp) and Biot.

Time convention ``exp(+j omega t)``: the wavenumbers have negative imaginary parts.
Each model gives an effective density rho and bulk modulus K of the equivalent fluid;
from the characteristic impedance Zc and wavenumber kc of the empirical models,
``rho = Zc kc / omega`` and ``K = Zc omega / kc``.

Passivity. From the linearised equations ``j omega rho v = -grad p`` and
``j omega p / K = -div v``, the time-averaged power flowing out of a volume element is
``(1/2) Re div(p v*) = (omega / 2) [Im(rho) |v|^2 + Im(1/K) |p|^2]``, so a layer can
never give out more power than it receives, for any boundary conditions, exactly when
``Im rho <= 0`` and ``Im K >= 0`` (a viscous and a thermal loss, never a gain; the same
energy argument as Allard & Atalla 2009, ch. 2, for the power dissipated in a porous
layer). These imply ``Re Zc >= 0`` and ``Im kc <= 0``, but not conversely: the
Delany-Bazley fit has ``Re Zc > 0`` and ``Im kc < 0`` at every X and still has
``Im K < 0`` below X of about 0.02 (computed from the fit), so a thin layer there
transmits more power than it receives (tau up to about 3). Miki (1990) modified the fit
because Delany-Bazley's surface impedance is not positive-real at low frequency; his fit
turns ``Im K < 0`` only below X = 0.001. Hence, for both empirical models:

* below the fitted range (``X < 0.01``) the model is replaced by its Darcy continuation
  from the lower end ``f_lo``: ``rho(omega) = Re rho_lo + Im rho_lo omega_lo / omega``
  (a constant flow resistance, ``j omega rho -> sigma_lo``, as every rigid-frame porous
  medium has at low frequency; ``sigma_lo`` is 1.07 sigma for Delany-Bazley and
  0.90 sigma for Miki, computed from the fits) and
  ``K = K_lo`` frozen;
* above it (``X > 1``) the model is extrapolated (it tends to air and stays passive);
* everywhere ``Im rho`` is limited to ``<= 0`` and ``Im K`` to ``>= 0``.

The stack warns once per layer used outside the fitted range (``ModelRangeWarning``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .base import Field, FluidElement, Layer, LayerValueError
from .biot import biot_element, frame_modulus

__all__ = ["EMPIRICAL_RANGE", "MODELS", "Porous", "delany_bazley", "jca_bulk_modulus",
           "jca_density", "limp_density", "miki", "passive_fluid"]

MODELS = ("delany-bazley", "miki", "jca", "jca-limp", "biot")
_JCA = ("porosity", "tortuosity", "viscous_length", "thermal_length")
NEEDS = {"jca": _JCA, "jca-limp": (*_JCA, "bulk_density"),  # keys each model requires
         "biot": (*_JCA, "bulk_density", "youngs_modulus", "poisson_ratio", "loss_factor")}
EMPIRICAL_RANGE = (0.01, 1.0)  # fitted range of X for Delany-Bazley and Miki


def _hz(v: float) -> str:
    return f"{v:.0f}" if v >= 100 else f"{v:.3g}"


def passive_fluid(rho, bulk):
    """Limit ``Im rho`` to ``<= 0`` and ``Im K`` to ``>= 0`` (see the module notes)."""
    rho, bulk = np.asarray(rho, complex), np.asarray(bulk, complex)
    return (rho.real + 1j * np.minimum(rho.imag, 0.0),
            bulk.real + 1j * np.maximum(bulk.imag, 0.0))


def delany_bazley(f, flow_resistivity, rho0, c0):
    """Characteristic impedance and wavenumber, Delany & Bazley (1970).

    With ``X = rho0 f / sigma`` (the form used by Allard & Champoux, valid
    0.01 < X < 1)::

        Zc = rho0 c0 [1 + 0.0571 X^-0.754 - j 0.0870 X^-0.732]
        kc = (omega / c0) [1 + 0.0978 X^-0.700 - j 0.1890 X^-0.595]

    Source: M. E. Delany and E. N. Bazley, Applied Acoustics 3 (1970) 105-116.
    Returns ``(zc, kc)`` complex arrays.
    """
    x = rho0 * f / flow_resistivity
    zc = rho0 * c0 * (1 + 0.0571 * x**-0.754 - 1j * 0.0870 * x**-0.732)
    kc = 2 * np.pi * f / c0 * (1 + 0.0978 * x**-0.700 - 1j * 0.1890 * x**-0.595)
    return zc, kc


def miki(f, flow_resistivity, rho0, c0):
    """Characteristic impedance and wavenumber, Miki (1990).

    With ``X = f / sigma``::

        Zc = rho0 c0 [1 + 0.0699 X^-0.632 - j 0.1071 X^-0.632]
        kc = (omega / c0) [1 + 0.1093 X^-0.618 - j 0.1597 X^-0.618]

    Source: Y. Miki, J. Acoust. Soc. Jpn (E) 11 (1990) 19-24.
    """
    x = f / flow_resistivity
    zc = rho0 * c0 * (1 + 0.0699 * x**-0.632 - 1j * 0.1071 * x**-0.632)
    kc = 2 * np.pi * f / c0 * (1 + 0.1093 * x**-0.618 - 1j * 0.1597 * x**-0.618)
    return zc, kc


def jca_density(omega, sigma, phi, alpha_inf, viscous_length, air):
    """Dynamic density of the rigid-frame equivalent fluid (Johnson et al. 1987).

    ``rho = (alpha_inf rho0 / phi) [1 + (sigma phi / (j omega rho0 alpha_inf))
    sqrt(1 + j 4 alpha_inf^2 eta rho0 omega / (sigma^2 Lambda^2 phi^2))]``
    (Johnson, Koplik & Dashen, J. Fluid Mech. 176 (1987); Allard & Atalla 2009, ch. 5).
    At low frequency ``j omega rho -> sigma``.
    """
    rho0, eta = air.density, air.viscosity
    g = np.sqrt(1 + 4j * alpha_inf**2 * eta * rho0 * omega
                / (sigma**2 * viscous_length**2 * phi**2))
    return alpha_inf * rho0 / phi * (1 + sigma * phi / (1j * omega * rho0 * alpha_inf) * g)


def jca_bulk_modulus(omega, phi, thermal_length, air):
    """Dynamic bulk modulus of the equivalent fluid (Champoux & Allard 1991).

    ``K = (gamma P0 / phi) / [gamma - (gamma - 1) (1 + 8 eta / (j Lambda'^2 Pr rho0
    omega) sqrt(1 + j Lambda'^2 Pr rho0 omega / (16 eta)))^-1]``
    (Champoux & Allard, J. Appl. Phys. 70 (1991) 1975). Tends to P0/phi (isothermal)
    at low frequency and gamma P0 / phi (adiabatic) at high frequency.
    """
    rho0, eta, pr, gam, p0 = air.density, air.viscosity, air.prandtl, air.gamma, air.pressure
    lam2 = thermal_length**2
    inner = 1 + 8 * eta / (1j * lam2 * pr * rho0 * omega) * np.sqrt(
        1 + 1j * lam2 * pr * rho0 * omega / (16 * eta))
    return gam * p0 / phi / (gam - (gam - 1) / inner)


def limp_density(rho_rigid, bulk_density, phi, rho0):
    """Equivalent density when the frame is limp (Panneton, JASA 122 (2007) EL217).

    ``rho_limp = (rho_t rho - rho0^2) / (rho_t + rho - 2 rho0)`` with
    ``rho_t = rho_1 + phi rho0`` the total apparent density and ``rho`` the rigid-frame
    equivalent density. Re-derived here from Biot's equations with a frame that carries
    no stress, the interface velocity being the total (frame plus fluid) velocity.
    Tends to ``rho`` for a heavy frame and to ``rho_t`` at low frequency.
    """
    rho_t = bulk_density + phi * rho0
    return (rho_t * rho_rigid - rho0**2) / (rho_t + rho_rigid - 2 * rho0)


@dataclass(frozen=True)
class Porous(Layer):
    """Porous layer (fibrous blanket, foam) as a homogeneous equivalent fluid.

    Parameters
    ----------
    model : str
        ``"delany-bazley"``, ``"miki"`` (empirical, sigma only), ``"jca"`` (rigid
        frame), ``"jca-limp"`` (limp frame, needs ``bulk_density``) or ``"biot"``
        (elastic frame: JCA pore air plus the frame's density, Young's modulus, Poisson
        ratio and loss factor; see :mod:`noisebudget.layers.biot`).
    layer_thickness : float
        m.
    flow_resistivity : float
        sigma in Pa s/m^2.
    porosity, tortuosity, viscous_length, thermal_length : float
        phi, alpha_inf, Lambda (m), Lambda' (m) for the JCA models.
    bulk_density : float
        Frame density rho_1 in kg/m^3 (areal mass; the limp model's inertia).
    youngs_modulus, poisson_ratio, loss_factor : float
        The frame's E (Pa, in vacuo), nu and eta, for ``"biot"``.

    Notes
    -----
    The frame's elasticity is neglected (no Biot frame wave): good for light blankets
    behind a skin, not for stiff foams bonded to a panel. Outside 0.01 < X < 1 the
    empirical models use the passive continuation of the module notes, and the stack
    warns (``ModelRangeWarning``, :meth:`range_note`).
    """

    model: str = "delany-bazley"
    layer_thickness: float = 0.0
    flow_resistivity: float = 0.0
    porosity: float | None = None
    tortuosity: float | None = None
    viscous_length: float | None = None
    thermal_length: float | None = None
    bulk_density: float | None = None
    youngs_modulus: float | None = None
    poisson_ratio: float | None = None
    loss_factor: float | None = None
    type_name = "porous"

    def __post_init__(self):
        if self.model not in MODELS:
            raise LayerValueError("model", f"unknown porous model {self.model!r}; "
                                           f"one of {', '.join(MODELS)}")
        need = NEEDS.get(self.model, ())
        for name in need:
            if getattr(self, name) is None:
                raise LayerValueError(name, f"missing: model {self.model!r} needs "
                                            f"{', '.join(need)}")
        if self.porosity is not None and not 0 < self.porosity <= 1:
            raise LayerValueError("porosity", f"must lie in (0, 1], got {self.porosity}")
        if self.tortuosity is not None and self.tortuosity < 1:
            raise LayerValueError("tortuosity", f"must be >= 1, got {self.tortuosity}")
        if self.poisson_ratio is not None and not 0 <= self.poisson_ratio < 0.5:
            raise LayerValueError("poisson_ratio", f"must lie in [0, 0.5), got "
                                                   f"{self.poisson_ratio}")

    @property
    def elastic(self) -> bool:
        """True for the Biot model: the stack needs the general (elastic) solve."""
        return self.model == "biot"

    @property
    def thickness(self):
        return self.layer_thickness

    @property
    def areal_mass(self):
        return (self.bulk_density or 0.0) * self.layer_thickness

    def fitted_band(self, air) -> tuple[float, float] | None:
        """Frequencies (Hz) of the empirical model's fitted range 0.01 < X < 1, or None."""
        if self.model not in ("delany-bazley", "miki"):
            return None
        scale = air.density if self.model == "delany-bazley" else 1.0
        lo, hi = EMPIRICAL_RANGE
        return lo * self.flow_resistivity / scale, hi * self.flow_resistivity / scale

    def range_note(self, f_hz, air) -> str | None:
        """One line on use outside the fitted range at ``f_hz``, or None.

        The line depends only on the layer and on which side of the range is used, so a
        warning filter shows it once per layer.
        """
        band = self.fitted_band(air)
        if band is None:
            return None
        f = np.asarray(f_hz, dtype=float)
        lo, hi = band
        sides = []
        if np.any(f < lo):
            sides.append(f"below {_hz(lo)} Hz (Darcy continuation, passive)")
        if np.any(f > hi):
            sides.append(f"above {_hz(hi)} Hz (extrapolated)")
        if not sides:
            return None
        return (f"{self.model} (sigma {self.flow_resistivity:g} Pa s/m^2) is fitted for "
                f"{_hz(lo)}-{_hz(hi)} Hz (0.01 < X < 1) and is used {' and '.join(sides)}")

    def equivalent_fluid(self, omega, air):
        """Effective density and bulk modulus (complex arrays shaped like omega), passive
        at every frequency (see the module notes)."""
        omega = np.asarray(omega, dtype=float)
        rho0, c0 = air.density, air.sound_speed
        band = self.fitted_band(air)
        if band is not None:
            f = omega / (2 * np.pi)
            f_lo = band[0]
            f_eff = np.maximum(f, f_lo)
            fn = delany_bazley if self.model == "delany-bazley" else miki
            zc, kc = fn(f_eff, self.flow_resistivity, rho0, c0)
            w_eff = 2 * np.pi * f_eff
            rho, bulk = zc * kc / w_eff, zc * w_eff / kc
            # Darcy continuation below the range: the loss part of rho grows as 1/omega
            rho = rho.real + 1j * rho.imag * (f_eff / f)
            return passive_fluid(rho, bulk)
        rho = jca_density(omega, self.flow_resistivity, self.porosity, self.tortuosity,
                          self.viscous_length, air)
        if self.model == "jca-limp":
            rho = limp_density(rho, self.bulk_density, self.porosity, rho0)
        return rho, jca_bulk_modulus(omega, self.porosity, self.thermal_length, air)

    def element(self, omega, kt, air):
        if self.model == "biot":
            rho, k = self.equivalent_fluid(omega, air)  # the rigid-frame JCA pore air
            return biot_element(np.asarray(omega, dtype=float), rho, k, self.porosity,
                                self.bulk_density, self.youngs_modulus, self.poisson_ratio,
                                self.loss_factor, self.layer_thickness, air)
        rho, k = self.equivalent_fluid(omega, air)
        return FluidElement(rho, k, self.layer_thickness)

    def trace_resonances(self, omega):
        """Biot model: the frame's compressional and shear wavenumbers in vacuo (nf, 2),
        the critical angles of the frame waves."""
        if self.model != "biot":
            return None
        n, p_hat = frame_modulus(self.youngs_modulus, self.poisson_ratio)
        omega = np.asarray(omega, dtype=float)
        return np.concatenate([omega * np.sqrt(self.bulk_density / p_hat.real),
                               omega * np.sqrt(self.bulk_density / n.real)], axis=-1)

    @classmethod
    def required_by(cls, table):
        return NEEDS.get(table.get("model"), ())

    @classmethod
    def from_values(cls, values):
        return cls(model=values["model"], layer_thickness=values["thickness"],
                   flow_resistivity=values["flow_resistivity"],
                   porosity=values.get("porosity"), tortuosity=values.get("tortuosity"),
                   viscous_length=values.get("viscous_length"),
                   thermal_length=values.get("thermal_length"),
                   bulk_density=values.get("bulk_density"),
                   youngs_modulus=values.get("youngs_modulus"),
                   poisson_ratio=values.get("poisson_ratio"),
                   loss_factor=values.get("loss_factor"))


Porous.schema = {
    "model": Field("choice", required=True, choices=MODELS, doc="equivalent-fluid model"),
    "thickness": Field("length", required=True, doc="layer thickness"),
    "flow_resistivity": Field("flow_resistivity", required=True,
                              doc="static airflow resistivity sigma"),
    "porosity": Field("number", le=1.0, doc="open porosity phi (jca, jca-limp)"),
    "tortuosity": Field("number", ge=1.0, le=20.0, doc="tortuosity alpha_inf (jca, jca-limp)"),
    "viscous_length": Field("length", doc="viscous characteristic length Lambda"),
    "thermal_length": Field("length", doc="thermal characteristic length Lambda'"),
    "bulk_density": Field("density", doc="bulk density of the frame (mass; jca-limp, biot)"),
    "youngs_modulus": Field("modulus", doc="Young's modulus of the frame in vacuo (biot)"),
    "poisson_ratio": Field("number", allow_zero=True, lt=0.5,
                           doc="Poisson's ratio of the frame (biot)"),
    "loss_factor": Field("number", allow_zero=True, le=2.0,
                         doc="structural loss factor of the frame (biot)"),
}
