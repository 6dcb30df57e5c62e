"""Verification of an optimised schedule by independent forward integration.

The delivered schedule (piecewise-linear controls on the NLP's node times, exactly the
representation the collocation assumes) is re-flown with ``solve_ivp``. Three things are
checked on that replay, each against its stated tolerance (the ``mesh`` block of the
problem sets speed_tolerance, speed_tolerance_fraction, which also applies to altitudes,
limit_tolerance_fraction and limit_margin; the defaults are shown):

1. *The replay agrees with the optimiser* at burnout: speed within max(0.5 m/s, 0.05 %
   of the speed), altitude within max(10 m, 0.05 % of the altitude), and the apogee too
   when it is the objective.
2. *The replay meets the target as written* (:func:`target_miss`): each terminal
   condition of ``target`` taken on the replay's burnout state, against the value in the
   problem file, not against the optimiser's burnout:

   * altitude within max(10 m, 0.05 % of the target altitude);
   * inertial speed within max(0.5 m/s, 0.05 % of the target speed);
   * flight-path angle within 0.01 deg (:data:`FLIGHT_PATH_ANGLE_TOLERANCE_DEG`);
   * a circular orbit is its three conditions (altitude, speed sqrt(mu/r), angle 0);
     the replay's perigee and apogee altitudes are reported beside them.
3. *No limit's peak passes its bound*, peaks taken on the replay's dense time grid,
   between nodes too. With ``limit_margin`` > 0 (default 0.75 %: the NLP holds every
   limit that fraction inside its bound; a replay that still passes a bound is refined)
   no peak may pass the bound at all; with
   ``limit_margin: 0`` a peak may pass it by ``limit_tolerance_fraction`` (0.5 % of the
   bound; for minimum altitude, of max(|bound|, 1 km)).

What is replayed independently: the burnout state, the apogee, the limit peaks and the
propellant burnt come from the replay's own integration. A payload or liftoff mass that
the optimiser chose is *flown* by the replay but not recomputed by it: for such an
objective (``independently_replayed`` False) the check is that the replay, flying that
mass, meets the target (item 2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from ascentplan.models.dynamics import altitude_speed_fpa, dynamics_kind
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem, phase_plan
from ascentplan.problem.objectives import OBJECTIVE_SPECS, Outcome
from ascentplan.replay.orbit_check import compare_orbits
from ascentplan.replay.phase_checks import fairing_flux_check, phase_end_checks

#: tolerance of a flight-path angle target on the replay [deg] (common practice: an
#: injection angle error of 0.01 deg moves a 200 km perigee by well under a kilometre)
FLIGHT_PATH_ANGLE_TOLERANCE_DEG = 0.01
#: smallest altitude tolerance [m], of the burnout comparison and of an altitude target
ALTITUDE_TOLERANCE_M = 10.0


@dataclass
class LimitCheck:
    """One limit's peak on the replay against its bound.

    ``bound`` and ``peak`` are SI (g0 for acceleration); for ``min_altitude`` the peak is
    the lowest altitude. ``excess_fraction`` > 0 when the peak passes the bound (a
    fraction of the bound), ``tolerance_fraction`` the excess verification allows, and
    ``margin_fraction`` how far inside the bound the NLP held the limit.
    """

    name: str
    bound: float
    peak: float
    time: float
    excess_fraction: float
    tolerance_fraction: float = 0.0
    margin_fraction: float = 0.0

    @property
    def passed(self) -> bool:
        """Whether the excess is within the tolerance (a NaN peak: not flown, passed)."""
        return not self.excess_fraction > self.tolerance_fraction


@dataclass
class TargetCheck:
    """One terminal condition of the target, as written against the replay.

    Amounts in ``unit`` (``m``, ``m/s`` or ``deg``); ``miss`` is replayed - written.
    """

    name: str  # altitude | speed | flight_path_angle
    unit: str
    written: float
    replayed: float
    tolerance: float

    @property
    def miss(self) -> float:
        return self.replayed - self.written

    @property
    def passed(self) -> bool:
        return abs(self.miss) <= self.tolerance

    def summary(self) -> dict:
        """The condition with its unit in every key name (``written_m``, ``miss_deg``)."""
        u = {"m": "m", "m/s": "m_s", "deg": "deg"}[self.unit]
        return {f"written_{u}": float(self.written), f"replayed_{u}": float(self.replayed),
                f"miss_{u}": float(self.miss), f"tolerance_{u}": float(self.tolerance),
                "passed": bool(self.passed)}


@dataclass
class TargetMiss:
    """The replay's miss from the target as written (empty when there is no target).

    ``orbit`` holds, for a circular-orbit target, the target altitude and the replay's
    perigee and apogee altitudes [m] (apogee None on an escape trajectory).
    """

    conditions: list = field(default_factory=list)
    orbit: dict | None = None

    @property
    def passed(self) -> bool:
        return all(c.passed for c in self.conditions)

    def summary(self) -> dict:
        """The ``target_miss`` block of summary.json."""
        return {"passed": bool(self.passed),
                "conditions": {c.name: c.summary() for c in self.conditions},
                "circular_orbit": None if self.orbit is None else dict(self.orbit)}

    def reasons(self) -> list[str]:
        return [f"the replay misses the target {c.name.replace('_', ' ')} by {c.miss:+.4g} "
                f"{c.unit} (tolerance {c.tolerance:.4g} {c.unit})"
                for c in self.conditions if not c.passed]


@dataclass
class Verification:
    passed: bool
    burnout_speed_difference_m_s: float
    burnout_altitude_difference_m: float
    objective_replayed: float
    worst_limit_excess_fraction: float
    limits: list = field(default_factory=list)
    reasons: list = field(default_factory=list)
    target_miss: TargetMiss = field(default_factory=TargetMiss)
    #: whether the replay computes the objective itself (else it flies the optimiser's
    #: value, a mass, and the target miss is its check)
    objective_independently_replayed: bool = True
    burnout_speed_tolerance_m_s: float = float("nan")
    burnout_altitude_tolerance_m: float = float("nan")
    #: the burnout orbit as elements, optimiser and replay compared (replay.orbit_check)
    orbit: dict | None = None
    #: every phase's end, replay against optimiser (replay.phase_checks.PhaseEnd)
    phase_ends: list = field(default_factory=list)
    #: the heat flux after a fairing jettison chosen on it, on the replay
    fairing: dict | None = None


def limit_allowance(mesh) -> float:
    """The excess of a peak over its bound that verification allows [-]: none when the
    NLP holds the limits inside their bounds (``limit_margin`` > 0), else
    ``limit_tolerance_fraction``."""
    return 0.0 if mesh.limit_margin > 0.0 else mesh.limit_tolerance_fraction


def limit_peaks(problem: Problem, trajectory, phase_kinds=None) -> list[LimitCheck]:
    """Peak of each imposed limit's quantity over the phases where it is imposed.

    The peak is the extreme sample of the replay's dense time grid
    (:meth:`~ascentplan.replay.trajectory.Trajectory.extreme`, not refined), on the
    phases whose kind the limit applies to (:data:`LIMITS`).

    Parameters
    ----------
    problem : Problem
    trajectory : Trajectory
    phase_kinds : sequence of str, optional
        Kind of each phase searched, by index; default the problem's phase plan (so a
        final coast that the replay adds beyond the plan is not searched). A flight of
        its own passes ``trajectory.phase_kinds`` to search every phase it flew.

    Returns
    -------
    list of LimitCheck
        One per limit of the problem, in :data:`LIMITS` order, with the mesh's
        ``limit_tolerance_fraction`` as tolerance; peak and time NaN when no phase flown
        is one the limit applies to, or the flight has no such quantity.
    """
    kinds = ([ph.kind for ph in phase_plan(problem)] if phase_kinds is None
             else list(phase_kinds))
    flown = np.asarray(trajectory.phase)
    tolerance = problem.mesh.limit_tolerance_fraction
    checks = []
    for name in problem.limits.active_names():
        spec = LIMITS[name]
        bound = float(getattr(problem.limits, name))
        imposed = [k for k, kind in enumerate(kinds) if kind in spec.phases]
        if spec.quantity not in trajectory.quantities or not np.isin(flown, imposed).any():
            checks.append(LimitCheck(name, bound, float("nan"), float("nan"), 0.0, tolerance))
            continue
        peak, time, _ = trajectory.extreme(spec.quantity, sense=spec.sense,
                                           magnitude=spec.magnitude, phases=imposed,
                                           refine=False)
        checks.append(LimitCheck(name, bound, peak, time, float(spec.excess(peak, bound)),
                                 tolerance))
    return checks


def target_miss(problem: Problem, state) -> TargetMiss:
    """The miss of a burnout ``state`` (of the replay) from the problem's target.

    Tolerances as in the module docstring. A circular-orbit target is checked as its
    three conditions; the osculating orbit's perigee and apogee altitudes follow from
    the two-body energy and angular momentum (vis-viva; e.g. Curtis, *Orbital Mechanics
    for Engineering Students*, ch. 2).
    """
    target, planet, mesh = problem.target, problem.planet, problem.mesh
    kind = dynamics_kind(problem.dynamics)
    x = np.asarray(state, dtype=float)
    h, v, gamma = (float(q) for q in altitude_speed_fpa(x, problem.dynamics, planet))
    written = {"altitude": target.altitude, "speed": target.speed,
               "flight_path_angle": target.flight_path_angle}
    orbit = None
    if target.circular_orbit_altitude is not None:
        r_t = planet.radius + target.circular_orbit_altitude
        written = {"altitude": target.circular_orbit_altitude,
                   "speed": math.sqrt(planet.gravitational_parameter / r_t),
                   "flight_path_angle": 0.0}
        perigee, apogee = apsis_altitudes(float(kind.radius(x, planet)),
                                          float(kind.radial_speed(x)),
                                          float(kind.horizontal_speed(x)), planet)
        orbit = {"altitude_m": float(target.circular_orbit_altitude),
                 "perigee_altitude_m": perigee, "apogee_altitude_m": apogee}
        # an orbit's altitude is above the equatorial radius, as the NLP's condition
        # reads it, not geodetic (they differ by up to 21 km off the equator of an
        # ellipsoid; on a sphere they are the same)
        h = float(kind.radius(x, planet)) - planet.radius
    checks = []
    if written["altitude"] is not None:
        checks.append(TargetCheck("altitude", "m", written["altitude"], h, max(
            ALTITUDE_TOLERANCE_M, mesh.speed_tolerance_fraction * abs(written["altitude"]))))
    if written["speed"] is not None:
        checks.append(TargetCheck("speed", "m/s", written["speed"], v, max(
            mesh.speed_tolerance, mesh.speed_tolerance_fraction * abs(written["speed"]))))
    if written["flight_path_angle"] is not None:
        checks.append(TargetCheck("flight_path_angle", "deg",
                                  math.degrees(written["flight_path_angle"]),
                                  math.degrees(gamma), FLIGHT_PATH_ANGLE_TOLERANCE_DEG))
    return TargetMiss(checks, orbit)


def apsis_altitudes(radius: float, radial_speed: float, horizontal_speed: float,
                    planet) -> tuple[float, float | None]:
    """Perigee and apogee altitudes [m] of the two-body orbit through a state.

    Parameters
    ----------
    radius : float
        Distance from the planet's centre [m].
    radial_speed, horizontal_speed : float
        Inertial velocity components [m s^-1].
    planet : Planet
        Its ``gravitational_parameter`` and ``radius`` (altitudes above the sphere).

    Returns
    -------
    tuple
        (perigee, apogee) altitudes [m]; apogee None when the orbit is not closed.
    """
    mu = planet.gravitational_parameter
    energy = 0.5 * (radial_speed ** 2 + horizontal_speed ** 2) - mu / radius
    momentum = radius * horizontal_speed
    e = math.sqrt(max(0.0, 1.0 + 2.0 * energy * momentum ** 2 / mu ** 2))
    # the periapsis radius h^2 / (mu (1 + e)) holds for every conic, closed or not
    perigee = momentum ** 2 / (mu * (1.0 + e)) - planet.radius
    if energy >= 0.0 or e >= 1.0:
        return float(perigee), None
    return float(perigee), float(momentum ** 2 / (mu * (1.0 - e)) - planet.radius)


def objective_from_trajectory(problem: Problem, trajectory, payload_mass: float,
                              propellant_used: float | None = None) -> float:
    """The objective's value as flown by the replay (:data:`OBJECTIVE_SPECS`)."""
    name = problem.objective
    spec = OBJECTIVE_SPECS.get(name)
    if spec is None:
        raise ValueError(f"objective: unknown name {name!r}")
    return float(spec.value(_outcome(problem, trajectory, payload_mass, propellant_used)))


