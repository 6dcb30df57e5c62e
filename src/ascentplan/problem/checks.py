"""Checks across the sections of a problem: can the vehicle lift off, can the limits be
met, does the objective leave something to optimise, does the mass split fit.

Each check runs only when the sections it reads were good, so that one fault is not
reported again as a consequence elsewhere.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from typing import Any

from ascentplan.constants import G0
from ascentplan.problem.model import (
    OBJECTIVE_SPECS,
    Launch,
    Limits,
    MassSplit,
    Planet,
    Target,
    Vehicle,
)
from ascentplan.problem.reader import _fmt, _raw, _Reader
from ascentplan.problem.stack_sections import check_stack

__all__ = ["liftoff_thrust", "site_gravity"]


def liftoff_thrust(vehicle: Vehicle, atmos, launch: Launch) -> tuple[float, float]:
    """Liftoff thrust at the site at the first stage's top throttle.

    Parameters
    ----------
    vehicle : Vehicle
    atmos : atmosphere model
        Supplies the site pressure through ``state(altitude).pressure``.
    launch : Launch

    Returns
    -------
    thrust, site_pressure : float
        F = eta_max F_vac - p_site A_exit [N], and p_site [Pa].
    """
    first = vehicle.stages[0]
    pressure = float(atmos.state(launch.altitude).pressure)
    # the ground-lit boosters of the first stage add their thrust at their settings
    boosters = sum(g.group_thrust - pressure * g.count * g.nozzle_exit_area
                   for g in vehicle.groups_of(0) if g.ignition is None)
    return (first.throttle_max * first.thrust_vacuum - pressure * first.nozzle_exit_area
            + boosters, pressure)


def site_gravity(gravity_model, planet: Planet, launch: Launch) -> float:
    """Gravitational acceleration at the launch site [m s^-2] from the gravity model."""
    return float(gravity_model.acceleration(planet.radius + launch.altitude))


@dataclass
class _Parts:
    """The sections read so far; None where a section was missing or bad."""

    vehicle: Vehicle | None
    planet: Planet | None
    atmosphere: Any
    atmosphere_name: str | None
    gravity: Any
    launch: Launch | None
    limits: Limits | None
    target: Target | None
    objective: str | None
    mass_split: MassSplit | None


def _cross_checks(r: _Reader, data: dict, parts: _Parts) -> None:
    """Checks that need more than one section; each runs only when its inputs are good."""
    _check_liftoff(r, data, parts)
    _check_limits(r, data, parts)
    _check_objective(r, data, parts)
    _check_mass_split(r, data, parts)
    _check_orbit_reach(r, data, parts)
    check_stack(r, data, parts)


def _check_liftoff(r: _Reader, data: dict, p: _Parts) -> None:
    """Liftoff thrust-to-weight above 1, and a vertical rise within the first burn."""
    if p.vehicle is None or p.launch is None:
        return
    first = p.vehicle.stages[0]
    if None not in (p.atmosphere, p.planet, p.gravity) and not p.launch.in_circular_orbit:
        thrust, pressure = liftoff_thrust(p.vehicle, p.atmosphere, p.launch)
        weight = p.vehicle.liftoff_mass * site_gravity(p.gravity, p.planet, p.launch)
        ratio = thrust / weight
        if ratio <= 1.0:
            loss = pressure * first.nozzle_exit_area
            r.error("vehicle.stages[0].thrust_vacuum",
                    f"liftoff thrust-to-weight is {ratio:.3f}, the vehicle cannot lift off: "
                    f"thrust {_fmt(thrust / 1e3)} kN at throttle {_fmt(first.throttle_max)} "
                    f"(after the back-pressure loss {_fmt(loss / 1e3)} kN) against a weight "
                    f"of {_fmt(weight / 1e3)} kN (liftoff mass {_fmt(p.vehicle.liftoff_mass)} "
                    f"kg); expected a ratio > 1")
    burn = first.full_throttle_burn_time
    if p.launch.vertical_rise > burn:
        r.error("launch.vertical_rise",
                f"is longer than the first stage's full-throttle burn of {burn:.1f} s, got "
                f"{_raw(data, 'launch', 'vertical_rise')}")


def _check_limits(r: _Reader, data: dict, p: _Parts) -> None:
    """A minimum altitude the pad satisfies, an axial limit the upper stages can meet."""
    if p.limits is None:
        return
    if p.launch is not None and p.limits.min_altitude is not None:
        if p.limits.min_altitude > p.launch.altitude:
            r.error("limits.min_altitude",
                    f"must not be above the launch altitude {_fmt(p.launch.altitude)} m, got "
                    f"{_raw(data, 'limits', 'min_altitude')}")
    if p.vehicle is None or p.limits.max_axial_acceleration is None:
        return
    # upper stages burn out near vacuum, where drag cannot help: at burnout the sensed
    # acceleration is at least eta_min F_vac / m_burnout; the first stage is exempt in
    # an atmosphere because drag and back-pressure take some of its thrust
    first_checked = 0 if p.atmosphere_name == "vacuum" else 1
    for i in range(first_checked, len(p.vehicle.stages)):
        s = p.vehicle.stages[i]
        least = s.throttle_min * s.thrust_vacuum / (p.vehicle.burnout_mass(i) * G0)
        if least > p.limits.max_axial_acceleration:
            r.error("limits.max_axial_acceleration",
                    f"cannot be met: {s.name} reaches {least:.2f} g0 at burnout even at its "
                    f"minimum throttle {_fmt(s.throttle_min)}, got "
                    f"{_raw(data, 'limits', 'max_axial_acceleration')}; expected a larger "
                    f"limit or a lower vehicle.stages[{i}].throttle.min")


def _target_keys_text() -> str:
    """The target keys in words: ``"altitude, speed, ... or circular_orbit_altitude"``."""
    names = [f.name for f in fields(Target)]
    return f"{', '.join(names[:-1])} or {names[-1]}"


def _check_objective(r: _Reader, data: dict, p: _Parts) -> None:
    """An objective the target neither fixes nor leaves undefined."""
    objective, target = p.objective, p.target
    if objective is None or target is None:
        return
    spec = OBJECTIVE_SPECS[objective]
    # maximising a quantity that the target fixes leaves nothing to optimise
    fixed = [k for k in spec.fixed_by if getattr(target, k) is not None]
    if fixed:
        r.error("objective", f"{objective} maximises what target.{fixed[0]} fixes; expected "
                             f"another objective (e.g. max_payload) or no target.{fixed[0]}")
    if spec.needs_target and target.is_empty():
        r.error("objective", f"{objective} needs a target ({_target_keys_text()}), got no "
                             f"target section")


def _check_mass_split(r: _Reader, data: dict, p: _Parts) -> None:
    """A mass split that suits the objective, the target and the vehicle."""
    split = p.mass_split
    split_given = isinstance(data.get("mass_split"), dict)
    spec = OBJECTIVE_SPECS.get(p.objective)
    hold = spec.requires_split_hold if spec is not None else None
    if hold is not None and (not split_given or (split is not None and split.hold != hold)):
        r.error("objective", f"{p.objective} varies the stage masses with the {hold} held; "
                             f"expected mass_split: {{hold: {hold}}}")
    if split is None:
        return
    if spec is not None and spec.payload_free and split.hold == "payload":
        r.error("mass_split.hold", "payload holds the payload fixed, which objective "
                                   f"{p.objective} varies; expected hold: liftoff_mass")
    if split.hold == "payload" and p.target is not None and p.target.is_empty():
        r.error("mass_split.hold", "payload minimises the liftoff mass that reaches the "
                                   "target; expected a target section")
    if p.vehicle is None:
        return
    if split.hold == "liftoff_mass" and len(p.vehicle.stages) < 2:
        r.error("mass_split", "a split of a fixed liftoff mass needs at least two stages, "
                              "got one")
    if split.liftoff_mass is not None:
        fixed = p.vehicle.payload_mass + sum(s.dry_mass for s in p.vehicle.stages
                                             if s.structural_ratio is None)
        if split.liftoff_mass <= fixed:
            r.error("mass_split.liftoff_mass",
                    f"leaves no propellant: payload and fixed dry masses already weigh "
                    f"{_fmt(fixed)} kg, got {_raw(data, 'mass_split', 'liftoff_mass')}")


def _check_orbit_reach(r: _Reader, data: dict, p: _Parts) -> None:
    """An orbit the vehicle can reach from the site, before any solve.

    The plane of an orbit passes through the planet's centre, so a flight from geocentric
    latitude phi can reach inclinations from |phi| to 180 deg - |phi| only (spherical
    trigonometry: cos i = cos(phi) sin(Az), Vallado section 6.4), unless a dog-leg
    allowance lets the flight yaw out of its launch plane. A perigee must clear the
    surface; a burnout altitude must lie between perigee and apogee.
    """
    from ascentplan.models.geodesy import geocentric_latitude
    from ascentplan.models.orbit import target_radii

    t, planet, launch = p.target, p.planet, p.launch
    if t is None or planet is None or launch is None:
        return
    if t.inclination is not None:
        lat = abs(geocentric_latitude(launch.latitude, launch.altitude, planet.radius,
                                      planet.flattening))
        lowest = max(0.0, lat - launch.dog_leg)
        highest = min(math.pi, math.pi - lat + launch.dog_leg)
        if not lowest - 1e-12 <= t.inclination <= highest + 1e-12:
            r.error("target.inclination",
                    f"cannot be reached from the launch site: a flight from latitude "
                    f"{_fmt(math.degrees(launch.latitude))} deg (geocentric "
                    f"{math.degrees(lat):.4f} deg) reaches inclinations from "
                    f"{math.degrees(lowest):.4f} to {math.degrees(highest):.4f} deg (launch."
                    f"dog_leg {_fmt(math.degrees(launch.dog_leg))} deg), got "
                    f"{_raw(data, 'target', 'inclination')}; expected an inclination in that "
                    f"range or a launch.dog_leg allowance")
    radii = target_radii(t, planet)
    if radii is None:
        return
    rp, ra = radii
    if rp <= planet.radius + max(launch.altitude, 0.0):
        r.error("target", f"the orbit's perigee radius {_fmt(rp / 1e3)} km is not above the "
                          f"launch site ({_fmt(planet.radius / 1e3)} km equatorial radius); "
                          f"expected a perigee above the surface")
    if t.altitude is not None and not rp - 1.0 <= planet.radius + t.altitude <= ra + 1.0:
        r.error("target.altitude", f"must lie between the orbit's perigee and apogee altitudes "
                                   f"({_fmt((rp - planet.radius) / 1e3)} to "
                                   f"{_fmt((ra - planet.radius) / 1e3)} km), got "
                                   f"{_raw(data, 'target', 'altitude')}")
