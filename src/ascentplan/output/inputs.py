"""What a result came from, written beside it: the problem's inputs and the run's record.

A results folder must stand on its own: a reviewer who has only ``summary.json`` (or the
report rendered from it) should see the vehicle, site, target, limits, models and mesh
that produced the numbers, which file they were read from (with its SHA-256 content
hash, so that an edited file is told from the one that was solved), when, and by which
versions of the tool and its numerical libraries. Both blocks are JSON-ready, every
quantity in the unit its key name carries.
"""

from __future__ import annotations

import ctypes
import datetime as _datetime
import hashlib
import math
import platform
from pathlib import Path

from ascentplan import __version__
from ascentplan.constants import G0
from ascentplan.models import aero, atmosphere, gravity
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import OBJECTIVES, SCHEMES, Problem, Stage, Vehicle

__all__ = ["file_sha256", "library_versions", "model_name", "problem_inputs", "provenance",
           "solve_summary", "unit_key"]

#: bytes read at a time while hashing the problem file
_CHUNK = 1 << 16


def unit_key(unit: str) -> str:
    """A unit as it is written at the end of a key name: ``kg/m^3`` -> ``kg_m3``,
    ``kPa deg`` -> ``kPa_deg``, ``m/s^2`` -> ``m_s2``, ``""`` -> ``""``."""
    return unit.replace("^", "").replace("/", "_").replace(" ", "_").replace("*", "_")


def model_name(model, registry: dict) -> str:
    """The problem-file name of a model instance (its registry key)."""
    for name, cls in registry.items():
        if type(model) is cls:
            return name
    return type(model).__name__


def _model_record(model, registry: dict) -> dict:
    """Name and declared parameters of a model, each key with its SI unit."""
    cls = type(model)
    parameters = {}
    for key, param in getattr(cls, "parameters", {}).items():
        value = getattr(model, key, None)
        if isinstance(value, (tuple, list)) and all(_is_number(v) for v in value):
            value = [float(v) for v in value]
        elif _is_number(value):
            value = float(value)
        else:
            # kept under another name (a half-density height becomes a scale height, a
            # constant gravity's acceleration its value): shown by its effect instead
            continue
        parameters[f"{key}_{unit_key(param.unit)}" if param.unit else key] = value
    return {"name": model_name(model, registry), "parameters": parameters}


def _is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _stage_record(vehicle: Vehicle, i: int) -> dict:
    """One row of the vehicle table: what the file says of stage ``i``, in SI units."""
    s: Stage = vehicle.stages[i]
    return {
        "name": s.name,
        "propellant_mass_kg": float(s.propellant_mass),
        "dry_mass_kg": float(s.dry_mass),
        "thrust_vacuum_N": float(s.thrust_vacuum),
        "isp_vacuum_s": float(s.exhaust_speed / G0),
        "exhaust_speed_m_s": float(s.exhaust_speed),
        "nozzle_exit_area_m2": float(s.nozzle_exit_area),
        "throttle_min": float(s.throttle_min),
        "throttle_max": float(s.throttle_max),
        "max_throttle_rate_1_s": _optional(s.max_throttle_rate),
        "max_steering_rate_deg_s": (None if s.max_steering_rate is None
                                    else math.degrees(s.max_steering_rate)),
        "shutdown": "early" if s.may_shut_down_early else "at_depletion",
        "propellant_reserve_kg": float(s.reserve_mass),
        "structural_ratio": float(s.ratio_of_structure),
        "coast_after_s": float(s.coast_after),
        "restarts": int(s.restarts),
        "coast_between_burns_s": ([float(s.restart_coast_min), float(s.restart_coast_max)]
                                  if s.restarts else None),
        "ignition_mass_kg": float(vehicle.ignition_mass(i)),
    }


def _booster_record(vehicle: Vehicle, g) -> dict:
    """One booster group as written (figures per booster), SI units."""
    return {
        "name": g.name, "stage": vehicle.stages[g.stage].name, "count": int(g.count),
        "propellant_mass_kg": float(g.propellant_mass), "dry_mass_kg": float(g.dry_mass),
        "thrust_vacuum_N": float(g.thrust_vacuum), "isp_vacuum_s": float(g.isp_vacuum),
        "nozzle_exit_area_m2": float(g.nozzle_exit_area), "throttle": float(g.throttle),
        "throttle_range": ([float(g.throttle_min), float(g.throttle_max)]
                           if g.frees_setting else None),
        "ignition": "liftoff" if g.ignition is None else f"after {g.ignition}",
        "burn_time_s": float(g.burn_time),
    }


