"""The ideal velocity increment of a stack with strap-on boosters, and its best split.

Over a phase in which the core burns beside booster groups, the stack's mass falls at the
summed mass flow and the thrust over it is the mass-flow-weighted exhaust speed, so the
phase gives c_eff ln(m_start/m_end) with c_eff = sum F / sum mdot (parallel staging; the
rocket equation phase by phase). The serial stages' propellant split that maximises the
stack's increment for a held liftoff mass (or minimises the liftoff mass for a given
increment) has no closed form with boosters; it is found here numerically, the booster
groups held as written, and reduces to the closed-form serial optimum without boosters.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import minimize

from ascentplan.problem.stack import booster_burnout_times
from ascentplan.staging.rocket_equation import StageSplit, StagingError

__all__ = ["best_stack_split", "stack_delta_v"]


def _stage_delta_v(vehicle, i: int) -> float:
    """Ideal velocity increment of stage ``i`` with its boosters, at full throttle."""
    stage = vehicle.stages[i]
    core_thrust = stage.throttle_max * stage.thrust_vacuum
    core_flow = core_thrust / stage.exhaust_speed
    m = vehicle.ignition_mass(i)
    ends = booster_burnout_times(vehicle.boosters, i)
    groups = vehicle.groups_of(i)
    burning = [g for g in groups if g.ignition is None]
    t, dv, core_left = 0.0, 0.0, stage.propellant_mass
    for t_end in sorted(set(ends.values())):
        flow = core_flow + sum(g.group_mass_flow for g in burning)
        thrust = core_thrust + sum(g.group_thrust for g in burning)
        m_end = m - flow * (t_end - t)
        dv += thrust / flow * math.log(m / m_end)
        core_left -= core_flow * (t_end - t)
        ended = [g for g in burning if ends[g.name] == t_end]
        m = m_end - sum(g.count * g.dry_mass for g in ended)
        names = {g.name for g in ended}
        burning = [g for g in burning if g.name not in names]
        burning += [g for g in groups if g.ignition in names]
        t = t_end
    if core_left > 0.0:
        dv += stage.exhaust_speed * math.log(m / (m - core_left))
    return dv


def stack_delta_v(vehicle) -> list[float]:
    """Per stage, the ideal velocity increment of the stack at full throttle [m s^-1]."""
    return [_stage_delta_v(vehicle, i) for i in range(len(vehicle.stages))]


def _split(vehicle, held_liftoff: float | None, delta_v: float | None):
    """Propellant masses of the best split [kg]: most increment at ``held_liftoff``, or
    least liftoff mass for ``delta_v``."""
    written = np.array([s.propellant_mass for s in vehicle.stages])

    def build(x):
        return vehicle.with_propellant(list(x * written))

    def total(x):
        return sum(stack_delta_v(build(x)))

    x0 = np.ones_like(written)
    bounds = [(1e-3, 50.0)] * written.size
    if held_liftoff is not None:
        cons = {"type": "eq",
                "fun": lambda x: (build(x).liftoff_mass - held_liftoff) / held_liftoff}
        fun = lambda x: -total(x) / 1e3  # noqa: E731
    else:
        cons = {"type": "eq", "fun": lambda x: (total(x) - delta_v) / 1e3}
        fun = lambda x: build(x).liftoff_mass / vehicle.liftoff_mass  # noqa: E731
    out = minimize(fun, x0, method="SLSQP", bounds=bounds, constraints=[cons],
                   options={"ftol": 1e-12, "maxiter": 500})
    if not out.success:
        raise StagingError(f"no split of the stack's stages found: {out.message}")
    return out.x * written


def best_stack_split(vehicle, *, liftoff_mass: float | None = None,
                     hold: str = "liftoff_mass") -> StageSplit:
    """The serial stages' propellant split of a stack with boosters (held as written).

    ``hold="liftoff_mass"`` maximises the ideal increment at ``liftoff_mass`` (default the
    vehicle's); ``hold="payload"`` minimises the liftoff mass for the vehicle's own
    increment as written. ``multiplier`` is d ln(liftoff/payload) / d(increment) along the
    best splits, by a central difference of two more splits.
    """
    if hold == "liftoff_mass":
        held = vehicle.liftoff_mass if liftoff_mass is None else float(liftoff_mass)
        propellant = _split(vehicle, held, None)
        step = 1e-3 * held
        dv = [sum(stack_delta_v(vehicle.with_propellant(list(_split(vehicle, m, None)))))
              for m in (held - step, held + step)]
        multiplier = (math.log(held + step) - math.log(held - step)) / (dv[1] - dv[0])
    else:
        target = sum(stack_delta_v(vehicle))
        propellant = _split(vehicle, None, target)
        step = 1e-3 * target
        masses = [vehicle.with_propellant(list(_split(vehicle, None, target + d))).liftoff_mass
                  for d in (-step, step)]
        multiplier = (math.log(masses[1]) - math.log(masses[0])) / (2 * step)
    best = vehicle.with_propellant(list(propellant))
    per_stage = stack_delta_v(best)
    n = len(best.stages)
    ignition = [best.ignition_mass(i) for i in range(n)]
    burnout = [best.burnout_mass(i) for i in range(n)]
    return StageSplit(
        stage_names=tuple(s.name for s in best.stages),
        exhaust_speed=tuple(float(s.exhaust_speed) for s in best.stages),
        structural_ratio=tuple(float(s.ratio_of_structure) for s in best.stages),
        mass_ratio=tuple(float(a / b) for a, b in zip(ignition, burnout)),
        propellant_mass=tuple(float(s.propellant_mass) for s in best.stages),
        dry_mass=tuple(float(s.dry_mass) for s in best.stages),
        stage_mass=tuple(float(s.mass) for s in best.stages),
        delta_v=tuple(float(v) for v in per_stage),
        payload_mass=float(best.payload_mass), liftoff_mass=float(best.liftoff_mass),
        payload_fraction=float(best.payload_mass / best.liftoff_mass),
        multiplier=float(multiplier), total_delta_v=float(sum(per_stage)))
