"""The control-smoothness term of the NLP objective: the squared node-to-node change of
each control, divided by its range, summed over the phases (``mesh.control_smoothing``
weights it)."""

from __future__ import annotations

import casadi as ca
import numpy as np

from ascentplan.models import dynamics
from ascentplan.optimisation.phases import control_bounds
from ascentplan.problem.model import Problem, phase_plan

__all__ = ["control_smoothness"]


def control_smoothness(problem: Problem, controls) -> object:
    """The sum of squared differences of neighbouring node controls, each control divided
    by its range on its phase [-].

    S = sum over phases, controls c with a range r_c > 0 (the throttle range of a
    powered phase's stage, pi for the pitch of a burn) and intervals k of
    ((u_c,k+1 - u_c,k) / r_c)^2. A control that jumps across its whole range once adds
    1; a schedule that follows a smooth function adds O(1/N) on N nodes, so the term
    vanishes as the mesh is refined while node-to-node chatter keeps its cost.

    Parameters
    ----------
    problem : Problem
    controls : list of array (n_u, N) per phase
        Node controls of each phase of :func:`~ascentplan.problem.phase_plan`, numpy
        arrays or CasADi symbols.

    Returns
    -------
    float or CasADi expression
    """
    total = 0.0
    kind = dynamics.dynamics_kind(problem.dynamics)
    for phase, U in zip(phase_plan(problem), controls):
        stage = problem.vehicle.stages[phase.stage]
        lower, upper = control_bounds(kind, phase, stage)
        for c, (low, high) in enumerate(zip(lower, upper)):
            if not high - low > 0.0 or U.shape[1] < 2:
                continue
            step = (U[c, 1:] - U[c, :-1]) / (high - low)
            total = total + (ca.sumsqr(step) if isinstance(step, (ca.MX, ca.SX))
                             else float(np.sum(np.square(step))))
    return total
