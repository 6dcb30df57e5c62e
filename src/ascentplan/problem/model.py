"""The problem description: vehicle, planet, models, launch, limits, target, objective, mesh.

All quantities are SI (kg, m, s, N, Pa, rad); accelerations given in g0 are plain
multiples of :data:`ascentplan.constants.G0`. The loader (:mod:`ascentplan.problem.loader`)
builds these objects from a problem file and validates them; code that builds them
directly is trusted to pass sensible values.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, replace
from typing import Any

from ascentplan.constants import G0
from ascentplan.problem.limits import LIMIT_UNITS, LIMITS
from ascentplan.problem.objectives import OBJECTIVE_SPECS, OBJECTIVES
from ascentplan.problem.plan import Phase, phase_plan
from ascentplan.problem.stack import BoosterGroup, Fairing

__all__ = ["LIMIT_UNITS", "LIMITS", "OBJECTIVES", "OBJECTIVE_SPECS", "SCHEMES", "Aerodynamics",
           "Launch", "Limits", "MassSplit", "Mesh", "Phase", "Planet", "Problem", "Stage",
           "SHUTDOWN_MODES", "Target", "TimeSchedule", "Vehicle", "dry_mass_from_ratio",
           "phase_plan", "stack_masses", "thrust_from_ratio"]


# --------------------------------------------------------------------------------------
# mass rules, written once; plain arithmetic, so they take floats, numpy arrays and CasADi
# symbols alike (the NLP calls them on its decision variables)


def dry_mass_from_ratio(propellant_mass, structural_ratio):
    """Dry mass [kg] of a stage with structural ratio eps = dry/(dry + propellant)."""
    return structural_ratio / (1.0 - structural_ratio) * propellant_mass


def thrust_from_ratio(thrust_to_weight, ignition_mass):
    """Vacuum thrust [N] giving ``thrust_to_weight`` = F / (g0 m) at ``ignition_mass`` [kg]."""
    return thrust_to_weight * G0 * ignition_mass


def stack_masses(payload_mass, propellant_masses, dry_masses, attached=None, fairing_mass=0.0,
                 fairing_stage=None) -> tuple[list, list, list]:
    """Masses of a serial stack, first stage first [kg].

    ``attached`` is per stage the mass of its strap-on boosters (propellant and casings,
    all dropped before the stage burns out); the fairing, of mass ``fairing_mass``, is
    dropped during the burn of stage ``fairing_stage``. Returns ``(above, ignition,
    burnout)``: for each stage the mass it carries once it has burnt out (payload, a
    fairing not yet dropped and all later stages), the stack mass at its ignition and at
    its burnout.
    """
    n = len(propellant_masses)
    attached = attached if attached is not None else [0.0] * n

    def fairing_on(i, at_ignition):
        if fairing_stage is None:
            return 0.0
        return fairing_mass if (i < fairing_stage or (at_ignition and i == fairing_stage)) else 0.0

    later = [0.0] * n
    for i in range(n - 2, -1, -1):
        later[i] = later[i + 1] + propellant_masses[i + 1] + dry_masses[i + 1] + attached[i + 1]
    above = [payload_mass + later[i] + fairing_on(i, False) for i in range(n)]
    ignition = [payload_mass + later[i] + fairing_on(i, True) + propellant_masses[i]
                + dry_masses[i] + attached[i] for i in range(n)]
    burnout = [above[i] + dry_masses[i] for i in range(n)]
    return above, ignition, burnout


#: how a stage's burn may end, by the name used in problem files (``shutdown:``)
SHUTDOWN_MODES = {
    "early": "the engine may be shut down before depletion; propellant left beyond the "
             "reserve is reported as an unplanned residual",
    "at_depletion": "the stage burns until only its reserve is left (a solid motor, or an "
                    "engine without a commanded cut-off)",
}


@dataclass(frozen=True)
class Stage:
    """One serial stage.

    Attributes
    ----------
    name : str
    propellant_mass : float
        Usable propellant [kg].
    dry_mass : float
        Everything of the stage that is not propellant and is dropped at staging [kg].
    thrust_vacuum : float
        Vacuum thrust at full throttle [N].
    exhaust_speed : float
        Vacuum effective exhaust speed c = g0 Isp_vac [m s^-1].
    nozzle_exit_area : float
        Nozzle exit area for the back-pressure thrust loss p_ambient A_exit [m^2];
        0 means no loss is modelled.
    throttle_min, throttle_max : float
        Throttle range as fractions of full mass flow; the default 1, 1 is a fixed
        full-thrust engine.
    max_throttle_rate : float or None
        Largest |d throttle/dt| [s^-1], or None for no limit.
    max_steering_rate : float or None
        Largest turning rate of the thrust direction in the local horizon frame (pitch and,
        in three dimensions, heading) during a burn [rad s^-1], or None for no limit.
    coast_after : float
        Unpowered coast after this stage is dropped and before the next ignites [s].
    structural_ratio : float or None
        dry/(dry + propellant), when the file gives it (the dry mass follows the
        propellant in a stage-mass split).
    propellant_min, propellant_max : float or None
        Bounds on the propellant mass in a stage-mass split [kg].
    thrust_to_weight : float or None
        Vacuum thrust over g0 times the stack mass at this stage's ignition; when given,
        a stage-mass split scales the thrust with the stack mass.
    shutdown : str or None
        ``"early"`` or ``"at_depletion"`` (:data:`SHUTDOWN_MODES`); None takes the
        default rule of :attr:`may_shut_down_early`.
    propellant_reserve : float
        Propellant kept on board at burnout by design [kg], dropped with the stage.
    propellant_reserve_fraction : float
        A further reserve as a fraction of ``propellant_mass`` [-] (it follows the
        propellant in a stage-mass split).
    restarts : int
        Further burns after the first, each after a ballistic coast [-].
    restart_coast_min, restart_coast_max : float
        Bounds on each coast between burns, chosen by the optimiser [s].
    """

    name: str
    propellant_mass: float
    dry_mass: float
    thrust_vacuum: float
    exhaust_speed: float
    nozzle_exit_area: float = 0.0
    throttle_min: float = 1.0
    throttle_max: float = 1.0
    max_throttle_rate: float | None = None
    max_steering_rate: float | None = None
    coast_after: float = 0.0
    structural_ratio: float | None = None
    propellant_min: float | None = None
    propellant_max: float | None = None
    thrust_to_weight: float | None = None
    shutdown: str | None = None
    propellant_reserve: float = 0.0
    propellant_reserve_fraction: float = 0.0
    restarts: int = 0
    restart_coast_min: float = 10.0
    restart_coast_max: float = 3.0 * 3600.0

    @property
    def mass(self) -> float:
        """Propellant plus dry mass [kg]."""
        return self.propellant_mass + self.dry_mass

    @property
    def isp_vacuum(self) -> float:
        """Vacuum specific impulse [s]."""
        return self.exhaust_speed / G0

    @property
    def max_mass_flow(self) -> float:
        """Mass flow at full throttle [kg s^-1]."""
        return self.thrust_vacuum / self.exhaust_speed

    @property
    def full_throttle_burn_time(self) -> float:
        """Burn time at full throttle [s]."""
        return self.propellant_mass / self.max_mass_flow

    @property
    def ratio_of_structure(self) -> float:
        """Structural ratio dry/(dry + propellant): as given, else as the masses are written."""
        if self.structural_ratio is not None:
            return float(self.structural_ratio)
        return self.dry_mass / (self.dry_mass + self.propellant_mass)

    @property
    def may_shut_down_early(self) -> bool:
        """Whether the burn may end before depletion.

        As ``shutdown`` says; by default a throttleable stage (throttle min below max)
        may, and a fixed-throttle stage may not: it burns to depletion, as a solid motor
        or an engine without a commanded cut-off does.
        """
        if self.shutdown is None:
            return self.throttle_min < self.throttle_max
        return self.shutdown == "early"

    @property
    def reserve_mass(self) -> float:
        """Propellant left on board at a planned burnout [kg]."""
        return self.propellant_reserve + self.propellant_reserve_fraction * self.propellant_mass


@dataclass(frozen=True)
class Vehicle:
    """A payload on top of serial stages, first stage first, with the stages' strap-on
    booster groups (:class:`~ascentplan.problem.stack.BoosterGroup`) and a fairing."""

    payload_mass: float
    stages: tuple[Stage, ...]
    boosters: tuple[BoosterGroup, ...] = ()
    fairing: Fairing | None = None

    @property
    def liftoff_mass(self) -> float:
        """Total mass at liftoff [kg]."""
        return self.ignition_mass(0)

    def attached_mass(self, index: int) -> float:
        """Mass of the booster groups of stage ``index`` (propellant and casings) [kg]."""
        return sum(g.mass for g in self.boosters if g.stage == index)

    def groups_of(self, index: int) -> list[BoosterGroup]:
        """The booster groups of stage ``index``."""
        return [g for g in self.boosters if g.stage == index]

    def _stack(self) -> tuple[list, list, list]:
        f = self.fairing
        return stack_masses(self.payload_mass, [s.propellant_mass for s in self.stages],
                            [s.dry_mass for s in self.stages],
                            [self.attached_mass(i) for i in range(len(self.stages))],
                            0.0 if f is None else f.mass, None if f is None else f.stage)

    def mass_above(self, index: int) -> float:
        """Mass carried by stage ``index``: payload plus all stages after it [kg]."""
        return self._stack()[0][index]

    def ignition_mass(self, index: int) -> float:
        """Stack mass when stage ``index`` ignites [kg]."""
        return self._stack()[1][index]

    def burnout_mass(self, index: int) -> float:
        """Stack mass when stage ``index`` has burnt all its propellant [kg]."""
        return self._stack()[2][index]

    def planned_burnout_mass(self, index: int) -> float:
        """Stack mass when stage ``index`` has burnt all but its reserve [kg]."""
        return self.burnout_mass(index) + self.stages[index].reserve_mass

    def with_propellant(self, propellant: list[float], payload_mass: float | None = None,
                        booster_propellant=None):
        """A copy with new propellant masses; dry masses follow the structural ratios
        (as given, else as the masses are written), thrusts a given thrust-to-weight;
        ``booster_propellant`` (per group, per booster) likewise with each group's casing
        ratio as written."""
        stages = []
        for s, mp in zip(self.stages, propellant):
            dry = dry_mass_from_ratio(mp, s.ratio_of_structure)
            stages.append(replace(s, propellant_mass=float(mp), dry_mass=float(dry)))
        payload = self.payload_mass if payload_mass is None else float(payload_mass)
        boosters = self.boosters
        if booster_propellant is not None:
            boosters = tuple(replace(g, propellant_mass=float(p),
                                     dry_mass=float(g.casing_ratio * p))
                             for g, p in zip(self.boosters, booster_propellant))
        vehicle = replace(self, payload_mass=payload, stages=tuple(stages), boosters=boosters)
        scaled = []
        for i, s in enumerate(vehicle.stages):
            if s.thrust_to_weight is not None:
                s = replace(s, thrust_vacuum=thrust_from_ratio(s.thrust_to_weight,
                                                               vehicle.ignition_mass(i)))
            scaled.append(s)
        return replace(vehicle, stages=tuple(scaled))


@dataclass(frozen=True)
class Planet:
    """A uniformly rotating planet: an ellipsoid of revolution, or a sphere (flattening 0).

    The vertical and planar kinds fly over the sphere of the equatorial radius whatever
    the flattening; the three-dimensional kind measures geodetic altitude and latitude on
    the ellipsoid (:mod:`ascentplan.models.geodesy`). ``j2`` is used by the ``j2``
    gravity model only.
    """

    name: str
    radius: float  # equatorial [m]
    gravitational_parameter: float  # [m^3 s^-2]
    rotation_rate: float = 0.0  # [rad s^-1]
    flattening: float = 0.0  # (a - b)/a [-]
    j2: float = 0.0  # second zonal harmonic [-]

    @property
    def surface_gravity(self) -> float:
        """mu / R^2 [m s^-2]."""
        return self.gravitational_parameter / self.radius**2


@dataclass(frozen=True)
class Aerodynamics:
    """Drag of the whole stack: D = 1/2 rho s C_D A_ref |v_rel|^2, s = ``drag_scale``."""

    reference_area: float  # [m^2]
    drag: Any  # a drag model from ascentplan.aero.DRAG_MODELS
    reference_length: float | None = None  # [m], for Reynolds number
    drag_scale: float = 1.0  # [-], a factor on the model's C_D (drag trades)


@dataclass(frozen=True)
class Launch:
    """Launch site and the opening manoeuvre.

    ``pitch_over`` is the pitch angle below vertical [rad] taken at the end of the
    vertical rise by the default schedule and the optimiser's first guess.
    ``latitude`` (geodetic) sets the planet-rotation speed of the pad, omega R
    cos(latitude); the planar model flies due east in the plane of the launch. The
    three-dimensional model starts at rest on the rotating surface at ``latitude``,
    ``longitude`` and ``altitude`` (above the ellipsoid); ``azimuth`` (from north towards
    east), when given, is the heading of the pitch-over, else the optimiser chooses it;
    ``direction`` picks the branch of the first guess's azimuth to an inclined orbit;
    ``dog_leg`` is how far below the site's latitude the target inclination may be, to
    be flown by yawing out of the launch plane [rad].
    """

    altitude: float = 0.0  # [m]
    latitude: float = 0.0  # [rad]
    vertical_rise: float = 0.0  # [s]
    pitch_over: float = 0.0  # [rad]
    longitude: float = 0.0  # [rad]
    azimuth: float | None = None  # [rad]
    direction: str = "northerly"  # or "southerly"
    dog_leg: float = 0.0  # [rad]
    #: the flight starts in a prograde circular orbit at ``altitude`` instead of on the
    #: pad (an upper stage from a parking orbit; the planar kind)
    in_circular_orbit: bool = False

    @property
    def lowest_altitude(self) -> float:
        """Altitude below which the flight has hit the ground [m]: the pad, or the
        planet's surface for a flight that starts in orbit."""
        return 0.0 if self.in_circular_orbit else self.altitude


