"""The one orchestrator: load, guess, discretise, solve, verify, refine, report.

``solve(problem)`` returns a :class:`Result`; failure is a status in it, never an
exception (exceptions are kept for bad input).
"""

from __future__ import annotations

import time as _time
from dataclasses import dataclass, field, replace

import numpy as np

from ascentplan.cautions import CAUTION
from ascentplan.exchange import exchange_lines, exchange_ratios
from ascentplan.models.dynamics import altitude_speed_fpa, dynamics_kind
from ascentplan.optimisation.fallback import solve_with_fallback
from ascentplan.optimisation.guess import (
    coarse_start,
    guess_from_solution,
    guess_from_trajectory,
    guess_schedule,
    scales_for,
)
from ascentplan.optimisation.infeasibility import Infeasibility, explain
from ascentplan.optimisation.masses import payload_is_free
from ascentplan.optimisation.nlp import AscentNLP, NLPSolution, structure_key
from ascentplan.optimisation.propellant import propellant_accounting, residual_text
from ascentplan.optimisation.stack_rows import with_booster_settings
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem, phase_plan
from ascentplan.problem.objectives import OBJECTIVE_SPECS, OBJECTIVE_UNITS
from ascentplan.replay.simulate import PhaseControls, PhaseSchedule, simulate
from ascentplan.replay.verify import Verification, verify

# OBJECTIVE_UNITS is re-exported: callers have long imported the objective units from here
__all__ = ["ACCELERATE_AFTER", "NLPCache", "OBJECTIVE_UNITS", "Result", "clear_cache",
           "first_guess", "format_result", "solve", "write_outputs"]

#: solves of one cached NLP before which its derivatives are never expanded; after it,
#: AscentNLP.expansion_pays decides (the expansion must repay itself over the solves to come)
ACCELERATE_AFTER = 1


class NLPCache:
    """Built NLPs by problem structure and mesh, so that a re-solve skips the build.

    A cached NLP keeps the variable scales of the problem that built it. Its derivatives
    are expanded (:meth:`AscentNLP.accelerate`, a one-off cost) when
    :meth:`AscentNLP.expansion_pays` finds that the solves still to come repay it:
    the solves announced with :meth:`expect` (a study worker announces its remaining
    points), else as many more as have been made (the break-even rule).

    Parameters
    ----------
    size : int
        Most NLPs kept; the oldest built is dropped first.
    accelerate_after : int
        Solves of an NLP before which it is never expanded.
    """

    def __init__(self, size: int = 8, accelerate_after: int = ACCELERATE_AFTER):
        self.size = size
        self.accelerate_after = accelerate_after
        self.expected_solves: int | None = None
        self._entries: dict = {}  # key -> [nlp, reuses]

    def __len__(self) -> int:
        return len(self._entries)

    def expect(self, solves: int | None) -> None:
        """Announce ``solves`` further solves of the structures in use (None: unknown)."""
        self.expected_solves = None if solves is None else max(0, int(solves))

    def get(self, problem: Problem, scales: dict, nodes: int,
            elastic: bool = False) -> tuple[AscentNLP, bool]:
        """The NLP of ``problem``'s structure on ``nodes`` nodes per phase (its elastic form
        when ``elastic``), and whether it was reused (else it is built now with ``scales``)."""
        key = (structure_key(problem), nodes, elastic)
        entry = self._entries.get(key)
        if entry is not None:
            entry[1] += 1
            nlp = entry[0]
            if entry[1] >= self.accelerate_after and nlp.expansion_pays(self.expected_solves):
                nlp.accelerate()
            return nlp, True
        nlp = AscentNLP(problem, scales, nodes_per_phase=nodes, elastic=elastic)
        if len(self._entries) >= self.size:
            self._entries.pop(next(iter(self._entries)))
        self._entries[key] = [nlp, 0]
        return nlp, False

    def clear(self) -> None:
        """Forget every built NLP (they are rebuilt on demand)."""
        self._entries.clear()


#: the cache :func:`solve` uses
NLP_CACHE = NLPCache()


def clear_cache() -> None:
    """Forget every built NLP (they are rebuilt on demand)."""
    NLP_CACHE.clear()


