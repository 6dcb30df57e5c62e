"""Equations of motion of a variable-mass rocket, one class per dynamics kind in a registry.

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
from typing import Any, ClassVar

import casadi as ca
import numpy as np

from ascentplan import _math as m_
from ascentplan.constants import G0

_DEG = 180.0 / np.pi


def _stack(items):
    if m_.is_symbolic(*items):
        return ca.vertcat(*items)
    return np.stack(np.broadcast_arrays(*[np.asarray(i, dtype=float) for i in items]))


@dataclass(frozen=True)
class DynamicsKind:
    """Contract of a kind of equations of motion; one subclass per entry of :data:`DYNAMICS`.

    A kind names its state and control components (mass always last among the states,
    throttle always first among the controls) and gives, for a state ``x`` (float,
    numpy array with a trailing axis of points, or CasADi symbol): :meth:`altitude`,
    :meth:`radius`, :meth:`speed` (inertial), :meth:`radial_speed`,
    :meth:`flight_path_angle`, and the air-relative velocity. From these the shared
    :meth:`flight_quantities` and :meth:`rhs` follow; a kind supplies only its
    kinematics (:meth:`_kinematics`) and its accelerations (:meth:`_accelerations`).
    Callers outside this module address states by name (:meth:`index`,
    :meth:`component`), never by number.

    Kinds hold no data (the environment is a :class:`FlightModel`), so equal kinds
    compare and hash equal across processes, as the NLP and replay caches need.
    """

    name: ClassVar[str] = ""
    state_names: ClassVar[tuple[str, ...]] = ()
    control_names: ClassVar[tuple[str, ...]] = ("throttle",)
    #: flight quantities beyond the common set (see :meth:`flight_quantities`)
    extra_quantities: ClassVar[tuple[str, ...]] = ()
    description: ClassVar[str] = ""
    #: trajectory-file columns of this kind: (header, source, name, factor), ``source``
    #: one of "state", "control", "quantity"; the value written is value * factor
    trajectory_columns: ClassVar[tuple] = ()
    #: columns after the common air-data columns (quantities only this kind computes)
    extra_trajectory_columns: ClassVar[tuple] = ()
    #: whether the flight leaves a plane: launch azimuth, inclination, node and a gravity
    #: field that depends on latitude (J2) mean something only then
    spatial: ClassVar[bool] = False

    # -- layout ----------------------------------------------------------------------
    @property
    def n_states(self) -> int:
        return len(self.state_names)

    @property
    def n_controls(self) -> int:
        return len(self.control_names)

    def index(self, name: str) -> int:
        """Position of the state component ``name`` (e.g. ``"mass"``)."""
        return self.state_names.index(name)

    def control_index(self, name: str) -> int:
        """Position of the control component ``name`` (e.g. ``"pitch"``)."""
        return self.control_names.index(name)

    def has_control(self, name: str) -> bool:
        return name in self.control_names

    @property
    def steered(self) -> bool:
        """Whether the thrust direction is a control (a pitch), not fixed along the vertical."""
        return self.has_control("pitch")

    def provides(self, quantity: str) -> bool:
        """Whether :meth:`flight_quantities` of this kind computes ``quantity``."""
        return quantity in COMMON_QUANTITIES or quantity in self.extra_quantities

    def component(self, x, name: str):
        """State component ``name`` of ``x`` (rows of an array of states)."""
        return x[self.index(name)]

    def mass(self, x):
        """Vehicle mass [kg] of a state."""
        return x[self.index("mass")]

    # -- derived kinematics (overridden per kind) ----------------------------------------
    def radius(self, x, planet):
        """Distance from the planet's centre [m]."""
        raise NotImplementedError

    def altitude(self, x, planet):
        """Altitude above the reference surface [m]."""
        return self.radius(x, planet) - planet.radius

    def radial_speed(self, x):
        """Inertial speed along the local vertical [m/s] (positive climbing)."""
        raise NotImplementedError

    def horizontal_speed(self, x):
        """Inertial speed along the local horizontal [m/s]."""
        raise NotImplementedError

    def speed(self, x):
        """Inertial speed [m/s]."""
        return m_.sqrt(self.radial_speed(x) ** 2 + self.horizontal_speed(x) ** 2)

    def flight_path_angle(self, x):
        """Inertial flight-path angle from the local horizontal [rad]."""
        return m_.atan2(self.radial_speed(x), self.horizontal_speed(x))

    def specific_energy(self, x, planet):
        """Two-body specific orbital energy v^2/2 - mu/r [J/kg]."""
        return 0.5 * self.speed(x) ** 2 - planet.gravitational_parameter / self.radius(x, planet)

    def initial_state(self, problem) -> np.ndarray:
        """State on the pad at liftoff (at rest relative to the rotating surface)."""
        raise NotImplementedError

    def state_scales(self, states, problem) -> tuple[list, list]:
        """Offsets and scales that bring states like ``states`` (n x N) to order one."""
        raise NotImplementedError

    def air_relative_velocity(self, x, model) -> tuple:
        """Radial and horizontal components of the air-relative velocity [m/s]."""
        kin = self._kinematics(x, model)
        return kin["relative_radial_speed"], kin["relative_horizontal_speed"]

    def air_pitch(self, x, model):
        """Pitch along the air-relative velocity [rad] (zero angle of attack)."""
        w_radial, w_horizontal = self.air_relative_velocity(x, model)
        return m_.atan2(w_radial, w_horizontal)

    def air_steering(self, x, model) -> list:
        """The steering controls (all but the throttle) that point the thrust along the
        air-relative velocity: zero angle of attack [rad]."""
        return [self.air_pitch(x, model)]

    def position_velocity(self, x) -> tuple[list, list]:
        """Inertial position [m] and velocity [m/s] as three components each, in the
        kind's inertial frame (orbital elements and orbit targets read these)."""
        raise NotImplementedError(f"{self.name} flight has no orbit")

    # -- the equations ---------------------------------------------------------------
    def _kinematics(self, x, model) -> dict:
        """``radius``, ``altitude``, radial and horizontal inertial and air-relative speeds."""
        raise NotImplementedError

    def _steering(self, u, kin, f) -> dict:
        """Thrust direction quantities; default: thrust along the local vertical."""
        return {}

    def _accelerations(self, x, u, kin, f):
        """State derivative from the kinematics ``kin`` and flight quantities ``f``."""
        raise NotImplementedError

    def flight_quantities(self, x, u, model: FlightModel, prop: Propulsion) -> dict:
        """Derived quantities at a state and control, see :func:`flight_quantities`."""
        kin = self._kinematics(x, model)
        f = _air_and_engine(kin, u[0], model, prop, self.mass(x))
        f.update(self._steering(u, kin, f))
        return f

    def rhs(self, t, x, u, params):
        """State derivative dx/dt, see :func:`rhs`."""
        model, prop = params
        kin = self._kinematics(x, model)
        f = _air_and_engine(kin, u[0], model, prop, self.mass(x))
        f.update(self._steering(u, kin, f))
        return self._accelerations(x, u, kin, f)


