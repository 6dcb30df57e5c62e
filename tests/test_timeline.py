"""The timeline of events and the mass accounting of a vehicle stack, in summary.json, the
printed summary, the report and the plots' event labels.

The problem: a core with two groups of strap-on boosters (the second air-lit at the first
one's burnout), an upper stage that restarts once after an optimiser-timed coast, and a
fairing dropped at a given time (invented vehicle).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from ascentplan.constants import G0
from ascentplan.output.inputs import solve_summary
from ascentplan.output.report import render_html
from ascentplan.pipeline import format_result, solve
from ascentplan.problem.loader import problem_from_dict
from ascentplan.problem.model import phase_plan
from ascentplan.replay.phase_checks import TIME_TOLERANCE_S

#: per booster [kg], [N], [s]: the side group (2 boosters, from liftoff), the late group
#: (2 boosters, lit at the side group's burnout)
SIDE = dict(count=2, propellant=12e3, dry=1.5e3, thrust=500e3, isp=270.0)
LATE = dict(count=2, propellant=6e3, dry=1.0e3, thrust=300e3, isp=280.0)
PAYLOAD, FAIRING, FAIRING_TIME = 2000.0, 800.0, 150.0
CORE = dict(propellant=80e3, dry=8e3)
UPPER = dict(propellant=15e3, dry=1.8e3)


def _doc(objective="max_payload") -> dict:
    def group(name, g, **extra):
        return {"name": name, "count": g["count"], "propellant_mass": f"{g['propellant']} kg",
                "dry_mass": f"{g['dry']} kg", "thrust_vacuum": f"{g['thrust']} N",
                "isp_vacuum": f"{g['isp']} s", **extra}

    return {
        "name": "timeline-stack", "dynamics": "planar", "planet": "earth",
        "atmosphere": {"model": "exponential", "scale_height": "7.2 km"},
        "gravity": "inverse_square",
        "aerodynamics": {"reference_area": "10 m^2", "drag": {"model": "constant", "cd": 0.3}},
        "vehicle": {
            "payload_mass": f"{PAYLOAD} kg",
            "fairing": {"mass": f"{FAIRING} kg", "jettison_time": f"{FAIRING_TIME} s"},
            "stages": [
                {"name": "core", "propellant_mass": f"{CORE['propellant']} kg",
                 "dry_mass": f"{CORE['dry']} kg", "thrust_vacuum": "1400 kN",
                 "isp_vacuum": "300 s", "throttle": {"min": 0.5, "max": 1.0},
                 "boosters": [group("side", SIDE),
                              group("late", LATE, ignition="after side")]},
                {"name": "upper", "propellant_mass": f"{UPPER['propellant']} kg",
                 "dry_mass": f"{UPPER['dry']} kg", "thrust_vacuum": "200 kN",
                 "isp_vacuum": "340 s", "throttle": {"min": 0.5, "max": 1.0},
                 "restarts": 1, "coast_between_burns": {"min": "10 s", "max": "3000 s"}},
            ],
        },
        "launch": {"vertical_rise": "6 s", "pitch_over": "1.5 deg"},
        "target": {"circular_orbit_altitude": "300 km"},
        "objective": objective,
        "mesh": {"nodes_per_phase": 15},
    }


@pytest.fixture(scope="module")
def stack_result():
    result = solve(problem_from_dict(_doc()))
    assert result.status == "optimal", result.message
    return result


@pytest.fixture(scope="module")
def summary(stack_result):
    # through JSON, as the file holds it
    return json.loads(json.dumps(solve_summary(stack_result)))


def _group_flow(g) -> float:
    """Mass flow of a group at full thrust [kg/s]: F = mdot g0 Isp (Sutton, Rocket
    Propulsion Elements, ch. 2)."""
    return g["count"] * g["thrust"] / (g["isp"] * G0)


def _burn_time(g) -> float:
    """A booster's burn time [s]: propellant over mass flow, t_b = m_p g0 Isp / F (Sutton)."""
    return g["propellant"] * g["isp"] * G0 / g["thrust"]