def _outcome(problem: Problem, trajectory, payload_mass: float,
             propellant_used: float | None) -> Outcome:
    """What an objective reads, taken from a replay."""
    kind = trajectory.kind
    state = np.asarray(trajectory.state)
    return Outcome(
        kind=kind, planet=problem.planet, burnout_state=np.asarray(trajectory.burnout_state()),
        apogee_altitude=float(np.max(trajectory.quantities["altitude"])),
        payload_mass=payload_mass,
        propellant_used=np.nan if propellant_used is None else float(propellant_used),
        liftoff_mass=float(kind.mass(state)[0]))


def verify(problem: Problem, solution, trajectory) -> Verification:
    """Compare an NLP solution with its replay, and the replay with the target and the
    limits; see the module docstring for what is checked and the tolerances."""
    mesh = problem.mesh
    reasons = []
    last = max(j for j, ph in enumerate(phase_plan(problem)) if ph.powered)
    xb_nlp = solution.states[last][:, -1]
    h_n, v_n, _ = altitude_speed_fpa(xb_nlp, problem.dynamics, problem.planet)
    xb_rep = np.asarray(trajectory.burnout_state())
    h_r, v_r, _ = altitude_speed_fpa(xb_rep, problem.dynamics, problem.planet)
    dv = float(v_r - v_n)
    dh = float(h_r - h_n)
    v_tol = max(mesh.speed_tolerance, mesh.speed_tolerance_fraction * abs(float(v_n)))
    h_tol = max(ALTITUDE_TOLERANCE_M, mesh.speed_tolerance_fraction * abs(float(h_n)))
    if trajectory.status != "ok":
        reasons.append(f"replay ended with status {trajectory.status}: {trajectory.message}")
    if abs(dv) > v_tol:
        reasons.append(f"burnout speed differs by {dv:+.3f} m/s (tolerance {v_tol:.3f} m/s)")
    if abs(dh) > h_tol:
        reasons.append(f"burnout altitude differs by {dh:+.1f} m (tolerance {h_tol:.1f} m)")
    missed = target_miss(problem, xb_rep)
    reasons += missed.reasons()
    orbit_compared, orbit_reasons = compare_orbits(problem, xb_nlp, xb_rep)
    reasons += orbit_reasons
    allowed = limit_allowance(mesh)
    checks = [replace(c, tolerance_fraction=allowed, margin_fraction=mesh.limit_margin)
              for c in limit_peaks(problem, trajectory)]
    worst = max([c.excess_fraction for c in checks], default=0.0)
    for c in checks:
        if not c.passed:
            reasons.append(f"{c.name} exceeded by {100 * c.excess_fraction:.2f} % of its bound "
                           f"at t = {c.time:.1f} s (allowed {100 * allowed:.2g} %)")
    phase_ends, phase_reasons = phase_end_checks(problem, solution, trajectory,
                                                 mesh.speed_tolerance,
                                                 mesh.speed_tolerance_fraction,
                                                 ALTITUDE_TOLERANCE_M)
    reasons += phase_reasons
    fairing, fairing_reasons = fairing_flux_check(problem, trajectory, allowed)
    reasons += fairing_reasons
    used = None
    if problem.objective == "min_propellant":
        used = _propellant_used(problem, trajectory)
    replayed = objective_from_trajectory(problem, trajectory, solution.payload_mass, used)
    if problem.objective == "max_apogee":
        # the objective is not a burnout quantity: compare it too
        d_apogee = replayed - solution.objective
        tol = max(ALTITUDE_TOLERANCE_M, mesh.speed_tolerance_fraction * abs(solution.objective))
        if abs(d_apogee) > tol:
            reasons.append(f"apogee differs by {d_apogee:+.1f} m (tolerance {tol:.1f} m)")
    return Verification(passed=not reasons, burnout_speed_difference_m_s=dv,
                        burnout_altitude_difference_m=dh, objective_replayed=replayed,
                        worst_limit_excess_fraction=float(worst), limits=checks,
                        reasons=reasons, target_miss=missed,
                        burnout_speed_tolerance_m_s=float(v_tol),
                        burnout_altitude_tolerance_m=float(h_tol),
                        objective_independently_replayed=independently_replayed(
                            problem, trajectory), orbit=orbit_compared,
                        phase_ends=phase_ends, fairing=fairing)