@dataclass
class Result:
    """Everything a solve produced; ``summary()`` is the content of summary.json."""

    problem: Problem
    status: str  # optimal | not_verified | infeasible | failed
    message: str
    solution: NLPSolution
    verification: Verification
    trajectory: object  # the replay (ascentplan.simulate.Trajectory)
    schedule: object  # ascentplan.simulate.PhaseSchedule
    solved_problem: Problem  # the problem with the optimised masses
    iterations: int
    wall_time: float
    nodes: int
    mesh_refinements: int
    extra: dict = field(default_factory=dict)
    scales: dict | None = None  # the NLP variable scales, reused by warm starts
    #: per stage, its propellant as flown (StagePropellant)
    propellant: list = field(default_factory=list)
    #: when infeasible, the conditions that must give (from the elastic re-solve)
    infeasibility: Infeasibility | None = None

    @property
    def objective_value(self) -> float:
        """Objective in SI units, from the optimiser."""
        return self.solution.objective

    def burnout(self) -> dict:
        traj = self.trajectory
        xb = np.asarray(traj.burnout_state())
        h, v, fpa = altitude_speed_fpa(xb, self.problem.dynamics, self.problem.planet)
        last = max(j for j, ph in enumerate(phase_plan(self.problem)) if ph.powered)
        t_b = float(np.sum(self.solution.durations[: last + 1]))
        mass = dynamics_kind(self.problem.dynamics).mass(xb)
        return {"time_s": t_b, "altitude_m": float(h), "speed_m_s": float(v),
                "flight_path_angle_deg": float(np.degrees(fpa)), "mass_kg": float(mass)}

    def limits(self) -> list[dict]:
        objective = OBJECTIVE_SPECS[self.problem.objective]
        obj_unit, obj_div = objective.unit, objective.divisor
        out = []
        for c in self.verification.limits:
            spec = LIMITS[c.name]
            unit, factor = spec.unit, spec.factor
            price_si = self.solution.shadow_prices.get(c.name, 0.0)
            active = c.name in self.solution.binding
            # multipliers are sensitivities only at a converged optimum
            converged = self.solution.status == "optimal"
            price = price_si * factor / obj_div if active and converged else 0.0
            if not converged:
                price = None
            out.append({
                "name": c.name, "bound": c.bound / factor, "unit": unit,
                "peak": c.peak / factor, "peak_time_s": c.time, "active": bool(active),
                "shadow_price": None if price is None else float(price),
                "shadow_price_unit": f"{obj_unit} per {unit}",
                # the peak against its bound: excess > 0 passes it, by at most the
                # tolerance for verification to pass; the margin the NLP held inside it
                "excess_fraction": float(c.excess_fraction),
                "tolerance_fraction": float(c.tolerance_fraction),
                "margin_fraction": float(c.margin_fraction),
                "within_bound": not c.excess_fraction > 0.0,
                "passed": bool(c.passed),
            })
        return out

    def exchange_ratios(self) -> list[dict]:
        """d objective / d input for every priced input, largest first (user units).

        Each ``{"input", "label", "value", "unit", "objective_unit", "input_unit"}``:
        stage masses, thrusts, Isp, nozzle exit areas, the payload where given, the drag
        scale and each limit bound (its shadow price), from the NLP's parameter
        multipliers; values None (with a ``reason``) when the solve did not converge.
        See :mod:`ascentplan.exchange`.
        """
        return exchange_ratios(self.problem, self.solution, self.limits())

    def stages(self) -> list[dict]:
        phases = phase_plan(self.problem)
        out = []
        for i, s in enumerate(self.solved_problem.vehicle.stages):
            burn = sum(d for d, ph in zip(self.solution.durations, phases)
                       if ph.powered and ph.stage == i)
            entry = {"name": s.name, "propellant_mass_kg": float(s.propellant_mass),
                     "dry_mass_kg": float(s.dry_mass), "burn_time_s": float(burn),
                     "thrust_vacuum_N": float(s.thrust_vacuum)}
            if i < len(self.propellant):
                entry["propellant"] = self.propellant[i].summary()
            out.append(entry)
        return out

    def _objective_block(self) -> dict:
        """The objective as optimised and as replayed, and whether the replay computes it
        (a payload or liftoff mass chosen by the optimiser is flown, not recomputed)."""
        objective = OBJECTIVE_SPECS[self.problem.objective]
        div = objective.divisor
        v = self.verification
        block = {"name": self.problem.objective, "value": self.objective_value / div,
                 "unit": objective.unit, "replayed_value": v.objective_replayed / div,
                 "independently_replayed": bool(v.objective_independently_replayed)}
        if not v.objective_independently_replayed:
            block["note"] = ("replayed_value is the optimiser's value, flown by the replay; "
                             "the replay's check of it is target_miss")
        return block

    def control_smoothing(self) -> dict:
        """The control-smoothness penalty (``mesh.control_smoothing``) and what it costs.

        ``weight`` as written; ``penalty`` in the objective's unit (>= 0);
        ``objective_without_penalty`` is the objective as named (summary ``objective``);
        ``objective_with_penalty`` what the optimiser traded: the objective lowered by the
        penalty when maximised, raised when minimised.
        """
        spec = OBJECTIVE_SPECS[self.problem.objective]
        weight = float(getattr(self.problem.mesh, "control_smoothing", 0.0))
        penalty = float(getattr(self.solution, "smoothing_penalty", 0.0)) / spec.divisor
        value = self.objective_value / spec.divisor
        return {"weight": weight, "penalty": penalty, "unit": spec.unit,
                "objective_without_penalty": value,
                "objective_with_penalty": value - spec.sense * penalty}

    def summary(self) -> dict:
        """The summary.json content (keys documented in the README)."""
        v = self.verification
        d = {
            "problem": self.problem.name,
            "status": self.status,
            "message": self.message,
            "objective": self._objective_block(),
            "control_smoothing": self.control_smoothing(),
            "burnout": self.burnout(),
            "limits": self.limits(),
            "exchange_ratios": self.exchange_ratios(),
            "verification": {
                "passed": bool(v.passed),
                "burnout_speed_difference_m_s": v.burnout_speed_difference_m_s,
                "burnout_altitude_difference_m": v.burnout_altitude_difference_m,
                "burnout_speed_tolerance_m_s": v.burnout_speed_tolerance_m_s,
                "burnout_altitude_tolerance_m": v.burnout_altitude_tolerance_m,
                "worst_limit_excess_fraction": v.worst_limit_excess_fraction,
                "target_met": bool(v.target_miss.passed),
                "reasons": list(v.reasons),
            },
            "target_miss": v.target_miss.summary(),
            "stages": self.stages(),
            "payload_mass_kg": float(self.solved_problem.vehicle.payload_mass),
            "liftoff_mass_kg": float(self.solved_problem.vehicle.liftoff_mass),
            "solver": {"iterations": self.iterations, "wall_time_s": self.wall_time,
                       "nodes": self.nodes, "mesh_refinements": self.mesh_refinements,
                       "scheme": self.problem.mesh.scheme,
                       "return_status": self.solution.return_status},
            "losses_m_s": {k: float(val) for k, val in getattr(self.trajectory, "losses",
                                                               {}).items()},
            "caution": CAUTION,
        }
        if self.verification.orbit is not None:
            d["orbit"] = self.verification.orbit
        if self.infeasibility is not None:
            d["infeasibility"] = self.infeasibility.summary()
        from ascentplan.output.timeline import stack_summary

        d.update(stack_summary(self))  # the timeline and the mass accounting
        d.update(self.extra)
        return d


