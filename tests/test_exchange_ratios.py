"""Exchange ratios (d objective / d input) from the NLP's parameter multipliers.

Checked against central finite differences of re-solves (envelope theorem), against mass
accounting (payload and upper-stage dry mass ride together to injection), and against the
rocket equation's derivatives in closed form (Tsiolkovsky) in a vacuum without gravity.
"""

from __future__ import annotations

import copy
import math
from dataclasses import replace

import pytest

from ascentplan.constants import G0
from ascentplan.exchange import exchange_ratios
from ascentplan.models.aero import ConstantDrag
from ascentplan.models.atmosphere import Vacuum
from ascentplan.models.gravity import ConstantGravity
from ascentplan.optimisation.nlp import structure_key
from ascentplan.pipeline import format_result, solve
from ascentplan.problem.loader import problem_from_dict
from ascentplan.problem.model import Aerodynamics, Mesh, Planet, Problem, Stage, Target, Vehicle
from ascentplan.study.document import apply_changes

#: an invented two-stage vertical rocket with drag, back-pressure loss and an active
#: max-q limit; its first stage's thrust is written as a thrust-to-weight ratio and its
#: second stage's dry mass as a structural ratio, so the loader's rules are exercised
_TWO_STAGE = {
    "name": "exchange-two-stage",
    "dynamics": "vertical",
    "planet": "earth",
    "atmosphere": {"model": "exponential", "scale_height": "7200 m"},
    "gravity": "inverse_square",
    "aerodynamics": {"reference_area": "0.5 m^2", "drag": 0.35, "drag_scale": 1.0},
    "vehicle": {
        "payload_mass": "100 kg",
        "stages": [
            {"name": "booster", "propellant_mass": "2400 kg", "dry_mass": "320 kg",
             "thrust_to_weight": 2.6, "isp_vacuum": "265 s",
             "nozzle_exit_area": "0.08 m^2", "throttle": {"min": 0.3, "max": 1.0}},
            {"name": "sustainer", "propellant_mass": "600 kg", "structural_ratio": 0.15,
             "thrust_vacuum": "12 kN", "isp_vacuum": "290 s",
             "nozzle_exit_area": "0.03 m^2", "throttle": {"min": 0.3, "max": 1.0}},
        ],
    },
    "limits": {"max_dynamic_pressure": "35 kPa"},
    "objective": "max_burnout_speed",
    "mesh": {"nodes_per_phase": 20, "max_refinements": 0},
}


def _by_input(result) -> dict:
    return {e["input"]: e for e in result.exchange_ratios()}


def _file_value(problem: Problem, key: str) -> float:
    """The SI value of a problem-file key as the loader read it."""
    if key.startswith("limits."):
        return getattr(problem.limits, key.split(".", 1)[1])
    if key == "vehicle.payload_mass":
        return problem.vehicle.payload_mass
    if key == "aerodynamics.drag_scale":
        return problem.aerodynamics.drag_scale
    index = int(key.split("[")[1].split("]")[0])
    field = key.rsplit(".", 1)[1]
    stage = problem.vehicle.stages[index]
    return stage.isp_vacuum if field == "isp_vacuum" else getattr(stage, field)


def _user_step(entry: dict, step_si: float) -> float:
    """The step of an input in the unit its exchange ratio is priced per."""
    unit = entry["input_unit"]
    if unit == "%":
        return 100.0 * step_si  # per 0.01 of a dimensionless input
    if unit == "kN":
        return step_si / 1e3
    if unit == "kPa":
        return step_si / 1e3
    return step_si


def test_every_exchange_ratio_matches_central_differences_of_resolves():
    """Each ratio against (J(x + h) - J(x - h)) / 2h of two warm-started re-solves of the
    problem file with the key changed (envelope theorem: the multiplier of a parameter is
    the derivative of the optimum; central differences, common practice), within 2 %."""
    document = copy.deepcopy(_TWO_STAGE)
    problem = problem_from_dict(copy.deepcopy(document))
    base = solve(problem)
    assert base.status == "optimal"
    ratios = _by_input(base)
    expected_keys = {
        "vehicle.payload_mass", "vehicle.stages[0].propellant_mass",
        "vehicle.stages[0].dry_mass", "vehicle.stages[0].thrust_to_weight",
        "vehicle.stages[0].isp_vacuum", "vehicle.stages[0].nozzle_exit_area",
        "vehicle.stages[1].propellant_mass", "vehicle.stages[1].structural_ratio",
        "vehicle.stages[1].thrust_vacuum", "vehicle.stages[1].isp_vacuum",
        "vehicle.stages[1].nozzle_exit_area", "aerodynamics.drag_scale",
        "limits.max_dynamic_pressure"}
    assert set(ratios) == expected_keys
    assert ratios["limits.max_dynamic_pressure"]["value"] > 0  # the limit is active
    for key, entry in ratios.items():
        x = _file_value(problem, key)
        h = 0.01 * x
        up = solve(apply_changes(document, {key: _as_file(key, x + h)}), warm_start=base)
        down = solve(apply_changes(document, {key: _as_file(key, x - h)}), warm_start=base)
        assert up.solution.status == down.solution.status == "optimal", key
        slope = ((up.objective_value - down.objective_value)
                 / _user_step(entry, 2.0 * h))
        assert entry["value"] == pytest.approx(slope, rel=0.02, abs=1e-3 * abs(slope) + 1e-6), (
            key, entry["value"], slope)


def _as_file(key: str, value_si: float):
    """A value as the problem file would hold it (Isp in s, every other key in SI)."""
    if key.endswith("isp_vacuum"):
        return f"{value_si!r} s"
    return value_si


