"""Load limits: an active dynamic-pressure limit verified by replay, shadow prices
against finite differences, monotonicity in the bound, and the infeasible case."""

from __future__ import annotations

import pytest
from cases import vertical_q_problem

from ascentplan.pipeline import solve

Q_MAX = 30e3  # [Pa]


@pytest.fixture(scope="module")
def free_result():
    return solve(vertical_q_problem(max_q=None))


@pytest.fixture(scope="module")
def limited_result():
    return solve(vertical_q_problem(max_q=Q_MAX))


def test_active_dynamic_pressure_limit_is_verified(free_result, limited_result):
    # the unconstrained optimum flies well above the bound, so the limit is active
    q_free = max(free_result.trajectory.quantities["dynamic_pressure"])
    assert q_free > 1.3 * Q_MAX
    r = limited_result
    assert r.status == "optimal", r.message
    (lim,) = r.limits()
    assert lim["active"]
    # the documented verification tolerances (ascentplan.replay.verify): with the default
    # mesh.limit_margin the replayed peak stays within the bound itself; burnout speed
    # within max(0.5 m/s, 0.05 %)
    assert lim["peak"] * 1000 <= Q_MAX and lim["within_bound"] and lim["passed"]
    speed = r.burnout()["speed_m_s"]
    assert abs(r.verification.burnout_speed_difference_m_s) <= max(0.5, 5e-4 * speed)
    assert r.objective_value < free_result.objective_value


def test_shadow_price_matches_finite_difference(limited_result):
    # envelope theorem (common practice): d objective / d bound from the multipliers equals a
    # central difference of two re-solves, within 2 %
    base = vertical_q_problem(max_q=Q_MAX)
    dq = 0.01 * Q_MAX
    up = solve(base.with_limits(max_dynamic_pressure=Q_MAX + dq), warm_start=limited_result)
    down = solve(base.with_limits(max_dynamic_pressure=Q_MAX - dq), warm_start=limited_result)
    assert up.status == down.status == "optimal"
    fd = (up.solution.objective - down.solution.objective) / (2 * dq)  # m/s per Pa
    price = limited_result.solution.shadow_prices["max_dynamic_pressure"]
    assert price > 0
    assert price == pytest.approx(fd, rel=0.02)
    (lim,) = limited_result.limits()
    assert lim["shadow_price"] == pytest.approx(price * 1000.0, rel=1e-12)  # per kPa


def test_relaxing_never_lowers_the_optimum(free_result, limited_result):
    # a larger feasible set cannot have a worse optimum (common practice)
    base = vertical_q_problem(max_q=Q_MAX)
    previous = limited_result.solution.objective
    for q in (40e3, 60e3, 1e6):
        r = solve(base.with_limits(max_dynamic_pressure=q), warm_start=limited_result)
        assert r.status == "optimal"
        assert r.solution.objective >= previous - 1e-6 * abs(previous)
        previous = r.solution.objective
    # a bound far above the peak reproduces the unconstrained optimum
    assert previous == pytest.approx(free_result.solution.objective, rel=1e-6)


def test_expanded_derivatives_give_the_same_optimum(limited_result):
    # the SX-expanded Hessian and Jacobian are the same functions as the MX ones
    # (CasADi's expansion), so a re-solve lands on the same optimum to solver tolerance
    from ascentplan.optimisation.nlp import AscentNLP
    from ascentplan.pipeline import first_guess

    problem = vertical_q_problem(max_q=Q_MAX)
    guess, scales = first_guess(problem, problem.mesh.nodes_per_phase)
    nlp = AscentNLP(problem, scales)
    plain = nlp.solve(problem, guess)
    assert nlp.accelerate()
    fast = nlp.solve(problem, guess)
    assert plain.status == fast.status == "optimal"
    assert fast.objective == pytest.approx(plain.objective, rel=1e-9)
    assert fast.iterations == plain.iterations


def test_q_alpha_and_payload_to_orbit_on_the_three_stage_example():
    # the invented medium launcher: maximum payload to a 250 km circular orbit with max-q,
    # acceleration and q-alpha limits; every active limit holds on the replay within its
    # bound (the default mesh.limit_margin) and the orbit is reached (circular speed sqrt(mu/r):
    # Newton, common practice)
    import math
    from dataclasses import replace
    from pathlib import Path

    from ascentplan.problem.loader import load_problem

    path = Path(__file__).resolve().parent.parent / "problems" / "medium_launcher.yaml"
    problem = load_problem(path)
    problem = replace(problem, mesh=replace(problem.mesh, nodes_per_phase=30))
    r = solve(problem)
    assert r.status == "optimal", r.message
    limits = {lim["name"]: lim for lim in r.limits()}
    assert limits["max_q_alpha"]["active"]
    for lim in limits.values():
        assert lim["peak"] <= lim["bound"], lim
    radius = problem.planet.radius + problem.target.circular_orbit_altitude
    v_circular = math.sqrt(problem.planet.gravitational_parameter / radius)
    burnout = r.burnout()
    assert burnout["speed_m_s"] == pytest.approx(v_circular, abs=0.5)
    assert burnout["altitude_m"] == pytest.approx(problem.target.circular_orbit_altitude,
                                                  abs=10.0)
    assert abs(burnout["flight_path_angle_deg"]) < 0.01
    assert r.solved_problem.vehicle.payload_mass > 0.0


@pytest.mark.parametrize("name", ["small_launcher", "medium_launcher"])
def test_margin_keeps_the_replayed_peaks_of_the_examples_within_their_bounds(name):
    # between the nodes the replayed quantity passes its value at the nodes (collocation
    # holds the limit at the nodes and midpoints only; Betts 2010, ch. 4, from memory):
    # with mesh.limit_margin 0 the small launcher's replayed max-q passes 30 kPa; with the
    # default margin every active limit's replayed peak is within its bound, without a
    # mesh refinement, and the shadow prices stay d(objective)/d(bound as written)
    from dataclasses import replace
    from pathlib import Path

    from ascentplan.problem.loader import load_problem

    problem = load_problem(Path(__file__).resolve().parent.parent / "problems" / f"{name}.yaml")
    r = solve(problem)
    assert r.status == "optimal", r.message
    assert r.mesh_refinements == 0
    assert problem.mesh.limit_margin > 0.0
    for lim in r.limits():
        assert lim["active"], lim
        assert lim["peak"] <= lim["bound"] and lim["excess_fraction"] <= 0.0, lim
        assert lim["margin_fraction"] == problem.mesh.limit_margin
    if name == "small_launcher":
        bare = solve(replace(problem, mesh=replace(problem.mesh, limit_margin=0.0,
                                                   max_refinements=0)))
        q = {lim["name"]: lim for lim in bare.limits()}["max_dynamic_pressure"]
        assert q["peak"] > q["bound"] and q["tolerance_fraction"] == 0.005
        # the margin costs a little objective: no more than the bound's shadow prices
        # times the tightening, doubled (first-order estimate, envelope theorem)
        cost = bare.solution.objective - r.solution.objective
        first_order = sum(lim["shadow_price"] * lim["bound"] * problem.mesh.limit_margin
                          for lim in r.limits())
        assert 0.0 < cost <= 2.0 * first_order
