"""Plain-text summary of a problem: stage masses, rocket-equation velocity budget,
thrust-to-weight, models and limits."""

from __future__ import annotations

import math

from ascentplan.cautions import CAUTION
from ascentplan.constants import G0
from ascentplan.models import aero, atmosphere, gravity
from ascentplan.models.dynamics import dynamics_kind
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.loader import liftoff_thrust, site_gravity
from ascentplan.problem.model import OBJECTIVES, Problem, Vehicle
from ascentplan.staging.parallel import stack_delta_v

__all__ = ["ideal_delta_v", "vehicle_summary"]

def ideal_delta_v(vehicle: Vehicle) -> list[float]:
    """Ideal velocity increment of each stage by the rocket equation.

    dv_i = c_i ln(m_ignition,i / m_burnout,i) (Tsiolkovsky 1903; e.g. H. D. Curtis,
    *Orbital Mechanics for Engineering Students*, chapter "Rocket vehicle dynamics"),
    phase by phase with the mass-flow-weighted exhaust speed where boosters burn beside
    the stage (:func:`ascentplan.staging.parallel.stack_delta_v`, which it is).

    Parameters
    ----------
    vehicle : Vehicle

    Returns
    -------
    list of float
        One increment per stage, first stage first [m s^-1].
    """
    return stack_delta_v(vehicle)


def _model_name(model, registry: dict) -> str:
    for name, cls in registry.items():
        if type(model) is cls:
            return name
    return type(model).__name__


def _table(rows: list[list[str]], right: set[int]) -> list[str]:
    widths = [max(len(row[j]) for row in rows) for j in range(len(rows[0]))]
    lines = []
    for row in rows:
        cells = [c.rjust(w) if j in right else c.ljust(w)
                 for j, (c, w) in enumerate(zip(row, widths))]
        lines.append("  " + "  ".join(cells).rstrip())
    return lines


def _limit_text(name: str, value: float) -> str:
    spec = LIMITS.get(name)
    if spec is None:
        return f"{name} {value:.4g}"
    return f"{name} {spec.to_user(value):.4g} {spec.unit}".rstrip()


def vehicle_summary(problem: Problem) -> str:
    """Text summary of a problem for ``ascentplan check``.

    Gives each stage's propellant, dry, total and ignition-stack masses, its ideal
    velocity increment c ln(m_ignition/m_burnout) and full-throttle burn time, the total
    ideal velocity increment, the liftoff thrust-to-weight ratio at the site (top
    throttle of the first stage, less the back-pressure loss p_site A_exit, against
    the weight from the gravity model at the site), the model names, the limits, the
    target and the objective, in the units an engineer writes them; it ends with the
    caution text.

    Parameters
    ----------
    problem : Problem

    Returns
    -------
    str
    """
    mass = _MassText(problem.vehicle.liftoff_mass)
    lines = _problem_lines(problem) + _stage_lines(problem.vehicle, mass)
    lines += _liftoff_lines(problem) + _goal_lines(problem, mass)
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines) + "\n"


class _MassText:
    """Masses in kilograms to 0.1 kg, whatever the vehicle's size: the unit ``solve``
    prints and summary.json holds, so that the two can be read side by side."""

    unit = "kg"

    def __init__(self, liftoff_mass: float):
        self.liftoff_mass = liftoff_mass

    def __call__(self, x: float) -> str:
        return f"{x:.1f}"


