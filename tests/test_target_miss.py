"""What "verified" covers: the replay's miss from the target as written, the orbit the
replay reaches, the objective that a replay can and cannot recompute, the velocity budget
as two equations, and the printed summary."""

from __future__ import annotations

import math
import re
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from ascentplan.constants import PLANETS
from ascentplan.models.dynamics import dynamics_kind
from ascentplan.pipeline import _infeasibility_lines, format_result, solve
from ascentplan.problem.loader import load_problem
from ascentplan.problem.model import Planet
from ascentplan.replay.verify import (
    FLIGHT_PATH_ANGLE_TOLERANCE_DEG,
    apsis_altitudes,
    verify,
)

PROBLEMS = Path(__file__).resolve().parents[1] / "problems"
EARTH = Planet("earth", **PLANETS["earth"])


@pytest.fixture(scope="module")
def small():
    problem = load_problem(PROBLEMS / "small_launcher.yaml")
    return problem, solve(problem)


# --- the orbit of a burnout state --------------------------------------------------------

def test_circular_state_has_equal_perigee_and_apogee():
    # circular speed sqrt(mu/r) (Newton; Curtis, Orbital Mechanics for Engineering
    # Students, ch. 2, from memory): perigee = apogee = the altitude
    h = 250e3
    r = EARTH.radius + h
    perigee, apogee = apsis_altitudes(r, 0.0, math.sqrt(EARTH.gravitational_parameter / r),
                                      EARTH)
    assert perigee == pytest.approx(h, abs=1e-6)
    assert apogee == pytest.approx(h, abs=1e-6)


def test_perigee_speed_gives_the_apogee_of_the_ellipse():
    # speed at perigee of the ellipse (r_p, r_a): v_p = sqrt(2 mu r_a / (r_p (r_p + r_a)))
    # (vis-viva, Curtis ch. 2, from memory)
    mu = EARTH.gravitational_parameter
    r_p, r_a = EARTH.radius + 200e3, EARTH.radius + 1500e3
    v_p = math.sqrt(2 * mu * r_a / (r_p * (r_p + r_a)))
    perigee, apogee = apsis_altitudes(r_p, 0.0, v_p, EARTH)
    assert perigee == pytest.approx(200e3, abs=1e-3)
    assert apogee == pytest.approx(1500e3, abs=1e-3)


def test_apses_of_a_state_off_the_apses_match_the_eccentricity_vector():
    # an independent route: the eccentricity vector e = ((v^2 - mu/r) r - (r.v) v)/mu and
    # a = -mu/(2 energy), r_p = a (1 - |e|), r_a = a (1 + |e|) (Vallado, Fundamentals of
    # Astrodynamics, RV2COE, from memory)
    mu = EARTH.gravitational_parameter
    r, v_r, v_h = EARTH.radius + 180e3, 350.0, 7600.0
    rv, vv = np.array([r, 0.0]), np.array([v_r, v_h])
    e = ((vv @ vv - mu / r) * rv - (rv @ vv) * vv) / mu
    a = -mu / (2 * (0.5 * (vv @ vv) - mu / r))
    perigee, apogee = apsis_altitudes(r, v_r, v_h, EARTH)
    assert perigee == pytest.approx(a * (1 - np.linalg.norm(e)) - EARTH.radius, rel=1e-9)
    assert apogee == pytest.approx(a * (1 + np.linalg.norm(e)) - EARTH.radius, rel=1e-9)


def test_escape_has_no_apogee():
    r = EARTH.radius + 300e3
    v_escape = math.sqrt(2 * EARTH.gravitational_parameter / r)
    assert apsis_altitudes(r, 0.0, 1.01 * v_escape, EARTH)[1] is None


# --- the miss is taken on the replay, against the target as written ---------------------

def test_good_solve_meets_the_target_within_the_stated_tolerances(small):
    problem, r = small
    assert r.status == "optimal", r.message
    block = r.summary()["target_miss"]
    assert block["passed"] and block["circular_orbit"] is None
    alt, fpa = block["conditions"]["altitude"], block["conditions"]["flight_path_angle"]
    # the replay's own burnout state, not the optimiser's
    kind = dynamics_kind(problem.dynamics)
    xb = r.trajectory.burnout_state()
    assert alt["replayed_m"] == kind.altitude(xb, problem.planet)
    assert alt["written_m"] == problem.target.altitude
    assert alt["miss_m"] == pytest.approx(alt["replayed_m"] - alt["written_m"], abs=1e-9)
    # stated tolerances (replay/verify.py docstring): max(10 m, 0.05 %); 0.01 deg
    assert alt["tolerance_m"] == pytest.approx(max(10.0, 5e-4 * 200e3))
    assert abs(alt["miss_m"]) <= alt["tolerance_m"]
    assert fpa["tolerance_deg"] == FLIGHT_PATH_ANGLE_TOLERANCE_DEG == 0.01
    assert abs(fpa["miss_deg"]) <= 0.01
    assert r.summary()["verification"]["target_met"] is True


