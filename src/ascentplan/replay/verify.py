"""Verification of an optimised schedule by independent forward integration.

The delivered schedule (piecewise-linear controls on the NLP's node times, exactly the
representation the collocation assumes) is re-flown with ``solve_ivp``; the burnout
states are compared and every limit's peak is taken on the replay's dense time grid,
between nodes too. Tolerances (the ``mesh`` block of the problem sets speed_tolerance,
speed_tolerance_fraction, which also applies to altitudes, and limit_tolerance_fraction;
the defaults are shown):

* burnout speed within max(0.5 m/s, 0.05 % of the speed);
* burnout altitude within max(10 m, 0.05 % of the altitude), and so the apogee when it
  is the objective;
* no limit exceeded by more than 0.5 % of its bound (minimum altitude: 0.5 % of
  max(|bound|, 1 km)).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ascentplan.models.dynamics import altitude_speed_fpa
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem, phase_plan
from ascentplan.problem.objectives import OBJECTIVE_SPECS, Outcome


@dataclass
class LimitCheck:
    name: str
    bound: float  # SI (g0 for acceleration)
    peak: float  # SI; for min_altitude the lowest altitude
    time: float
    excess_fraction: float  # > 0 when the replay exceeds the bound


@dataclass
class Verification:
    passed: bool
    burnout_speed_difference_m_s: float
    burnout_altitude_difference_m: float
    objective_replayed: float
    worst_limit_excess_fraction: float
    limits: list = field(default_factory=list)
    reasons: list = field(default_factory=list)


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
        One per limit of the problem, in :data:`LIMITS` order; peak and time NaN when
        no phase flown is one the limit applies to, or the flight has no such quantity.
    """
    kinds = ([ph.kind for ph in phase_plan(problem)] if phase_kinds is None
             else list(phase_kinds))
    flown = np.asarray(trajectory.phase)
    checks = []
    for name in problem.limits.active_names():
        spec = LIMITS[name]
        bound = float(getattr(problem.limits, name))
        imposed = [k for k, kind in enumerate(kinds) if kind in spec.phases]
        if spec.quantity not in trajectory.quantities or not np.isin(flown, imposed).any():
            checks.append(LimitCheck(name, bound, float("nan"), float("nan"), 0.0))
            continue
        peak, time, _ = trajectory.extreme(spec.quantity, sense=spec.sense,
                                           magnitude=spec.magnitude, phases=imposed,
                                           refine=False)
        checks.append(LimitCheck(name, bound, peak, time, float(spec.excess(peak, bound))))
    return checks


def objective_from_trajectory(problem: Problem, trajectory, payload_mass: float,
                              propellant_used: float | None = None) -> float:
    """The objective's value as flown by the replay (:data:`OBJECTIVE_SPECS`)."""
    name = problem.objective
    spec = OBJECTIVE_SPECS.get(name)
    if spec is None:
        raise ValueError(f"objective: unknown name {name!r}")
    kind = trajectory.kind
    state = np.asarray(trajectory.state)
    outcome = Outcome(
        kind=kind, planet=problem.planet, burnout_state=np.asarray(trajectory.burnout_state()),
        apogee_altitude=float(np.max(trajectory.quantities["altitude"])),
        payload_mass=payload_mass,
        propellant_used=np.nan if propellant_used is None else float(propellant_used),
        liftoff_mass=float(kind.mass(state)[0]))
    return float(spec.value(outcome))


def verify(problem: Problem, solution, trajectory) -> Verification:
    """Compare an NLP solution with its replay; see the module docstring for tolerances."""
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
    h_tol = max(10.0, mesh.speed_tolerance_fraction * abs(float(h_n)))
    if trajectory.status != "ok":
        reasons.append(f"replay ended with status {trajectory.status}: {trajectory.message}")
    if abs(dv) > v_tol:
        reasons.append(f"burnout speed differs by {dv:+.3f} m/s (tolerance {v_tol:.3f} m/s)")
    if abs(dh) > h_tol:
        reasons.append(f"burnout altitude differs by {dh:+.1f} m (tolerance {h_tol:.1f} m)")
    checks = limit_peaks(problem, trajectory)
    worst = max([c.excess_fraction for c in checks], default=0.0)
    for c in checks:
        if c.excess_fraction > mesh.limit_tolerance_fraction:
            reasons.append(f"{c.name} exceeded by {100 * c.excess_fraction:.2f} % of its bound "
                           f"at t = {c.time:.1f} s")
    used = None
    if problem.objective == "min_propellant":
        used = _propellant_used(problem, trajectory)
    replayed = objective_from_trajectory(problem, trajectory, solution.payload_mass, used)
    if problem.objective == "max_apogee":
        # the objective is not a burnout quantity: compare it too
        d_apogee = replayed - solution.objective
        tol = max(10.0, mesh.speed_tolerance_fraction * abs(solution.objective))
        if abs(d_apogee) > tol:
            reasons.append(f"apogee differs by {d_apogee:+.1f} m (tolerance {tol:.1f} m)")
    return Verification(passed=not reasons, burnout_speed_difference_m_s=dv,
                        burnout_altitude_difference_m=dh, objective_replayed=replayed,
                        worst_limit_excess_fraction=float(worst), limits=checks,
                        reasons=reasons)


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
