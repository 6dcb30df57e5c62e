"""Geodetic latitude and altitude, site positions and the J2 gravity field.

Oracles: the geodesy library ``pymap3d`` (a test extra) for conversions between
planet-centred and geodetic coordinates on the WGS 84 ellipsoid; the J2 acceleration
against the gradient of its published potential and the textbook values at the equator
and the pole (Vallado, *Fundamentals of Astrodynamics and Applications*, eqs. 8-18 and
8-30; Curtis, *Orbital Mechanics for Engineering Students*, eq. 12.30).
"""

from __future__ import annotations

import casadi as ca
import numpy as np
import pymap3d
import pytest

from ascentplan.constants import PLANETS
from ascentplan.models import geodesy
from ascentplan.models.gravity import InverseSquareGravity, ZonalJ2Gravity
from ascentplan.problem.model import Planet

EARTH = Planet("earth", **PLANETS["earth"])
A, F = EARTH.radius, EARTH.flattening


def test_wgs84_constants_of_earth():
    # WGS 84 (NIMA TR8350.2, 2000): a = 6378137 m, 1/f = 298.257223563; the same
    # ellipsoid as pymap3d's default
    ell = pymap3d.Ellipsoid.from_name("wgs84")
    assert A == ell.semimajor_axis
    assert A * (1 - F) == pytest.approx(ell.semiminor_axis, abs=1e-6)


def test_geodetic_altitude_against_pymap3d_from_ground_to_beyond_geostationary():
    """Random positions from the ground to 40,000 km: altitude within a millimetre of
    pymap3d's ecef2geodetic (WGS 84); latitude within 1e-6 deg below 1,000 km (ascent)
    and 2e-4 deg (0.7 arcsec, two Bowring steps) above."""
    rng = np.random.default_rng(7)
    lat = rng.uniform(-90.0, 90.0, 500)
    lon = rng.uniform(-180.0, 180.0, 500)
    alt = 10.0 ** rng.uniform(0.0, 7.6, 500)
    x, y, z = pymap3d.geodetic2ecef(lat, lon, alt)
    phi, h = geodesy.geodetic_latitude_altitude(x, y, z, A, F)
    ref_lat, _, ref_alt = pymap3d.ecef2geodetic(x, y, z)
    assert np.max(np.abs(h - ref_alt)) < 1e-3
    error = np.abs(np.degrees(phi) - ref_lat)
    assert np.max(error[alt < 1e6]) < 1e-6
    assert np.max(error) < 2e-4


def test_site_position_against_pymap3d():
    """geodetic2ecef of pymap3d (WGS 84) to a micrometre."""
    for lat, lon, alt in ((0.0, 0.0, 0.0), (34.5, -20.0, 120.0), (-78.0, 140.0, 2500.0),
                          (90.0, 0.0, 10.0)):
        ours = geodesy.site_position(np.radians(lat), alt, A, F, np.radians(lon))
        assert ours == pytest.approx(np.array(pymap3d.geodetic2ecef(lat, lon, alt)), abs=1e-6)


def test_sphere_reduces_to_radius_minus_r():
    """With no flattening the geodetic altitude is |r| - R and the latitude geocentric."""
    r = np.array([4e6, -3e6, 5.1e6])
    phi, h = geodesy.geodetic_latitude_altitude(*r, A, 0.0)
    assert h == pytest.approx(np.linalg.norm(r) - A, abs=1e-6)
    assert phi == pytest.approx(np.arcsin(r[2] / np.linalg.norm(r)), abs=1e-12)


def test_geodetic_altitude_on_casadi_equals_numpy_and_is_smooth_on_the_axis():
    x = ca.SX.sym("x", 3)
    fn = ca.Function("h", [x], [geodesy.geodetic_altitude(x[0], x[1], x[2], A, F)])
    grad = ca.Function("g", [x], [ca.jacobian(fn(x), x)])
    for point in ([6.5e6, 1e5, 2e6], [0.0, 0.0, 6.4e6], [1e3, -2e3, -6.36e6]):
        p = np.array(point)
        assert float(fn(p)) == pytest.approx(float(geodesy.geodetic_altitude(*p, A, F)),
                                             abs=1e-6)
        assert np.all(np.isfinite(np.array(grad(p))))


def _potential_gradient(model, r):
    """-grad U of the J2 potential U = -mu/r [1 - J2 (R/r)^2 P2(z/r)] by CasADi
    (Vallado eq. 8-18), an independent derivation of the acceleration."""
    x = ca.SX.sym("x", 3)
    rn = ca.norm_2(x)
    s = x[2] / rn
    u = -model.gravitational_parameter / rn * (
        1 - model.j2 * (model.radius / rn) ** 2 * 0.5 * (3 * s * s - 1))
    return -np.array(ca.Function("g", [x], [ca.gradient(u, x)])(r)).ravel()


def test_j2_acceleration_is_the_gradient_of_its_potential():
    model = ZonalJ2Gravity.from_planet(EARTH)
    rng = np.random.default_rng(3)
    for _ in range(50):
        r = rng.normal(size=3)
        r *= rng.uniform(A, 6 * A) / np.linalg.norm(r)
        ours = np.array(model.acceleration_vector(r))
        assert ours == pytest.approx(_potential_gradient(model, r), rel=1e-12, abs=1e-15)


def test_j2_at_equator_and_pole_against_closed_form():
    """g_eq = mu/r^2 (1 + 3/2 J2 (R/r)^2); g_pole = mu/r^2 (1 - 3 J2 (R/r)^2)
    (Curtis eq. 12.30 evaluated at z = 0 and at x = y = 0)."""
    model = ZonalJ2Gravity.from_planet(EARTH)
    mu, j2 = EARTH.gravitational_parameter, EARTH.j2
    r = 7.0e6
    g_eq = -np.array(model.acceleration_vector([r, 0.0, 0.0]))[0]
    g_pole = -np.array(model.acceleration_vector([0.0, 0.0, r]))[2]
    assert g_eq == pytest.approx(mu / r**2 * (1 + 1.5 * j2 * (A / r) ** 2), rel=1e-14)
    assert g_pole == pytest.approx(mu / r**2 * (1 - 3 * j2 * (A / r) ** 2), rel=1e-14)


def test_inverse_square_vector_is_the_point_mass_field():
    model = InverseSquareGravity(EARTH.gravitational_parameter)
    r = np.array([3e6, 4e6, 5e6])
    expected = -EARTH.gravitational_parameter * r / np.linalg.norm(r) ** 3
    assert np.array(model.acceleration_vector(r)) == pytest.approx(expected, rel=1e-14)