#: quantities every kind's :meth:`DynamicsKind.flight_quantities` returns
COMMON_QUANTITIES = (
    "altitude", "radius", "speed", "radial_speed", "horizontal_speed", "flight_path_angle",
    "relative_speed", "density", "pressure", "temperature", "speed_of_sound", "mach",
    "dynamic_pressure", "drag_coefficient", "drag", "thrust", "mass_flow", "gravity",
    "axial_acceleration", "drag_along_velocity", "thrust_along_velocity", "heat_flux",
)


def _air_and_engine(kin, throttle, model, prop, mass) -> dict:
    """Air data, drag, thrust and mass flow: the part of the equations every kind shares."""
    h = kin["altitude"]
    atm = model.atmosphere.state(h)
    wr, wt = kin["relative_radial_speed"], kin["relative_horizontal_speed"]
    rel_speed = m_.smooth_norm(wr, wt, eps=1e-8)
    mach = rel_speed / atm.speed_of_sound
    q = 0.5 * atm.density * rel_speed * rel_speed
    aero = model.aerodynamics
    reynolds = None
    if getattr(aero.drag, "needs_reynolds", False):
        reynolds = atm.density * rel_speed * aero.reference_length / atm.viscosity
    # two factors on C_D: the problem's (aerodynamics.drag_scale) and the phase's, which the
    # NLP makes a parameter so that its multiplier prices the drag
    cd = (aero.drag.drag_coefficient(mach, reynolds) * getattr(aero, "drag_scale", 1.0)
          * prop.drag_scale)
    drag = q * cd * aero.reference_area
    gross = throttle * prop.thrust_vacuum
    # the back-pressure loss p A_exit acts while the engine fires; the factor
    # gross/(gross + w) (w a millionth of full thrust) removes it smoothly at zero throttle,
    # where a shut-down engine exerts no thrust, and changes it by ~1e-6 otherwise
    firing = gross / (gross + 1e-6 * prop.thrust_vacuum + 1e-9)
    # strap-on boosters burn at their fixed setting beside the throttled engine
    thrust = (gross - atm.pressure * prop.exit_area * firing + prop.booster_thrust
              - atm.pressure * prop.booster_exit_area)
    # drag per unit relative speed times components, divided without a singularity
    d_over_w = drag / rel_speed
    vr, vt = kin["radial_speed"], kin["horizontal_speed"]
    speed = m_.smooth_norm(vr, vt, eps=1e-6)
    return dict(
        altitude=h, radius=kin["radius"], speed=kin["speed"], radial_speed=vr,
        horizontal_speed=vt, flight_path_angle=kin["flight_path_angle"],
        relative_speed=rel_speed, density=atm.density, pressure=atm.pressure,
        temperature=atm.temperature, speed_of_sound=atm.speed_of_sound, mach=mach,
        dynamic_pressure=q, drag_coefficient=cd, drag=drag, thrust=thrust,
        # free-molecular aerothermal heat flux on a surface facing the flow [W m^-2]
        heat_flux=q * rel_speed,
        mass_flow=throttle * prop.thrust_vacuum / prop.exhaust_speed + prop.booster_mass_flow,
        gross_thrust=gross + prop.booster_thrust,
        gravity=model.gravity.acceleration(kin["radius"]),
        axial_acceleration=(thrust - drag) / (mass * G0),
        drag_radial=d_over_w * wr, drag_horizontal=d_over_w * wt,
        # drag resolved along the inertial velocity, for the loss budget
        drag_along_velocity=(d_over_w * wr * vr + d_over_w * wt * vt) / speed,
        # thrust resolved along the inertial velocity; vertical thrust unless steered
        thrust_along_velocity=thrust * vr / speed,
    )