def test_a_target_the_replay_misses_fails_verification(small):
    # the same replay checked against a target 1 km higher: the replay agrees with the
    # optimiser (its own burnout) but misses the written target by about 1 km
    problem, r = small
    moved = replace(problem, target=replace(problem.target,
                                            altitude=problem.target.altitude + 1000.0))
    v = verify(moved, r.solution, r.trajectory)
    assert not v.passed
    assert abs(v.burnout_altitude_difference_m) < 10.0
    (alt,) = [c for c in v.target_miss.conditions if c.name == "altitude"]
    assert alt.miss == pytest.approx(-1000.0, abs=10.0) and not alt.passed
    assert any("misses the target altitude" in reason for reason in v.reasons)


def test_coarse_mesh_whose_replay_misses_the_target_is_not_verified():
    # few nodes and no refinement: the optimiser meets the target on its mesh, the replay
    # of its schedule does not (collocation error, Betts 2010 ch. 4, from memory)
    problem = load_problem(PROBLEMS / "small_launcher.yaml")
    coarse = replace(problem, mesh=replace(problem.mesh, nodes_per_phase=6, max_refinements=0))
    r = solve(coarse)
    assert r.solution.status == "optimal"
    assert r.status == "not_verified", r.message
    assert not r.summary()["target_miss"]["passed"]
    assert "misses the target" in r.message


def test_circular_orbit_target_reports_perigee_and_apogee_and_the_payload_is_not_replayed():
    problem = load_problem(PROBLEMS / "medium_launcher.yaml")
    r = solve(problem)
    assert r.status == "optimal", r.message
    s = r.summary()
    orbit = s["target_miss"]["circular_orbit"]
    h = problem.target.circular_orbit_altitude
    assert orbit["altitude_m"] == h
    # a replay within the altitude, speed and angle tolerances is a near-circular orbit
    assert abs(orbit["perigee_altitude_m"] - h) < 2e3 and abs(orbit["apogee_altitude_m"] - h) < 2e3
    speed = s["target_miss"]["conditions"]["speed"]
    r_t = problem.planet.radius + h
    assert speed["written_m_s"] == pytest.approx(
        math.sqrt(problem.planet.gravitational_parameter / r_t), rel=1e-12)
    # max_payload: the replay flies the optimiser's payload, it does not recompute it
    assert s["objective"]["independently_replayed"] is False
    assert "target_miss" in s["objective"]["note"]
    assert "checked by the target miss" in format_result(r)


# --- the velocity budget as equations; the printed summary -------------------------------

def test_velocity_budget_closes_and_adds_up_to_the_burnout_speed(small):
    problem, r = small
    s = r.summary()
    lo = s["losses_m_s"]
    # ideal = achieved + gravity + drag + steering + back-pressure (Newton's second law
    # along the velocity, common practice), to integration error
    closure = lo["ideal"] - lo["achieved"] - sum(
        lo[k] for k in ("gravity", "drag", "steering", "back_pressure"))
    assert abs(closure) < 1e-6 * lo["ideal"]
    # the pad moves with the planet: omega (R + h) cos(latitude) (common practice)
    pad = (problem.planet.rotation_rate * (problem.planet.radius + problem.launch.altitude)
           * math.cos(problem.launch.latitude))
    assert lo["pad_rotation_speed"] == pytest.approx(pad, rel=1e-9)
    assert lo["pad_rotation_speed"] + lo["achieved"] == pytest.approx(
        s["burnout"]["speed_m_s"], rel=1e-12)


def test_printed_summary_names_every_term_and_has_no_slips(small):
    _, r = small
    text = format_result(r)
    assert "optimal: optimal" not in text
    assert not re.search(r"-0\.0+\b(?!\d)", text), text
    assert "e-0" not in text
    for term in ("ideal velocity increment", "achieved increment", "gravity loss",
                 "drag loss", "steering loss", "back-pressure loss", "pad rotation speed",
                 "burnout speed"):
        assert term in text, term
    assert "back_pressure" not in text
    assert "target        altitude" in text and "as written" in text


def test_no_limit_line_without_limits():
    r = solve(load_problem(PROBLEMS / "goddard.yaml"))
    text = format_result(r)
    assert "worst limit excess" not in text and "limits   " not in text


def test_an_angle_needed_by_an_infeasible_target_prints_in_fixed_decimals():
    block = {"converged": True, "conditions": [
        {"name": "target_flight_path_angle", "unit": "deg", "value": 0.0,
         "required": -2.161e-05}]}
    text = "\n".join(_infeasibility_lines(block))
    assert "e-05" not in text and "-0.0000" not in text and " 0.0000 deg" in text
