"""Where the liftoff mass of a solve went: propellant burnt by each element in each phase,
items jettisoned, the residual at each burnout, and what reaches the end of the flight.

The elements are each stage's core engine and each strap-on booster group. From the
optimiser's solution (the stack mass at the ends of every phase): a booster group burns
at its fixed mass flow for the phase's duration; the stage burns the rest of the phase's
mass decrease (as :mod:`ascentplan.optimisation.propellant` counts it). The jettisoned
items are taken from the vehicle's figures, not from the mass jumps of the solution:
each group's casings (count x dry mass), the fairing, and each spent stage (its dry mass
and the propellant it did not burn). So the balance

    liftoff mass = final mass + propellant burnt + mass jettisoned

closes only when the solution's stack mass drops at every event by what the vehicle
says; its ``closure_kg`` is the rounding left over.
"""

from __future__ import annotations

import math

from ascentplan.models.dynamics import dynamics_kind
from ascentplan.problem.model import phase_plan

__all__ = ["mass_accounting"]


def _elements(vehicle) -> list[dict]:
    """Each stage's core, followed by the booster groups burning beside it."""
    out = []
    for i, stage in enumerate(vehicle.stages):
        out.append({"name": stage.name, "kind": "stage", "stage": i, "count": 1,
                    "loaded_kg": float(stage.propellant_mass)})
        for k, g in enumerate(vehicle.boosters):
            if g.stage == i:
                out.append({"name": g.name, "kind": "booster_group", "stage": i,
                            "count": int(g.count), "group": k,
                            "loaded_kg": float(g.count * g.propellant_mass)})
    return out


def _burnt_by_phase(problem, solution, plan, elements) -> list[dict]:
    """Per phase, the propellant each element burnt in it [kg] (aligned with ``elements``)."""
    m = dynamics_kind(problem.dynamics).index("mass")
    vehicle = problem.vehicle
    core_of = {e["stage"]: n for n, e in enumerate(elements) if e["kind"] == "stage"}
    group_of = {e["group"]: n for n, e in enumerate(elements) if e["kind"] == "booster_group"}
    rows = []
    for j, ph in enumerate(plan):
        x = solution.states[j]
        duration = float(solution.durations[j])
        burnt = [0.0] * len(elements)
        beside = 0.0
        if ph.powered:
            for k in ph.boosters:
                flow = vehicle.boosters[k].group_mass_flow * duration
                burnt[group_of[k]] = flow
                beside += flow
        # a coast's decrease is zero on a converged mesh; counted to its stage so that
        # any mass lost there shows in the balance
        burnt[core_of[ph.stage]] = float(x[m, 0] - x[m, -1]) - beside
        rows.append({"phase": j, "kind": ph.kind, "stage": ph.stage,
                     "start_s": float(solution.times[j][0]), "duration_s": duration,
                     "start_mass_kg": float(x[m, 0]), "end_mass_kg": float(x[m, -1]),
                     "burnt_kg": burnt})
    return rows


def _items_and_residuals(problem, plan, rows, elements, replay):
    """The items jettisoned and the residual at each burnout and cut-off, in time order.

    ``replay`` is the replay's (events, phase durations [s]).
    """
    vehicle = problem.vehicle
    last_stage = len(vehicle.stages) - 1
    core_of = {e["stage"]: n for n, e in enumerate(elements) if e["kind"] == "stage"}
    group_of = {e["group"]: n for n, e in enumerate(elements) if e["kind"] == "booster_group"}
    burnt_so_far = [0.0] * len(elements)
    items, residuals = [], []
    for j, ph in enumerate(plan):
        burnt_so_far = [a + b for a, b in zip(burnt_so_far, rows[j]["burnt_kg"])]
        end = rows[j]["start_s"] + rows[j]["duration_s"]
        for k in ph.burnouts:
            g, n = vehicle.boosters[k], group_of[k]
            left = elements[n]["loaded_kg"] - burnt_so_far[n]
            residuals.append(_residual(elements[n], "booster_burnout", j, end, left,
                                       _replayed_group(plan, j, k, g, replay)))
            items.append({"item": g.name, "kind": "booster_casings", "stage": ph.stage,
                          "phase": j, "time_s": end,
                          "mass_kg": float(g.count * g.dry_mass),
                          "dry_mass_kg": float(g.count * g.dry_mass),
                          "unburnt_propellant_kg": 0.0})
        if ph.drops_fairing:
            mass = float(vehicle.fairing.mass)
            items.append({"item": "fairing", "kind": "fairing", "stage": ph.stage, "phase": j,
                          "time_s": end, "mass_kg": mass, "dry_mass_kg": mass,
                          "unburnt_propellant_kg": 0.0})
        n = core_of[ph.stage]
        left = elements[n]["loaded_kg"] - burnt_so_far[n]
        if ph.kind == "burn" and j + 1 < len(plan) and plan[j + 1].duration_range is not None:
            residuals.append(_residual(elements[n], "cutoff", j, end, left,
                                       _replayed(replay[0], "cutoff", j)))
        if ph.ends_stage:
            residuals.append(_residual(elements[n], "burnout", j, end, left,
                                       _replayed(replay[0], "burnout", j)))
            if ph.stage < last_stage:
                dry = float(vehicle.stages[ph.stage].dry_mass)
                items.append({"item": vehicle.stages[ph.stage].name, "kind": "stage",
                              "stage": ph.stage, "phase": j, "time_s": end,
                              "mass_kg": dry + left, "dry_mass_kg": dry,
                              "unburnt_propellant_kg": left})
    return items, residuals, burnt_so_far


