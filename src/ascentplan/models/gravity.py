"""Gravitational acceleration models: inverse-square (default), constant, and J2 (oblate).

Each model has ``acceleration(radius)``, the magnitude of the acceleration towards the
planet's centre, and ``acceleration_vector(position)``, the acceleration vector at a
planet-centred position (three components, z along the spin axis), used by the
three-dimensional kind; both work on floats, numpy arrays and CasADi symbols alike. A
constructor ``from_planet(planet, **parameters)`` takes the planet of the problem and the
model's declared ``parameters`` (SI floats). ``needs_position`` says whether the model
needs the position in three dimensions (the J2 field depends on latitude), which only a
three-dimensional dynamics kind supplies.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ascentplan import _math as m_
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

    needs_position = False

    def acceleration(self, radius):
        """Gravitational acceleration [m s^-2] at distance ``radius`` [m] from the centre."""
        return self.gravitational_parameter / (radius * radius)

    def acceleration_vector(self, position) -> list:
        """Acceleration -mu r/|r|^3 [m s^-2] at a planet-centred ``position`` [m]."""
        r2 = position[0] ** 2 + position[1] ** 2 + position[2] ** 2
        k = -self.gravitational_parameter / (r2 * m_.sqrt(r2))
        return [k * c for c in position]


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

    needs_position = False

    def acceleration(self, radius):
        """Gravitational acceleration [m s^-2], the same at every ``radius`` [m]."""
        return 0.0 * radius + self.value

    def acceleration_vector(self, position) -> list:
        """Acceleration of magnitude ``value`` towards the centre [m s^-2]."""
        r = m_.sqrt(position[0] ** 2 + position[1] ** 2 + position[2] ** 2)
        return [-self.value * c / r for c in position]


@dataclass(frozen=True)
class ZonalJ2Gravity:
    """Point mass plus the J2 zonal harmonic of an oblate planet.

    With r = |r| and z along the spin axis (Vallado, *Fundamentals of Astrodynamics and
    Applications*, eq. 8-30; Curtis, *Orbital Mechanics for Engineering Students*,
    eq. 12.30):

        a_x = -mu x / r^3 [1 + 3/2 J2 (R/r)^2 (1 - 5 z^2/r^2)],  a_y likewise with y,
        a_z = -mu z / r^3 [1 + 3/2 J2 (R/r)^2 (3 - 5 z^2/r^2)].

    Attributes
    ----------
    gravitational_parameter : float
        mu [m^3 s^-2].
    radius : float
        Reference (equatorial) radius R of the harmonic [m].
    j2 : float
        Second zonal harmonic coefficient J2 [-] (1.0826e-3 for the Earth).
    """

    gravitational_parameter: float
    radius: float
    j2: float
    parameters = {"j2": Param("", default=None, doc="second zonal harmonic; default the "
                                                     "planet's")}
    needs_position = True

    def __post_init__(self):
        if not np.isfinite(self.j2) or not 0.0 <= self.j2 < 0.1:
            raise ValueError(f"j2: must be from 0 to 0.1, got {self.j2!r}")

    @classmethod
    def from_planet(cls, planet, j2=None):
        """The J2 field of ``planet``, with its ``j2`` unless one is given."""
        value = float(getattr(planet, "j2", 0.0) if j2 is None else j2)
        return cls(float(planet.gravitational_parameter), float(planet.radius), value)

    def acceleration(self, radius):
        """The central term mu/r^2 [m s^-2]: what a radius alone says (the thrust-to-weight
        check of the pad); the field itself is :meth:`acceleration_vector`."""
        return self.gravitational_parameter / (radius * radius)

    def acceleration_vector(self, position) -> list:
        """The J2 acceleration vector [m s^-2] at a planet-centred ``position`` [m]."""
        x, y, z = position[0], position[1], position[2]
        r2 = x * x + y * y + z * z
        k = -self.gravitational_parameter / (r2 * m_.sqrt(r2))
        c = 1.5 * self.j2 * self.radius * self.radius / r2
        zz = z * z / r2
        side = k * (1.0 + c * (1.0 - 5.0 * zz))
        return [side * x, side * y, k * (1.0 + c * (3.0 - 5.0 * zz)) * z]


#: gravity models by the name used in problem files
GRAVITY_MODELS = {"inverse_square": InverseSquareGravity, "constant": ConstantGravity,
                  "j2": ZonalJ2Gravity}
