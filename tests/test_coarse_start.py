"""Mesh continuation for flight out of a plane: a fine mesh starts from the optimum on a
coarse one, interpolated (common practice in direct collocation: J. T. Betts, Practical
Methods for Optimal Control and Estimation Using Nonlinear Programming, 2nd ed., SIAM
2010, sec. 4.7, mesh refinement from a coarse solution)."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np

from ascentplan import load_problem
from ascentplan.optimisation.guess import COARSE_START_NODES, coarse_start
from ascentplan.optimisation.phases import nodes_for_phase
from ascentplan.optimisation.solution import NLPSolution
from ascentplan.problem.model import phase_plan

PROBLEMS = Path(__file__).resolve().parents[1] / "problems"


def _solution(problem, nodes: int, status: str) -> NLPSolution:
    """A made-up solution on ``nodes`` per phase: states and controls linear in time."""
    phases = phase_plan(problem)
    states, controls, times = [], [], []
    for ph in phases:
        n = nodes_for_phase(ph, nodes)
        tau = np.linspace(0.0, 1.0, n)
        states.append(np.vstack([tau * (k + 1) for k in range(7)]))
        controls.append(np.vstack([tau, 0.5 * tau, 0.25 * tau]))
        times.append(tau)
    return NLPSolution(
        status=status, return_status="", success=status == "optimal", iterations=17,
        solve_time=0.0, objective=0.0, smoothing_penalty=0.0, durations=[1.0] * len(phases),
        times=times, states=states, controls=controls, payload_mass=1.0, propellant=[1.0],
        dry=[1.0], shadow_prices={}, constraint_violation=0.0, sensitivities={},
        multipliers=None, binding=[], slacks={})


def test_a_fine_three_dimensional_mesh_starts_from_the_coarse_optimum():
    problem = load_problem(PROBLEMS / "medium_launcher_transfer.yaml")
    asked = []

    def solve_on(n):
        asked.append(n)
        return _solution(problem, n, "optimal")

    guess, iterations = coarse_start(problem, 160, solve_on)
    assert asked == [COARSE_START_NODES] and iterations == 17
    # the coarse optimum interpolated onto 160 nodes: linear data stay linear
    burn = next(j for j, ph in enumerate(phase_plan(problem)) if ph.kind == "burn")
    assert guess.states[burn].shape == (7, 160)
    np.testing.assert_allclose(guess.states[burn][2], 3.0 * np.linspace(0.0, 1.0, 160))
    assert guess.multipliers is None  # other node counts: the primal point only


def test_no_coarse_start_on_a_coarse_mesh_a_failed_coarse_solve_or_a_planar_kind():
    transfer = load_problem(PROBLEMS / "medium_launcher_transfer.yaml")
    planar = load_problem(PROBLEMS / "medium_launcher.yaml")
    calls = []

    def failing(n):
        calls.append(n)
        return _solution(transfer, n, "failed")

    assert coarse_start(transfer, COARSE_START_NODES, failing) == (None, 0)
    assert coarse_start(transfer, 160, failing) == (None, 17)
    assert coarse_start(replace(planar, mesh=replace(planar.mesh, nodes_per_phase=160)),
                        160, failing) == (None, 0)
    assert calls == [COARSE_START_NODES]
