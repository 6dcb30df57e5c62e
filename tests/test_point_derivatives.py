"""The Hessian of the Lagrangian and the constraint Jacobian assembled point by point
(optimisation/point_derivatives.py) equal CasADi's automatic differentiation of the whole
NLP graph.

Reference: CasADi's own ``hessian`` and ``jacobian`` of the assembled MX graph (the
library's algorithmic differentiation), evaluated at random points near the first guess
with random multipliers; agreement to rounding (relative 1e-9, common practice for two
exact derivative evaluations of the same function in floating point).
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import casadi as ca
import numpy as np
import pytest
from cases import flat_vacuum_problem

from ascentplan import load_problem
from ascentplan.optimisation.nlp import AscentNLP
from ascentplan.pipeline import first_guess

PROBLEMS = Path(__file__).resolve().parents[1] / "problems"


def _problem(name: str, nodes: int):
    problem = load_problem(PROBLEMS / f"{name}.yaml")
    return replace(problem, mesh=replace(problem.mesh, nodes_per_phase=nodes))


def _thrust_follows_weight():
    """A stage-mass split whose first stage keeps its thrust-to-weight ratio: the engine
    inputs of the point function then depend on the decision variables, nonlinearly."""
    problem = _problem("small_launcher_split", 8)
    stages = list(problem.vehicle.stages)
    stages[0] = replace(stages[0], thrust_to_weight=1.5)
    return replace(problem, vehicle=replace(problem.vehicle, stages=tuple(stages)))


def _stack_with_choices():
    """Boosters whose setting the optimiser chooses and a heat-flux fairing: the engine
    inputs of a booster phase hold a decision variable, and the fairing's flux rows are
    point outputs after the jettison."""
    problem = _problem("booster_launcher", 6)
    groups = list(problem.vehicle.boosters)
    groups[0] = replace(groups[0], throttle_min=0.6, throttle_max=1.0)
    return replace(problem, vehicle=replace(problem.vehicle, boosters=tuple(groups)))


CASES = {
    "vehicle_stack": _stack_with_choices,
    "three_dimensional": lambda: _problem("medium_launcher_transfer", 6),
    "planar_limits": lambda: _problem("medium_launcher", 8),
    "vertical": lambda: _problem("goddard", 10),
    "split": lambda: _problem("small_launcher_split", 8),
    "thrust_follows_weight": _thrust_follows_weight,
    "trapezoidal": lambda: flat_vacuum_problem(scheme="trapezoidal", nodes=8),
}


def _reference(nlp: AscentNLP):
    """CasADi's derivatives of the whole graph: triu(Hessian of the Lagrangian), and g with
    its Jacobian."""
    lam_f = ca.MX.sym("lam_f")
    lam_g = ca.MX.sym("lam_g", nlp.g.shape[0])
    lagrangian = lam_f * nlp.f + ca.dot(lam_g, nlp.g)
    hess = ca.Function("h", [nlp.w, nlp.P, lam_f, lam_g],
                       [ca.triu(ca.hessian(lagrangian, nlp.w)[0])])
    jac = ca.Function("j", [nlp.w, nlp.P], [nlp.g, ca.jacobian(nlp.g, nlp.w)])
    return hess, jac


def _compare(nlp: AscentNLP, problem, guess, seed: int = 0) -> None:
    hess, jac = _reference(nlp)
    rng = np.random.default_rng(seed)
    p = nlp.parameter_vector(problem)
    w = nlp.conditions.seed(nlp.pack_guess(guess), p)
    for _ in range(2):
        w_trial = w + 0.02 * rng.standard_normal(w.size)
        lam = rng.standard_normal(nlp.g.shape[0])
        sigma = float(rng.uniform(0.5, 2.0))
        h_ref = hess(w_trial, p, sigma, lam).full()
        h_new = nlp._derivative_options["hess_lag"](w_trial, p, sigma, lam).full()
        assert np.isfinite(h_ref).all()
        np.testing.assert_allclose(h_new, h_ref, rtol=1e-9, atol=1e-9 * np.abs(h_ref).max())
        g_ref, j_ref = (v.full() for v in jac(w_trial, p))
        g_new, j_new = (v.full() for v in nlp._derivative_options["jac_g"](w_trial, p))
        np.testing.assert_allclose(g_new, g_ref, rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(j_new, j_ref, rtol=1e-9, atol=1e-9 * np.abs(j_ref).max())


@pytest.mark.parametrize("case", sorted(CASES))
def test_point_derivatives_equal_casadi_of_the_whole_graph(case):
    problem = CASES[case]()
    nodes = problem.mesh.nodes_per_phase
    guess, scales = first_guess(problem, nodes)
    nlp = AscentNLP(problem, scales, nodes_per_phase=nodes)
    assert "hess_lag" in nlp._derivative_options and "jac_g" in nlp._derivative_options
    _compare(nlp, problem, guess)


def test_point_derivatives_of_the_elastic_form():
    problem = _problem("medium_launcher", 8)
    guess, scales = first_guess(problem, 8)
    nlp = AscentNLP(problem, scales, nodes_per_phase=8, elastic=True)
    assert "hess_lag" in nlp._derivative_options
    _compare(nlp, problem, guess, seed=1)
