"""Equations of motion of a variable-mass rocket: vertical (h, v, m) and planar polar.

One definition serves the NLP (CasADi symbols) and the forward integration (floats or
numpy arrays, which may carry a trailing axis of many points at once).

Vertical model, state x = [h, v, m], control u = [throttle]:

    h' = v,   v' = (F - D sgn v)/m - g(R + h),   m' = -eta F_vac / c

Planar model over a spherical planet, inertial polar coordinates, state
x = [r, theta, v_r, v_t, m], controls u = [throttle, pitch] with pitch measured from the
local horizontal:

    r' = v_r,  theta' = v_t / r,
    v_r' = (F sin(pitch) - D v_r/|w|)/m - g(r) + v_t^2 / r,
    v_t' = (F cos(pitch) - D w_t/|w|)/m - v_r v_t / r,
    m' = -eta F_vac / c,

where w = (v_r, v_t - omega r) is the velocity relative to the co-rotating atmosphere.
Thrust F = eta F_vac - p_ambient A_exit (the back-pressure term fades out smoothly at
zero throttle, where the engine is shut down), drag D = 1/2 rho C_D A_ref |w|^2.
(Any text on rocket dynamics in polar form, e.g. Curtis, Orbital Mechanics for
Engineering Students, chapter on rocket vehicle dynamics; Betts 2010, ch. 6.)
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import casadi as ca
import numpy as np

from ascentplan import _math as m_
from ascentplan.constants import G0

#: names of the state components of each model
STATE_NAMES = {
    "vertical": ("altitude", "vertical_speed", "mass"),
    "planar": ("radius", "range_angle", "radial_speed", "horizontal_speed", "mass"),
}
#: names of the control components of each model
CONTROL_NAMES = {"vertical": ("throttle",), "planar": ("throttle", "pitch")}


@dataclass(frozen=True)
class FlightModel:
    """The environment of a flight: planet, atmosphere, gravity, aerodynamics.

    ``rotation_rate`` is the planet rotation seen in the plane of flight,
    omega cos(latitude) [rad s^-1].
    """

    kind: str
    planet: Any
    atmosphere: Any
    gravity: Any
    aerodynamics: Any
    rotation_rate: float = 0.0

    @property
    def n_states(self) -> int:
        return len(STATE_NAMES[self.kind])

    @property
    def n_controls(self) -> int:
        return len(CONTROL_NAMES[self.kind])


@dataclass(frozen=True)
class Propulsion:
    """Engine data of one phase; fields may be CasADi symbols (stage-mass split).

    A coast phase has ``thrust_vacuum = 0``.
    """

    thrust_vacuum: Any
    exhaust_speed: Any
    exit_area: Any = 0.0


def flight_model(problem) -> FlightModel:
    """The :class:`FlightModel` of a :class:`~ascentplan.problem.Problem`."""
    omega = problem.planet.rotation_rate * float(np.cos(problem.launch.latitude))
    return FlightModel(problem.dynamics, problem.planet, problem.atmosphere,
                       problem.gravity, problem.aerodynamics, omega)


def propulsion(stage, powered: bool = True) -> Propulsion:
    """The :class:`Propulsion` of a stage, or of a coast when ``powered`` is False."""
    if not powered:
        return Propulsion(0.0, stage.exhaust_speed, 0.0)
    return Propulsion(stage.thrust_vacuum, stage.exhaust_speed, stage.nozzle_exit_area)


def _components(x, n):
    return [x[i] for i in range(n)]


def _stack(items):
    if m_.is_symbolic(*items):
        return ca.vertcat(*items)
    return np.stack(np.broadcast_arrays(*[np.asarray(i, dtype=float) for i in items]))


def flight_quantities(x, u, model: FlightModel, prop: Propulsion) -> dict:
    """Derived quantities at a state and control.

    Returns a dict with (SI units): ``altitude``, ``radius``, ``speed`` (inertial),
    ``relative_speed`` (air-relative), ``flight_path_angle`` (inertial, from local
    horizontal [rad]; planar only), ``density``, ``pressure``, ``temperature``,
    ``speed_of_sound``, ``mach``, ``dynamic_pressure``, ``drag_coefficient``, ``drag``,
    ``thrust`` (net of back-pressure), ``mass_flow``, ``gravity`` (magnitude),
    ``axial_acceleration`` ((F - D)/m [g0]), ``angle_of_attack`` [rad] and ``q_alpha``
    [Pa rad] (planar only), and the accelerations along the velocity needed by the
    loss budget.
    """
    planet = model.planet
    throttle = u[0]
    if model.kind == "vertical":
        h, v, mass = _components(x, 3)
        radius = planet.radius + h
        vr, vt, wt = v, 0.0 * v, 0.0 * v
    else:
        radius, _theta, vr, vt, mass = _components(x, 5)
        h = radius - planet.radius
        wt = vt - model.rotation_rate * radius
    atm = model.atmosphere.state(h)
    rel_speed = m_.smooth_norm(vr, wt, eps=1e-8)
    mach = rel_speed / atm.speed_of_sound
    q = 0.5 * atm.density * rel_speed * rel_speed
    aero = model.aerodynamics
    reynolds = None
    if getattr(aero.drag, "needs_reynolds", False):
        length = aero.reference_length
        reynolds = atm.density * rel_speed * length / atm.viscosity
    cd = aero.drag.drag_coefficient(mach, reynolds)
    drag = q * cd * aero.reference_area
    gross = throttle * prop.thrust_vacuum
    # the back-pressure loss p A_exit acts while the engine fires; the factor
    # gross/(gross + w) (w a millionth of full thrust) removes it smoothly at zero throttle,
    # where a shut-down engine exerts no thrust, and changes it by ~1e-6 otherwise
    firing = gross / (gross + 1e-6 * prop.thrust_vacuum + 1e-9)
    thrust = gross - atm.pressure * prop.exit_area * firing
    mass_flow = throttle * prop.thrust_vacuum / prop.exhaust_speed
    g = model.gravity.acceleration(radius)
    out = dict(
        altitude=h, radius=radius, relative_speed=rel_speed, density=atm.density,
        pressure=atm.pressure, temperature=atm.temperature,
        speed_of_sound=atm.speed_of_sound, mach=mach, dynamic_pressure=q,
        drag_coefficient=cd, drag=drag, thrust=thrust, mass_flow=mass_flow, gravity=g,
        axial_acceleration=(thrust - drag) / (mass * G0),
    )
    if model.kind == "vertical":
        out["speed"] = v
        # drag acts against the air-relative velocity: D sgn(v) written without a kink
        out["drag_vertical"] = drag * v / rel_speed
    else:
        pitch = u[1]
        speed = m_.smooth_norm(vr, vt, eps=1e-8)
        out["speed"] = speed
        out["flight_path_angle"] = m_.atan2(vr, vt)
        # angle between the thrust axis and the air-relative velocity
        cross = wt * m_.sin(pitch) - vr * m_.cos(pitch)
        dot = wt * m_.cos(pitch) + vr * m_.sin(pitch)
        alpha = m_.atan2(cross, dot + 1e-9)
        out["angle_of_attack"] = alpha
        out["q_alpha"] = q * alpha
        # drag per unit relative speed times components, divided without a singularity
        d_over_w = drag / rel_speed
        out["drag_radial"] = d_over_w * vr
        out["drag_horizontal"] = d_over_w * wt
        out["pitch"] = pitch
    return out


def rhs(t, x, u, params):
    """State derivative dx/dt.

    Parameters
    ----------
    t : float or symbol
        Time [s] (the models are autonomous; kept for the common signature).
    x : sequence
        State, see :data:`STATE_NAMES`.
    u : sequence
        Controls, see :data:`CONTROL_NAMES`; pitch [rad].
    params : tuple
        ``(FlightModel, Propulsion)``.

    Returns
    -------
    numpy array or CasADi column of the same length as ``x``.
    """
    model, prop = params
    f = flight_quantities(x, u, model, prop)
    if model.kind == "vertical":
        h, v, mass = _components(x, 3)
        dv = (f["thrust"] - f["drag_vertical"]) / mass - f["gravity"]
        return _stack([v, dv, -f["mass_flow"]])
    radius, _theta, vr, vt, mass = _components(x, 5)
    pitch = u[1]
    ar = (f["thrust"] * m_.sin(pitch) - f["drag_radial"]) / mass
    at = (f["thrust"] * m_.cos(pitch) - f["drag_horizontal"]) / mass
    return _stack([
        vr,
        vt / radius,
        ar - f["gravity"] + vt * vt / radius,
        at - vr * vt / radius,
        -f["mass_flow"],
    ])


def initial_state(problem) -> np.ndarray:
    """State on the pad at liftoff (at rest relative to the rotating surface)."""
    m0 = problem.vehicle.liftoff_mass
    if problem.dynamics == "vertical":
        return np.array([problem.launch.altitude, 0.0, m0])
    r0 = problem.planet.radius + problem.launch.altitude
    omega = problem.planet.rotation_rate * np.cos(problem.launch.latitude)
    return np.array([r0, 0.0, 0.0, omega * r0, m0])


def altitude_speed_fpa(x, kind: str, planet) -> tuple:
    """Altitude [m], inertial speed [m/s] and flight-path angle [rad] of a state."""
    if kind == "vertical":
        return x[0], x[1], m_.where(x[1] >= 0, 0.5 * np.pi, -0.5 * np.pi)
    r, _th, vr, vt = x[0], x[1], x[2], x[3]
    return r - planet.radius, m_.sqrt(vr * vr + vt * vt), m_.atan2(vr, vt)
