"""Verification of every phase: the replay's phase ends against the optimiser's, and the
fairing's heat-flux condition after its jettison.

Each phase of the plan ends on the replay where the optimiser ended it (booster
burnouts, the fairing jettison, cut-offs and restarts, staging): the time within
:data:`TIME_TOLERANCE_S` (plus a millionth of the time), the speed and altitude within
the burnout tolerances of :mod:`ascentplan.replay.verify` taken at that phase's end (a
coast to apogee: speed and altitude only).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ascentplan.models.dynamics import altitude_speed_fpa
from ascentplan.problem.plan import phase_plan

__all__ = ["PhaseEnd", "TIME_TOLERANCE_S", "fairing_flux_check", "phase_end_checks"]

#: largest difference of a phase's end time, replay against optimiser [s]
TIME_TOLERANCE_S = 1e-3


@dataclass(frozen=True)
class PhaseEnd:
    """One phase's end, replay against optimiser."""

    phase: int
    kind: str
    stage: int
    time_s: float
    time_difference_s: float
    speed_difference_m_s: float
    altitude_difference_m: float
    passed: bool

    def summary(self) -> dict:
        return {"phase": self.phase, "kind": self.kind, "stage": self.stage,
                "time_s": self.time_s, "time_difference_s": self.time_difference_s,
                "speed_difference_m_s": self.speed_difference_m_s,
                "altitude_difference_m": self.altitude_difference_m, "passed": self.passed}


def phase_end_checks(problem, solution, trajectory, speed_floor: float, fraction: float,
                     altitude_floor: float) -> tuple[list[PhaseEnd], list[str]]:
    """Every phase's end on the replay against the optimiser's; (checks, reasons)."""
    plan = phase_plan(problem)
    checks, reasons = [], []
    flown = min(len(plan), len(trajectory.phase_bounds), len(solution.states))
    for j in range(flown):
        t_nlp = float(solution.times[j][-1])
        t_rep = float(trajectory.phase_bounds[j][1])
        x_rep = trajectory.state_at_phase_end(j)
        h_n, v_n, _ = altitude_speed_fpa(solution.states[j][:, -1], problem.dynamics,
                                         problem.planet)
        h_r, v_r, _ = altitude_speed_fpa(x_rep, problem.dynamics, problem.planet)
        dt, dv, dh = t_rep - t_nlp, float(v_r - v_n), float(h_r - h_n)
        v_tol = max(speed_floor, fraction * abs(float(v_n)))
        h_tol = max(altitude_floor, fraction * abs(float(h_n)))
        t_tol = TIME_TOLERANCE_S + 1e-6 * abs(t_nlp)
        if plan[j].ends_at_apogee:
            # an apogee is where the radial speed passes zero, slowly: its time is loose
            # where the altitude is not; the altitude and speed are checked instead
            t_tol = math.inf
        ok = abs(dt) <= t_tol and abs(dv) <= v_tol and abs(dh) <= h_tol
        checks.append(PhaseEnd(j, plan[j].kind, plan[j].stage, t_nlp, dt, dv, dh, ok))
        if not ok:
            reasons.append(f"phase {j} ({plan[j].kind} of stage {plan[j].stage}) ends "
                           f"{dt:+.3f} s, {dv:+.3f} m/s, {dh:+.1f} m from the optimiser's end "
                           f"(tolerances {t_tol:.3g} s, {v_tol:.3f} m/s, {h_tol:.1f} m)")
    if flown < len(plan) and trajectory.status == "ok":
        reasons.append(f"the replay flew {flown} of the plan's {len(plan)} phases")
    return checks, reasons


def fairing_flux_check(problem, trajectory, allowance: float) -> tuple[dict | None, list[str]]:
    """The heat flux after a fairing jettison chosen on it, on the replay: its peak from
    the jettison on against the bound; (record, reasons)."""
    fairing = problem.vehicle.fairing
    if fairing is None or fairing.heat_flux_bound is None:
        return None, []
    plan = phase_plan(problem)
    j = next(k for k, ph in enumerate(plan) if ph.drops_fairing)
    if j >= len(trajectory.phase_bounds):
        return None, []
    t_jettison = trajectory.phase_bounds[j][1]
    later = range(j + 1, len(trajectory.phase_bounds))
    # the one peak search of the replay (refined between samples), over the phases after
    peak = (float(trajectory.extreme("heat_flux", phases=later, label="heat flux")[0])
            if len(later) else 0.0)
    bound = fairing.heat_flux_bound
    ok = peak <= bound * (1.0 + allowance)
    record = {"jettison_time_s": float(t_jettison), "heat_flux_bound_W_m2": float(bound),
              "peak_heat_flux_after_W_m2": peak, "passed": bool(ok)}
    reasons = [] if ok else [f"heat flux after the fairing jettison reaches {peak:.1f} W/m^2, "
                             f"above the bound {bound:.1f} W/m^2"]
    return record, reasons