@dataclass(frozen=True)
class Limits:
    """Path limits; None means not imposed."""

    max_dynamic_pressure: float | None = None  # [Pa]
    max_axial_acceleration: float | None = None  # [g0]
    max_q_alpha: float | None = None  # [Pa rad]
    max_heat_flux: float | None = None  # [W m^-2], free-molecular 1/2 rho v^3
    min_altitude: float | None = None  # [m]

    def active_names(self) -> list[str]:
        return [k for k in LIMITS if getattr(self, k) is not None]


@dataclass(frozen=True)
class Target:
    """Terminal conditions at burnout (end of the last powered phase); None = free."""

    altitude: float | None = None  # [m]
    speed: float | None = None  # inertial speed [m s^-1]
    flight_path_angle: float | None = None  # inertial, from local horizontal [rad]
    circular_orbit_altitude: float | None = None  # [m]
    #: orbit size and shape: perigee and apogee altitudes above the equatorial radius [m],
    #: or semi-major axis [m] and eccentricity [-]
    perigee_altitude: float | None = None
    apogee_altitude: float | None = None
    semi_major_axis: float | None = None
    eccentricity: float | None = None
    #: orbit plane [rad]: inclination; ascending node measured eastwards from the launch
    #: site's meridian at liftoff (the launch frame); argument of perigee from the node
    inclination: float | None = None
    ascending_node: float | None = None
    argument_of_perigee: float | None = None
    #: burn out at perigee (flight-path angle zero at the perigee radius)
    inject_at_perigee: bool = False

    def is_empty(self) -> bool:
        return not self.inject_at_perigee and all(
            getattr(self, f.name) is None for f in fields(self) if f.name != "inject_at_perigee")

    @property
    def names_orbit(self) -> bool:
        """Whether the target names an orbit's size and shape (or a circular orbit)."""
        return any(v is not None for v in (self.circular_orbit_altitude, self.perigee_altitude,
                                           self.semi_major_axis))


