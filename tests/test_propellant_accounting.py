"""Propellant accounting: a stage that may not shut down early burns to depletion or the
problem is infeasible, naming the stage and the limit; an early shutdown of a throttleable
stage is reported with the propellant it leaves; a reserve stays on board.

The invented sounding rocket of problems/sounding_rocket.yaml on a coarse mesh. With its
throttle fixed at 1 its vertical flight is fully determined (thrust, burn to depletion),
so the bound a limit would need is the peak of that flight, which an independent forward
integration (``solve_ivp``, DOP853) gives.
"""

from __future__ import annotations

import json
import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from ascentplan.pipeline import format_result, solve
from ascentplan.problem.loader import ProblemError, load_problem
from ascentplan.replay.simulate import simulate

PROBLEMS = Path(__file__).resolve().parent.parent / "problems"


def _sounding(nodes=20, **stage_changes):
    problem = load_problem(PROBLEMS / "sounding_rocket.yaml")
    stage = replace(problem.vehicle.stages[0], **stage_changes)
    return replace(problem, vehicle=replace(problem.vehicle, stages=(stage,)),
                   mesh=replace(problem.mesh, nodes_per_phase=nodes, max_refinements=1))


def _full_throttle_peak(problem, quantity, powered_only):
    """Peak of ``quantity`` of the full-throttle flight to depletion (forward integration)."""
    flight = simulate(replace(problem, limits=replace(problem.limits,
                                                      max_dynamic_pressure=None,
                                                      max_axial_acceleration=None)))
    values = np.asarray(flight.quantities[quantity])
    if powered_only:
        kinds = np.asarray(flight.phase_kinds)[np.asarray(flight.phase)]
        values = values[np.isin(kinds, ("rise", "burn"))]
    return float(np.max(values))


@pytest.mark.parametrize("limit, quantity, factor, powered_only", [
    ("max_axial_acceleration", "axial_acceleration", 1.0, True),
    ("max_dynamic_pressure", "dynamic_pressure", 1000.0, False),
])
def test_fixed_throttle_stage_that_would_pass_a_limit_is_infeasible(limit, quantity, factor,
                                                                     powered_only):
    # a fixed-throttle stage may not shut down early (the default rule): with only one
    # limit, the one it passes on the way to depletion, no schedule exists; formerly the
    # optimiser cut the motor and dropped most of the propellant unburnt
    base = _sounding(throttle_min=1.0, throttle_max=1.0)
    others = {name: None for name in ("max_dynamic_pressure", "max_axial_acceleration")
              if name != limit}
    problem = replace(base, limits=replace(base.limits, **others))
    assert not problem.vehicle.stages[0].may_shut_down_early
    r = solve(problem)
    assert r.status == "infeasible", r.message
    assert limit in r.message and "'motor'" in r.message
    assert "may not shut down before depletion" in r.message
    block = r.summary()["infeasibility"]
    [condition] = block["conditions"]
    assert condition["name"] == limit and condition["kind"] == "limit"
    assert condition["stages_burning_to_depletion"] == ["motor"]
    # the bound needed is the peak of the one flight left (mesh against dense replay)
    peak = _full_throttle_peak(problem, quantity, powered_only) / factor
    assert condition["required"] == pytest.approx(peak, rel=0.01)
    assert condition["relaxation"] == pytest.approx(peak - getattr(problem.limits, limit)
                                                    / factor, rel=0.05)


