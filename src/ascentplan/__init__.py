"""ascentplan: throttle, steering and stage-mass-split optimisation of rocket ascents.

Direct collocation of the variable-mass ascent, solved by IPOPT through CasADi, and
verified by independent forward integration with scipy's ``solve_ivp``.

The front door::

    from ascentplan import load_problem, solve, simulate

    problem = load_problem("problems/small_launcher.yaml")
    result = solve(problem)          # optimise, replay, verify
    print(result.status, result.objective_value)
    flight = simulate(problem)       # fly a schedule (default: a gravity turn)

The names below are imported on first use, so ``import ascentplan`` stays light (the
command line's ``--version`` does not pay for CasADi).
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from ascentplan.cautions import CAUTION

__version__ = "0.1.0"

#: public name -> module that defines it
_FRONT_DOOR = {
    "load_problem": "ascentplan.problem.loader",
    "problem_from_dict": "ascentplan.problem.loader",
    "ProblemError": "ascentplan.problem.loader",
    "Problem": "ascentplan.problem.model",
    "solve": "ascentplan.pipeline",
    "Result": "ascentplan.pipeline",
    "simulate": "ascentplan.replay.simulate",
}

__all__ = ["CAUTION", "Problem", "ProblemError", "Result", "__version__", "load_problem",
           "problem_from_dict", "simulate", "solve"]

if TYPE_CHECKING:  # pragma: no cover - for type checkers and editors only
    from ascentplan.pipeline import Result, solve
    from ascentplan.problem.loader import ProblemError, load_problem, problem_from_dict
    from ascentplan.problem.model import Problem
    from ascentplan.replay.simulate import simulate


def __getattr__(name: str) -> Any:
    module = _FRONT_DOOR.get(name)
    if module is None:
        raise AttributeError(f"module 'ascentplan' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_FRONT_DOOR))