@dataclass(frozen=True)
class MassSplit:
    """A stage-mass split chosen by the optimiser.

    ``hold`` is ``"liftoff_mass"`` (liftoff mass fixed, payload fixed, propellant moves
    between stages) or ``"payload"`` (payload fixed, liftoff mass minimised to meet the
    target).
    """

    hold: str = "liftoff_mass"
    liftoff_mass: float | None = None  # [kg]; default: the vehicle's as written
    #: points per axis of the map of the objective around the optimum (0: no map)
    map_points: int = 0
    #: internal: scale all stages by one factor (keeps a given split's proportions)
    proportional: bool = False


@dataclass(frozen=True)
class Mesh:
    """Collocation mesh and verification settings."""

    scheme: str = "hermite_simpson"
    nodes_per_phase: int = 40
    max_refinements: int = 3
    speed_tolerance: float = 0.5  # [m s^-1]
    speed_tolerance_fraction: float = 5e-4
    limit_tolerance_fraction: float = 5e-3
    #: weight of the control-smoothness penalty, a fraction of the scaled objective per
    #: unit of squared node-to-node control change (see
    #: :func:`ascentplan.optimisation.nlp.control_smoothness`); 0 for none [-]
    control_smoothing: float = 0.0
    #: the NLP holds each path limit this fraction inside its bound (a maximum at
    #: bound (1 - margin), a minimum at bound + margin max(|bound|, floor)), so that the
    #: replay's peaks between nodes stay within the bound itself [-]; 0 imposes the bound
    limit_margin: float = 7.5e-3