def _vacuum_two_stage(objective="max_burnout_speed", nodes=60, gravity=1e-6) -> Problem:
    """Two fixed-throttle stages in a vacuum with (almost) no gravity, vertical flight."""
    radius = 1e9
    planet = Planet("flat", radius, gravity * radius**2, 0.0)
    stages = (Stage("lower", propellant_mass=9000.0, dry_mass=1100.0, thrust_vacuum=220e3,
                    exhaust_speed=2900.0),
              Stage("upper", propellant_mass=2500.0, dry_mass=350.0, thrust_vacuum=45e3,
                    exhaust_speed=3300.0))
    return Problem(
        name="vacuum-two-stage", dynamics="vertical", vehicle=Vehicle(400.0, stages),
        planet=planet, atmosphere=Vacuum(), gravity=ConstantGravity(gravity),
        aerodynamics=Aerodynamics(0.0, ConstantDrag(1.0)), objective=objective,
        mesh=Mesh(nodes_per_phase=nodes, max_refinements=0))


def test_rocket_equation_derivatives_in_vacuum_without_gravity():
    """Tsiolkovsky, v = sum_k c_k ln(m0_k / mf_k) - g t_b with t_b = sum m_p,k c_k / F_k:
    per second of Isp, g0 (ln(m0_k/mf_k) - g m_p,k / F_k); per kg of stage i's dry mass,
    sum over k <= i of c_k (1/m0_k - 1/mf_k) (the stage and every stage below it carry
    it); payload as the dry mass of the top stage. To 1e-6 relative."""
    g = 1e-6
    problem = _vacuum_two_stage(gravity=g)
    result = solve(problem)
    assert result.status == "optimal"
    ratios = _by_input(result)
    veh = problem.vehicle
    m0 = [veh.ignition_mass(i) for i in range(2)]
    mf = [veh.burnout_mass(i) for i in range(2)]
    for i, s in enumerate(veh.stages):
        isp = G0 * (math.log(m0[i] / mf[i]) - g * s.propellant_mass / s.thrust_vacuum)
        assert ratios[f"vehicle.stages[{i}].isp_vacuum"]["value"] == pytest.approx(
            isp, rel=1e-6)
        dry = sum(veh.stages[k].exhaust_speed * (1.0 / m0[k] - 1.0 / mf[k])
                  for k in range(i + 1))
        assert ratios[f"vehicle.stages[{i}].dry_mass"]["value"] == pytest.approx(dry, rel=1e-6)
        assert ratios[f"vehicle.stages[{i}].dry_mass"]["unit"] == "m/s per kg"
        assert ratios[f"vehicle.stages[{i}].isp_vacuum"]["unit"] == "m/s per s"
    assert ratios["vehicle.payload_mass"]["value"] == pytest.approx(
        ratios["vehicle.stages[1].dry_mass"]["value"], rel=1e-9)
    assert "aerodynamics.drag_scale" not in ratios  # no drag over a vacuum


def test_upper_stage_dry_mass_trades_one_for_one_against_payload():
    """Maximum payload: a kilogram of upper-stage dry mass rides to the target exactly as
    a kilogram of payload does, so it costs one kilogram of payload (mass accounting)."""
    problem = replace(_vacuum_two_stage(objective="max_payload", gravity=G0, nodes=30),
                      target=Target(altitude=150e3))
    result = solve(problem)
    assert result.status == "optimal"
    ratios = _by_input(result)
    upper = ratios["vehicle.stages[1].dry_mass"]
    assert upper["value"] == pytest.approx(-1.0, rel=1e-6)
    assert upper["unit"] == "kg per kg" and upper["objective_unit"] == "kg"
    assert "vehicle.payload_mass" not in ratios  # chosen by the optimiser, no input
    # a lower stage's kilogram is dropped on the way: it costs less than one
    assert -1.0 < ratios["vehicle.stages[0].dry_mass"]["value"] < 0.0


def test_summary_block_sorted_printed_and_null_when_not_converged():
    """summary.json holds the list sorted by |value|; the printed summary shows the five
    largest and counts the rest; a solve that did not converge has null values and a
    reason (common practice: multipliers are sensitivities only at an optimum)."""
    problem = problem_from_dict(copy.deepcopy(_TWO_STAGE))
    result = solve(problem)
    block = result.summary()["exchange_ratios"]
    magnitudes = [abs(e["value"]) for e in block]
    assert magnitudes == sorted(magnitudes, reverse=True)
    assert all(set(e) == {"input", "label", "value", "unit", "objective_unit", "input_unit"}
               for e in block)
    text = format_result(result)
    assert block[0]["label"] in text and f"({len(block) - 5} more in summary.json)" in text
    failed = replace(result.solution, status="failed", return_status="Maximum_Iterations_Exceeded")
    nulls = exchange_ratios(problem, failed, result.limits())
    assert len(nulls) == len(block)
    assert all(e["value"] is None and "did not converge" in e["reason"] for e in nulls)


def test_engine_and_drag_inputs_reuse_the_built_nlp():
    """Exhaust speed, nozzle exit area and the drag scale are NLP parameters: a study
    varying them keeps the structure key (the built NLP is reused)."""
    problem = problem_from_dict(copy.deepcopy(_TWO_STAGE))
    stage = replace(problem.vehicle.stages[1], exhaust_speed=3000.0, nozzle_exit_area=0.05)
    changed = replace(problem, vehicle=replace(problem.vehicle, stages=(
        problem.vehicle.stages[0], stage)),
        aerodynamics=replace(problem.aerodynamics, drag_scale=1.1))
    assert structure_key(changed) == structure_key(problem)