def test_liftoff_mass_is_final_mass_plus_burnt_plus_jettisoned(summary, stack_result):
    block = summary["mass_accounting"]
    payload = stack_result.solved_problem.vehicle.payload_mass  # chosen by the optimiser
    # the liftoff mass summed from the problem's own figures (mass accounting, common practice)
    liftoff = (payload + FAIRING + sum(s["propellant"] + s["dry"] for s in (CORE, UPPER))
               + sum(g["count"] * (g["propellant"] + g["dry"]) for g in (SIDE, LATE)))
    assert block["liftoff_mass_kg"] == pytest.approx(liftoff, rel=1e-12)
    balance = block["final_mass_kg"] + block["propellant_burnt_kg"] + block["jettisoned_kg"]
    assert balance == pytest.approx(liftoff, rel=1e-6)
    assert abs(block["closure_kg"]) <= 1e-6 * liftoff
    # what was dropped, item by item: each group's casings, the fairing, the spent core
    # with what it left unburnt
    items = {(i["kind"], i["item"]): i for i in block["jettisoned"]}
    assert set(items) == {("booster_casings", "side"), ("booster_casings", "late"),
                          ("fairing", "fairing"), ("stage", "core")}
    assert items["booster_casings", "side"]["mass_kg"] == pytest.approx(SIDE["count"] * SIDE["dry"])
    assert items["booster_casings", "late"]["mass_kg"] == pytest.approx(LATE["count"] * LATE["dry"])
    assert items["fairing", "fairing"]["mass_kg"] == pytest.approx(FAIRING)
    core = next(e for e in block["elements"] if e["name"] == "core")
    assert items["stage", "core"]["mass_kg"] == pytest.approx(CORE["dry"] + core["residual_kg"])
    times = [i["time_s"] for i in block["jettisoned"]]
    assert times == sorted(times)
    # the end of the flight: payload, upper stage's dry mass and what it did not burn
    upper = next(e for e in block["elements"] if e["name"] == "upper")
    assert block["final_mass_kg"] == pytest.approx(
        payload + UPPER["dry"] + upper["residual_kg"], rel=1e-6)
    # the replay ends with the same mass (its own integration of the same schedule)
    assert stack_result.trajectory.events[-1]["mass"] == pytest.approx(
        block["final_mass_kg"], rel=1e-6)


def test_boosters_burn_their_whole_load_in_their_own_phases(summary, stack_result):
    block = summary["mass_accounting"]
    names = [e["name"] for e in block["elements"]]
    for name, g in (("side", SIDE), ("late", LATE)):
        e = block["elements"][names.index(name)]
        assert e["kind"] == "booster_group" and e["count"] == g["count"]
        # count x propellant per booster (the problem's figures)
        assert e["burnt_kg"] == pytest.approx(g["count"] * g["propellant"], rel=1e-6)
        assert abs(e["residual_kg"]) <= 1e-6 * e["loaded_kg"]
    plan = phase_plan(stack_result.solved_problem)
    side, late = names.index("side"), names.index("late")
    for p, ph in zip(block["phases"], plan):
        side_in, late_in = 0 in ph.boosters, 1 in ph.boosters
        # a group burns at its own mass flow for the phase's duration, or not at all
        assert p["burnt_kg"][side] == pytest.approx(
            _group_flow(SIDE) * p["duration_s"] if side_in else 0.0, abs=1e-6)
        assert p["burnt_kg"][late] == pytest.approx(
            _group_flow(LATE) * p["duration_s"] if late_in else 0.0, abs=1e-6)
    # each group's residual at its burnout, optimiser and replay
    for r in (r for r in block["residuals"] if r["kind"] == "booster_group"):
        assert abs(r["propellant_remaining_kg"]) < 1e-3
        assert abs(r["replay_propellant_remaining_kg"]) < 1e-3
    # the stages' burnt propellant is the propellant accounting's
    for account in stack_result.propellant:
        e = block["elements"][names.index(account.name)]
        assert e["burnt_kg"] == pytest.approx(account.burnt, rel=1e-9)


