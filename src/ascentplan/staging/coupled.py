"""Stage-mass split optimised together with the trajectory, compared with the
rocket-equation split, and the map of the objective around the optimum.

The rocket-equation (Lagrange-multiplier) split of :mod:`ascentplan.staging` ignores
gravity, drag and the load limits. Here it is (1) flown optimally with the split held,
which gives the objective it really achieves (the ``rocket_equation_split_flown_*`` keys
of the summary), and (2) used as the first guess of the coupled problem, in which each
stage's propellant mass is a decision variable. Dry masses
follow each stage's structural ratio (as given, or as its masses are written) and thrust
follows a given thrust-to-weight ratio, else stays as written.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np

from ascentplan.pipeline import Result, solve
from ascentplan.problem.model import Problem, Vehicle
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.staging.parallel import best_stack_split
from ascentplan.staging.rocket_equation import StageSplit, optimal_split, split_for_vehicle

#: a rocket-equation stage this small (fraction of its written propellant) is kept at it,
#: since a stage of no mass has no burn to optimise
_SMALLEST_STAGE = 0.02


def rocket_equation_split(problem: Problem) -> StageSplit:
    """The rocket-equation optimum split for the problem's vehicle and mass-split mode.

    With ``hold: liftoff_mass`` the liftoff mass (``mass_split.liftoff_mass`` or the
    vehicle's as written) and the payload are held and the ideal velocity increment is
    maximised; with ``hold: payload`` the liftoff mass is minimised for the vehicle's own
    ideal velocity increment as written.
    """
    veh = problem.vehicle
    split = problem.mass_split
    if split is None:
        raise ValueError("mass_split: the problem has no stage-mass split")
    if veh.boosters or veh.fairing is not None:
        # parallel staging (or a fairing dropped mid-burn): no closed form; found
        # numerically, the booster groups held as written
        return best_stack_split(veh, liftoff_mass=split.liftoff_mass, hold=split.hold)
    if split.hold == "liftoff_mass":
        held = split.liftoff_mass if split.liftoff_mass is not None else veh.liftoff_mass
        return optimal_split([s.exhaust_speed for s in veh.stages],
                             [s.ratio_of_structure for s in veh.stages],
                             payload_mass=veh.payload_mass, liftoff_mass=held,
                             stage_names=[s.name for s in veh.stages])
    return split_for_vehicle(veh, hold="payload")


def vehicle_with_split(vehicle: Vehicle, propellant) -> Vehicle:
    """The vehicle with new propellant masses (dry mass and thrust follow)."""
    return vehicle.with_propellant([float(p) for p in propellant])


def solve_with_split_comparison(problem: Problem, *, map_points: int | None = None,
                                out_dir=None) -> Result:
    """Solve the coupled split; also fly the rocket-equation split optimally.

    The returned result is the coupled one; ``result.extra["mass_split"]`` holds, per
    stage, the rocket-equation split, that split as flown (``rocket_equation_split_flown_*``:
    a stage the rocket equation leaves nearly empty keeps 2 % of its written propellant;
    with the payload held the proportions are kept and one common scale is optimised)
    and the coupled split, and the objective each achieves on the full trajectory model.
    With ``map_points`` (and
    ``hold: liftoff_mass``), the objective over the split around the optimum is computed
    by warm-started re-solves and kept in ``extra["mass_split"]["map"]``.
    """
    analytic = rocket_equation_split(problem)
    written = [s.propellant_mass for s in problem.vehicle.stages]
    propellant = [max(p, _SMALLEST_STAGE * w) for p, w in zip(analytic.propellant_mass, written)]
    analytic_vehicle = vehicle_with_split(problem.vehicle, propellant)

    if problem.mass_split.hold == "liftoff_mass":
        fixed_problem = replace(problem, vehicle=analytic_vehicle, mass_split=None)
    else:
        # payload held: the rocket-equation proportions kept, one common scale free
        fixed_problem = replace(problem, vehicle=analytic_vehicle,
                                mass_split=replace(problem.mass_split, proportional=True))
    fixed = solve(fixed_problem)
    coupled_problem = replace(problem, vehicle=analytic_vehicle)
    coupled = solve(coupled_problem, warm_start=fixed if fixed.status == "optimal" else None)
    # the result speaks of the problem as written
    coupled.problem = problem

    objective = OBJECTIVE_SPECS[problem.objective]
    unit, div = objective.unit, objective.divisor
    stages = []
    for i, s in enumerate(problem.vehicle.stages):
        a = fixed.solved_problem.vehicle.stages[i]
        c = coupled.solved_problem.vehicle.stages[i]
        stages.append({
            "name": s.name,
            "rocket_equation_propellant_mass_kg": float(analytic.propellant_mass[i]),
            "rocket_equation_split_flown_propellant_mass_kg": float(a.propellant_mass),
            "rocket_equation_split_flown_dry_mass_kg": float(a.dry_mass),
            "coupled_propellant_mass_kg": float(c.propellant_mass),
            "coupled_dry_mass_kg": float(c.dry_mass),
            "written_propellant_mass_kg": float(s.propellant_mass),
        })
    info = {
        "boosters": [{"name": g.name, "written_propellant_mass_kg": float(g.propellant_mass),
                      "coupled_propellant_mass_kg": float(c.propellant_mass),
                      "coupled_dry_mass_kg": float(c.dry_mass)}
                     for g, c in zip(problem.vehicle.boosters,
                                     coupled.solved_problem.vehicle.boosters)],
        "hold": problem.mass_split.hold,
        "objective_unit": unit,
        "rocket_equation_split_flown_objective": fixed.solution.objective / div,
        "rocket_equation_split_flown_status": fixed.status,
        "rocket_equation_split_flown_liftoff_mass_kg": float(
            fixed.solved_problem.vehicle.liftoff_mass),
        "coupled_objective": coupled.solution.objective / div,
        "coupled_liftoff_mass_kg": float(coupled.solved_problem.vehicle.liftoff_mass),
        "rocket_equation_ideal_velocity_increment_m_s": float(analytic.total_delta_v),
        "stages": stages,
    }
    if map_points and problem.mass_split.hold == "liftoff_mass" and coupled.status == "optimal":
        info["map"] = split_map(coupled, points=map_points)
        if out_dir is not None:
            from ascentplan.output.plots import plot_split_map

            plot_split_map(info["map"], Path(out_dir), unit=unit, objective=problem.objective)
    coupled.extra["mass_split"] = info
    return coupled


def _fractions_grid(center, points, span):
    n = len(center)
    offsets = np.linspace(-span, span, points)
    if n == 2:
        return [np.array([center[0] + d, center[1] - d]) for d in offsets], offsets, None
    if n == 3:
        grid = []
        for d1 in offsets:
            for d2 in offsets:
                grid.append(np.array([center[0] + d1, center[1] + d2,
                                      center[2] - d1 - d2]))
        return grid, offsets, offsets
    return [], None, None


def split_map(result: Result, *, points: int = 9, span: float | None = None) -> dict:
    """The objective over the stage-mass fractions around a coupled optimum.

    Each stage's mass (propellant plus dry) is a fraction of the total stage mass, which
    stays fixed (the liftoff mass and payload are held); for two stages the map is a line
    over the first stage's fraction, for three a grid over the first two. Each point is a
    re-solve of the fixed-split problem, warm-started from its neighbour; the NLP is built
    once (masses are NLP parameters).
    """
    base = result.solved_problem
    veh = base.vehicle
    total = sum(s.mass for s in veh.stages)
    center = np.array([s.mass / total for s in veh.stages])
    if span is None:
        span = 0.25 * float(np.min(center))
    grid, ax1, ax2 = _fractions_grid(center, points, span)
    eps = [s.ratio_of_structure for s in veh.stages]
    fixed_base = replace(base, mass_split=None)
    values, statuses = [], []
    previous = None
    for fractions in grid:
        if np.any(fractions <= 0):
            values.append(float("nan"))
            statuses.append("skipped")
            continue
        prop = [(1.0 - e) * f * total for e, f in zip(eps, fractions)]
        point = replace(fixed_base, vehicle=vehicle_with_split(veh, prop))
        r = solve(point, warm_start=previous or result_for_warm_start(result, fixed_base),
                  max_refinements=0)
        ok = r.status in ("optimal", "not_verified")
        values.append(r.solution.objective if ok else float("nan"))
        statuses.append(r.status)
        if r.status == "optimal":
            previous = r
    div = OBJECTIVE_SPECS[base.objective].divisor
    out = {"stage_names": [s.name for s in veh.stages], "total_stage_mass_kg": total,
           "center_fractions": center.tolist(),
           "fractions": [g.tolist() for g in grid],
           "objective": [v / div for v in values], "status": statuses,
           "optimum_objective": result.solution.objective / div}
    if ax2 is not None:
        out["axis_offsets"] = ax1.tolist()
    return out


def result_for_warm_start(result: Result, fixed_problem: Problem):
    """A coupled result seen as a fixed-split one: its primal solution seeds the map."""
    return replace(result, problem=fixed_problem, extra={})
