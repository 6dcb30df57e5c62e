"""The figures of a flight, without drawing them: the panels, the one order of the
figures in a results folder and the report, which figures a problem's flight has, and
what a solve result gives the plots. Kept apart from the drawing code so that the main
process can plan the figures without importing matplotlib."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from ascentplan.models.dynamics import dynamics_kind
from ascentplan.output.ground_track import has_ground_track
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem

__all__ = ["FIGURES", "LIMIT_OF_QUANTITY", "PANELS", "Panel", "figure_stems", "order_figures",
          "panels_for", "plot_arguments", "result_nodes", "steered"]


@dataclass(frozen=True)
class Panel:
    """One plotted quantity: file stem, title, axis label and which flights show it."""

    key: str
    title: str
    ylabel: str
    shown: Callable[[Problem], bool]


def _always(problem: Problem) -> bool:
    return True


def steered(problem: Problem) -> bool:
    return dynamics_kind(problem.dynamics).steered


def _with_q_alpha_limit(problem: Problem) -> bool:
    spec = LIMITS["max_q_alpha"]
    return (spec.applies_to(dynamics_kind(problem.dynamics))
            and getattr(problem.limits, spec.name) is not None)


#: the limit on each limited quantity: its panel is drawn in the limit's user unit, so
#: that the curves and the bound line share one axis
LIMIT_OF_QUANTITY = {spec.quantity: spec for spec in LIMITS.values()}


def _unit(quantity: str) -> str:
    return LIMIT_OF_QUANTITY[quantity].unit


#: the panels in plotting order; ``key`` is also the PNG file stem
PANELS = (
    Panel("altitude", "Altitude", f"altitude [{_unit('altitude')}]", _always),
    Panel("speed", "Speed", "speed [m/s]", _always),
    Panel("dynamic_pressure", "Dynamic pressure",
          f"dynamic pressure [{_unit('dynamic_pressure')}]", _always),
    Panel("axial_acceleration", "Sensed axial acceleration",
          f"axial acceleration [{_unit('axial_acceleration')}]", _always),
    Panel("q_alpha", "Dynamic pressure times angle of attack",
          f"|q alpha| [{_unit('q_alpha')}]", _with_q_alpha_limit),
    Panel("throttle", "Throttle", "throttle [fraction of full flow]", _always),
    Panel("pitch", "Thrust pitch from local horizontal", "pitch [deg]", steered),
    Panel("mass", "Vehicle mass", "mass [t]", _always),
)


def panels_for(problem: Problem) -> list[Panel]:
    return [p for p in PANELS if p.shown(problem)]


#: every figure a results folder holds, by file stem, in the one order in which the
#: results folder lists them and the report shows them: the overview, the time histories
#: in :data:`PANELS` order, then the split map (drawn by a stage-mass split with its map)
FIGURES = ("overview", *(p.key for p in PANELS), "ground_track", "split_map")


def order_figures(paths) -> list[Path]:
    """PNG paths in :data:`FIGURES` order (a file-name prefix is allowed); others last."""
    def key(path: Path) -> tuple:
        stem = path.stem
        # the longest name ending the stem, so that "q_alpha" is not taken for another
        found = [(len(name), i) for i, name in enumerate(FIGURES) if stem.endswith(name)]
        return (max(found)[1], stem) if found else (len(FIGURES), stem)

    return sorted((Path(p) for p in paths), key=key)


def figure_stems(problem: Problem) -> list[str]:
    """The file stems of the figures of a flight of ``problem``, in :data:`FIGURES` order."""
    stems = ["overview", *(panel.key for panel in panels_for(problem))]
    return stems + ["ground_track"] if has_ground_track(problem) else stems


def result_nodes(result) -> list[tuple]:
    """The optimiser's mesh of a solve result as ``nodes`` for
    :func:`~ascentplan.output.plots.plot_trajectory`."""
    sol = result.solution
    states = getattr(sol, "states", None) or [None] * len(sol.times)
    return [(t, u, x) for t, u, x in zip(sol.times, sol.controls, states)]


def plot_arguments(result) -> dict:
    """What :func:`~ascentplan.output.plots.plot_trajectory` draws of a solve result:
    the problem flown, its replay, the optimiser's nodes and the status, as keywords."""
    # the replay flew the optimised masses, so the node quantities must use them too
    problem = getattr(result, "solved_problem", None) or result.problem
    return dict(problem=problem, trajectory=result.trajectory, nodes=result_nodes(result),
                status=result.status)
