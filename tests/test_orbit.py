"""Orbital elements from position and velocity, and launch azimuths.

Oracles: the astronomy library ``skyfield`` (a test extra; its
``elementslib.OsculatingElements``) for the elements of random states; the launch
azimuth sin(Az) = cos(i)/cos(latitude) and its rotating-planet correction
tan(Az_rot) = (v sin Az - v_eq cos lat)/(v cos Az) (Vallado, *Fundamentals of
Astrodynamics and Applications*, section 6.4; Curtis, *Orbital Mechanics for Engineering
Students*, section 4.x "launch azimuth", from memory).
"""

from __future__ import annotations

import math

import casadi as ca
import numpy as np
import pytest
from skyfield.api import load
from skyfield.elementslib import OsculatingElements
from skyfield.units import Distance, Velocity

from ascentplan.constants import PLANETS
from ascentplan.models import orbit

MU = PLANETS["earth"]["gravitational_parameter"]
R = PLANETS["earth"]["radius"]


def _skyfield(r, v):
    t = load.timescale(builtin=True).tt_jd(2451545.0)
    return OsculatingElements(Distance(m=r), Velocity(km_per_s=v / 1e3), t, MU / 1e9)


def _angle_difference(a, b):
    return abs((a - b + math.pi) % (2 * math.pi) - math.pi)


def test_elements_against_skyfield_over_random_states():
    """200 random bound states (low orbits to highly elliptical, any inclination):
    every element agrees with skyfield's osculating elements."""
    rng = np.random.default_rng(11)
    checked = 0
    while checked < 200:
        r = rng.normal(size=3)
        r *= rng.uniform(R + 150e3, 8 * R) / np.linalg.norm(r)
        v = rng.normal(size=3)
        v *= rng.uniform(0.3, 1.35) * math.sqrt(MU / np.linalg.norm(r)) / np.linalg.norm(v)
        ours = orbit.elements(r, v, MU)
        if not ours["eccentricity"] < 0.95 or ours["eccentricity"] < 1e-3:
            continue
        ref = _skyfield(r, v)
        assert ours["semi_major_axis"] == pytest.approx(ref.semi_major_axis.m, rel=1e-10)
        assert ours["eccentricity"] == pytest.approx(ref.eccentricity, rel=1e-9)
        assert ours["inclination"] == pytest.approx(ref.inclination.radians, abs=1e-10)
        for ours_name, ref_angle in (("ascending_node", ref.longitude_of_ascending_node),
                                     ("argument_of_perigee", ref.argument_of_periapsis),
                                     ("true_anomaly", ref.true_anomaly)):
            assert _angle_difference(ours[ours_name], ref_angle.radians) < 1e-8, ours_name
        assert ours["perigee_radius"] == pytest.approx(ref.periapsis_distance.m, rel=1e-10)
        assert ours["apogee_radius"] == pytest.approx(ref.apoapsis_distance.m, rel=1e-9)
        checked += 1


def test_elements_vectorised_equal_pointwise():
    rng = np.random.default_rng(2)
    r = rng.normal(size=(3, 20)) * 7e6
    v = rng.normal(size=(3, 20)) * 4e3
    many = orbit.elements(r, v, MU)
    for k in range(20):
        one = orbit.elements(r[:, k], v[:, k], MU)
        for name, value in one.items():
            assert many[name][k] == pytest.approx(value, rel=1e-12, abs=1e-12)


def test_circular_equatorial_orbit_elements():
    """A circular equatorial orbit: e = 0, i = 0, a = r (Kepler; common practice)."""
    r0 = R + 300e3
    el = orbit.elements(np.array([r0, 0, 0]), np.array([0, math.sqrt(MU / r0), 0]), MU)
    assert el["eccentricity"] < 1e-12
    assert el["inclination"] == pytest.approx(0.0, abs=1e-12)
    assert el["semi_major_axis"] == pytest.approx(r0, rel=1e-12)


def test_vector_quantities_on_casadi_equal_numpy():
    x = ca.SX.sym("x", 6)
    r, v = [x[i] for i in range(3)], [x[i] for i in range(3, 6)]
    fn = ca.Function("e", [x], [ca.vertcat(*orbit.eccentricity_vector(r, v, MU),
                                            *orbit.angular_momentum(r, v))])
    state = np.array([7e6, 1e6, -2e6, -500.0, 7200.0, 1800.0])
    ref = np.concatenate([orbit.eccentricity_vector(state[:3], state[3:], MU),
                          orbit.angular_momentum(state[:3], state[3:])])
    assert np.array(fn(state)).ravel() == pytest.approx(ref, rel=1e-13)


@pytest.mark.parametrize("inclination_deg, latitude_deg, azimuth_deg", [
    # computed from sin(Az) = cos(i)/cos(lat) (Vallado section 6.4)
    (28.5, 28.5, 90.0),
    (51.6, 45.6, 62.5957),
    (90.0, 35.0, 0.0),
    (98.0, 34.0, -9.6642),
])
def test_inertial_launch_azimuth(inclination_deg, latitude_deg, azimuth_deg):
    az = orbit.inertial_azimuth(math.radians(inclination_deg), math.radians(latitude_deg))
    assert math.degrees(az) == pytest.approx(azimuth_deg, abs=1e-4)
    # a great circle from the site at that azimuth has that inclination:
    # cos(i) = cos(lat) sin(Az) (spherical trigonometry, Vallado eq. 6-19)
    assert math.cos(math.radians(latitude_deg)) * math.sin(az) == pytest.approx(
        math.cos(math.radians(inclination_deg)), abs=1e-12)


def test_rotating_launch_azimuth():
    """Vallado section 6.4: with the pad moving east at v_eq cos(lat), flying the rotating
    azimuth adds a velocity that, with the pad's, is the inertial velocity v at the
    inertial azimuth; for i = 51.6 deg from 45.6 deg at 7.8 km/s and 465.1 m/s at the
    equator it is 61.45 deg (computed from the formula). Independently, the inertial
    velocity it gives has the target inclination (orbit.elements)."""
    lat, inc = math.radians(45.6), math.radians(51.6)
    v_orbit, v_pad = 7800.0, 465.1 * math.cos(lat)
    az = orbit.rotating_azimuth(inc, lat, v_orbit, v_pad)
    assert math.degrees(az) == pytest.approx(61.4533, abs=1e-3)
    az_i = orbit.inertial_azimuth(inc, lat)
    added = math.hypot(v_orbit * math.sin(az_i) - v_pad, v_orbit * math.cos(az_i))
    up = np.array([math.cos(lat), 0.0, math.sin(lat)])
    east = np.array([0.0, 1.0, 0.0])
    north = np.cross(up, east)
    v = v_pad * east + added * (math.sin(az) * east + math.cos(az) * north)
    assert np.linalg.norm(v) == pytest.approx(v_orbit, rel=1e-12)
    el = orbit.elements((R + 200e3) * up, v, MU)
    assert el["inclination"] == pytest.approx(inc, abs=1e-12)
    # the southerly branch flies the descending pass of the same inclination
    south = orbit.rotating_azimuth(inc, lat, v_orbit, v_pad, southerly=True)
    v = v_pad * east + added * (math.sin(south) * east + math.cos(south) * north)
    assert orbit.elements((R + 200e3) * up, v, MU)["inclination"] == pytest.approx(inc,
                                                                                   abs=1e-12)


def test_inclination_below_latitude_has_no_direct_azimuth():
    with pytest.raises(ValueError, match="inclination 20 deg cannot be flown directly "
                                         "from latitude 35 deg"):
        orbit.inertial_azimuth(math.radians(20.0), math.radians(35.0))