def test_early_shutdown_of_a_throttleable_stage_reports_the_residual():
    # at its 40 % minimum throttle the motor still passes 4 g0 near burnout, so the best
    # flight shuts it down early; the result says how much propellant it leaves
    base = _sounding()
    problem = base.with_limits(max_axial_acceleration=4.0)
    assert problem.vehicle.stages[0].may_shut_down_early
    r = solve(problem)
    assert r.status == "optimal", r.message
    block = r.summary()["stages"][0]["propellant"]
    assert set(block) == {"loaded_kg", "burnt_kg", "reserve_kg", "unplanned_residual_kg",
                          "unplanned_residual_percent", "unplanned_residual_reported",
                          "shutdown"}
    assert block["shutdown"] == "early" and block["unplanned_residual_reported"]
    # mass accounting on the replay: loaded = burnt + reserve + residual
    mass = r.trajectory.kind.mass(np.asarray(r.trajectory.state))
    powered = np.isin(np.asarray(r.trajectory.phase_kinds)[np.asarray(r.trajectory.phase)],
                      ("rise", "burn"))
    burnt = float(mass[0] - mass[np.flatnonzero(powered)[-1]])
    assert block["burnt_kg"] == pytest.approx(burnt, abs=0.05)
    assert block["unplanned_residual_kg"] == pytest.approx(850.0 - burnt, abs=0.05)
    assert block["unplanned_residual_percent"] == pytest.approx(
        100.0 * block["unplanned_residual_kg"] / 850.0)
    assert block["unplanned_residual_kg"] > 10.0
    text = f"{block['unplanned_residual_kg']:,.1f} kg"
    assert text in r.message and "'motor' shut down" in r.message
    assert text in format_result(r)


def test_a_throttleable_stage_told_to_burn_to_depletion_is_infeasible():
    # the same flight with shutdown: at_depletion has no way to keep 4 g0
    problem = _sounding(shutdown="at_depletion").with_limits(max_axial_acceleration=4.0)
    r = solve(problem)
    assert r.status == "infeasible", r.message
    assert "max_axial_acceleration" in r.message and "'motor'" in r.message


def test_reserve_stays_on_board():
    # burnout mass = dry + reserve + mass above; the ideal velocity increment is then
    # c ln(m0 / m_b) whatever the throttle history (Tsiolkovsky)
    reserve = 60.0
    problem = _sounding(propellant_reserve=reserve)
    r = solve(problem)
    assert r.status == "optimal", r.message
    stage = problem.vehicle.stages[0]
    m0 = problem.vehicle.liftoff_mass
    m_b = stage.dry_mass + reserve + problem.vehicle.payload_mass
    assert r.burnout()["mass_kg"] == pytest.approx(m_b, abs=1e-3)
    ideal = stage.exhaust_speed * math.log(m0 / m_b)
    assert r.trajectory.losses["ideal"] == pytest.approx(ideal, rel=1e-6)
    block = r.summary()["stages"][0]["propellant"]
    assert block["reserve_kg"] == reserve
    assert block["burnt_kg"] == pytest.approx(stage.propellant_mass - reserve, abs=1e-3)
    assert not block["unplanned_residual_reported"]
    json.dumps(r.summary())  # the blocks are plain JSON


def _with_stage_keys(tmp_path, text):
    source = (PROBLEMS / "sounding_rocket.yaml").read_text()
    marker = "      throttle: {min: 0.4, max: 1.0}\n"
    assert marker in source
    path = tmp_path / "p.yaml"
    path.write_text(source.replace(marker, marker + text))
    return path


def test_reserve_and_shutdown_keys_are_read(tmp_path):
    problem = load_problem(_with_stage_keys(tmp_path, "      propellant_reserve: 2 %\n"
                                                      "      shutdown: at_depletion\n"))
    stage = problem.vehicle.stages[0]
    assert stage.reserve_mass == pytest.approx(17.0)
    assert not stage.may_shut_down_early
    stage = load_problem(_with_stage_keys(tmp_path, "      propellant_reserve: 25 kg\n")
                         ).vehicle.stages[0]
    assert stage.reserve_mass == 25.0 and stage.may_shut_down_early


@pytest.mark.parametrize("text, words", [
    ("      propellant_reserve: 900 kg\n", "less than the propellant mass"),
    ("      propellant_reserve: 120 %\n", "below 100 %"),
    ("      shutdown: later\n", "early, at_depletion"),
])
def test_bad_reserve_or_shutdown_is_a_message(tmp_path, text, words):
    with pytest.raises(ProblemError) as info:
        load_problem(_with_stage_keys(tmp_path, text))
    assert words in str(info.value) and "vehicle.stages[0]" in str(info.value)