def _replay(problem: Problem, solution: NLPSolution):
    """The optimised schedule, and the trajectory it flies in the forward simulation."""
    kind = dynamics_kind(problem.dynamics)
    throttle = kind.control_index("throttle")
    pitch = kind.control_index("pitch") if kind.has_control("pitch") else None
    entries = []
    for j in range(len(phase_plan(problem))):
        U = solution.controls[j]
        rel = solution.times[j] - solution.times[j][0]
        entries.append(PhaseControls(duration=float(solution.durations[j]), time=rel,
                                     throttle=U[throttle].copy(),
                                     pitch=None if pitch is None else U[pitch].copy(),
                                     heading=(U[kind.control_index("heading")].copy()
                                              if kind.has_control("heading") else None)))
    schedule = PhaseSchedule(tuple(entries))
    trajectory = simulate(problem, schedule, coast_to_apogee=False)
    return schedule, trajectory


def _with_solution_masses(problem: Problem, solution: NLPSolution) -> Problem:
    """The problem with the optimised payload and propellant masses (dry masses follow the
    structural ratios, thrusts a given thrust-to-weight ratio)."""
    problem = with_booster_settings(problem, solution.booster_setting)
    if problem.mass_split is None and not payload_is_free(problem):
        return problem
    vehicle = problem.vehicle.with_propellant(
        solution.propellant, payload_mass=solution.payload_mass,
        booster_propellant=solution.booster_propellant if problem.vehicle.boosters else None)
    return replace(problem, vehicle=vehicle)