@dataclass(frozen=True)
class Vertical(DynamicsKind):
    """Straight up and down: state (altitude, vertical_speed, mass), control throttle.

    h' = v,  v' = (F - D sgn v)/m - g(R + h),  m' = -eta F_vac / c.
    """

    name: ClassVar[str] = "vertical"
    state_names: ClassVar[tuple[str, ...]] = ("altitude", "vertical_speed", "mass")
    control_names: ClassVar[tuple[str, ...]] = ("throttle",)
    description: ClassVar[str] = "vertical flight: altitude, vertical speed, mass; throttle"
    trajectory_columns: ClassVar[tuple] = (
        ("altitude_m", "state", "altitude", 1.0),
        ("vertical_speed_m_s", "state", "vertical_speed", 1.0),
        ("mass_kg", "state", "mass", 1.0),
        ("throttle", "control", "throttle", 1.0),
    )

    def radius(self, x, planet):
        return planet.radius + x[0]

    def altitude(self, x, planet):
        return x[0]

    def radial_speed(self, x):
        return x[1]

    def horizontal_speed(self, x):
        return 0.0 * x[1]

    def speed(self, x):
        return x[1]

    def flight_path_angle(self, x):
        return m_.where(x[1] >= 0, 0.5 * np.pi, -0.5 * np.pi)

    def initial_state(self, problem) -> np.ndarray:
        return np.array([problem.launch.altitude, 0.0, problem.vehicle.liftoff_mass])

    def state_scales(self, states, problem):
        target = problem.target
        h_ref = max(1e3, float(np.abs(states[0]).max()), target.altitude or 0.0)
        v_ref = max(50.0, float(np.abs(states[1]).max()), target.speed or 0.0)
        return [0.0, 0.0, 0.0], [h_ref, v_ref, problem.vehicle.liftoff_mass]

    def air_pitch(self, x, model):
        return 0.5 * np.pi + 0.0 * x[0]

    def _kinematics(self, x, model):
        h, v = x[0], x[1]
        zero = 0.0 * v
        return dict(radius=model.planet.radius + h, altitude=h, radial_speed=v,
                    horizontal_speed=zero, speed=v, flight_path_angle=self.flight_path_angle(x),
                    relative_radial_speed=v, relative_horizontal_speed=zero)

    def _steering(self, u, kin, f):
        # drag acts against the air-relative velocity: D sgn(v) written without a kink
        v = kin["radial_speed"]
        speed = m_.smooth_norm(v, eps=1e-6)
        return dict(drag_vertical=f["drag"] * v / f["relative_speed"],
                    thrust_along_velocity=f["thrust"] * v / speed,
                    drag_along_velocity=f["drag"] * v / f["relative_speed"] * v / speed)

    def _accelerations(self, x, u, kin, f):
        dv = (f["thrust"] - f["drag_vertical"]) / x[2] - f["gravity"]
        return _stack([x[1], dv, -f["mass_flow"]])