@dataclass(frozen=True)
class TimeSchedule:
    """A control schedule against time from liftoff, linearly interpolated.

    Stages burn out on propellant depletion; pitch [rad] is ignored by the vertical model.
    """

    time: tuple[float, ...]
    throttle: tuple[float, ...]
    pitch: tuple[float, ...] | None = None


@dataclass(frozen=True)
class Problem:
    """Everything needed to simulate or optimise one ascent."""

    name: str
    dynamics: str  # "vertical" or "planar"
    vehicle: Vehicle
    planet: Planet
    atmosphere: Any  # from ascentplan.atmosphere.ATMOSPHERES
    gravity: Any  # from ascentplan.gravity.GRAVITY_MODELS
    aerodynamics: Aerodynamics
    launch: Launch = field(default_factory=Launch)
    limits: Limits = field(default_factory=Limits)
    target: Target = field(default_factory=Target)
    objective: str = "max_burnout_speed"
    mesh: Mesh = field(default_factory=Mesh)
    mass_split: MassSplit | None = None
    schedule: TimeSchedule | None = None
    description: str = ""
    source_path: str | None = None

    def with_limits(self, **changes) -> Problem:
        return replace(self, limits=replace(self.limits, **changes))


#: collocation schemes by the name used in problem files
SCHEMES = {
    "hermite_simpson": "Hermite-Simpson (separated), order 4 in the states",
    "trapezoidal": "trapezoidal rule, order 2",
}