def first_guess(problem: Problem, nodes: int):
    """A guess and scales from a forward simulation of the default schedule."""
    traj = simulate(problem, guess_schedule(problem),
                    coast_to_apogee=problem.objective == "max_apogee")
    guess = guess_from_trajectory(problem, traj, nodes)
    return guess, scales_for(problem, guess)


def _cold_solve(problem: Problem, nodes: int) -> NLPSolution:
    """The NLP of ``problem`` on ``nodes`` per phase solved from the default first guess."""
    guess, scales = first_guess(problem, nodes)
    nlp, _ = NLP_CACHE.get(problem, scales, nodes)
    return solve_with_fallback(nlp, problem, guess)


def solve(problem: Problem, *, warm_start: Result | None = None,
          max_refinements: int | None = None) -> Result:
    """Optimise the schedule (and masses, if asked), verify by replay, refine the mesh.

    Parameters
    ----------
    problem : Problem
    warm_start : Result, optional
        A previous result of a problem of the same structure (other limit values or
        masses): its solution is the first guess and its multipliers warm-start IPOPT.
    max_refinements : int, optional
        Overrides ``problem.mesh.max_refinements``.
    """
    t_start = _time.perf_counter()
    nodes = problem.mesh.nodes_per_phase
    budget = problem.mesh.max_refinements if max_refinements is None else max_refinements
    iterations = 0
    if warm_start is not None:
        nodes = warm_start.nodes
        guess = guess_from_solution(problem, warm_start.solution, nodes)
        scales = warm_start.scales
        if scales is None:
            _, scales = first_guess(problem, nodes)
    else:
        guess, scales = first_guess(problem, nodes)
        coarse, iterations = coarse_start(problem, nodes, lambda n: _cold_solve(problem, n))
        guess = coarse or guess
    refinements = 0
    while True:
        nlp, _ = NLP_CACHE.get(problem, scales, nodes)
        solution = solve_with_fallback(nlp, problem, guess,
                                       warm=guess.multipliers is not None)
        iterations += solution.iterations
        solved_problem = _with_solution_masses(problem, solution)
        schedule, trajectory = _replay(solved_problem, solution)
        verification = verify(solved_problem, solution, trajectory)
        if solution.status != "optimal" or verification.passed or refinements >= budget:
            break
        refinements += 1
        nodes = 2 * nodes - 1
        guess = guess_from_solution(problem, solution, nodes)
    infeasibility = None
    if solution.status == "infeasible":
        infeasibility = _explain_infeasibility(problem, solution, scales, nodes)
        iterations += infeasibility.iterations
    propellant = propellant_accounting(solved_problem, solution)
    status, message = _status_and_message(solution, verification, refinements, nodes,
                                          infeasibility)
    residual = residual_text(propellant)
    if residual and status in ("optimal", "not_verified"):
        # a flight that was found: what it leaves unburnt is part of its verdict
        message += "; " + residual
    result = Result(problem=problem, status=status, message=message, solution=solution,
                    verification=verification, trajectory=trajectory, schedule=schedule,
                    solved_problem=solved_problem, iterations=iterations,
                    wall_time=_time.perf_counter() - t_start, nodes=nodes,
                    mesh_refinements=refinements, scales=scales, propellant=propellant,
                    infeasibility=infeasibility)
    return result


def _explain_infeasibility(problem: Problem, solution: NLPSolution, scales: dict,
                           nodes: int) -> Infeasibility:
    """Which targets and limits must give: the elastic form solved on the same mesh.

    It starts from the first-guess flight, which meets the dynamics exactly, so that only
    the slacks are out of place: on the cases measured (a 5000 km target on the two-stage
    example, with and without its limits; the sounding rocket at a fixed throttle) it
    converged in 2-3 times fewer iterations than from where the solver stopped, and once
    where that start did not converge in 300. A restoration phase can stop far from any
    sensible flight. That point is the second start, tried only when the first does not
    converge. Each solve is capped (``ELASTIC_OPTIONS``).
    """
    nlp, _ = NLP_CACHE.get(problem, scales, nodes, elastic=True)
    starts = (lambda: first_guess(problem, nodes)[0],
              # the failed multipliers belong to another NLP: the primal point only
              lambda: replace(guess_from_solution(problem, solution, nodes), multipliers=None))
    tried, iterations = [], 0
    for start in starts:
        elastic = nlp.solve(problem, start())
        iterations += elastic.iterations
        tried.append(elastic)
        if elastic.status == "optimal":
            break
    best = min(tried, key=lambda e: (e.status != "optimal", e.constraint_violation))
    return explain(problem, nlp, best, iterations=iterations)


