"""Three-dimensional point-mass flight over an oblate, rotating planet.

State x = [r_x, r_y, r_z, v_x, v_y, v_z, m]: inertial Cartesian position and velocity in
the launch frame (fixed at liftoff: z along the spin axis, x in the equatorial plane
towards the launch site's meridian at liftoff), and mass. Controls u = [throttle, pitch,
heading]: the thrust direction

    d = sin(pitch) U + cos(pitch) (sin(heading) E + cos(heading) N)

with U = r/|r| the local (geocentric) vertical, E = z x U / |z x U| east and N = U x E
north; heading is measured from north towards east (an azimuth). The equations:

    r' = v,   v' = (F d - D w/|w|)/m + g(r),   m' = -eta F_vac / c,

with w = v - omega z x r the velocity relative to the co-rotating atmosphere and g the
gravity model's vector field (point mass, or with J2). Altitude is geodetic above the
planet's ellipsoid (:mod:`ascentplan.models.geodesy`), so the atmosphere, the limits and
the reports see the height a person on the ground would quote.

Why Cartesian inertial states: they are smooth everywhere (no singularity at the poles,
which polar and retrograde ascents approach, nor at zero speed on the pad), J2 and the
orbit's angular-momentum and eccentricity vectors are polynomial in them, and every
component scales by one number (the planet radius or the circular speed), which keeps
the NLP well conditioned; see DEVELOPERS.md for the measurement.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ascentplan import _math as m_
from ascentplan.models import geodesy, orbit
from ascentplan.models.dynamics import (
    ATTITUDE_LOAD_COLUMNS,
    STEERED_COLUMNS,
    DynamicsKind,
    _stack,
)

_DEG = 180.0 / np.pi
#: softening of norms that may vanish (zero air speed on the pad) [m/s] or [m]
_EPS = 1e-8
#: softening of the total angle of attack at zero [rad]: alpha reads at most this much
#: high (at zero), and eps^2 / (2 alpha) high elsewhere (under 0.01 deg above 1.2 deg)
_ALPHA_EPS = 2e-3


def _frame(r):
    """Unit vectors up, east and north at position ``r`` (lists of three components)."""
    radius = m_.sqrt(r[0] * r[0] + r[1] * r[1] + r[2] * r[2])
    up = [c / radius for c in r]
    p = m_.smooth_norm(r[0], r[1], eps=1e-3)
    east = [-r[1] / p, r[0] / p, 0.0 * r[2]]
    north = [up[1] * east[2] - up[2] * east[1], up[2] * east[0] - up[0] * east[2],
             up[0] * east[1] - up[1] * east[0]]
    return radius, up, east, north


def _dot(a, b):
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def _cross(a, b):
    return [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]


@dataclass(frozen=True)
class ThreeDimensional(DynamicsKind):
    """Flight in three dimensions over a rotating, oblate planet; see the module docstring.

    State (position_x, position_y, position_z, velocity_x, velocity_y, velocity_z, mass),
    controls (throttle, pitch, heading): pitch above the local horizontal, heading from
    north towards east [rad].
    """

    name: ClassVar[str] = "three_dimensional"
    state_names: ClassVar[tuple[str, ...]] = (
        "position_x", "position_y", "position_z", "velocity_x", "velocity_y", "velocity_z",
        "mass")
    control_names: ClassVar[tuple[str, ...]] = ("throttle", "pitch", "heading")
    spatial: ClassVar[bool] = True
    extra_quantities: ClassVar[tuple[str, ...]] = (
        "angle_of_attack", "q_alpha", "pitch", "heading", "latitude")
    description: ClassVar[str] = ("three-dimensional flight over a rotating, oblate planet: "
                                  "inertial position and velocity, mass; throttle, pitch, "
                                  "heading")
    trajectory_columns: ClassVar[tuple] = STEERED_COLUMNS + (
        ("heading_deg", "control", "heading", _DEG),
        ("latitude_deg", "quantity", "latitude", _DEG),
        ("position_x_m", "state", "position_x", 1.0),
        ("position_y_m", "state", "position_y", 1.0),
        ("position_z_m", "state", "position_z", 1.0),
        ("velocity_x_m_s", "state", "velocity_x", 1.0),
        ("velocity_y_m_s", "state", "velocity_y", 1.0),
        ("velocity_z_m_s", "state", "velocity_z", 1.0),
    )
    extra_trajectory_columns: ClassVar[tuple] = ATTITUDE_LOAD_COLUMNS

    # -- vectors ----------------------------------------------------------------------
    def position_velocity(self, x) -> tuple[list, list]:
        """Inertial position [m] and velocity [m/s] in the launch frame."""
        return [x[0], x[1], x[2]], [x[3], x[4], x[5]]

    def radius(self, x, planet):
        return m_.sqrt(x[0] * x[0] + x[1] * x[1] + x[2] * x[2])

    def altitude(self, x, planet):
        return geodesy.geodetic_altitude(x[0], x[1], x[2], planet.radius, planet.flattening)

    def radial_speed(self, x):
        r, v = self.position_velocity(x)
        return _dot(r, v) / m_.sqrt(_dot(r, r))

    def horizontal_speed(self, x):
        r, v = self.position_velocity(x)
        h = _cross(r, v)
        return m_.smooth_norm(*h, eps=_EPS) / m_.sqrt(_dot(r, r))

    def speed(self, x):
        return m_.smooth_norm(x[3], x[4], x[5], eps=_EPS)

    def specific_energy(self, x, planet):
        return 0.5 * (x[3] * x[3] + x[4] * x[4] + x[5] * x[5]) \
            - planet.gravitational_parameter / self.radius(x, planet)

    def air_velocity(self, x, omega) -> list:
        """Velocity relative to the atmosphere co-rotating at ``omega`` [rad/s] [m/s]."""
        return [x[3] + omega * x[1], x[4] - omega * x[0], x[5]]

    def latitude(self, x, planet):
        """Geodetic latitude [rad]."""
        return geodesy.geodetic_latitude_altitude(x[0], x[1], x[2], planet.radius,
                                                  planet.flattening)[0]

    def longitude(self, t, x, planet, site_longitude: float = 0.0):
        """Longitude east on the rotating planet [rad] at time ``t`` [s] from liftoff,
        wrapped to (-pi, pi] (numbers only: the ground track)."""
        inertial = np.arctan2(np.asarray(x[1], float), np.asarray(x[0], float))
        lon = site_longitude + inertial - planet.rotation_rate * np.asarray(t, float)
        return np.angle(np.exp(1j * lon))

    # -- the pad and the scales ---------------------------------------------------------
    def initial_state(self, problem) -> np.ndarray:
        planet, launch = problem.planet, problem.launch
        r = geodesy.site_position(launch.latitude, launch.altitude, planet.radius,
                                  planet.flattening)
        v = np.array([-planet.rotation_rate * r[1], planet.rotation_rate * r[0], 0.0])
        return np.concatenate([r, v, [problem.vehicle.liftoff_mass]])

    def state_scales(self, states, problem):
        # positions by the planet radius, speeds by the circular speed at the surface: every
        # component of a state is then of order one, wherever the flight goes
        planet = problem.planet
        v_ref = float(np.sqrt(planet.gravitational_parameter / planet.radius))
        return ([0.0] * 7, [planet.radius] * 3 + [v_ref] * 3 + [problem.vehicle.liftoff_mass])

    # -- the equations ------------------------------------------------------------------
    def _kinematics(self, x, model):
        planet = model.planet
        r, v = self.position_velocity(x)
        radius, up, east, north = _frame(r)
        w = self.air_velocity(x, planet.rotation_rate)
        w_radial = _dot(w, up)
        w_horizontal = m_.smooth_norm(*_cross(up, w), eps=_EPS)
        vr = _dot(v, up)
        vh = m_.smooth_norm(*_cross(up, v), eps=_EPS)
        lat, alt = geodesy.geodetic_latitude_altitude(r[0], r[1], r[2], planet.radius,
                                                      planet.flattening)
        return dict(radius=radius, altitude=alt, radial_speed=vr, horizontal_speed=vh,
                    speed=m_.smooth_norm(*v, eps=_EPS), flight_path_angle=m_.atan2(vr, vh),
                    relative_radial_speed=w_radial, relative_horizontal_speed=w_horizontal,
                    latitude=lat, up=up, east=east, north=north, air_velocity=w, velocity=v,
                    position=r, gravity_vector=model.gravity.acceleration_vector(r))

    def _steering(self, u, kin, f):
        pitch, heading = u[1], u[2]
        up, east, north = kin["up"], kin["east"], kin["north"]
        cp = m_.cos(pitch)
        ce, cn = cp * m_.sin(heading), cp * m_.cos(heading)
        sp = m_.sin(pitch)
        d = [sp * up[i] + ce * east[i] + cn * north[i] for i in range(3)]
        w, v = kin["air_velocity"], kin["velocity"]
        # total angle of attack: between the thrust axis and the air-relative velocity,
        # softened at zero by _ALPHA_EPS (alpha ~ sqrt(alpha^2 + eps^2)) so that its
        # curvature stays bounded where the optimum flies along the air (a bare norm of
        # d x w has a kink there, which cost IPOPT an inertia correction at every
        # iteration, measured); the softening only raises alpha, so a q-alpha limit errs
        # on the safe side
        w2 = _dot(w, w)
        alpha = m_.atan2(m_.sqrt(_dot(*[_cross(d, w)] * 2) + _ALPHA_EPS ** 2 * (w2 + 1.0)),
                         _dot(d, w))
        speed = m_.smooth_norm(*v, eps=1e-6)
        d_over_w = f["drag"] / f["relative_speed"]
        # the magnitude of the whole field (J2 included), not only its central term
        gravity = m_.smooth_norm(*kin["gravity_vector"], eps=0.0)
        return dict(thrust_direction=d, angle_of_attack=alpha, gravity=gravity,
                    q_alpha=f["dynamic_pressure"] * alpha, pitch=pitch, heading=heading,
                    latitude=kin["latitude"],
                    thrust_along_velocity=f["thrust"] * _dot(d, v) / speed,
                    # what gravity takes from the speed: the whole field (J2 included)
                    # resolved along the inertial velocity, for the loss budget
                    gravity_along_velocity=-_dot(kin["gravity_vector"], v) / speed,
                    drag_along_velocity=d_over_w * _dot(w, v) / speed)

    def flight_quantities(self, x, u, model, prop) -> dict:
        f = super().flight_quantities(x, u, model, prop)
        # vectors are for the equations only: the quantities are scalars
        for key in ("thrust_direction", "gravity_vector", "drag_radial", "drag_horizontal"):
            f.pop(key, None)
        return f

    def _accelerations(self, x, u, kin, f):
        d, w, g = f["thrust_direction"], kin["air_velocity"], kin["gravity_vector"]
        mass = x[6]
        d_over_w = f["drag"] / f["relative_speed"]
        acc = [(f["thrust"] * d[i] - d_over_w * w[i]) / mass + g[i] for i in range(3)]
        return _stack([x[3], x[4], x[5], acc[0], acc[1], acc[2], -f["mass_flow"]])

    def air_steering(self, x, model) -> list:
        """Pitch and heading along the air-relative velocity (zero angle of attack) [rad]."""
        kin = self._kinematics(x, model)
        w = kin["air_velocity"]
        pitch = m_.atan2(kin["relative_radial_speed"], kin["relative_horizontal_speed"])
        heading = m_.atan2(_dot(w, kin["east"]), _dot(w, kin["north"]))
        return [pitch, heading]

    def air_pitch(self, x, model):
        return self.air_steering(x, model)[0]

    # -- the launch plane (default steering and first guess) -----------------------------
    def launch_azimuth(self, problem) -> float:
        """Launch azimuth on the ground [rad from north towards east].

        As given (``launch.azimuth``); else towards the target inclination, corrected for
        the pad's speed with the planet's rotation (:func:`orbit.rotating_azimuth`, the
        branch of ``launch.direction``), aimed as near as the site allows when the
        inclination is below the site's latitude; else due east.
        """
        launch, target, planet = problem.launch, problem.target, problem.planet
        if launch.azimuth is not None:
            return float(launch.azimuth)
        if target.inclination is None:
            return 0.5 * np.pi
        lat = geodesy.geocentric_latitude(launch.latitude, launch.altitude, planet.radius,
                                          planet.flattening)
        # the nearest reachable inclination: a dog-leg flies the rest
        inc = float(np.clip(target.inclination, abs(lat), np.pi - abs(lat)))
        r_site = np.linalg.norm(self.initial_state(problem)[:3])
        return orbit.rotating_azimuth(inc, lat, target_speed(problem),
                                      planet.rotation_rate * r_site * np.cos(lat),
                                      southerly=launch.direction == "southerly")

    def launch_plane_normal(self, problem) -> np.ndarray:
        """Unit normal of the plane the default steering flies in (inertial frame).

        The target plane when the inclination and the node are given; else the plane
        through the site that holds the inertial velocity at the launch azimuth.
        """
        target = problem.target
        if target.inclination is not None and target.ascending_node is not None:
            i, node = target.inclination, target.ascending_node
            return np.array([np.sin(i) * np.sin(node), -np.sin(i) * np.cos(node), np.cos(i)])
        x0 = self.initial_state(problem)
        _, up, east, north = _frame(list(x0[:3]))
        up, east, north = (np.asarray(a, dtype=float) for a in (up, east, north))
        az = self.launch_azimuth(problem)
        # the velocity to add at the ground azimuth, plus the pad's own
        added = target_speed(problem) * (np.sin(az) * east + np.cos(az) * north)
        velocity = added + np.asarray(x0[3:6])
        normal = np.cross(up, velocity)
        return normal / np.linalg.norm(normal)

    def plane_heading(self, x, normal) -> np.ndarray:
        """Heading [rad] of the direction of motion in the plane of unit ``normal``
        (normal x up) at states ``x`` (numbers)."""
        r = [np.asarray(x[i], dtype=float) for i in range(3)]
        _, up, east, north = _frame(r)
        direction = _cross(list(normal), up)
        return np.arctan2(_dot(direction, east), _dot(direction, north))


def target_speed(problem) -> float:
    """Inertial speed at injection into the target orbit [m/s] (its perigee speed; the
    circular speed at the target altitude, or at 200 km, without an orbit target)."""
    from ascentplan.models.orbit import target_radii

    mu = problem.planet.gravitational_parameter
    radii = target_radii(problem.target, problem.planet)
    if radii is None:
        altitude = problem.target.altitude if problem.target.altitude is not None else 200e3
        r = problem.planet.radius + altitude
        return float(np.sqrt(mu / r))
    rp, ra = radii
    return float(np.sqrt(mu * (2.0 / rp - 2.0 / (rp + ra))))
