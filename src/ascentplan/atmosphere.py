"""Atmosphere models: density, pressure, temperature, speed of sound, viscosity vs altitude.

Every model returns an :class:`AtmosphereState` from ``state(altitude)`` and works on
floats, numpy arrays and CasADi symbols alike (see :mod:`ascentplan._math`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from . import _math as m_
from ._registry import Param

#: ratio of specific heats of air (U.S. Standard Atmosphere 1976)
GAMMA_AIR = 1.4
#: specific gas constant of air, R*/M0 = 8314.32/28.9644 [J kg^-1 K^-1] (USSA 1976)
R_AIR = 8314.32 / 28.9644
#: Sutherland constants (USSA 1976): beta [kg m^-1 s^-1 K^-1/2], S [K]
SUTHERLAND_BETA = 1.458e-6
SUTHERLAND_S = 110.4


def sutherland_viscosity(temperature):
    """Dynamic viscosity [Pa s] by Sutherland's law with the USSA 1976 constants."""
    return SUTHERLAND_BETA * temperature * m_.sqrt(temperature) / (temperature + SUTHERLAND_S)


@dataclass(frozen=True)
class AtmosphereState:
    """Air properties at one altitude (or arrays of them), SI units."""

    temperature: Any  # [K]
    pressure: Any  # [Pa]
    density: Any  # [kg m^-3]
    speed_of_sound: Any  # [m s^-1]
    viscosity: Any  # [Pa s]


@dataclass(frozen=True)
class Vacuum:
    """No atmosphere: zero density and pressure (sound speed and viscosity kept finite)."""

    parameters = {}

    def state(self, altitude):
        zero = 0.0 * altitude
        return AtmosphereState(zero + 1.0, zero, zero, zero + 300.0, zero + 1.8e-5)


@dataclass(frozen=True)
class ExponentialAtmosphere:
    """Isothermal exponential atmosphere rho = rho0 exp(-h/H).

    Pressure follows rho (isothermal): p = p0 rho/rho0. Sound speed and viscosity are
    those of air at ``temperature``.
    """

    surface_density: float = 1.225
    scale_height: float = 7200.0
    surface_pressure: float = 101325.0
    temperature: float = 288.15
    parameters = {
        "surface_density": Param("kg/m^3", 1.225, positive=True, doc="density at h = 0"),
        "scale_height": Param("m", None, positive=True,
                              doc="e-folding height H; or give half_density_altitude"),
        "half_density_altitude": Param("m", None, positive=True,
                                       doc="altitude over which density halves, H ln 2"),
        "surface_pressure": Param("Pa", 101325.0, positive=True, doc="pressure at h = 0"),
        "temperature": Param("K", 288.15, positive=True, doc="temperature (isothermal)"),
    }

    @classmethod
    def from_params(cls, scale_height=None, half_density_altitude=None, **kw):
        if scale_height is not None and half_density_altitude is not None:
            raise ValueError("give scale_height or half_density_altitude, not both")
        if scale_height is None:
            scale_height = (7200.0 if half_density_altitude is None
                            else half_density_altitude / np.log(2.0))
        return cls(scale_height=scale_height, **kw)

    def state(self, altitude):
        ratio = m_.exp(-altitude / self.scale_height)
        zero = 0.0 * altitude
        a = float(np.sqrt(GAMMA_AIR * R_AIR * self.temperature))
        mu = float(sutherland_viscosity(self.temperature))
        return AtmosphereState(zero + self.temperature, self.surface_pressure * ratio,
                               self.surface_density * ratio, zero + a, zero + mu)


#: atmosphere models by the name used in problem files
ATMOSPHERES = {"exponential": ExponentialAtmosphere, "vacuum": Vacuum}