def _status_and_message(solution: NLPSolution, verification: Verification, refinements: int,
                        nodes: int, infeasibility: Infeasibility | None = None
                        ) -> tuple[str, str]:
    if solution.status == "infeasible":
        head = (f"the solver found no schedule that meets every constraint "
                f"(IPOPT: {solution.return_status}, constraint violation "
                f"{solution.constraint_violation:.3g})")
        if infeasibility is not None and infeasibility.conditions:
            return "infeasible", f"{head}: {infeasibility.text()}"
        names = ", ".join(solution.binding) or "none of the path limits"
        why = "" if infeasibility is None else f"; {infeasibility.text()}"
        return "infeasible", f"{head}; binding where it stopped: {names}{why}"
    if solution.status != "optimal":
        return "failed", (f"the solver did not converge (IPOPT: {solution.return_status}, "
                          f"{solution.iterations} iterations)")
    if not verification.passed:
        return "not_verified", ("optimal on the mesh but not verified by replay after "
                                f"{refinements} mesh refinement(s), {nodes} nodes per phase: "
                                + "; ".join(verification.reasons))
    checked = ["the replay agrees with the optimiser's burnout"]
    if verification.target_miss.conditions:
        checked.append("meets the target")
    if verification.limits:
        checked.append("keeps every limit's peak within "
                       + ("its bound" if all(c.tolerance_fraction == 0.0
                                             for c in verification.limits)
                          else "its tolerance"))
    return "optimal", (f"converged and verified by replay ({nodes} nodes per phase, "
                       f"{refinements} mesh refinement(s)): " + ", ".join(checked[:-1])
                       + (" and " if len(checked) > 1 else "") + checked[-1])


def format_result(result: Result) -> str:
    """A short readable summary of a solve, ending with the caution."""
    from ascentplan.output.result_text import (
        budget_lines,
        fixed,
        limit_lines,
        split_lines,
        target_lines,
        verification_lines,
    )
    from ascentplan.output.timeline_text import stack_lines

    s = result.summary()
    b = s["burnout"]
    o = s["objective"]
    if o.get("independently_replayed", True):
        replayed = f"replay {o['replayed_value']:.6g} {o['unit']}"
    else:
        replayed = "the optimiser's, flown by the replay; checked by the target miss"
    lines = [
        f"ascentplan solve: {s['problem']}",
        f"  status        {s['status']}: {s['message']}",
        f"  objective     {o['name']} = {o['value']:.6g} {o['unit']} ({replayed})",
        f"  burnout       t {b['time_s']:.2f} s, altitude {b['altitude_m'] / 1000:.3f} km, "
        f"speed {b['speed_m_s']:.2f} m/s, flight-path angle "
        f"{fixed(b['flight_path_angle_deg'], 3)} deg, mass {b['mass_kg']:.1f} kg",
    ]
    lines += verification_lines(s["verification"])
    lines += target_lines(s.get("target_miss"))
    lines += limit_lines(s["limits"])
    lines += exchange_lines(s.get("exchange_ratios"))
    lines.append("  stages        name            propellant [kg]   dry [kg]   burn [s]")
    for st in s["stages"]:
        lines.append(f"                {st['name']:<16}{st['propellant_mass_kg']:>15.1f}"
                     f"{st['dry_mass_kg']:>11.1f}{st['burn_time_s']:>11.2f}")
    if s["status"] in ("optimal", "not_verified"):
        # where the solver stopped short of a flight, its propellant figures mean little
        lines += _propellant_lines(s["stages"])
    lines += _infeasibility_lines(s.get("infeasibility"))
    lines += stack_lines(s)
    lines += budget_lines(s.get("losses_m_s"))
    lines += split_lines(s.get("mass_split"))
    sv = s["solver"]
    lines.append(f"  solver        {sv['iterations']} iterations, {sv['wall_time_s']:.2f} s, "
                 f"{sv['nodes']} nodes per phase, {sv['mesh_refinements']} refinement(s)")
    lines.append(CAUTION)
    return "\n".join(lines)