def _problem_lines(problem: Problem) -> list[str]:
    """Name, file, description, planet, models and launch site."""
    lines = [f"Problem: {problem.name} ({problem.dynamics} flight)"]
    if problem.source_path:
        lines.append(f"  file: {problem.source_path}")
    if problem.description:
        lines.append(f"  {problem.description.strip()}")
    p = problem.planet
    lines.append(f"Planet: {p.name}, radius {p.radius / 1e3:.3f} km, "
                 f"gravitational parameter {p.gravitational_parameter:.6g} m^3/s^2, "
                 f"rotation {p.rotation_rate:.6g} rad/s")
    drag_name = _model_name(problem.aerodynamics.drag, aero.DRAG_MODELS)
    lines.append(f"Models: atmosphere {_model_name(problem.atmosphere, atmosphere.ATMOSPHERES)}"
                 f", drag {drag_name}, gravity "
                 f"{_model_name(problem.gravity, gravity.GRAVITY_MODELS)}; reference area "
                 f"{problem.aerodynamics.reference_area:.4g} m^2"
                 + (f", reference length {problem.aerodynamics.reference_length:.4g} m"
                    if problem.aerodynamics.reference_length is not None else ""))
    la = problem.launch
    launch = (f"Launch: altitude {la.altitude:.1f} m, latitude {math.degrees(la.latitude):.3f} "
              f"deg, vertical rise {la.vertical_rise:.1f} s")
    if dynamics_kind(problem.dynamics).steered:
        launch += f", pitch-over {math.degrees(la.pitch_over):.2f} deg"
    lines.append(launch)
    return lines


def _stage_lines(v: Vehicle, mass: _MassText) -> list[str]:
    """The stage table, the liftoff mass and ideal velocity, and a line of notes per stage."""
    lines = [""]
    lines.append("Stages (ideal velocity increment by the rocket equation, c ln(m_ignition/"
                 "m_burnout); burn time at full throttle):")
    dv = ideal_delta_v(v)
    header = ["stage", f"propellant [{mass.unit}]", f"dry [{mass.unit}]",
              f"total [{mass.unit}]", f"ignition [{mass.unit}]", f"burnout [{mass.unit}]",
              "thrust vac [kN]", "Isp vac [s]", "throttle", "burn [s]",
              "ideal velocity increment [m/s]"]
    rows = [header]
    for i, s in enumerate(v.stages):
        rows.append([s.name, mass(s.propellant_mass), mass(s.dry_mass), mass(s.mass),
                     mass(v.ignition_mass(i)), mass(v.burnout_mass(i)),
                     f"{s.thrust_vacuum / 1e3:.2f}", f"{s.isp_vacuum:.1f}",
                     f"{s.throttle_min:.2f}-{s.throttle_max:.2f}",
                     f"{s.full_throttle_burn_time:.1f}", f"{dv[i]:.1f}"])
    rows.append(["payload", "", "", mass(v.payload_mass), "", "", "", "", "", "", ""])
    lines.extend(_table(rows, right=set(range(1, len(header)))))
    lines.append(f"  liftoff mass {mass(v.liftoff_mass)} {mass.unit}; total ideal velocity "
                 f"increment {sum(dv):.1f} m/s")
    lines.extend(_stage_notes(v, i, mass) for i in range(len(v.stages)))
    return lines + _stack_lines(v, mass)


def _stack_lines(v: Vehicle, mass: _MassText) -> list[str]:
    """The booster groups (per booster) and the fairing, when the vehicle has them."""
    lines = []
    if v.boosters:
        lines += ["", "Booster groups (figures per booster; burn time at the group's setting):"]
        rows = [["group", "of stage", "count", f"propellant [{mass.unit}]",
                 f"dry [{mass.unit}]", "thrust vac [kN]", "Isp vac [s]", "setting",
                 "ignition", "burn [s]"]]
        for g in v.boosters:
            rows.append([g.name, v.stages[g.stage].name, str(g.count), mass(g.propellant_mass),
                         mass(g.dry_mass), f"{g.thrust_vacuum / 1e3:.2f}",
                         f"{g.isp_vacuum:.1f}", f"{g.throttle:.2f}",
                         "with the core" if g.ignition is None else f"after {g.ignition}",
                         f"{g.burn_time:.1f}"])
        lines.extend(_table(rows, right={2, 3, 4, 5, 6, 7, 9}))
    f = v.fairing
    if f is not None:
        when = (f"at {f.time:.1f} s" if f.time is not None else
                f"once the heat flux 1/2 rho v^3 stays below {f.heat_flux_bound:.1f} W/m^2")
        lines += ["", f"Fairing: {mass(f.mass)} {mass.unit}, dropped during the burn of "
                      f"{v.stages[f.stage].name} {when}"]
    restarts = [s for s in v.stages if s.restarts]
    for s in restarts:
        lines.append(f"Restarts: {s.name} burns {s.restarts + 1} times, each coast between "
                     f"{s.restart_coast_min:.0f} and {s.restart_coast_max:.0f} s")
    return lines


