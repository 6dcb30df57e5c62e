"""Gravitational acceleration models: inverse-square (default) and constant.

Each model has ``acceleration(radius)``, the magnitude of the acceleration towards the
planet's centre, which works on floats, numpy arrays and CasADi symbols alike, and a
constructor ``from_planet(planet, **parameters)`` that takes the planet of the problem
and the model's declared ``parameters`` (SI floats).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ascentplan._registry import Param


@dataclass(frozen=True)
class InverseSquareGravity:
    """Point-mass gravity g(r) = mu / r^2 (Newton; any astronautics text).

    Attributes
    ----------
    gravitational_parameter : float
        mu = G M of the planet [m^3 s^-2], taken from the planet.
    """

    gravitational_parameter: float
    parameters = {}

    def __post_init__(self):
        mu = self.gravitational_parameter
        if not np.isfinite(mu) or mu <= 0.0:
            raise ValueError(f"gravitational_parameter: must be > 0 m^3/s^2, got {mu!r}")

    @classmethod
    def from_planet(cls, planet, **params):
        """The inverse-square field of ``planet``; the model takes no parameters."""
        if params:
            raise ValueError(f"inverse_square gravity takes no parameters, got "
                             f"{sorted(params)}")
        return cls(float(planet.gravitational_parameter))

    def acceleration(self, radius):
        """Gravitational acceleration [m s^-2] at distance ``radius`` [m] from the centre."""
        return self.gravitational_parameter / (radius * radius)


@dataclass(frozen=True)
class ConstantGravity:
    """Uniform gravity g = const, by default the planet's surface value mu/R^2.

    Attributes
    ----------
    value : float
        Gravitational acceleration [m s^-2].
    """

    value: float
    parameters = {"acceleration": Param("m/s^2", default=None, positive=True,
                                        doc="gravitational acceleration; default mu/R^2")}

    def __post_init__(self):
        # zero is allowed: the no-gravity limit of the rocket-equation checks
        if not np.isfinite(self.value) or self.value < 0.0:
            raise ValueError(f"acceleration: must be >= 0 m/s^2, got {self.value!r}")

    @classmethod
    def from_planet(cls, planet, acceleration=None):
        """Constant gravity ``acceleration`` [m s^-2], or the surface gravity of ``planet``."""
        return cls(float(planet.surface_gravity) if acceleration is None
                   else float(acceleration))

    def acceleration(self, radius):
        """Gravitational acceleration [m s^-2], the same at every ``radius`` [m]."""
        return 0.0 * radius + self.value


#: gravity models by the name used in problem files
GRAVITY_MODELS = {"inverse_square": InverseSquareGravity, "constant": ConstantGravity}
