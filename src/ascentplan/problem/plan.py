"""The phase plan: the segments of smooth dynamics that the simulator and the optimiser fly.

A stage's burn is cut at every burnout of its strap-on booster groups (each group is
dropped there, and an air-lit group ignites), at the fairing jettison, and at each
restart (a ballistic coast between burns); a fixed coast may follow staging, and a
final coast to apogee when the objective asks for it.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.problem.stack import booster_burnout_times

if TYPE_CHECKING:
    from ascentplan.problem.model import Problem

__all__ = ["Phase", "phase_plan"]

#: booster burnouts closer than this are one event [s]
_SAME_EVENT = 1e-6


@dataclass(frozen=True)
class Phase:
    """One segment of the flight with smooth dynamics.

    kind is ``"rise"`` (vertical rise of stage 0, fixed duration, pitch 90 deg),
    ``"burn"`` (stage ``stage`` powered), or ``"coast"`` (no thrust; ``stage`` is the
    index of the last stage dropped, the stage between its burns, or the last stage for
    a final coast). ``duration`` is fixed when not None; ``duration_range`` bounds a
    coast between burns that the optimiser times. ``ends_at_apogee`` marks a final
    coast that ends where the radial speed is zero.

    ``boosters`` are the indices (in ``vehicle.boosters``) of the groups burning beside
    the stage; ``burnouts`` those that burn out at the phase's end, where they are
    dropped (the phase then ends at their burnout time). ``drops_fairing`` marks the
    phase at whose end the fairing is dropped; ``burn`` counts the stage's burns from 0;
    ``ends_stage`` marks the stage's last powered phase.
    """

    kind: str
    stage: int
    duration: float | None = None
    ends_at_apogee: bool = False
    boosters: tuple[int, ...] = ()
    burnouts: tuple[int, ...] = ()
    drops_fairing: bool = False
    burn: int = 0
    duration_range: tuple[float, float] | None = None
    ends_stage: bool = False

    @property
    def powered(self) -> bool:
        return self.kind in ("rise", "burn")


def _booster_segments(vehicle, i: int) -> list[tuple[tuple[int, ...], tuple[int, ...]]]:
    """(groups burning, groups burning out at the end) of each booster segment of stage i,
    in time order; the core burns alone after the last."""
    index = {id(g): k for k, g in enumerate(vehicle.boosters)}
    groups = vehicle.groups_of(i)
    if not groups:
        return []
    ends = booster_burnout_times(vehicle.boosters, i)
    times = sorted({round(float(t) / _SAME_EVENT) * _SAME_EVENT for t in ends.values()})
    burning = [g for g in groups if g.ignition is None]
    out = []
    for t in times:
        ended = [g for g in burning if abs(float(ends[g.name]) - t) <= _SAME_EVENT]
        out.append((tuple(index[id(g)] for g in burning), tuple(index[id(g)] for g in ended)))
        names = {g.name for g in ended}
        burning = [g for g in burning if g.name not in names]
        burning += [g for g in groups if g.ignition in names]
    return out


def _stage_phases(problem, i: int) -> list[Phase]:
    vehicle = problem.vehicle
    stage = vehicle.stages[i]
    phases: list[Phase] = []
    segments = _booster_segments(vehicle, i)
    rise = i == 0 and problem.launch.vertical_rise > 0
    if rise:
        first = segments[0][0] if segments else ()
        phases.append(Phase("rise", 0, duration=problem.launch.vertical_rise, boosters=first))
    for burning, ended in segments:
        phases.append(Phase("burn", i, boosters=burning, burnouts=ended))
    fairing = vehicle.fairing
    if fairing is not None and fairing.stage == i:
        phases.append(Phase("burn", i, drops_fairing=True))
    phases.append(Phase("burn", i))
    for r in range(1, stage.restarts + 1):
        phases.append(Phase("coast", i, duration_range=(stage.restart_coast_min,
                                                        stage.restart_coast_max)))
        phases.append(Phase("burn", i, burn=r))
    return phases


def phase_plan(problem: Problem) -> list[Phase]:
    """The sequence of phases that both the simulator and the optimiser fly."""
    phases: list[Phase] = []
    stages = problem.vehicle.stages
    for i, stage in enumerate(stages):
        own = _stage_phases(problem, i)
        last = max(k for k, ph in enumerate(own) if ph.powered)
        own[last] = replace(own[last], ends_stage=True)
        phases.extend(own)
        if stage.coast_after > 0 and i < len(stages) - 1:
            phases.append(Phase("coast", i, duration=stage.coast_after))
    spec = OBJECTIVE_SPECS.get(problem.objective)
    if spec is not None and spec.final_coast:
        phases.append(Phase("coast", len(stages) - 1, ends_at_apogee=True))
    return phases


def booster_phase_duration(problem: Problem, plan: list[Phase], k: int, burn_time=None):
    """Duration of phase ``k``, which ends at a booster burnout [s].

    It runs from the previous booster burnout of its stage (or the end of the vertical
    rise, or the stage's ignition) to its own. ``burn_time(group)`` gives each group's
    burn time (default the numbers of the vehicle; the NLP passes symbols).
    """
    ph = plan[k]
    vehicle = problem.vehicle
    ends = booster_burnout_times(vehicle.boosters, ph.stage, burn_time)
    end = ends[vehicle.boosters[ph.burnouts[0]].name]
    prev = plan[k - 1] if k > 0 else None
    if prev is not None and prev.stage == ph.stage and prev.burnouts:
        start = ends[vehicle.boosters[prev.burnouts[0]].name]
    elif prev is not None and prev.kind == "rise":
        start = prev.duration
    else:
        start = 0.0
    return end - start


def aboard_beyond_core(problem: Problem, plan: list[Phase], k: int) -> float:
    """Mass still on board at the end of phase ``k`` that leaves before its stage burns
    out, besides the stage's own propellant [kg]: casings of booster groups not yet
    dropped, groups not yet ignited, and a fairing dropped later in the stage's burn."""
    vehicle = problem.vehicle
    ph = plan[k]
    dropped = {g for p in plan[:k] for g in p.burnouts}
    ignited = {g for p in plan[:k + 1] for g in p.boosters}
    extra = 0.0
    for g_index, g in enumerate(vehicle.boosters):
        if g.stage != ph.stage or g_index in dropped:
            continue
        extra += g.count * g.dry_mass
        if g_index not in ignited:
            extra += g.count * g.propellant_mass
    fairing = vehicle.fairing
    if fairing is not None and fairing.stage == ph.stage and not any(
            p.drops_fairing for p in plan[:k]):
        extra += fairing.mass
    return extra
