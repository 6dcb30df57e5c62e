"""The stage-mass split optimised with the trajectory, against the rocket-equation
optimum (no gravity, no drag) and against the rocket-equation split flown optimally."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from ascentplan.models.aero import ConstantDrag
from ascentplan.models.atmosphere import Vacuum
from ascentplan.models.gravity import ConstantGravity
from ascentplan.problem.loader import load_problem
from ascentplan.problem.model import Aerodynamics, MassSplit, Mesh, Planet, Problem, Stage, Vehicle
from ascentplan.staging.coupled import (
    rocket_equation_split,
    solve_with_split_comparison,
    split_map,
)

PROBLEMS = Path(__file__).resolve().parent.parent / "problems"


def _vacuum_two_stage() -> Problem:
    # invented stages with unequal exhaust speeds and structural ratios; full thrust
    stages = (
        Stage("lower", propellant_mass=20000.0, dry_mass=1800.0, thrust_vacuum=600e3,
              exhaust_speed=2900.0),
        Stage("upper", propellant_mass=5000.0, dry_mass=600.0, thrust_vacuum=90e3,
              exhaust_speed=3400.0),
    )
    planet = Planet("flat", 1e9, 1.0, 0.0)
    return Problem(
        name="vacuum-split", dynamics="vertical", vehicle=Vehicle(400.0, stages),
        planet=planet, atmosphere=Vacuum(), gravity=ConstantGravity(0.0),
        aerodynamics=Aerodynamics(1.0, ConstantDrag(0.3)), objective="max_burnout_speed",
        mesh=Mesh(nodes_per_phase=20, max_refinements=1), mass_split=MassSplit())


@pytest.fixture(scope="module")
def vacuum_result():
    return solve_with_split_comparison(_vacuum_two_stage())


def test_no_gravity_no_drag_reproduces_the_rocket_equation_split(vacuum_result):
    # with gravity and drag off and no limits the burnout speed is the ideal velocity
    # increment, so the coupled optimum is the Lagrange-multiplier split (Curtis, Orbital
    # Mechanics for Engineering Students, "Optimal staging"), within 0.1 % per stage
    r = vacuum_result
    assert r.status == "optimal", r.message
    analytic = rocket_equation_split(_vacuum_two_stage())
    for i, stage in enumerate(r.solved_problem.vehicle.stages):
        assert stage.propellant_mass == pytest.approx(analytic.propellant_mass[i], rel=1e-3)
    # and its replayed burnout speed is the rocket equation's total (Tsiolkovsky); the
    # collocated value carries the mesh's discretisation error (verification tolerance)
    assert r.verification.objective_replayed == pytest.approx(analytic.total_delta_v,
                                                              rel=1e-6)
    assert r.solution.objective == pytest.approx(analytic.total_delta_v, rel=5e-5)
    # liftoff mass held
    assert r.solved_problem.vehicle.liftoff_mass == pytest.approx(
        _vacuum_two_stage().vehicle.liftoff_mass, rel=1e-9)
    info = r.extra["mass_split"]
    assert info["coupled_objective"] == pytest.approx(
        info["rocket_equation_split_flown_objective"], rel=1e-6)


def test_split_map_peaks_at_the_optimum(vacuum_result):
    # every neighbouring split, flown optimally, is no better than the coupled optimum
    m = split_map(vacuum_result, points=5)
    values = np.array(m["objective"])
    assert np.all(np.isfinite(values))
    assert np.all(values <= m["optimum_objective"] * (1 + 1e-7))
    assert values[len(values) // 2] == pytest.approx(m["optimum_objective"], rel=1e-6)


def test_with_gravity_drag_and_a_limit_the_coupled_split_is_never_worse():
    # the coupled problem contains the rocket-equation split as one feasible point, so its
    # optimum cannot be lower (common practice); both are verified by replay
    problem = load_problem(PROBLEMS / "small_launcher_split.yaml")
    problem = replace(problem, mesh=replace(problem.mesh, nodes_per_phase=30))
    r = solve_with_split_comparison(problem)
    info = r.extra["mass_split"]
    assert r.status == "optimal", r.message
    assert info["rocket_equation_split_flown_status"] == "optimal"
    assert info["coupled_objective"] >= info["rocket_equation_split_flown_objective"] - 1e-6
    assert r.verification.passed
    assert any(lim["active"] and lim["name"] == "max_dynamic_pressure" for lim in r.limits())
    assert r.solved_problem.vehicle.liftoff_mass == pytest.approx(
        problem.vehicle.liftoff_mass, rel=1e-9)


def test_payload_held_minimum_liftoff_mass_is_the_rocket_equation_optimum():
    # payload held, liftoff mass minimised for a burnout speed: with gravity and drag off
    # this is the Lagrange-multiplier problem for that velocity increment (Curtis,
    # "Optimal staging"), so the liftoff mass and the split agree within 0.1 %
    from ascentplan.problem.model import Target
    from ascentplan.staging.rocket_equation import optimal_split

    base = _vacuum_two_stage()
    speed = 8000.0
    problem = replace(base, objective="min_liftoff_mass", target=Target(speed=speed),
                      mass_split=MassSplit(hold="payload"))
    r = solve_with_split_comparison(problem)
    assert r.status == "optimal", r.message
    stages = base.vehicle.stages
    reference = optimal_split([s.exhaust_speed for s in stages],
                              [s.dry_mass / s.mass for s in stages],
                              payload_mass=base.vehicle.payload_mass, delta_v=speed)
    assert r.solved_problem.vehicle.liftoff_mass == pytest.approx(reference.liftoff_mass,
                                                                  rel=1e-3)
    for i, stage in enumerate(r.solved_problem.vehicle.stages):
        assert stage.propellant_mass == pytest.approx(reference.propellant_mass[i], rel=1e-3)
    # the rocket-equation split flown with its proportions held needs no more mass here
    info = r.extra["mass_split"]
    assert (info["coupled_objective"]
            <= info["rocket_equation_split_flown_objective"] * (1 + 1e-6))
