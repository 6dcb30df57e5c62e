"""NLP rows of the vehicle stack's events: booster burnouts, the fairing jettison, restarts.

A phase that ends at a booster burnout lasts exactly the boosters' burn time (from the
NLP's booster parameters, so that their multipliers price them); a fairing dropped at a
given time ends its phase at that time from liftoff; a fairing dropped on the heat-flux
condition leaves the instant to the optimiser, with the flux 1/2 rho v^3 held below the
bound at every point after it. The stack mass drops at each such event by the casings or
the fairing.
"""

from __future__ import annotations

import numpy as np

from ascentplan.optimisation.masses import StackMasses, group_burn_times
from ascentplan.problem.plan import booster_phase_duration, phase_plan

__all__ = ["add_event_rows", "flux_after_fairing", "mass_after", "stack_guess",
           "stack_structure", "with_booster_settings"]

#: scale of event-time rows [s]
_TIME_SCALE = 100.0


def flux_after_fairing(problem, phases, j: int) -> bool:
    """Whether phase ``j`` flies after a fairing jettison chosen on the heat flux."""
    fairing = problem.vehicle.fairing
    if fairing is None or fairing.heat_flux_bound is None:
        return False
    return any(ph.drops_fairing for ph in phases[:j])


def mass_after(nlp, j: int, masses: StackMasses, end_mass):
    """Stack mass just after phase ``j`` ends, its mass at the end being ``end_mass``:
    staging leaves what the stage carries; booster casings and the fairing drop."""
    ph = nlp.phases[j]
    if ph.ends_stage and ph.stage < nlp.n_stages - 1:
        return masses.above[ph.stage]
    for k in ph.burnouts:
        end_mass = end_mass - masses.casings[k]
    if ph.drops_fairing:
        end_mass = end_mass - masses.fairing
    return end_mass


def _elapsed(nlp, j: int):
    """Time from liftoff to the end of phase ``j`` [s] (a symbol)."""
    return sum(nlp.phase_vars[i].duration * nlp.duration_scale[i] for i in range(j + 1))


def add_event_rows(nlp, j: int, masses: StackMasses, fairing_flux=None) -> None:
    """The timing rows of phase ``j`` and, given ``fairing_flux`` (the heat flux at every
    point of the phase), the fairing's heat-flux rows.
    """
    ph = nlp.phases[j]
    problem = nlp.problem
    sym = nlp.phase_vars[j]
    if ph.burnouts:
        duration = booster_phase_duration(problem, nlp.phases, j,
                                          group_burn_times(problem, nlp.parameters, masses))
        nlp.rows.add(f"booster_burnout{j}",
                     (sym.duration * nlp.duration_scale[j] - duration) / _TIME_SCALE, 0.0, 0.0)
    fairing = problem.vehicle.fairing
    if ph.drops_fairing and fairing.time is not None:
        nlp.rows.add("fairing_time", (_elapsed(nlp, j) - nlp.parameters.scalar("fairing_time"))
                     / _TIME_SCALE, 0.0, 0.0)
    if fairing_flux is not None:
        bound = nlp.parameters.scalar("fairing_heat_flux")
        margin = problem.mesh.limit_margin
        nlp.rows.add(f"fairing_heat_flux{j}", fairing_flux / (bound * (1.0 - margin)),
                     -np.inf, 1.0)


def stack_structure(problem) -> tuple:
    """What of the stack fixes the NLP's structure: the phase plan (booster events, the
    fairing, restarts), the groups' counts, settings, ignitions and freed propellant, and
    the fairing's rule; the masses, thrusts and bounds are parameters."""
    fairing = problem.vehicle.fairing
    return (tuple(phase_plan(problem)),
            tuple((g.stage, g.count, None if g.frees_setting else g.throttle, g.ignition,
                   g.propellant_min, g.propellant_max, g.throttle_min, g.throttle_max)
                  for g in problem.vehicle.boosters),
            None if fairing is None else (fairing.stage, fairing.time is None))


def stack_guess(problem, guess, variables, mass_scale: float) -> dict:
    """Scaled first values of the stack's decision variables: the booster propellant a
    split frees (the guess's, else as written) and the booster settings the optimiser
    chooses (as the vehicle has them)."""
    groups = problem.vehicle.boosters
    out = {}
    if "booster_propellant" in variables:
        given = guess.booster_propellant or [g.propellant_mass for g in groups]
        out["booster_propellant"] = np.array(
            [p for g, p in zip(groups, given) if g.frees_propellant]) / mass_scale
    if "booster_setting" in variables:
        out["booster_setting"] = np.array([g.throttle for g in groups if g.frees_setting])
    return out


def with_booster_settings(problem, settings):
    """The problem with the booster settings the optimiser chose (groups with a range)."""
    from dataclasses import replace

    groups = problem.vehicle.boosters
    if not any(g.frees_setting for g in groups) or len(settings) != len(groups):
        return problem
    # IPOPT may pass a bound by its tolerance: the setting flown stays within the range
    chosen = tuple(replace(g, throttle=float(min(max(s, g.throttle_min), g.throttle_max)))
                   if g.frees_setting else g for g, s in zip(groups, settings))
    return replace(problem, vehicle=replace(problem.vehicle, boosters=chosen))