def _propellant_lines(stages: list[dict]) -> list[str]:
    """Per stage its propellant, when any stage keeps a reserve or leaves a residual."""
    blocks = [st.get("propellant") for st in stages]
    if not any(b and (b["reserve_kg"] > 0 or b["unplanned_residual_reported"])
               for b in blocks):
        return []
    lines = ["  propellant    name            loaded [kg]  burnt [kg]  reserve [kg]"
             "  unplanned residual"]
    for st, b in zip(stages, blocks):
        if b is None:
            continue
        residual = (f"{b['unplanned_residual_kg']:.1f} kg ({b['unplanned_residual_percent']:.1f} %)"
                    if b["unplanned_residual_reported"] else "none")
        lines.append(f"                {st['name']:<16}{b['loaded_kg']:>11.1f}"
                     f"{b['burnt_kg']:>12.1f}{b['reserve_kg']:>14.1f}  {residual}")
    return lines


def _infeasibility_lines(block: dict | None) -> list[str]:
    """The conditions that must give for an infeasible problem to have a schedule."""
    if not block or not block["conditions"]:
        return []
    lines = ["  must give     condition                  as written      needed"]
    for c in block["conditions"]:
        # an angle in fixed decimals: "-2.161e-05 deg" reads as noise
        from ascentplan.output.result_text import fixed

        value, required = ((fixed(c["value"], 4), fixed(c["required"], 4))
                           if c["unit"] == "deg" else
                           (f"{c['value']:.4g}", f"{c['required']:.4g}"))
        lines.append(f"                {c['name']:<24}{value:>11} {c['unit']:<4}"
                     f"{required:>10} {c['unit']}")
    if not block["converged"]:
        lines.append("                (rough: the diagnosis did not converge)")
    return lines


def solve_problem(problem: Problem, *, split_map: int | None = None, out_dir=None) -> Result:
    """Solve as the ``solve`` verb does: with the stage-mass split comparison when the
    problem has ``mass_split`` (and the map of ``split_map`` points per axis, by default
    the file's ``map_points``, 0 for none, drawn into ``out_dir``), else :func:`solve`."""
    if problem.mass_split is None:
        return solve(problem)
    from ascentplan.staging.coupled import solve_with_split_comparison

    chosen = problem.mass_split.map_points if split_map is None else split_map
    # 0 switches off a map the file asks for
    return solve_with_split_comparison(problem, map_points=chosen or None, out_dir=out_dir)


def write_outputs(result: Result, out_dir, plotter=None) -> list:
    """Write summary.json, trajectory.csv, schedule.csv, the plots and report.html.

    ``plotter``, a :class:`~ascentplan.output.plot_workers.PlotWorkers`, draws the plots
    in its processes while the other files are written; without it they are drawn here.
    """
    from pathlib import Path

    from ascentplan.output.files import (
        csv_header,
        write_json,
        write_schedule_csv,
        write_trajectory_csv,
    )
    from ascentplan.output.inputs import solve_summary

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    pending = plotter.plot_result(result, out) if plotter is not None else None
    written = []
    # with the problem's inputs and the run's provenance, so the folder stands alone
    summary = solve_summary(result)
    write_json(summary, out / "summary.json")
    written.append(out / "summary.json")
    verdict = (result.problem.name, result.status, result.message)
    write_trajectory_csv(result.trajectory, out / "trajectory.csv",
                         header=csv_header("trajectory (the replay)", *verdict))
    written.append(out / "trajectory.csv")
    write_schedule_csv(result.schedule, out / "schedule.csv", phase_plan(result.problem),
                       header=csv_header("schedule", *verdict))
    written.append(out / "schedule.csv")
    from ascentplan.output.report import write_report

    if pending is not None:
        pngs = pending.wait()
    else:
        from ascentplan.output.plots import plot_result

        pngs = list(plot_result(result, out))
    if result.extra.get("mass_split", {}).get("map") and (out / "split_map.png").exists():
        pngs.append(out / "split_map.png")
    written += pngs
    written.append(write_report(summary, out, plots=pngs))
    return written
