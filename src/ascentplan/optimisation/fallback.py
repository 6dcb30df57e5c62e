"""A second try with the other barrier strategy when a cold solve fails.

IPOPT's adaptive barrier update (the default, :data:`IPOPT_OPTIONS`) takes the fewest
iterations on the examples, but on three-dimensional ascents it sometimes drives the
barrier parameter to its floor far from the optimum and stops in a failed restoration
phase where the monotone (Fiacco-McCormick) update converges, and the other way round
(measured on the transfer-orbit example: at 20 nodes per phase adaptive failed where
monotone converged in 52 iterations; at 40 and 80 nodes monotone took 122 and over 500
iterations where adaptive converged). So the other strategy is tried once, from the
same first guess, when the first does not reach an optimum.
"""

from __future__ import annotations

import casadi as ca

from ascentplan.optimisation.solution import NLPSolution

#: the barrier strategy tried when the NLP's own one fails
OTHER_STRATEGY = {"adaptive": "monotone", "monotone": "adaptive"}


def fallback_applies(nlp, solution: NLPSolution, warm: bool) -> bool:
    """Whether a failed cold solve of ``nlp`` is worth a second try.

    Only for kinds that fly out of a plane (``spatial``; the measurements above), not for
    a warm start (its multipliers belong to the first strategy's path), and not when
    IPOPT proved the constraints locally infeasible (the elastic form explains those).
    """
    return (getattr(nlp.kind, "spatial", False) and not warm and not nlp.elastic
            and solution.status != "optimal"
            and solution.return_status != "Infeasible_Problem_Detected")


def solve_with_fallback(nlp, problem, guess, warm: bool = False) -> NLPSolution:
    """:meth:`AscentNLP.solve`, then once more with the other barrier strategy when the
    first fails (:func:`fallback_applies`); the better of the two is returned and its
    ``iterations`` count both tries."""
    first = nlp.solve(problem, guess, warm=warm)
    if not fallback_applies(nlp, first, warm):
        return first
    options = dict(nlp._options)
    strategy = options.get("ipopt.mu_strategy", "monotone")
    options["ipopt.mu_strategy"] = OTHER_STRATEGY[strategy]
    own = nlp.solver
    nlp.solver = ca.nlpsol("ascent_other_barrier", "ipopt", nlp._nlp,
                           {**options, **nlp._derivative_options})
    try:
        second = nlp.solve(problem, guess, warm=False)
    finally:
        nlp.solver = own
    better = (second.status == "optimal"
              or second.constraint_violation < first.constraint_violation)
    best = second if better else first
    best.iterations = first.iterations + second.iterations
    return best
