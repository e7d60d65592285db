"""Air as an ideal gas: density, speed of sound and viscosity from temperature and pressure.

All quantities SI. Time convention ``exp(+j omega t)`` where complex values appear
elsewhere; this module is real-valued.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["Air", "GAS_CONSTANT_AIR", "GAMMA_AIR", "PRANDTL_AIR", "standard_atmosphere"]

GAS_CONSTANT_AIR = 287.05287  # J/(kg K), ICAO Doc 7488 (ISA)
GAMMA_AIR = 1.4
PRANDTL_AIR = 0.71
_SUTHERLAND_MU0 = 1.716e-5  # Pa s at 273.15 K (White, Viscous Fluid Flow, 3rd ed., Table 1-2)
_SUTHERLAND_T0 = 273.15
_SUTHERLAND_S = 110.4  # K


@dataclass(frozen=True)
class Air:
    """Still air at a given temperature and static pressure.

    Parameters
    ----------
    temperature : float
        Kelvin.
    pressure : float
        Static pressure in Pa.

    Notes
    -----
    Ideal gas: ``rho = P / (R T)``, ``c = sqrt(gamma R T)``; dynamic viscosity by
    Sutherland's law ``mu = mu0 (T/T0)^(3/2) (T0 + S) / (T + S)`` with mu0 = 1.716e-5 Pa s,
    T0 = 273.15 K, S = 110.4 K (White, Viscous Fluid Flow). At 20 degC and 101.325 kPa:
    rho 1.2041 kg/m^3, c 343.23 m/s.
    """

    temperature: float = 293.15
    pressure: float = 101325.0

    gamma = GAMMA_AIR
    prandtl = PRANDTL_AIR

    def __post_init__(self):
        if not (self.temperature > 0 and self.pressure > 0):
            raise ValueError("air temperature and pressure must be positive")

    @property
    def density(self) -> float:
        """Density in kg/m^3."""
        return self.pressure / (GAS_CONSTANT_AIR * self.temperature)

    @property
    def sound_speed(self) -> float:
        """Adiabatic speed of sound in m/s."""
        return math.sqrt(GAMMA_AIR * GAS_CONSTANT_AIR * self.temperature)

    @property
    def impedance(self) -> float:
        """Characteristic impedance rho c in Pa s/m."""
        return self.density * self.sound_speed

    @property
    def bulk_modulus(self) -> float:
        """Adiabatic bulk modulus gamma P0 = rho c^2 in Pa."""
        return GAMMA_AIR * self.pressure

    @property
    def viscosity(self) -> float:
        """Dynamic viscosity in Pa s (Sutherland's law)."""
        t = self.temperature
        return (_SUTHERLAND_MU0 * (t / _SUTHERLAND_T0) ** 1.5
                * (_SUTHERLAND_T0 + _SUTHERLAND_S) / (t + _SUTHERLAND_S))


def standard_atmosphere(altitude_m: float) -> Air:
    """Air of the International Standard Atmosphere at a geopotential altitude.

    Troposphere to 11 km: ``T = 288.15 - 0.0065 h``, ``P = 101325 (T/288.15)^5.25588``;
    isothermal above at 216.65 K with ``P = 22632.06 exp(-g (h - 11000) / (R T))``
    (ICAO Doc 7488). Valid to 20 km.
    """
    g0 = 9.80665
    if not (-1000.0 <= altitude_m <= 20000.0):
        raise ValueError("standard atmosphere is implemented from -1 km to 20 km")
    if altitude_m <= 11000.0:
        t = 288.15 - 0.0065 * altitude_m
        p = 101325.0 * (t / 288.15) ** (g0 / (0.0065 * GAS_CONSTANT_AIR))
    else:
        t = 216.65
        p = 22632.06 * math.exp(-g0 * (altitude_m - 11000.0) / (GAS_CONSTANT_AIR * t))
    return Air(temperature=t, pressure=p)
