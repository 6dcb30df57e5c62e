"""Gravitational acceleration models: inverse-square (default) and constant."""

from __future__ import annotations

from dataclasses import dataclass

from ._registry import Param


@dataclass(frozen=True)
class InverseSquareGravity:
    """g(r) = mu / r^2 (Newton; any astronautics text).

    Parameters
    ----------
    gravitational_parameter : float
        mu [m^3 s^-2], taken from the planet.
    """

    gravitational_parameter: float
    parameters = {}

    @classmethod
    def from_planet(cls, planet, **params):
        return cls(planet.gravitational_parameter)

    def acceleration(self, radius):
        """Gravitational acceleration [m s^-2] at distance ``radius`` [m] from the centre."""
        return self.gravitational_parameter / (radius * radius)


@dataclass(frozen=True)
class ConstantGravity:
    """g = const, by default the planet's surface value mu/R^2."""

    value: float
    parameters = {"acceleration": Param("m/s^2", default=None, positive=True,
                                        doc="gravitational acceleration; default mu/R^2")}

    @classmethod
    def from_planet(cls, planet, acceleration=None):
        return cls(planet.surface_gravity if acceleration is None else float(acceleration))

    def acceleration(self, radius):
        return 0.0 * radius + self.value


#: gravity models by the name used in problem files
GRAVITY_MODELS = {"inverse_square": InverseSquareGravity, "constant": ConstantGravity}