def test_timeline_events_fall_on_the_phase_boundaries(summary, stack_result):
    entries = summary["timeline"]
    kinds = [(e["kind"], e.get("group") or e["stage_name"]) for e in entries]
    assert kinds == [("liftoff", "core"), ("booster_burnout", "side"),
                     ("booster_ignition", "late"), ("booster_burnout", "late"),
                     ("burnout", "core"), ("staging", "core"), ("ignition", "upper"),
                     ("fairing_jettison", "upper"), ("cutoff", "upper"), ("coast", "upper"),
                     ("restart", "upper"), ("burnout", "upper")]
    times = [e["time_s"] for e in entries]
    assert times == sorted(times)
    solution = stack_result.solution
    boundaries = [0.0] + [float(t[-1]) for t in solution.times]
    for e in entries:
        # every event of this flight is at a phase boundary of the optimiser's, and the
        # replay flies it there within the verification's time tolerance
        assert e["optimiser_time_s"] is not None, e["kind"]
        assert min(abs(e["optimiser_time_s"] - b) for b in boundaries) < 1e-9
        tolerance = TIME_TOLERANCE_S + 1e-6 * abs(e["optimiser_time_s"])
        assert abs(e["time_s"] - e["optimiser_time_s"]) <= tolerance, e["label"]
    by_kind = {(k, n): e for (k, n), e in zip(kinds, entries)}
    # the side boosters burn out at their burn time t_b = m_p g0 Isp / F (Sutton)
    assert by_kind["booster_burnout", "side"]["time_s"] == pytest.approx(_burn_time(SIDE),
                                                                          rel=1e-9)
    assert by_kind["booster_burnout", "late"]["time_s"] == pytest.approx(
        _burn_time(SIDE) + _burn_time(LATE), rel=1e-9)
    assert by_kind["booster_burnout", "side"]["dropped_mass_kg"] == SIDE["count"] * SIDE["dry"]
    # the fairing at the time the file gives
    assert by_kind["fairing_jettison", "upper"]["time_s"] == pytest.approx(
        FAIRING_TIME, abs=TIME_TOLERANCE_S)
    # the coast lasts what the optimiser chose, within the file's bounds
    coast = by_kind["coast", "upper"]
    j = coast["phase"]
    assert coast["duration_s"] == pytest.approx(solution.durations[j], abs=TIME_TOLERANCE_S)
    assert 10.0 - TIME_TOLERANCE_S <= coast["duration_s"] <= 3000.0 + TIME_TOLERANCE_S
    assert by_kind["restart", "upper"]["time_s"] == pytest.approx(coast["end_s"], abs=1e-9)
    # masses: liftoff mass at liftoff; the casings leave at the burnout
    assert entries[0]["mass_kg"] == pytest.approx(
        summary["mass_accounting"]["liftoff_mass_kg"], rel=1e-12)
    assert by_kind["booster_burnout", "side"]["mass_kg"] - by_kind[
        "booster_ignition", "late"]["mass_kg"] == pytest.approx(SIDE["count"] * SIDE["dry"])


def test_printed_summary_and_report_carry_both_sections(summary, stack_result):
    text = format_result(stack_result)
    assert "  timeline " in text and "  mass [kg]     liftoff " in text
    for label in ("side burnout, 3.00 t dropped", "late ignite", "fairing jettison, 0.80 t",
                  "upper cut-off 1", "upper restart 1", "core dropped"):
        assert label in text, label
    assert "side casings" in text and "2 x late" in text
    # the tables come before the caution, which ends the text
    assert text.index("  timeline ") < text.index("Caution")
    page = render_html(summary)
    assert "<h2>Timeline</h2>" in page and "<h2>Mass accounting</h2>" in page
    assert "Propellant burnt per phase" in page and "side casings" in page
    # known keys: not repeated under "Other results"
    assert "mass_accounting" not in page and "optimiser_time_s" not in page


def test_plot_labels_name_the_stack_events(stack_result):
    from ascentplan.output.plots import _event_marks

    marks = _event_marks(stack_result.solved_problem, stack_result.trajectory)
    labels = [label for _time, label, _kinds in marks]
    assert "boosters out + boosters lit (side, late)" in labels
    assert any(label.startswith("cut-off") for label in labels)
    assert any(label.startswith("restart") for label in labels)
    assert any("fairing" in label for label in labels)


