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
from ascentplan.problem.model import Problem, phase_plan

#: which trajectory quantity each limit bounds, and on which phase kinds it is imposed
LIMIT_QUANTITIES = {
    "max_dynamic_pressure": ("dynamic_pressure", ("rise", "burn", "coast")),
    "max_axial_acceleration": ("axial_acceleration", ("rise", "burn")),
    "max_q_alpha": ("q_alpha", ("burn",)),
    "min_altitude": ("altitude", ("rise", "burn", "coast")),
}


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


def limit_peaks(problem: Problem, trajectory) -> list[LimitCheck]:
    """Peak of each imposed limit's quantity over the phases where it is imposed."""
    kinds = [ph.kind for ph in phase_plan(problem)]
    phase_idx = np.asarray(trajectory.phase)
    t = np.asarray(trajectory.time)
    checks = []
    for name in problem.limits.active_names():
        bound = float(getattr(problem.limits, name))
        qty, on_kinds = LIMIT_QUANTITIES[name]
        mask = np.array([kinds[int(k)] in on_kinds if 0 <= int(k) < len(kinds) else False
                         for k in phase_idx])
        values = np.asarray(trajectory.quantities[qty], dtype=float)
        if not mask.any():
            checks.append(LimitCheck(name, bound, float("nan"), float("nan"), 0.0))
            continue
        v = values[mask]
        tt = t[mask]
        if name == "min_altitude":
            i = int(np.argmin(v))
            excess = (bound - v[i]) / max(abs(bound), 1000.0)
        elif name == "max_q_alpha":
            i = int(np.argmax(np.abs(v)))
            excess = (abs(v[i]) - bound) / bound
        else:
            i = int(np.argmax(v))
            excess = (v[i] - bound) / bound
        peak = abs(v[i]) if name == "max_q_alpha" else v[i]
        checks.append(LimitCheck(name, bound, float(peak), float(tt[i]), float(excess)))
    return checks


def objective_from_trajectory(problem: Problem, trajectory, payload_mass: float,
                              propellant_used: float | None = None) -> float:
    """The objective's value as flown by the replay."""
    name = problem.objective
    xb = np.asarray(trajectory.burnout_state())
    h, v, _ = altitude_speed_fpa(xb, problem.dynamics, problem.planet)
    if name == "max_burnout_speed":
        return float(v)
    if name == "max_burnout_altitude":
        return float(h)
    if name == "max_apogee":
        return float(np.max(trajectory.quantities["altitude"]))
    if name == "max_payload":
        return float(payload_mass)
    if name == "min_liftoff_mass":
        return float(np.asarray(trajectory.state)[-1, 0])
    if name == "min_propellant":
        return float(propellant_used if propellant_used is not None else np.nan)
    raise ValueError(f"objective: unknown name {name!r}")


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
    m = np.asarray(trajectory.state)[-1]
    k = np.asarray(trajectory.phase)
    used = 0.0
    for j, ph in enumerate(phases):
        sel = np.flatnonzero(k == j)
        if ph.powered and sel.size:
            used += float(m[sel[0]] - m[sel[-1]])
    return used