def _fairing_record(vehicle: Vehicle) -> dict | None:
    f = vehicle.fairing
    if f is None:
        return None
    return {"mass_kg": float(f.mass), "during": vehicle.stages[f.stage].name,
            "jettison_time_s": _optional(f.time),
            "jettison_heat_flux_W_m2": _optional(f.heat_flux_bound)}


def _optional(value):
    return None if value is None else float(value)


def _deg(value):
    return None if value is None else math.degrees(value)


def _km(value):
    return None if value is None else value / 1000.0


def _site_record(problem: Problem) -> dict:
    """The planet and the pad; the pad's speed with the planet's rotation, eastward."""
    planet, launch = problem.planet, problem.launch
    radius = planet.radius + launch.altitude
    return {
        "planet": planet.name,
        "planet_radius_km": planet.radius / 1000.0,
        "gravitational_parameter_m3_s2": float(planet.gravitational_parameter),
        "rotation_rate_rad_s": float(planet.rotation_rate),
        "altitude_m": float(launch.altitude),
        "latitude_deg": math.degrees(launch.latitude),
        # omega (R + h) cos(latitude): what the planar kind starts with, eastward
        "pad_rotation_speed_m_s": planet.rotation_rate * radius * math.cos(launch.latitude),
        "vertical_rise_s": float(launch.vertical_rise),
        "pitch_over_deg": math.degrees(launch.pitch_over),
    }


def _target_record(problem: Problem) -> dict:
    """The terminal conditions at burnout as written (None: free)."""
    t = problem.target
    return {"altitude_km": _km(t.altitude), "speed_m_s": _optional(t.speed),
            "flight_path_angle_deg": _deg(t.flight_path_angle),
            "circular_orbit_altitude_km": _km(t.circular_orbit_altitude)}


def _limit_records(problem: Problem) -> list[dict]:
    """Each imposed limit in its user unit, as the results' ``limits`` list gives it."""
    return [{"name": name, "bound": LIMITS[name].to_user(getattr(problem.limits, name)),
             "unit": LIMITS[name].unit, "label": LIMITS[name].label}
            for name in problem.limits.active_names()]


def _models_record(problem: Problem) -> dict:
    aerodynamics = problem.aerodynamics
    return {
        "dynamics": problem.dynamics,
        "atmosphere": _model_record(problem.atmosphere, atmosphere.ATMOSPHERES),
        "gravity": _model_record(problem.gravity, gravity.GRAVITY_MODELS),
        "gravity_at_pad_m_s2": float(problem.gravity.acceleration(
            problem.planet.radius + problem.launch.altitude)),
        "drag": _model_record(aerodynamics.drag, aero.DRAG_MODELS),
        "reference_area_m2": float(aerodynamics.reference_area),
        "reference_length_m": _optional(aerodynamics.reference_length),
    }


def _mesh_record(problem: Problem) -> dict:
    m = problem.mesh
    return {"scheme": m.scheme, "scheme_description": SCHEMES.get(m.scheme, m.scheme),
            "nodes_per_phase": int(m.nodes_per_phase),
            "max_refinements": int(m.max_refinements),
            "speed_tolerance_m_s": float(m.speed_tolerance),
            "speed_tolerance_fraction": float(m.speed_tolerance_fraction),
            "limit_tolerance_fraction": float(m.limit_tolerance_fraction)}


