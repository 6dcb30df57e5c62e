"""What fixes the structure of the collocation NLP: the key of the cache of built NLPs.

Everything that is not an NLP parameter (limit bounds, masses, thrusts, exhaust speeds,
exit areas, the drag scale and the stack's masses and event values are parameters) is
in the key; two problems with the same key reuse one built NLP.
"""

from __future__ import annotations

from ascentplan.optimisation.masses import unscaled_drag
from ascentplan.optimisation.stack_rows import stack_structure
from ascentplan.problem.model import Problem

__all__ = ["structure_key"]


def structure_key(problem: Problem) -> tuple:
    """What fixes the NLP's structure: everything that is not an NLP parameter."""
    stages = tuple(
        (s.throttle_min, s.throttle_max, s.max_throttle_rate, s.max_steering_rate, s.coast_after,
         s.structural_ratio, s.thrust_to_weight is not None, s.propellant_min,
         s.propellant_max, s.may_shut_down_early, s.restarts, s.restart_coast_min,
         s.restart_coast_max)
        for s in problem.vehicle.stages)
    stages += stack_structure(problem)
    return (problem.dynamics, problem.planet, problem.atmosphere, problem.gravity,
            unscaled_drag(problem).aerodynamics, problem.launch, stages,
            tuple(problem.limits.active_names()),
            problem.target, problem.objective, problem.mesh.scheme, problem.mesh.nodes_per_phase,
            problem.mesh.control_smoothing,
            problem.mesh.limit_margin,
            None if problem.mass_split is None else (problem.mass_split.hold,
                                                     problem.mass_split.proportional))
