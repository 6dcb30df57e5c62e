"""Propellant accounting of a solution: per stage, what was loaded, burnt, kept and left.

A stage's propellant is loaded (``propellant_mass``), burnt while it is powered, kept as
its reserve by design, or left unburnt beyond the reserve when the engine is shut down
early. That last part leaves with the stage at staging unused, so a result states it
wherever it is more than :func:`residual_tolerance`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ascentplan.models.dynamics import dynamics_kind
from ascentplan.problem.model import Problem, phase_plan

#: an unplanned residual below the larger of these is taken as rounding, not a shutdown
_RESIDUAL_FLOOR = 1.0  # [kg]
_RESIDUAL_FRACTION = 1e-3  # of the stage's propellant [-]


def residual_tolerance(loaded: float) -> float:
    """Largest unplanned residual [kg] not reported in words: 1 kg or 0.1 % of the
    stage's propellant ``loaded`` [kg], whichever is larger."""
    return max(_RESIDUAL_FLOOR, _RESIDUAL_FRACTION * float(loaded))


@dataclass(frozen=True)
class StagePropellant:
    """One stage's propellant as flown [kg].

    ``loaded = burnt + reserve + unplanned_residual``.
    """

    name: str
    loaded: float
    burnt: float
    reserve: float
    may_shut_down_early: bool

    @property
    def unplanned_residual(self) -> float:
        """Propellant left beyond the reserve at burnout [kg] (may be a rounding -0)."""
        return self.loaded - self.burnt - self.reserve

    @property
    def residual_percent(self) -> float:
        """:attr:`unplanned_residual` as a percentage of the loaded propellant [%]."""
        return 100.0 * self.unplanned_residual / self.loaded if self.loaded > 0 else 0.0

    @property
    def has_unplanned_residual(self) -> bool:
        """Whether the residual is more than :func:`residual_tolerance`."""
        return self.unplanned_residual > residual_tolerance(self.loaded)

    def summary(self) -> dict:
        """The stage's ``propellant`` block of summary.json."""
        return {
            "loaded_kg": float(self.loaded),
            "burnt_kg": float(self.burnt),
            "reserve_kg": float(self.reserve),
            "unplanned_residual_kg": float(self.unplanned_residual),
            "unplanned_residual_percent": float(self.residual_percent),
            "unplanned_residual_reported": bool(self.has_unplanned_residual),
            "shutdown": "early" if self.may_shut_down_early else "at_depletion",
        }

    def text(self) -> str:
        """The residual in words, e.g. for a status message."""
        what = "shut down" if self.may_shut_down_early else "burnt out"
        return (f"stage '{self.name}' {what} with {self.unplanned_residual:,.1f} kg "
                f"({self.residual_percent:.1f} %) of its propellant unburnt beyond its "
                f"reserve, dropped at staging")


def propellant_accounting(problem: Problem, solution) -> list[StagePropellant]:
    """Per stage, the propellant of ``solution`` (an :class:`NLPSolution`).

    Parameters
    ----------
    problem : Problem
        With the masses the solution flew (a split's optimised masses).
    solution : NLPSolution
    """
    m = dynamics_kind(problem.dynamics).index("mass")
    burnt = np.zeros(len(problem.vehicle.stages))
    for j, ph in enumerate(phase_plan(problem)):
        if ph.powered:
            x = solution.states[j]
            # the boosters burning beside the stage burn at their fixed settings
            beside = sum(problem.vehicle.boosters[k].group_mass_flow for k in ph.boosters)
            burnt[ph.stage] += float(x[m, 0] - x[m, -1]) - beside * solution.durations[j]
    return [StagePropellant(name=s.name, loaded=float(s.propellant_mass), burnt=float(b),
                            reserve=float(s.reserve_mass),
                            may_shut_down_early=s.may_shut_down_early)
            for s, b in zip(problem.vehicle.stages, burnt)]


def residual_text(accounts: list[StagePropellant]) -> str:
    """The unplanned residuals worth a word, joined; empty when there are none."""
    return "; ".join(a.text() for a in accounts if a.has_unplanned_residual)