def test_a_single_stage_flight_has_a_short_timeline():
    from cases import vertical_q_problem

    result = solve(vertical_q_problem(nodes=15, max_refinements=0))
    s = result.summary()
    assert [e["kind"] for e in s["timeline"]] == ["liftoff", "burnout"]
    block = s["mass_accounting"]
    assert block["jettisoned"] == [] and len(block["elements"]) == 1
    # no drops: the liftoff mass is the final mass and the propellant burnt
    assert block["final_mass_kg"] + block["propellant_burnt_kg"] == pytest.approx(
        block["liftoff_mass_kg"], rel=1e-9)
    assert np.isfinite(block["closure_kg"])


def test_a_flight_from_orbit_starts_in_orbit_and_coasts_between_its_burns():
    # an invented transfer stage in a 300 km circular orbit, burn-coast-burn to 1000 km
    doc = {
        "name": "transfer", "dynamics": "planar", "planet": "earth", "atmosphere": "vacuum",
        "gravity": "inverse_square",
        "aerodynamics": {"reference_area": "1 m^2", "drag": {"model": "constant", "cd": 0.3}},
        "vehicle": {"payload_mass": "1000 kg", "stages": [{
            "name": "transfer stage", "propellant_mass": "400 kg", "dry_mass": "200 kg",
            "thrust_vacuum": "20 kN", "isp_vacuum": "320 s",
            "throttle": {"min": 0.0, "max": 1.0}, "restarts": 1,
            "coast_between_burns": {"min": "60 s", "max": "2 h"}}]},
        "launch": {"altitude": "300 km", "in_circular_orbit": True},
        "target": {"circular_orbit_altitude": "1000 km"},
        "objective": "min_propellant", "mesh": {"nodes_per_phase": 15},
    }
    result = solve(problem_from_dict(doc))
    assert result.status == "optimal", result.message
    s = result.summary()
    entries = s["timeline"]
    assert [e["kind"] for e in entries] == ["liftoff", "cutoff", "coast", "restart", "burnout"]
    assert entries[0]["label"] == "start in orbit: transfer stage ignites"
    coast = entries[2]
    # the coast lasts what the optimiser chose, within the file's bounds
    assert 60.0 <= coast["duration_s"] <= 7200.0
    assert coast["duration_s"] == pytest.approx(coast["optimiser_duration_s"],
                                                abs=TIME_TOLERANCE_S)
    block = s["mass_accounting"]
    assert block["jettisoned"] == []
    # the stage's residual at the cut-off is what its second burn burns
    [cutoff, burnout] = block["residuals"]
    second = block["phases"][2]["burnt_kg"][0]
    assert cutoff["propellant_remaining_kg"] - burnout["propellant_remaining_kg"] == (
        pytest.approx(second, rel=1e-9))
    assert cutoff["replay_propellant_remaining_kg"] == pytest.approx(
        cutoff["propellant_remaining_kg"], abs=1e-3)


def test_plotted_node_acceleration_in_a_booster_phase_is_the_replay_s():
    # the optimiser's node markers are computed with the phase's engines: the boosters
    # burning beside the core add their thrust (compared with the independent replay at
    # the same instant, common practice for a plot of two computations of one flight)
    from pathlib import Path

    from ascentplan import load_problem, solve
    from ascentplan.output.figure_list import result_nodes
    from ascentplan.output.plots import _node_quantities

    problem = load_problem(Path(__file__).resolve().parents[1] / "problems"
                           / "booster_launcher.yaml")
    result = solve(problem)
    nodes = _node_quantities(result.solved_problem, result_nodes(result))
    j = 1  # the ground-lit boosters beside the core
    assert result.solved_problem.vehicle.boosters and j < len(nodes)
    k = len(nodes[j]["time"]) // 2
    t = float(nodes[j]["time"][k])
    replay = result.trajectory.quantities_at(t, phase=j)["axial_acceleration"]
    assert nodes[j]["axial_acceleration"][k] == pytest.approx(replay, rel=2e-3)