def _residual(element, event, phase, time, left, replayed) -> dict:
    return {"element": element["name"], "kind": element["kind"], "stage": element["stage"],
            "event": event, "phase": phase, "time_s": float(time),
            "propellant_remaining_kg": float(left),
            "replay_propellant_remaining_kg": replayed}


def _replayed(events, kind, phase):
    """The replay's propellant remaining at its event ``kind`` ending ``phase`` [kg]; None
    when the replay has no such event."""
    for ev in events:
        if ev.get("kind") == kind and ev.get("phase") == phase:
            value = ev.get("propellant_remaining")
            return None if value is None else float(value)
    return None


def _replayed_group(plan, j, k, group, replay):
    """Group ``k``'s propellant left at its burnout in the replay [kg]: loaded less its
    mass flow times the time the replay flew each phase it burns in; None when the
    replay did not reach the end of phase ``j``."""
    events, durations = replay
    if len(durations) <= j or not any(ev.get("kind") == "booster_burnout"
                                      and ev.get("phase") == j for ev in events):
        return None
    burning = sum(durations[i] for i in range(j + 1) if plan[i].powered and k in plan[i].boosters)
    return float(group.count * group.propellant_mass - group.group_mass_flow * burning)


def mass_accounting(result) -> dict | None:
    """The ``mass_accounting`` block of summary.json, from the optimiser's solution.

    Parameters
    ----------
    result : ascentplan.pipeline.Result
        Its ``solved_problem`` (the masses flown), ``solution`` and, for the replay's
        residuals beside the optimiser's, ``trajectory.events``.

    Returns
    -------
    dict or None
        None when the solution does not cover every phase of the plan. Else, all masses
        [kg] and times [s] from liftoff:

        * ``liftoff_mass_kg`` (the vehicle's), ``final_mass_kg`` (the solution's stack
          mass at the end of its last phase), ``propellant_burnt_kg`` and
          ``jettisoned_kg`` (totals), ``closure_kg`` = liftoff - final - burnt -
          jettisoned and ``closure_fraction`` (of the liftoff mass);
        * ``final``: ``payload_mass_kg``, ``stage`` (the last stage's name),
          ``dry_mass_kg`` and ``propellant_remaining_kg`` of the last stage, and
          ``fairing_kg`` when it is never dropped;
        * ``elements``: per stage core and booster group, ``name``, ``kind``
          (``stage`` or ``booster_group``), ``stage``, ``count``, ``loaded_kg``,
          ``burnt_kg``, ``residual_kg`` (loaded - burnt);
        * ``phases``: per phase, ``phase``, ``kind``, ``stage``, ``start_s``,
          ``duration_s``, ``start_mass_kg``, ``end_mass_kg`` and ``burnt_kg``, a list of
          the propellant each element burnt in it, in the order of ``elements``;
        * ``jettisoned``: per item dropped, in time order, ``item``, ``kind``
          (``booster_casings``, ``fairing``, ``stage``), ``stage``, ``phase``, ``time_s``,
          ``mass_kg`` = ``dry_mass_kg`` + ``unburnt_propellant_kg``;
        * ``residuals``: at each booster burnout, cut-off before a restart and stage
          burnout, ``element``, ``kind``, ``stage``, ``event``, ``phase``, ``time_s``,
          ``propellant_remaining_kg`` and ``replay_propellant_remaining_kg`` (the
          replay's figure, None when the replay has no such event).
    """
    problem, solution = result.solved_problem, result.solution
    plan = phase_plan(problem)
    states = getattr(solution, "states", None) or []
    if len(states) < len(plan) or len(solution.durations) < len(plan):
        return None
    vehicle = problem.vehicle
    elements = _elements(vehicle)
    rows = _burnt_by_phase(problem, solution, plan, elements)
    traj = result.trajectory
    replay = (list(getattr(traj, "events", None) or []),
              [float(t1 - t0) for t0, t1 in getattr(traj, "phase_bounds", None) or []])
    items, residuals, burnt = _items_and_residuals(problem, plan, rows, elements, replay)
    for e, b in zip(elements, burnt):
        e.pop("group", None)  # an index into the vehicle's groups, for the sums above
        e["burnt_kg"] = float(b)
        e["residual_kg"] = e["loaded_kg"] - float(b)
    m = dynamics_kind(problem.dynamics).index("mass")
    liftoff = float(vehicle.liftoff_mass)
    final = float(states[len(plan) - 1][m, -1])
    total_burnt = float(math.fsum(burnt))
    total_dropped = float(math.fsum(i["mass_kg"] for i in items))
    closure = liftoff - final - total_burnt - total_dropped
    last = len(vehicle.stages) - 1
    core = next(e for e in elements if e["kind"] == "stage" and e["stage"] == last)
    final_block = {"payload_mass_kg": float(vehicle.payload_mass),
                   "stage": vehicle.stages[last].name,
                   "dry_mass_kg": float(vehicle.stages[last].dry_mass),
                   "propellant_remaining_kg": core["residual_kg"]}
    if vehicle.fairing is not None and not any(i["kind"] == "fairing" for i in items):
        final_block["fairing_kg"] = float(vehicle.fairing.mass)
    return {"liftoff_mass_kg": liftoff, "final_mass_kg": final,
            "propellant_burnt_kg": total_burnt, "jettisoned_kg": total_dropped,
            "closure_kg": closure, "closure_fraction": closure / liftoff if liftoff else None,
            "final": final_block, "elements": elements, "phases": rows,
            "jettisoned": items, "residuals": residuals}