def _stage_notes(v: Vehicle, i: int, mass: _MassText) -> str:
    """One line of what else is written for stage ``i``."""
    s = v.stages[i]
    extra = []
    if s.structural_ratio is not None:
        extra.append(f"structural ratio {s.structural_ratio:.4f}")
    if s.nozzle_exit_area:
        extra.append(f"nozzle exit area {s.nozzle_exit_area:.4g} m^2")
    if s.max_throttle_rate is not None:
        extra.append(f"max throttle rate {s.max_throttle_rate:.4g} 1/s")
    if s.coast_after:
        extra.append(f"coast after {s.coast_after:.1f} s")
    if s.propellant_min is not None or s.propellant_max is not None:
        lo = "-" if s.propellant_min is None else mass(s.propellant_min)
        hi = "-" if s.propellant_max is None else mass(s.propellant_max)
        extra.append(f"propellant bounds {lo}..{hi} {mass.unit}")
    accel = s.throttle_max * s.thrust_vacuum / (v.burnout_mass(i) * G0)
    extra.append(f"vacuum acceleration at burnout {accel:.2f} g0 at top throttle")
    return f"  {s.name}: " + ", ".join(extra)


def _liftoff_lines(problem: Problem) -> list[str]:
    """Liftoff thrust-to-weight at the site."""
    v, la = problem.vehicle, problem.launch
    thrust, pressure = liftoff_thrust(v, problem.atmosphere, la)
    g_site = site_gravity(problem.gravity, problem.planet, la)
    weight = v.liftoff_mass * g_site
    lines = [""]
    lines.append(f"Liftoff thrust-to-weight: {thrust / weight:.3f} (thrust {thrust / 1e3:.2f} kN "
                 f"at throttle {v.stages[0].throttle_max:.2f} and site pressure "
                 f"{pressure / 1e3:.3f} kPa; weight {weight / 1e3:.2f} kN at "
                 f"g = {g_site:.4f} m/s^2)")
    return lines


def _goal_lines(problem: Problem, mass: _MassText) -> list[str]:
    """Limits, target, objective, mesh, stage-mass split and schedule."""
    lines = []
    active = problem.limits.active_names()
    lines.append("Limits: " + (", ".join(_limit_text(k, getattr(problem.limits, k))
                                         for k in active) if active else "none"))
    t = problem.target
    parts = []
    if t.circular_orbit_altitude is not None:
        parts.append(f"circular orbit at {t.circular_orbit_altitude / 1e3:.3f} km")
    if t.altitude is not None:
        parts.append(f"altitude {t.altitude / 1e3:.3f} km")
    if t.speed is not None:
        parts.append(f"speed {t.speed:.1f} m/s")
    if t.flight_path_angle is not None:
        parts.append(f"flight-path angle {math.degrees(t.flight_path_angle):.3f} deg")
    lines.append("Target: " + (", ".join(parts) if parts else "none (free burnout state)"))
    lines.append(f"Objective: {problem.objective} ({OBJECTIVES.get(problem.objective, '')})")
    m = problem.mesh
    lines.append(f"Mesh: {m.scheme}, {m.nodes_per_phase} nodes per phase, up to "
                 f"{m.max_refinements} refinements; verification tolerance "
                 f"{m.speed_tolerance:.3g} m/s or {m.speed_tolerance_fraction:.3g} of speed, "
                 f"limits {m.limit_tolerance_fraction:.3g}")
    if problem.mass_split is not None:
        ms = problem.mass_split
        held = (f", liftoff mass {mass(ms.liftoff_mass)} {mass.unit}"
                if ms.liftoff_mass is not None else "")
        lines.append(f"Stage-mass split: on, holding {ms.hold}{held}")
    if problem.schedule is not None:
        sc = problem.schedule
        lines.append(f"Schedule: {len(sc.time)} points over {sc.time[-1]:.1f} s"
                     + ("" if sc.pitch is None else ", with pitch"))
    return lines