#: the first trajectory-file columns of every steered kind: flight, mass and controls
STEERED_COLUMNS = (
        ("altitude_m", "quantity", "altitude", 1.0),
        ("speed_m_s", "quantity", "speed", 1.0),
        ("flight_path_angle_deg", "quantity", "flight_path_angle", _DEG),
        ("mass_kg", "state", "mass", 1.0),
        ("throttle", "control", "throttle", 1.0),
        ("pitch_deg", "control", "pitch", _DEG),
)
#: the loads that follow the attitude, written after the common air-data columns
ATTITUDE_LOAD_COLUMNS = (
    ("angle_of_attack_deg", "quantity", "angle_of_attack", _DEG),
    ("q_alpha_kPa_deg", "quantity", "q_alpha", _DEG / 1000.0),
)


@dataclass(frozen=True)
class Planar(DynamicsKind):
    """Flight in a plane over a spherical planet, inertial polar coordinates.

    State (radius, range_angle, radial_speed, horizontal_speed, mass), controls
    (throttle, pitch), pitch from the local horizontal:

        r' = v_r,  theta' = v_t / r,
        v_r' = (F sin(pitch) - D w_r/|w|)/m - g(r) + v_t^2 / r,
        v_t' = (F cos(pitch) - D w_t/|w|)/m - v_r v_t / r,

    where w = (v_r, v_t - omega r) is the velocity relative to the co-rotating atmosphere.
    """

    name: ClassVar[str] = "planar"
    state_names: ClassVar[tuple[str, ...]] = (
        "radius", "range_angle", "radial_speed", "horizontal_speed", "mass")
    control_names: ClassVar[tuple[str, ...]] = ("throttle", "pitch")
    extra_quantities: ClassVar[tuple[str, ...]] = ("angle_of_attack", "q_alpha", "pitch")
    description: ClassVar[str] = ("flight in the launch plane over a rotating sphere: radius, "
                                  "range angle, radial and horizontal speed, mass; throttle, "
                                  "pitch")
    trajectory_columns: ClassVar[tuple] = STEERED_COLUMNS + (
        ("radius_m", "state", "radius", 1.0),
        ("range_angle_deg", "state", "range_angle", _DEG),
        ("radial_speed_m_s", "state", "radial_speed", 1.0),
        ("horizontal_speed_m_s", "state", "horizontal_speed", 1.0),
    )
    extra_trajectory_columns: ClassVar[tuple] = ATTITUDE_LOAD_COLUMNS

    def radius(self, x, planet):
        return x[0]

    def radial_speed(self, x):
        return x[2]

    def horizontal_speed(self, x):
        return x[3]

    def initial_state(self, problem) -> np.ndarray:
        r0 = problem.planet.radius + problem.launch.altitude
        omega = problem.planet.rotation_rate * np.cos(problem.launch.latitude)
        speed = omega * r0
        if getattr(problem.launch, "in_circular_orbit", False):
            speed = np.sqrt(problem.planet.gravitational_parameter / r0)
        return np.array([r0, 0.0, 0.0, speed, problem.vehicle.liftoff_mass])

    def state_scales(self, states, problem):
        planet, target = problem.planet, problem.target
        h = states[0] - planet.radius
        alt_target = target.circular_orbit_altitude or target.altitude or 0.0
        h_ref = max(1e3, float(np.abs(h).max()), alt_target)
        speed = np.hypot(states[2], states[3])
        v_orbit = 0.0
        if target.circular_orbit_altitude is not None:
            v_orbit = np.sqrt(planet.gravitational_parameter
                              / (planet.radius + target.circular_orbit_altitude))
        v_ref = max(100.0, float(speed.max()), target.speed or 0.0, v_orbit)
        theta_ref = max(1e-3, float(np.abs(states[1]).max()))
        return ([planet.radius, 0.0, 0.0, 0.0, 0.0],
                [h_ref, theta_ref, v_ref, v_ref, problem.vehicle.liftoff_mass])

    def air_relative_velocity(self, x, model) -> tuple:
        return x[2], x[3] - model.rotation_rate * x[0]

    def position_velocity(self, x) -> tuple[list, list]:
        # the plane of flight is the x-y plane, the range angle measured from x
        c, s = m_.cos(x[1]), m_.sin(x[1])
        zero = 0.0 * x[0]
        return ([x[0] * c, x[0] * s, zero],
                [x[2] * c - x[3] * s, x[2] * s + x[3] * c, zero])

    def _kinematics(self, x, model):
        r, vr, vt = x[0], x[2], x[3]
        return dict(radius=r, altitude=r - model.planet.radius, radial_speed=vr,
                    horizontal_speed=vt, speed=m_.smooth_norm(vr, vt, eps=1e-8),
                    flight_path_angle=m_.atan2(vr, vt), relative_radial_speed=vr,
                    relative_horizontal_speed=vt - model.rotation_rate * r)

    def _steering(self, u, kin, f):
        pitch = u[1]
        wr, wt = kin["relative_radial_speed"], kin["relative_horizontal_speed"]
        vr, vt = kin["radial_speed"], kin["horizontal_speed"]
        # angle between the thrust axis and the air-relative velocity
        cross = wt * m_.sin(pitch) - wr * m_.cos(pitch)
        dot = wt * m_.cos(pitch) + wr * m_.sin(pitch)
        alpha = m_.atan2(cross, dot + 1e-9)
        speed = m_.smooth_norm(vr, vt, eps=1e-6)
        return dict(angle_of_attack=alpha, q_alpha=f["dynamic_pressure"] * alpha, pitch=pitch,
                    thrust_along_velocity=f["thrust"] * (vr * m_.sin(pitch)
                                                         + vt * m_.cos(pitch)) / speed)

    def _accelerations(self, x, u, kin, f):
        radius, vr, vt, mass = x[0], x[2], x[3], x[4]
        pitch = u[1]
        ar = (f["thrust"] * m_.sin(pitch) - f["drag_radial"]) / mass
        at = (f["thrust"] * m_.cos(pitch) - f["drag_horizontal"]) / mass
        return _stack([vr, vt / radius, ar - f["gravity"] + vt * vt / radius,
                       at - vr * vt / radius, -f["mass_flow"]])


