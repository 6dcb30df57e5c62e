"""Tests of the gravity models against Newton's law and standard gravity."""

import casadi as ca
import numpy as np
import pytest

from ascentplan.constants import G0, PLANETS
from ascentplan.models.gravity import GRAVITY_MODELS, ConstantGravity, InverseSquareGravity
from ascentplan.problem.model import Planet

EARTH = Planet(name="earth", **PLANETS["earth"])


def test_inverse_square_at_surface():
    model = InverseSquareGravity.from_planet(EARTH)
    surface = model.acceleration(EARTH.radius)
    # Newton: g = mu / R^2 with the WGS 84 radius and GM of the constants module
    assert surface == pytest.approx(3.986004418e14 / 6378137.0**2, rel=1e-15)
    # equatorial gravitation of a point mass is a little below standard gravity
    # 9.80665 m/s^2 (no rotation, no J2): within 0.3 % (common practice)
    assert surface == pytest.approx(G0, rel=3e-3)
    assert G0 == 9.80665  # CGPM 1901; USSA 1976


def test_inverse_square_scaling():
    model = InverseSquareGravity.from_planet(EARTH)
    radius = EARTH.radius * np.array([1.0, 2.0, 3.0, 10.0])
    ratio = model.acceleration(radius) / model.acceleration(EARTH.radius)
    assert ratio == pytest.approx(1.0 / np.array([1.0, 4.0, 9.0, 100.0]), rel=1e-14)  # 1/r^2
    # geostationary radius 42164 km: 0.2242 m/s^2 (from memory)
    assert model.acceleration(42164e3) == pytest.approx(0.2242, rel=1e-3)


def test_inverse_square_casadi_equals_numpy():
    model = InverseSquareGravity.from_planet(EARTH)
    r = ca.SX.sym("r")
    f = ca.Function("g", [r], [model.acceleration(r)])
    points = np.linspace(6.3e6, 8e6, 7)
    assert np.array(f.map(points.size)(points.reshape(1, -1))).ravel() == pytest.approx(
        model.acceleration(points), rel=1e-15)


def test_inverse_square_rejects_parameters_and_bad_planet():
    with pytest.raises(ValueError, match="inverse_square gravity takes no parameters"):
        InverseSquareGravity.from_planet(EARTH, acceleration=9.8)
    with pytest.raises(ValueError, match="^gravitational_parameter: must be > 0"):
        InverseSquareGravity(-1.0)


def test_constant_gravity():
    default = ConstantGravity.from_planet(EARTH)
    assert default.value == pytest.approx(EARTH.gravitational_parameter / EARTH.radius**2)
    given = ConstantGravity.from_planet(EARTH, acceleration=9.81)
    radius = np.array([EARTH.radius, 2 * EARTH.radius])
    assert given.acceleration(radius) == pytest.approx([9.81, 9.81], rel=0)
    assert given.acceleration(radius).shape == (2,)
    r = ca.SX.sym("r")
    assert float(ca.Function("g", [r], [given.acceleration(r)])(7e6)) == 9.81
    with pytest.raises(ValueError, match=r"^acceleration: must be >= 0 m/s\^2, got -1.0"):
        ConstantGravity.from_planet(EARTH, acceleration=-1.0)
    # zero gravity is allowed: the no-gravity limit of the rocket equation
    assert ConstantGravity(0.0).acceleration(7e6) == 0.0


@pytest.mark.parametrize("name", sorted(GRAVITY_MODELS))
def test_registry_contract(name):
    cls = GRAVITY_MODELS[name]
    kwargs = {key: p.default for key, p in cls.parameters.items()}
    model = cls.from_planet(EARTH, **kwargs)
    assert model.acceleration(EARTH.radius) == pytest.approx(EARTH.surface_gravity)
