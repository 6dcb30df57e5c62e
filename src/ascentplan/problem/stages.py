"""The vehicle section of a problem file: the payload and the serial stages.

A stage's dry mass may be given as a structural ratio and its thrust as a
thrust-to-weight ratio; both follow from the mass rules of
:mod:`ascentplan.problem.model`, the same rules a stage-mass split applies.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from ascentplan.constants import G0
from ascentplan.problem.model import (
    SHUTDOWN_MODES,
    Stage,
    Vehicle,
    dry_mass_from_ratio,
    thrust_from_ratio,
)
from ascentplan.problem.reader import _fmt, _join, _kind_of, _Reader
from ascentplan.problem.stack_sections import (
    build_groups,
    read_boosters,
    read_fairing,
    read_restarts,
)
from ascentplan.problem.units import UnitError, show, to_si

_VEHICLE_KEYS = ("payload_mass", "stages", "fairing")
_STAGE_KEYS = ("name", "propellant_mass", "dry_mass", "structural_ratio", "thrust_vacuum",
               "thrust_to_weight", "isp_vacuum", "exhaust_speed", "nozzle_exit_area",
               "throttle", "max_throttle_rate", "max_steering_rate", "coast_after",
               "propellant_min", "propellant_max", "shutdown", "propellant_reserve",
               "boosters", "restarts", "coast_between_burns")
_THROTTLE_KEYS = ("min", "max")
#: the fields of a stage as read, passed on to :class:`Stage` unchanged
_STAGE_FIELDS = ("name", "propellant_mass", "dry_mass", "thrust_vacuum", "exhaust_speed",
                 "nozzle_exit_area", "throttle_min", "throttle_max", "max_throttle_rate",
                 "max_steering_rate", "coast_after", "structural_ratio", "propellant_min",
                 "propellant_max", "thrust_to_weight", "shutdown", "propellant_reserve",
                 "propellant_reserve_fraction", "restarts", "restart_coast_min",
                 "restart_coast_max")
#: a thrust given both directly and as thrust-to-weight must agree to this fraction
_THRUST_AGREEMENT = 0.005


def _read_vehicle(r: _Reader, data: dict):
    """(payload mass [kg], list of stage field dicts or None entries) or Nones."""
    section = r.section(data, "vehicle", "", required=True,
                        what="{payload_mass: ..., stages: [...]}")
    if section is None:
        return None, None
    r.keys(section, "vehicle", _VEHICLE_KEYS)
    payload = r.quantity(section, "payload_mass", "vehicle", "kg", required=True, ge=0.0)
    raw_stages = section.get("stages")
    if raw_stages is None:
        r.error("vehicle.stages", "missing; expected a list of stages, first stage first")
        return payload, None
    if not isinstance(raw_stages, list):
        r.error("vehicle.stages", f"expected a list of stages, got {_kind_of(raw_stages)} "
                                  f"{show(raw_stages)}")
        return payload, None
    if not raw_stages:
        r.error("vehicle.stages", "expected at least one stage, got []")
        return payload, None
    stages = [_read_stage(r, raw, f"vehicle.stages[{i}]", i, last=i == len(raw_stages) - 1)
              for i, raw in enumerate(raw_stages)]
    return payload, stages


def _read_stage(r: _Reader, raw: Any, path: str, index: int, last: bool) -> dict | None:
    """The fields of one stage in SI units (and its key path), or None when any is bad."""
    if not isinstance(raw, dict):
        r.error(path, f"expected a stage mapping {{propellant_mass: ..., ...}}, got "
                      f"{_kind_of(raw)} {show(raw)}")
        return None
    before = len(r.messages)
    r.keys(raw, path, _STAGE_KEYS)
    s: dict[str, Any] = {"path": path}
    s["name"] = r.text(raw, "name", path, default=f"stage {index + 1}")
    s.update(_read_stage_masses(r, raw, path))
    s.update(_read_engine(r, raw, path))
    s.update(_read_throttle(r, raw, path))
    s["coast_after"] = r.quantity(raw, "coast_after", path, "s", default=0.0, ge=0.0)
    if last and s["coast_after"]:
        r.error(_join(path, "coast_after"),
                f"has no effect on the last stage, got {show(raw['coast_after'])}; a coast "
                f"after final burnout comes from objective: max_apogee")
    s.update(_read_propellant_range(r, raw, path, s["propellant_mass"]))
    # absent: the default rule of Stage.may_shut_down_early (by the throttle range)
    s["shutdown"] = (None if raw.get("shutdown") is None else
                     r.choice(raw, "shutdown", path, tuple(SHUTDOWN_MODES), None,
                              "shutdown mode"))
    s.update(_read_reserve(r, raw, path, s["propellant_mass"]))
    s.update(read_restarts(r, raw, path))
    s["boosters"] = read_boosters(r, raw, path)
    if len(r.messages) > before:
        return None
    return s


def _read_stage_masses(r: _Reader, raw: dict, path: str) -> dict:
    """Propellant mass and dry mass [kg], the dry mass given or from a structural ratio."""
    propellant = r.quantity(raw, "propellant_mass", path, "kg", required=True, gt=0.0)
    has_dry, has_ratio = raw.get("dry_mass") is not None, raw.get("structural_ratio") is not None
    if has_dry and has_ratio:
        r.error(path, "give dry_mass or structural_ratio, not both")
    elif not (has_dry or has_ratio):
        r.error(_join(path, "dry_mass"), "missing; give dry_mass (e.g. '2.4 t') or "
                                         "structural_ratio (dry/(dry + propellant), e.g. 0.1)")
    dry = r.quantity(raw, "dry_mass", path, "kg", gt=0.0)
    ratio = r.quantity(raw, "structural_ratio", path, "", gt=0.0, lt=1.0)
    if has_ratio and ratio is not None and propellant is not None:
        dry = dry_mass_from_ratio(propellant, ratio)
    return {"propellant_mass": propellant, "dry_mass": dry, "structural_ratio": ratio}


def _read_engine(r: _Reader, raw: dict, path: str) -> dict:
    """Vacuum thrust [N] or thrust-to-weight, exhaust speed [m/s], nozzle exit area [m^2].

    A thrust given only as thrust-to-weight stays None here; it needs the stack mass,
    which :func:`_build_vehicle` knows.
    """
    if raw.get("thrust_vacuum") is None and raw.get("thrust_to_weight") is None:
        r.error(_join(path, "thrust_vacuum"), "missing; expected a force (e.g. '1200 kN') "
                                              "or a thrust_to_weight")
    thrust = r.quantity(raw, "thrust_vacuum", path, "N", gt=0.0, show_unit="kN")
    thrust_to_weight = r.quantity(raw, "thrust_to_weight", path, "", gt=0.0)

    has_isp, has_c = raw.get("isp_vacuum") is not None, raw.get("exhaust_speed") is not None
    if has_isp and has_c:
        r.error(path, "give isp_vacuum or exhaust_speed, not both")
    elif not (has_isp or has_c):
        r.error(_join(path, "isp_vacuum"), "missing; give isp_vacuum (e.g. '320 s') or "
                                           "exhaust_speed (e.g. '3.1 km/s')")
    isp = r.quantity(raw, "isp_vacuum", path, "s", gt=0.0)
    speed = r.quantity(raw, "exhaust_speed", path, "m/s", gt=0.0)
    exit_area = r.quantity(raw, "nozzle_exit_area", path, "m^2", default=0.0, ge=0.0)
    return {"thrust_vacuum": thrust, "thrust_to_weight": thrust_to_weight,
            "exhaust_speed": G0 * isp if isp is not None else speed,
            "nozzle_exit_area": exit_area}


def _read_throttle(r: _Reader, raw: dict, path: str) -> dict:
    """Throttle range (fractions of full thrust) and the largest throttle rate [1/s]."""
    throttle = r.section(raw, "throttle", path, what="{min: ..., max: ...} (fractions of "
                                                     "full thrust)")
    tpath = _join(path, "throttle")
    r.keys(throttle, tpath, _THROTTLE_KEYS)
    tmax = r.quantity(throttle, "max", tpath, "", default=1.0, gt=0.0, le=1.0)
    # a lone max means a fixed throttle setting, not a range up from the default 1
    tmin = r.quantity(throttle, "min", tpath, "", default=1.0 if tmax is None else tmax,
                      ge=0.0, le=1.0)
    if tmin is not None and tmax is not None and tmin > tmax:
        r.error(tpath, f"min must not exceed max, got min {show(throttle['min'])} > max "
                       f"{show(throttle.get('max', 1.0))}")
    rate = r.quantity(raw, "max_throttle_rate", path, "1/s", gt=0.0)
    steering = r.quantity(raw, "max_steering_rate", path, "rad/s", gt=0.0, show_unit="deg/s")
    return {"throttle_min": tmin, "throttle_max": tmax, "max_throttle_rate": rate,
            "max_steering_rate": steering}


def _read_propellant_range(r: _Reader, raw: dict, path: str,
                           propellant: float | None) -> dict:
    """Bounds on the propellant mass in a stage-mass split [kg]; they must hold it."""
    pmin = r.quantity(raw, "propellant_min", path, "kg", gt=0.0)
    pmax = r.quantity(raw, "propellant_max", path, "kg", gt=0.0)
    if pmin is not None and pmax is not None and pmin > pmax:
        r.error(path, f"propellant_min must not exceed propellant_max, got "
                      f"{show(raw['propellant_min'])} > {show(raw['propellant_max'])}")
    elif propellant is not None and ((pmin is not None and propellant < pmin)
                                     or (pmax is not None and propellant > pmax)):
        r.error(_join(path, "propellant_mass"),
                f"must lie within propellant_min..propellant_max, got "
                f"{show(raw['propellant_mass'])}")
    return {"propellant_min": pmin, "propellant_max": pmax}


def _read_reserve(r: _Reader, raw: dict, path: str, propellant: float | None) -> dict:
    """The propellant reserve: a mass [kg], or with ``%`` a fraction of the propellant."""
    value = raw.get("propellant_reserve")
    if value is None:
        return {"propellant_reserve": 0.0, "propellant_reserve_fraction": 0.0}
    p = _join(path, "propellant_reserve")
    if isinstance(value, str) and "%" in value:
        try:
            fraction = to_si(value, "", p)
        except UnitError as exc:
            r.unit_error(exc)
            return {}
        if not 0.0 <= fraction < 1.0:
            r.error(p, f"must lie from 0 % to below 100 % of the propellant, got {show(value)}")
        return {"propellant_reserve": 0.0, "propellant_reserve_fraction": fraction}
    mass = r.quantity(raw, "propellant_reserve", path, "kg", ge=0.0)
    if mass is not None and propellant is not None and mass >= propellant:
        r.error(p, f"must be less than the propellant mass, got {show(value)}")
    return {"propellant_reserve": mass, "propellant_reserve_fraction": 0.0}


def _build_vehicle(r: _Reader, payload: float, stages: list[dict],
                   data: dict | None = None) -> Vehicle | None:
    """The vehicle from its stages' fields; thrust from thrust_to_weight where needed.

    The stack is assembled first with the thrusts as given (None where only a
    thrust-to-weight is), since a ratio's thrust follows from the stack mass at the
    stage's ignition, which only the whole vehicle knows.
    """
    fairing = read_fairing(r, data, [s["name"] for s in stages]) if data is not None else None
    stack = Vehicle(payload_mass=payload,
                    stages=tuple(Stage(**{k: s[k] for k in _STAGE_FIELDS}) for s in stages),
                    boosters=build_groups(stages), fairing=fairing)
    built = []
    for i, (stage, s) in enumerate(zip(stack.stages, stages)):
        if stage.thrust_to_weight is not None:
            ignition = stack.ignition_mass(i)
            from_ratio = thrust_from_ratio(stage.thrust_to_weight, ignition)
            if stage.thrust_vacuum is None:
                stage = replace(stage, thrust_vacuum=from_ratio)
            elif abs(stage.thrust_vacuum - from_ratio) > _THRUST_AGREEMENT * from_ratio:
                r.error(s["path"], f"thrust_vacuum {_fmt(stage.thrust_vacuum / 1e3)} kN and "
                                   f"thrust_to_weight {_fmt(stage.thrust_to_weight)} disagree: "
                                   f"the ratio gives {_fmt(from_ratio / 1e3)} kN at the ignition "
                                   f"mass {_fmt(ignition)} kg; give one, or make them agree")
                return None
        built.append(stage)
    return replace(stack, stages=tuple(built))