#: the dynamics kinds by problem-file name (``dynamics:``); the loader validates against it
# the three-dimensional kind lives in a module of its own (it needs the base class above)
from ascentplan.models.three_dimensional import ThreeDimensional  # noqa: E402

DYNAMICS: dict[str, DynamicsKind] = {kind.name: kind
                                     for kind in (Vertical(), Planar(), ThreeDimensional())}


def dynamics_kind(name_or_kind) -> DynamicsKind:
    """The :class:`DynamicsKind` named ``name_or_kind`` (a kind passes through)."""
    if isinstance(name_or_kind, DynamicsKind):
        return name_or_kind
    return DYNAMICS[name_or_kind]


@dataclass(frozen=True)
class FlightModel:
    """The environment of a flight: dynamics kind, planet, atmosphere, gravity, aerodynamics.

    ``rotation_rate`` is the planet rotation seen in the plane of flight,
    omega cos(latitude) [rad s^-1].
    """

    kind: DynamicsKind
    planet: Any
    atmosphere: Any
    gravity: Any
    aerodynamics: Any
    rotation_rate: float = 0.0

    @property
    def n_states(self) -> int:
        return self.kind.n_states

    @property
    def n_controls(self) -> int:
        return self.kind.n_controls


@dataclass(frozen=True)
class Propulsion:
    """Engine data of one phase; fields may be CasADi symbols (NLP parameters).

    A coast phase has ``thrust_vacuum = 0``. ``drag_scale`` multiplies C_D on top of the
    aerodynamics' own factor (the NLP passes its drag-scale parameter here). The
    ``booster_*`` fields are the strap-on boosters burning beside the stage at their fixed
    settings: vacuum thrust [N], mass flow [kg s^-1] and nozzle exit area [m^2], summed
    over the groups burning (zero without boosters).
    """

    thrust_vacuum: Any
    exhaust_speed: Any
    exit_area: Any = 0.0
    drag_scale: Any = 1.0
    booster_thrust: Any = 0.0
    booster_mass_flow: Any = 0.0
    booster_exit_area: Any = 0.0


