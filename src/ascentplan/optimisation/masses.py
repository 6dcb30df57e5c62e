"""The stack masses and thrusts of the NLP: parameters, or decision variables when free.

Masses, thrusts, exhaust speeds, nozzle exit areas and the drag scale are NLP parameters,
so that a re-solve with other values reuses the built solver and the multiplier of each
prices it (the exchange ratios, :mod:`ascentplan.exchange`); the payload (when the
objective maximises it) and, in a stage-mass split, the propellant masses are decision
variables instead. Dry masses, masses above each stage and thrusts then follow by the
rules of :mod:`ascentplan.problem.model`, written once for numbers and symbols.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import casadi as ca

from ascentplan.problem.model import Problem, dry_mass_from_ratio, stack_masses, thrust_from_ratio
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.problem.stack import booster_burn_time, group_thrust

#: bounds of the one factor on all propellant masses of a proportional split
_SPLIT_SCALE = (0.05, 20.0)

#: default bounds of a stage's propellant mass in a split, as fractions of the written mass
_PROPELLANT_RANGE = (0.02, 20.0)


@dataclass(frozen=True)
class StackMasses:
    """Masses [kg] and thrusts [N] of the stack as NLP expressions, first stage first.

    Attributes
    ----------
    payload : symbol
    propellant, dry, above, ignition, burnout, thrust : list of symbol
        Per stage: propellant and dry mass, the mass it carries, the stack mass at its
        ignition and at its burnout, and its vacuum thrust.
    planned_burnout : list of symbol
        Per stage, the stack mass at its burnout with its propellant reserve on board.
    casings : list of symbol
        Per booster group, the dry mass of the whole group, dropped at its burnout.
    booster_propellant : list of symbol
        Per booster group, the propellant per booster (a decision variable where a split
        frees it).
    booster_setting : list of symbol
        Per booster group, its throttle setting (a decision variable where the group gives
        a range).
    fairing : symbol
        The fairing mass (0 without a fairing).
    """

    payload: object
    propellant: list
    dry: list
    above: list
    ignition: list
    burnout: list
    thrust: list
    planned_burnout: list
    casings: list
    fairing: object
    booster_propellant: list
    booster_setting: list


def payload_is_free(problem: Problem) -> bool:
    """Whether the optimiser chooses the payload mass (the objective maximises it)."""
    return OBJECTIVE_SPECS[problem.objective].payload_free


def vehicle_parameter_sizes(problem: Problem) -> list[tuple[str, int]]:
    """Names and lengths of the vehicle parameters of the NLP.

    ``structure`` is per stage the dry mass, or in a stage-mass split the structural ratio
    (the dry mass then follows the propellant); ``liftoff_mass`` is the one a split holds;
    ``reserve`` and ``reserve_fraction`` are each stage's propellant reserve [kg] and
    the part of it that is a fraction of the propellant [-]; ``thrust_to_weight`` is the
    ratio a split keeps (0 where the thrust is given); ``exhaust_speed`` [m/s] and
    ``exit_area`` [m^2] are per stage, ``drag_scale`` [-] is the factor on C_D.
    """
    n = len(problem.vehicle.stages)
    g = len(problem.vehicle.boosters)
    fairing = problem.vehicle.fairing
    return [("payload", 1), ("propellant", n), ("structure", n), ("thrust", n),
            ("liftoff_mass", 1), ("reserve", n), ("reserve_fraction", n),
            ("thrust_to_weight", n), ("exhaust_speed", n), ("exit_area", n),
            ("drag_scale", 1),
            ("booster_propellant", g), ("booster_dry", g), ("booster_thrust", g),
            ("booster_exhaust_speed", g), ("booster_exit_area", g),
            ("fairing_mass", 1 if fairing is not None else 0),
            ("fairing_time", 1 if fairing is not None and fairing.time is not None else 0),
            ("fairing_heat_flux",
             1 if fairing is not None and fairing.heat_flux_bound is not None else 0)]


def vehicle_parameter_values(problem: Problem, split: bool) -> dict:
    """Values of the parameters of :func:`vehicle_parameter_sizes` [kg, N, m/s, m^2, -]."""
    veh = problem.vehicle
    if split:
        structure = [s.ratio_of_structure for s in veh.stages]
    else:
        structure = [s.dry_mass for s in veh.stages]
    held = veh.liftoff_mass
    if problem.mass_split is not None and problem.mass_split.liftoff_mass is not None:
        held = problem.mass_split.liftoff_mass
    return {"payload": veh.payload_mass,
            "propellant": [s.propellant_mass for s in veh.stages],
            "structure": structure,
            "thrust": [s.thrust_vacuum for s in veh.stages],
            "liftoff_mass": held,
            "reserve": [s.propellant_reserve for s in veh.stages],
            "reserve_fraction": [s.propellant_reserve_fraction for s in veh.stages],
            "thrust_to_weight": [s.thrust_to_weight or 0.0 for s in veh.stages],
            "exhaust_speed": [s.exhaust_speed for s in veh.stages],
            "exit_area": [s.nozzle_exit_area for s in veh.stages],
            "drag_scale": problem.aerodynamics.drag_scale,
            "booster_propellant": [b.propellant_mass for b in veh.boosters],
            "booster_dry": [b.dry_mass for b in veh.boosters],
            "booster_thrust": [b.thrust_vacuum for b in veh.boosters],
            "booster_exhaust_speed": [b.exhaust_speed for b in veh.boosters],
            "booster_exit_area": [b.nozzle_exit_area for b in veh.boosters],
            "fairing_mass": [] if veh.fairing is None else [veh.fairing.mass],
            "fairing_time": ([] if veh.fairing is None or veh.fairing.time is None
                             else [veh.fairing.time]),
            "fairing_heat_flux": ([] if veh.fairing is None or veh.fairing.heat_flux_bound is None
                                  else [veh.fairing.heat_flux_bound])}


def unscaled_drag(problem: Problem) -> Problem:
    """The problem with drag scale 1: the NLP carries the scale as a parameter, so its
    flight model must not hold it too."""
    return replace(problem, aerodynamics=replace(problem.aerodynamics, drag_scale=1.0))


def group_burn_times(problem: Problem, params, masses: StackMasses):
    """``burn_time(group)`` of the groups from the NLP's parameters and booster
    propellant [s] (symbols)."""
    index = {id(g): k for k, g in enumerate(problem.vehicle.boosters)}

    def burn_time(group):
        k = index[id(group)]
        return booster_burn_time(masses.booster_propellant[k], masses.booster_setting[k],
                                 params.entries("booster_thrust")[k],
                                 params.entries("booster_exhaust_speed")[k])
    return burn_time


def _booster_settings(problem: Problem, variables) -> list:
    """Per group its throttle setting: fixed, or a decision variable within its range."""
    groups = problem.vehicle.boosters
    settings = [g.throttle for g in groups]
    free = [k for k, g in enumerate(groups) if g.frees_setting]
    if free:
        chosen = variables.add("booster_setting", (len(free), 1),
                               [groups[k].throttle_min for k in free],
                               [groups[k].throttle_max for k in free])
        for i, k in enumerate(free):
            settings[k] = chosen[i]
    return settings


def _booster_propellant(problem: Problem, variables, params, mass_scale: float):
    """Per group the propellant per booster and the casing per booster: parameters, or in a
    split a decision variable where the group gives propellant bounds (the casing then
    follows its ratio as written)."""
    groups = problem.vehicle.boosters
    prop, dry = list(params.entries("booster_propellant")), list(params.entries("booster_dry"))
    if problem.mass_split is None:
        return prop, dry
    free = [k for k, g in enumerate(groups) if g.frees_propellant]
    if not free:
        return prop, dry
    lo, hi = _PROPELLANT_RANGE
    lower = [(groups[k].propellant_min or lo * groups[k].propellant_mass) / mass_scale
             for k in free]
    upper = [(groups[k].propellant_max or hi * groups[k].propellant_mass) / mass_scale
             for k in free]
    scaled = variables.add("booster_propellant", (len(free), 1), lower, upper)
    for i, k in enumerate(free):
        prop[k] = scaled[i] * mass_scale
        dry[k] = groups[k].casing_ratio * prop[k]
    return prop, dry


def engine_inputs(problem: Problem, params, masses: StackMasses, phase):
    """The node function's engine vector on ``phase``: [vacuum thrust [N], exhaust speed
    [m/s], nozzle exit area [m^2], drag scale [-], boosters' vacuum thrust [N], mass flow
    [kg/s] and exit area [m^2]] (no thrust and no exit area in a coast).
    """
    i = phase.stage
    thrust, flow, area = 0.0, 0.0, 0.0
    for k in phase.boosters:
        g = problem.vehicle.boosters[k]
        f = group_thrust(g.count, masses.booster_setting[k], params.entries("booster_thrust")[k])
        thrust = thrust + f
        flow = flow + f / params.entries("booster_exhaust_speed")[k]
        area = area + g.count * params.entries("booster_exit_area")[k]
    return ca.vertcat(masses.thrust[i] if phase.powered else 0.0,
                      params.entries("exhaust_speed")[i],
                      params.entries("exit_area")[i] if phase.powered else 0.0,
                      params.scalar("drag_scale"), thrust, flow, area)


def thrust_follows_weight(problem: Problem, index: int) -> bool:
    """Whether stage ``index``'s thrust follows its thrust-to-weight ratio in the NLP (a
    stage-mass split keeps the ratio as the stack mass changes)."""
    return (problem.mass_split is not None
            and problem.vehicle.stages[index].thrust_to_weight is not None)


def _propellant(problem: Problem, variables, params, mass_scale: float) -> list:
    """Per stage the propellant mass: a parameter, or a decision variable in a split."""
    stages = problem.vehicle.stages
    written = params.entries("propellant")
    split = problem.mass_split
    if split is None:
        return written
    if split.proportional:
        # every stage scaled by one factor: the rocket-equation split's proportions kept
        factor = variables.add("split_scale", (1, 1), *_SPLIT_SCALE)
        return [factor * p for p in written]
    lo, hi = _PROPELLANT_RANGE
    lower = [st.propellant_min if st.propellant_min is not None else lo * st.propellant_mass
             for st in stages]
    upper = [st.propellant_max if st.propellant_max is not None else hi * st.propellant_mass
             for st in stages]
    scaled = variables.add("propellant", (len(stages), 1),
                           [v / mass_scale for v in lower], [v / mass_scale for v in upper])
    return [scaled[i] * mass_scale for i in range(len(stages))]


def add_stack_masses(problem: Problem, variables, params, mass_scale: float) -> StackMasses:
    """The stack's masses and thrusts, adding the free ones to ``variables``.

    Parameters
    ----------
    problem : Problem
    variables : VariableLayout
        Receives ``payload``, ``split_scale`` or ``propellant`` when they are free.
    params : ParameterLayout
        Holds the parameters of :func:`vehicle_parameter_sizes`.
    mass_scale : float
        Scale of the mass variables [kg].
    """
    split = problem.mass_split is not None
    if payload_is_free(problem):
        payload = variables.add("payload", (1, 1), 0.0, 1.0) * mass_scale
    else:
        payload = params.scalar("payload")
    propellant = _propellant(problem, variables, params, mass_scale)
    structure = params.entries("structure")
    if split:
        dry = [dry_mass_from_ratio(p, r) for p, r in zip(propellant, structure)]
    else:
        dry = structure
    veh = problem.vehicle
    b_prop, b_dry = _booster_propellant(problem, variables, params, mass_scale)
    casings = [g.count * b_dry[k] for k, g in enumerate(veh.boosters)]
    attached = [0.0] * len(veh.stages)
    for k, g in enumerate(veh.boosters):
        attached[g.stage] = attached[g.stage] + g.count * b_prop[k] + casings[k]
    fairing = params.scalar("fairing_mass") if veh.fairing is not None else 0.0
    above, ignition, burnout = stack_masses(
        payload, propellant, dry, attached, fairing,
        None if veh.fairing is None else veh.fairing.stage)
    thrust = []
    for i, (written, ratio) in enumerate(zip(params.entries("thrust"),
                                             params.entries("thrust_to_weight"))):
        if thrust_follows_weight(problem, i):
            thrust.append(thrust_from_ratio(ratio, ignition[i]))
        else:
            thrust.append(written)
    # the reserve stays on board: a planned burnout leaves it with the stage's dry mass
    planned = [b + kg + f * p for b, kg, f, p in zip(burnout, params.entries("reserve"),
                                                     params.entries("reserve_fraction"),
                                                     propellant)]
    return StackMasses(payload=payload, propellant=propellant, dry=dry, above=above,
                       ignition=ignition, burnout=burnout, thrust=thrust,
                       planned_burnout=planned, casings=casings, fairing=fairing,
                       booster_propellant=b_prop,
                       booster_setting=_booster_settings(problem, variables))