def independently_replayed(problem: Problem, trajectory) -> bool:
    """Whether the replay computes the objective from its own flight.

    Read from the objective's definition (:data:`OBJECTIVE_SPECS`): the value is
    evaluated on the replay's outcome and on one that differs only in what the replay
    integrates (burnout state, apogee, propellant burnt). An objective that does not
    change is a mass the optimiser chose (the payload, the liftoff mass), which the
    replay flies but cannot recompute.
    """
    spec = OBJECTIVE_SPECS[problem.objective]
    flown = _outcome(problem, trajectory, payload_mass=1.0, propellant_used=1.0)
    moved = replace(flown, burnout_state=1.01 * flown.burnout_state + 1.0,
                    apogee_altitude=1.01 * flown.apogee_altitude + 1.0,
                    propellant_used=2.0)
    return float(spec.value(flown)) != float(spec.value(moved))


def _propellant_used(problem: Problem, trajectory) -> float:
    """Mass burnt over all powered phases of a trajectory [kg]."""
    phases = phase_plan(problem)
    m = trajectory.kind.mass(np.asarray(trajectory.state))
    k = np.asarray(trajectory.phase)
    used = 0.0
    for j, ph in enumerate(phases):
        sel = np.flatnonzero(k == j)
        if ph.powered and sel.size:
            used += float(m[sel[0]] - m[sel[-1]])
    return used