def flight_model(problem) -> FlightModel:
    """The :class:`FlightModel` of a :class:`~ascentplan.problem.Problem`."""
    omega = problem.planet.rotation_rate * float(np.cos(problem.launch.latitude))
    return FlightModel(dynamics_kind(problem.dynamics), problem.planet, problem.atmosphere,
                       problem.gravity, problem.aerodynamics, omega)


def propulsion(stage, powered: bool = True, boosters=()) -> Propulsion:
    """The :class:`Propulsion` of a stage with the booster groups ``boosters`` burning
    beside it, or of a coast when ``powered`` is False."""
    if not powered:
        return Propulsion(0.0, stage.exhaust_speed, 0.0)
    return Propulsion(stage.thrust_vacuum, stage.exhaust_speed, stage.nozzle_exit_area,
                      booster_thrust=sum(g.group_thrust for g in boosters),
                      booster_mass_flow=sum(g.group_mass_flow for g in boosters),
                      booster_exit_area=sum(g.count * g.nozzle_exit_area for g in boosters))


def phase_propulsion(vehicle, phase) -> Propulsion:
    """The :class:`Propulsion` of ``phase`` of ``vehicle``'s plan (numbers)."""
    return propulsion(vehicle.stages[phase.stage], phase.powered,
                      [vehicle.boosters[k] for k in phase.boosters])


def flight_quantities(x, u, model: FlightModel, prop: Propulsion) -> dict:
    """Derived quantities at a state and control.

    Returns a dict with (SI units) the :data:`COMMON_QUANTITIES`: ``altitude``,
    ``radius``, ``speed`` (inertial), ``radial_speed``, ``horizontal_speed``,
    ``flight_path_angle`` (inertial, from the local horizontal [rad]),
    ``relative_speed`` (air-relative), ``density``, ``pressure``, ``temperature``,
    ``speed_of_sound``, ``mach``, ``dynamic_pressure``, ``drag_coefficient``, ``drag``,
    ``thrust`` (net of back-pressure), ``mass_flow``, ``gravity`` (magnitude),
    ``axial_acceleration`` ((F - D)/m [g0]), the thrust and drag resolved along the
    inertial velocity (for the loss budget); and the kind's extra quantities
    (planar: ``angle_of_attack`` [rad], ``q_alpha`` [Pa rad], ``pitch``).
    """
    return model.kind.flight_quantities(x, u, model, prop)


def rhs(t, x, u, params):
    """State derivative dx/dt.

    Parameters
    ----------
    t : float or symbol
        Time [s] (the models are autonomous; kept for the common signature).
    x : sequence
        State, see the kind's ``state_names``.
    u : sequence
        Controls, see the kind's ``control_names``; pitch [rad].
    params : tuple
        ``(FlightModel, Propulsion)``.

    Returns
    -------
    numpy array or CasADi column of the same length as ``x``.
    """
    return params[0].kind.rhs(t, x, u, params)


def initial_state(problem) -> np.ndarray:
    """State on the pad at liftoff (at rest relative to the rotating surface)."""
    return dynamics_kind(problem.dynamics).initial_state(problem)


def altitude_speed_fpa(x, kind, planet) -> tuple:
    """Altitude [m], inertial speed [m/s] and flight-path angle [rad] of a state."""
    k = dynamics_kind(kind)
    return k.altitude(x, planet), k.speed(x), k.flight_path_angle(x)