def problem_inputs(problem: Problem) -> dict:
    """The problem's inputs as a JSON-ready block (``inputs`` in summary.json).

    Parameters
    ----------
    problem : Problem
        As loaded (the masses as written, before any stage-mass split).

    Returns
    -------
    dict
        ``name``, ``description``, ``objective`` {``name``, ``description``},
        ``vehicle`` {``payload_mass_kg``, ``liftoff_mass_kg``, ``stages``: per stage
        propellant and dry mass [kg], vacuum thrust [N], vacuum Isp [s], exhaust speed
        [m/s], nozzle exit area [m^2], throttle range, shutdown rule, reserve [kg],
        structural ratio, coast after [s], ignition mass [kg]}, ``site`` (planet, pad
        altitude [m], latitude [deg], rotation [rad/s] and the pad's rotation speed
        [m/s], vertical rise [s], pitch-over [deg]), ``target`` (as written, None for a
        free condition), ``limits`` (bound in the user unit, as the results give it),
        ``models`` (dynamics kind; atmosphere, gravity and drag models with their
        parameters; reference area [m^2]), ``mesh`` and ``mass_split`` (None without).
    """
    vehicle = problem.vehicle
    split = problem.mass_split
    return {
        "name": problem.name,
        "description": problem.description,
        "objective": {"name": problem.objective,
                      "description": OBJECTIVES.get(problem.objective, "")},
        "vehicle": {"payload_mass_kg": float(vehicle.payload_mass),
                    "liftoff_mass_kg": float(vehicle.liftoff_mass),
                    "stages": [_stage_record(vehicle, i) for i in range(len(vehicle.stages))],
                    "boosters": [_booster_record(vehicle, g) for g in vehicle.boosters],
                    "fairing": _fairing_record(vehicle)},
        "site": _site_record(problem),
        "target": _target_record(problem),
        "limits": _limit_records(problem),
        "models": _models_record(problem),
        "mesh": _mesh_record(problem),
        "mass_split": None if split is None else {
            "hold": split.hold, "liftoff_mass_kg": _optional(split.liftoff_mass),
            "map_points": int(split.map_points)},
    }


def file_sha256(path) -> str | None:
    """SHA-256 of a file's bytes as hexadecimal, or None when it cannot be read."""
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as fh:
            for block in iter(lambda: fh.read(_CHUNK), b""):
                digest.update(block)
    except OSError:
        return None
    return digest.hexdigest()


def _ipopt_version() -> str | None:
    """The version of the IPOPT library CasADi loads, asked of the library itself
    (``GetIpoptVersion``, part of IPOPT's C interface since 3.14)."""
    try:
        import casadi

        folder = Path(casadi.__file__).parent
        for name in ("libipopt.so", "libipopt.dylib", "libipopt-3.dll", "ipopt-3.dll"):
            if (folder / name).is_file():
                lib = ctypes.CDLL(str(folder / name))
                parts = [ctypes.c_int() for _ in range(3)]
                lib.GetIpoptVersion(*(ctypes.byref(p) for p in parts))
                return ".".join(str(p.value) for p in parts)
    except (ImportError, OSError, AttributeError):
        pass
    return None


def library_versions() -> dict:
    """Versions of ascentplan, CasADi, IPOPT, NumPy, SciPy and Python (None if unknown)."""
    import casadi
    import numpy
    import scipy

    return {"ascentplan": __version__, "casadi": casadi.__version__,
            "ipopt": _ipopt_version(), "numpy": numpy.__version__,
            "scipy": scipy.__version__, "python": platform.python_version()}


def provenance(problem: Problem, when: _datetime.datetime | None = None) -> dict:
    """Where and when a result came from (``provenance`` in summary.json).

    Parameters
    ----------
    problem : Problem
        Its ``source_path`` names the problem file (None for a problem built in code).
    when : datetime, optional
        The time to record; default now.

    Returns
    -------
    dict
        ``source_file`` (the file's name, no folder, or None), ``source_sha256`` (the
        SHA-256 of the file's bytes when the results are written; None when there is
        no file or it can no longer be read), ``written_utc`` (ISO 8601) and
        ``versions`` (:func:`library_versions`).
    """
    when = when or _datetime.datetime.now(_datetime.timezone.utc)
    source = problem.source_path
    return {"source_file": None if source is None else Path(source).name,
            "source_sha256": None if source is None else file_sha256(source),
            "written_utc": when.astimezone(_datetime.timezone.utc).isoformat(
                timespec="seconds").replace("+00:00", "Z"),
            "versions": library_versions()}


def solve_summary(result) -> dict:
    """The content of a solve's summary.json: :meth:`Result.summary` with the problem's
    ``inputs`` (as written, before any stage-mass split) and the run's ``provenance``."""
    summary = dict(result.summary())
    summary["inputs"] = problem_inputs(result.problem)
    summary["provenance"] = provenance(result.problem)
    return summary
