"""Reading a YAML problem file into a validated Problem, reporting every fault found by
its key path, value and what was expected."""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml

from ascentplan.models import aero
from ascentplan.models import atmosphere
from ascentplan.models import gravity
from ascentplan._registry import REQUIRED, unknown_name_message
from ascentplan.constants import G0, PLANETS
from ascentplan.problem.model import (OBJECTIVES, SCHEMES, Aerodynamics, Launch, Limits, MassSplit, Mesh,
                      Planet, Problem, Stage, TimeSchedule, Target, Vehicle)
from ascentplan.problem.units import UnitError, describe_unit, expected_text, from_si, list_to_si, show, to_si

__all__ = ["ProblemError", "load_problem", "problem_from_dict", "read_problem_file"]


class ProblemError(ValueError):
    """A problem file (or dict) that cannot be turned into a :class:`Problem`.

    Attributes
    ----------
    messages : list of str
        Every problem found, one sentence each, starting with the key path.
    source : str or None
        The file the messages are about, when there is one.
    """

    def __init__(self, messages, source: str | None = None):
        self.messages = list(messages)
        self.source = source
        super().__init__("\n".join(self.messages))


_TOP_KEYS = ("name", "description", "dynamics", "planet", "atmosphere", "gravity",
             "aerodynamics", "vehicle", "launch", "limits", "target", "objective", "mesh",
             "mass_split", "schedule")
_PLANET_KEYS = ("name", "radius", "gravitational_parameter", "rotation_rate")
_AERO_KEYS = ("reference_area", "reference_length", "drag")
_VEHICLE_KEYS = ("payload_mass", "stages")
_STAGE_KEYS = ("name", "propellant_mass", "dry_mass", "structural_ratio", "thrust_vacuum",
               "thrust_to_weight", "isp_vacuum", "exhaust_speed", "nozzle_exit_area",
               "throttle", "max_throttle_rate", "coast_after", "propellant_min",
               "propellant_max")
_THROTTLE_KEYS = ("min", "max")
_LAUNCH_KEYS = ("altitude", "latitude", "vertical_rise", "pitch_over")
_LIMIT_KEYS = ("max_dynamic_pressure", "max_axial_acceleration", "max_q_alpha",
               "min_altitude")
_TARGET_KEYS = ("altitude", "speed", "flight_path_angle", "circular_orbit_altitude")
_MESH_KEYS = ("scheme", "nodes_per_phase", "max_refinements", "speed_tolerance",
              "speed_tolerance_fraction", "limit_tolerance_fraction")
_SPLIT_KEYS = ("hold", "liftoff_mass", "map_points")
_SPLIT_HOLDS = ("liftoff_mass", "payload")
_SCHEDULE_KEYS = ("time", "throttle", "pitch")
_DYNAMICS = ("vertical", "planar")
#: objectives that are meaningless without a terminal target
_NEEDS_TARGET = ("max_payload", "min_propellant", "min_liftoff_mass")
#: a thrust given both directly and as thrust-to-weight must agree to this fraction
_THRUST_AGREEMENT = 0.005
_HALF_PI = 0.5 * math.pi


def _join(path: str, key: Any) -> str:
    return f"{path}.{key}" if path else str(key)


def _fmt(value: float) -> str:
    return f"{value:.6g}"


def _closest(word: Any, names) -> str | None:
    """The valid name a misspelt ``word`` most likely meant, or None.

    Shared underscore-separated words count first (``max_speed`` means
    ``max_burnout_speed`` rather than ``max_apogee``), then difflib's similarity.
    """
    if not isinstance(word, str):
        return None
    tokens = set(word.lower().split("_"))
    best, best_score = None, None
    for name in names:
        shared = len(tokens & set(name.split("_")))
        ratio = difflib.SequenceMatcher(None, word.lower(), name).ratio()
        if ratio < 0.6 and shared < 2:
            continue
        score = (shared, ratio)
        if best_score is None or score > best_score:
            best, best_score = name, score
    return best


def _did_you_mean(word: Any, names) -> str:
    close = _closest(word, names)
    return f"; did you mean '{close}'?" if close else ""


class _Reader:
    """Collects messages while reading one problem; helpers return None for bad values."""

    def __init__(self):
        self.messages: list[str] = []

    def error(self, path: str, text: str) -> None:
        self.messages.append(f"{path}: {text}" if path else text)

    def unit_error(self, exc: UnitError) -> None:
        self.messages.extend(str(exc).split("\n"))

    # -- structure ---------------------------------------------------------------
    def section(self, parent: dict | None, key: str, path: str, required: bool = False,
                what: str = "a mapping of keys (key: value)") -> dict | None:
        """The mapping under ``key``; None when absent, null, or not a mapping."""
        p = _join(path, key)
        if parent is None or parent.get(key) is None:
            if required:
                self.error(p, f"missing; expected {what}")
            return None
        value = parent[key]
        if not isinstance(value, dict):
            self.error(p, f"expected {what}, got {_kind_of(value)} {show(value)}")
            return None
        return value

    def keys(self, section: dict | None, path: str, allowed) -> None:
        """Report every key of ``section`` that is not in ``allowed``."""
        if section is None:
            return
        allowed = list(allowed)
        for key in section:
            if not isinstance(key, str):
                hint = (" (YAML reads unquoted yes/no/on/off as yes/no values; quote the "
                        "key)" if isinstance(key, bool) else "")
                self.error(_join(path, show(key)),
                           f"keys must be names, got {show(key)} ({_kind_of(key)}){hint}; "
                           f"valid keys: {', '.join(allowed)}")
                continue
            if key in allowed:
                continue
            self.error(_join(path, key), f"unknown key{_did_you_mean(key, allowed)} "
                                         f"(valid keys: {', '.join(allowed)})")

    # -- values --------------------------------------------------------------------
    def quantity(self, section: dict | None, key: str, path: str, unit: str, *,
                 required: bool = False, default: float | None = None,
                 gt: float | None = None, ge: float | None = None,
                 lt: float | None = None, le: float | None = None,
                 show_unit: str | None = None) -> float | None:
        """A scalar converted to ``unit`` and checked against the bounds (in ``unit``)."""
        p = _join(path, key)
        if section is None or section.get(key) is None:
            if required:
                self.error(p, f"missing; expected {expected_text(unit)}")
                return None
            return default
        raw = section[key]
        try:
            value = to_si(raw, unit, p)
        except UnitError as exc:
            self.unit_error(exc)
            return None
        if not self.bounds(value, raw, p, unit, gt=gt, ge=ge, lt=lt, le=le,
                           show_unit=show_unit):
            return None
        return value

    def bounds(self, value: float, raw: Any, path: str, unit: str, *, gt=None, ge=None,
               lt=None, le=None, show_unit=None) -> bool:
        """Check ``value`` (in ``unit``) against bounds; report and return False if out."""
        ok = ((gt is None or value > gt) and (ge is None or value >= ge)
              and (lt is None or value < lt) and (le is None or value <= le))
        if ok:
            return True
        shown = show_unit if show_unit is not None else unit
        parts = []
        lower = (">", gt) if gt is not None else (">=", ge) if ge is not None else None
        upper = ("<", lt) if lt is not None else ("<=", le) if le is not None else None
        for side in (lower, upper):
            if side is not None:
                parts.append(f"{side[0]} {_in_unit(side[1], unit, shown)}")
        hint = ""
        if (describe_unit(unit)[0] == "an angle" and isinstance(raw, (int, float))
                and not isinstance(raw, bool)):
            hint = (f" (a plain number is in radians; write e.g. '{_fmt(raw)} deg' "
                    f"for degrees)")
        self.error(path, f"must be {' and '.join(parts)}, got {show(raw)}{hint}")
        return False

    def integer(self, section: dict | None, key: str, path: str, default: int,
                minimum: int) -> int | None:
        p = _join(path, key)
        if section is None or section.get(key) is None:
            return default
        raw = section[key]
        if isinstance(raw, bool) or not isinstance(raw, int):
            self.error(p, f"expected a whole number >= {minimum}, got {show(raw)}")
            return None
        if raw < minimum:
            self.error(p, f"must be >= {minimum}, got {raw}")
            return None
        return raw

    def text(self, section: dict | None, key: str, path: str, required: bool = False,
             default: str | None = None) -> str | None:
        p = _join(path, key)
        if section is None or section.get(key) is None:
            if required:
                self.error(p, "missing; expected text")
            return default
        raw = section[key]
        if not isinstance(raw, str):
            self.error(p, f"expected text, got {show(raw)} ({_kind_of(raw)})")
            return None
        return raw

    def choice(self, section: dict | None, key: str, path: str, names, default: str | None,
               what: str) -> str | None:
        p = _join(path, key)
        if section is None or section.get(key) is None:
            if default is None:
                self.error(p, f"missing; expected one of: {', '.join(names)}")
            return default
        raw = section[key]
        if isinstance(raw, str) and raw in names:
            return raw
        self.error(p, _unknown_choice(what, raw, names))
        return None


def _kind_of(value: Any) -> str:
    if isinstance(value, bool):
        return "a yes/no value"
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, str):
        return "text"
    if isinstance(value, (int, float)):
        return "a number"
    return type(value).__name__


def _in_unit(value: float, unit: str, shown: str) -> str:
    if shown == unit or unit == "":
        return f"{_fmt(value)} {shown}".rstrip()
    return f"{_fmt(from_si(value, unit, shown))} {shown}"


def _unknown_choice(what: str, raw: Any, names) -> str:
    return (f"unknown {what} {show(raw)}{_did_you_mean(raw, names)} "
            f"(valid names: {', '.join(names)})")


# -- YAML -------------------------------------------------------------------------
class _StrictLoader(yaml.SafeLoader):
    """Safe YAML loader that refuses duplicate keys (plain YAML keeps the last silently)."""


def _construct_mapping(loader, node, deep=False):
    loader.flatten_mapping(node)
    mapping, written = {}, {}
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node, deep=True)
        try:
            duplicate = key in mapping
        except TypeError:
            raise yaml.constructor.ConstructorError(
                None, None, f"a key must be a name, got {key!r}", key_node.start_mark)
        if duplicate:
            text = getattr(key_node, "value", key)
            if text != written[key]:
                # YAML 1.1 reads yes/no/on/off as booleans, which equal 1 and 0
                problem = (f"key {text!r} reads as {key!r}, the same as the earlier key "
                           f"{written[key]!r}")
            else:
                problem = f"duplicate key {key!r}"
            raise yaml.constructor.ConstructorError(None, None, problem, key_node.start_mark)
        mapping[key] = loader.construct_object(value_node, deep=True)
        written[key] = getattr(key_node, "value", key)
    return mapping


_StrictLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG,
                              _construct_mapping)


def read_problem_file(path) -> dict:
    """Parse a YAML problem file into a dict, without validating its content.

    Parameters
    ----------
    path : str or pathlib.Path

    Returns
    -------
    dict

    Raises
    ------
    ProblemError
        When the file cannot be read, is not valid YAML (the message gives the line), has
        duplicate keys, or is not a mapping at the top.
    """
    source = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ProblemError(["no such problem file"], source) from None
    except IsADirectoryError:
        raise ProblemError(["is a folder, not a problem file"], source) from None
    except UnicodeDecodeError as exc:
        raise ProblemError([f"not a text file (UTF-8 decoding failed at byte {exc.start})"],
                           source) from None
    except OSError as exc:
        raise ProblemError([f"cannot read the problem file: {exc.strerror or exc}"],
                           source) from None
    try:
        data = yaml.load(text, Loader=_StrictLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        where = f"line {mark.line + 1}, column {mark.column + 1}: " if mark else ""
        what = " ".join(str(s) for s in (exc.context, exc.problem) if s)
        raise ProblemError([f"{where}not valid YAML: {what}"], source) from None
    except yaml.YAMLError as exc:
        raise ProblemError([f"not valid YAML: {exc}"], source) from None
    if data is None:
        raise ProblemError(["the file is empty; expected a mapping with name:, vehicle:, ..."],
                           source)
    if not isinstance(data, dict):
        raise ProblemError([f"the top level must be a mapping with name:, vehicle:, ..., "
                            f"got {_kind_of(data)}"], source)
    return data


def load_problem(source) -> Problem:
    """Load and validate a problem.

    Parameters
    ----------
    source : str, pathlib.Path or dict
        A YAML problem file, or its already-parsed content.

    Returns
    -------
    Problem
        All quantities in SI units.

    Raises
    ------
    ProblemError
        Listing every problem found in the file.
    """
    if isinstance(source, dict):
        return problem_from_dict(source)
    data = read_problem_file(source)
    return problem_from_dict(data, source_path=str(source))


def problem_from_dict(data: dict, source_path: str | None = None) -> Problem:
    """Validate parsed problem-file content and build the :class:`Problem`.

    Parameters
    ----------
    data : dict
        The problem file as parsed YAML (plain numbers in SI units, or strings with units).
    source_path : str, optional
        The file it came from, kept on the problem and used in messages.

    Returns
    -------
    Problem

    Raises
    ------
    ProblemError
        Listing every problem found.
    """
    if not isinstance(data, dict):
        raise ProblemError([f"a problem must be a mapping with name:, vehicle:, ..., "
                            f"got {_kind_of(data)}"], source_path)
    r = _Reader()
    r.keys(data, "", _TOP_KEYS)

    name = r.text(data, "name", "", required=True)
    if name is not None:
        stripped = name.strip()
        if not stripped or stripped in (".", "..") or any(c in name for c in "/\\"):
            r.error("name", f"must be a plain name usable as a folder name, got {show(name)}")
            name = None
    description = r.text(data, "description", "", default="")
    dynamics = r.choice(data, "dynamics", "", _DYNAMICS, "planar", "dynamics")
    vertical = dynamics == "vertical"

    planet = _read_planet(r, data)
    atmosphere_name, atmos = _read_atmosphere(r, data)
    gravity_model = _read_gravity(r, data, planet)
    aerodynamics = _read_aerodynamics(r, data, atmosphere_name)
    payload, stages = _read_vehicle(r, data)
    launch = _read_launch(r, data, vertical, planet)
    limits = _read_limits(r, data, vertical)
    target = _read_target(r, data, vertical, launch)
    objective = r.choice(data, "objective", "", list(OBJECTIVES), "max_burnout_speed",
                         "objective")
    mesh = _read_mesh(r, data)
    mass_split = _read_mass_split(r, data)
    schedule = _read_schedule(r, data, vertical)

    vehicle = None
    if payload is not None and stages is not None and None not in stages:
        vehicle = _build_vehicle(r, payload, stages)
    _cross_checks(r, data, _Parts(vehicle, planet, atmos, atmosphere_name, gravity_model,
                                  launch, limits, target, objective, mass_split))

    if r.messages:
        raise ProblemError(r.messages, source_path)
    return Problem(name=name, dynamics=dynamics, vehicle=vehicle, planet=planet,
                   atmosphere=atmos, gravity=gravity_model, aerodynamics=aerodynamics,
                   launch=launch, limits=limits, target=target, objective=objective,
                   mesh=mesh, mass_split=mass_split, schedule=schedule,
                   description=description, source_path=source_path)


# -- sections ---------------------------------------------------------------------------
def _read_planet(r: _Reader, data: dict) -> Planet | None:
    names = list(PLANETS)
    raw = data.get("planet")
    if raw is None:
        raw = "earth"
    if isinstance(raw, str):
        if raw not in PLANETS:
            r.error("planet", _unknown_choice("planet", raw, names)
                    + "; or give {radius: ..., gravitational_parameter: ..., rotation_rate: ...}")
            return None
        return Planet(name=raw, **PLANETS[raw])
    section = r.section(data, "planet", "",
                        what="a planet name or {radius, gravitational_parameter, rotation_rate}")
    if section is None:
        return None
    r.keys(section, "planet", _PLANET_KEYS)
    pname = r.text(section, "name", "planet", default="custom")
    known = PLANETS.get(pname, {}) if pname is not None else {}
    radius = r.quantity(section, "radius", "planet", "m", required="radius" not in known,
                        default=known.get("radius"), gt=0.0, show_unit="km")
    mu = r.quantity(section, "gravitational_parameter", "planet", "m^3/s^2",
                    required="gravitational_parameter" not in known,
                    default=known.get("gravitational_parameter"), gt=0.0)
    omega = r.quantity(section, "rotation_rate", "planet", "rad/s",
                       default=known.get("rotation_rate", 0.0))
    if None in (pname, radius, mu, omega):
        return None
    return Planet(name=pname, radius=radius, gravitational_parameter=mu, rotation_rate=omega)


def _read_model(r: _Reader, raw: Any, path: str, registry: dict, kind: str,
                planet: Planet | None = None, uses_planet: bool = False):
    """A model from ``NAME`` or ``{model: NAME, ...params}``: (name, instance) or (name, None)."""
    if isinstance(raw, str):
        name, params, name_path = raw, {}, path
    elif isinstance(raw, dict):
        params = {k: v for k, v in raw.items() if k != "model"}
        name, name_path = raw.get("model"), _join(path, "model")
        if name is None:
            r.error(name_path, f"missing; expected a {kind} model name "
                               f"(one of: {', '.join(sorted(registry))})")
            return None, None
    else:
        r.error(path, f"expected {{model: NAME, ...}} or a {kind} model name, got "
                      f"{_kind_of(raw)} {show(raw)}")
        return None, None
    if not isinstance(name, str) or name not in registry:
        r.error(name_path, unknown_name_message(kind, name, registry)
                + _did_you_mean(name, registry))
        return None, None
    cls = registry[name]
    declared = dict(getattr(cls, "parameters", {}) or {})
    before = len(r.messages)
    r.keys(params, path, ["model", *declared])
    kwargs = {}
    for pname, param in declared.items():
        p = _join(path, pname)
        given = params.get(pname)
        if given is None:
            if param.default is REQUIRED:
                r.error(p, f"missing; the {name} {kind} model needs it "
                           f"({param.doc or expected_text(param.unit)})")
            else:
                kwargs[pname] = param.default
            continue
        value = _read_param(r, given, param, p)
        if value is not None:
            kwargs[pname] = value
    if len(r.messages) > before:
        return name, None
    if uses_planet and planet is None:
        return name, None
    try:
        if uses_planet:
            model = cls.from_planet(planet, **kwargs)
        elif hasattr(cls, "from_params"):
            model = cls.from_params(**kwargs)
        else:
            model = cls(**kwargs)
    except (ValueError, TypeError) as exc:
        # model constructors word their messages "param: what is wrong"; put the
        # parameter into the key path when it is one
        head, sep, rest = str(exc).partition(": ")
        if sep and head in declared:
            r.error(_join(path, head), rest)
        else:
            r.error(path, str(exc))
        return name, None
    return name, model


def _read_param(r: _Reader, given: Any, param, path: str):
    """One declared model parameter, converted and sign-checked; None when bad."""
    kind = getattr(param, "kind", "scalar")
    if kind not in ("scalar", "list"):
        return given
    try:
        if kind == "list":
            values = list_to_si(given, param.unit, path)
        else:
            values = (to_si(given, param.unit, path),)
    except UnitError as exc:
        r.unit_error(exc)
        return None
    ok = True
    for i, v in enumerate(values):
        item, raw = path, given
        if kind == "list":
            item = f"{path}[{i}]"
            raw = given[i] if isinstance(given, list) else v
        if param.positive and not v > 0:
            r.error(item, f"must be > 0, got {show(raw)}")
            ok = False
        elif getattr(param, "nonnegative", False) and not v >= 0:
            r.error(item, f"must be >= 0, got {show(raw)}")
            ok = False
    if not ok:
        return None
    return values if kind == "list" else values[0]


def _read_atmosphere(r: _Reader, data: dict):
    registry = atmosphere.ATMOSPHERES
    raw = data.get("atmosphere")
    if raw is None:
        if "us1976" in registry:
            raw = {"model": "us1976"}
        else:
            r.error("atmosphere", f"missing; expected {{model: NAME, ...}} with NAME one of: "
                                  f"{', '.join(sorted(registry))}")
            return None, None
    return _read_model(r, raw, "atmosphere", registry, "atmosphere")


def _read_gravity(r: _Reader, data: dict, planet: Planet | None):
    raw = data.get("gravity")
    if raw is None:
        raw = "inverse_square"
    return _read_model(r, raw, "gravity", gravity.GRAVITY_MODELS, "gravity", planet=planet,
                       uses_planet=True)[1]


def _vacuum_drag():
    # any coefficient gives zero drag in zero density; 1 keeps the model's own checks happy
    return aero.DRAG_MODELS["constant"](1.0)


def _read_aerodynamics(r: _Reader, data: dict, atmosphere_name: str | None):
    in_vacuum = atmosphere_name == "vacuum"
    section = r.section(data, "aerodynamics", "", required=not in_vacuum,
                        what="{reference_area: ..., drag: ...}")
    if section is None:
        if in_vacuum and data.get("aerodynamics") is None:
            return Aerodynamics(reference_area=0.0, drag=_vacuum_drag())
        return None
    r.keys(section, "aerodynamics", _AERO_KEYS)
    area = r.quantity(section, "reference_area", "aerodynamics", "m^2",
                      required=not in_vacuum, default=0.0, gt=None if in_vacuum else 0.0,
                      ge=0.0 if in_vacuum else None)
    raw_drag = section.get("drag")
    drag_name, drag = None, None
    if raw_drag is None:
        if in_vacuum:
            drag = _vacuum_drag()
        else:
            r.error("aerodynamics.drag", "missing; expected a drag coefficient (a plain "
                    "number) or {model: NAME, ...} with NAME one of: "
                    f"{', '.join(sorted(aero.DRAG_MODELS))}")
    else:
        if _is_number(raw_drag):
            raw_drag = {"model": "constant", "cd": raw_drag}
        drag_name, drag = _read_model(r, raw_drag, "aerodynamics.drag", aero.DRAG_MODELS,
                                      "drag")
    needs_length = drag_name is not None and getattr(aero.DRAG_MODELS[drag_name],
                                                     "needs_reynolds", False)
    length = r.quantity(section, "reference_length", "aerodynamics", "m", gt=0.0)
    if needs_length and section.get("reference_length") is None:
        r.error("aerodynamics.reference_length",
                f"missing; the {drag_name} drag model needs a length for the Reynolds "
                f"number (e.g. '1.2 m')")
    if area is None or drag is None:
        return None
    return Aerodynamics(reference_area=area, drag=drag, reference_length=length)


def _is_number(value: Any) -> bool:
    """A plain number, or text that is only a number."""
    if isinstance(value, bool):
        return False
    if isinstance(value, (int, float)):
        return True
    if isinstance(value, str):
        try:
            float(value)
        except ValueError:
            return False
        return True
    return False


def _read_vehicle(r: _Reader, data: dict):
    """(payload mass, list of stage field dicts or None entries) or Nones."""
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
    if not isinstance(raw, dict):
        r.error(path, f"expected a stage mapping {{propellant_mass: ..., ...}}, got "
                      f"{_kind_of(raw)} {show(raw)}")
        return None
    before = len(r.messages)
    r.keys(raw, path, _STAGE_KEYS)
    s: dict[str, Any] = {"path": path}
    s["name"] = r.text(raw, "name", path, default=f"stage {index + 1}")
    s["propellant_mass"] = r.quantity(raw, "propellant_mass", path, "kg", required=True,
                                      gt=0.0)
    has_dry, has_ratio = raw.get("dry_mass") is not None, raw.get("structural_ratio") is not None
    if has_dry and has_ratio:
        r.error(path, "give dry_mass or structural_ratio, not both")
    elif not (has_dry or has_ratio):
        r.error(_join(path, "dry_mass"), "missing; give dry_mass (e.g. '2.4 t') or "
                                         "structural_ratio (dry/(dry + propellant), e.g. 0.1)")
    s["dry_mass"] = r.quantity(raw, "dry_mass", path, "kg", gt=0.0)
    s["structural_ratio"] = r.quantity(raw, "structural_ratio", path, "", gt=0.0, lt=1.0)
    if has_ratio and s["structural_ratio"] is not None and s["propellant_mass"] is not None:
        eps = s["structural_ratio"]
        s["dry_mass"] = eps / (1.0 - eps) * s["propellant_mass"]

    has_thrust = raw.get("thrust_vacuum") is not None
    if not has_thrust and raw.get("thrust_to_weight") is None:
        r.error(_join(path, "thrust_vacuum"), "missing; expected a force (e.g. '1200 kN') "
                                              "or a thrust_to_weight")
    s["thrust_vacuum"] = r.quantity(raw, "thrust_vacuum", path, "N", gt=0.0, show_unit="kN")
    s["thrust_to_weight"] = r.quantity(raw, "thrust_to_weight", path, "", gt=0.0)
    s["thrust_given"] = has_thrust

    has_isp, has_c = raw.get("isp_vacuum") is not None, raw.get("exhaust_speed") is not None
    if has_isp and has_c:
        r.error(path, "give isp_vacuum or exhaust_speed, not both")
    elif not (has_isp or has_c):
        r.error(_join(path, "isp_vacuum"), "missing; give isp_vacuum (e.g. '320 s') or "
                                           "exhaust_speed (e.g. '3.1 km/s')")
    isp = r.quantity(raw, "isp_vacuum", path, "s", gt=0.0)
    speed = r.quantity(raw, "exhaust_speed", path, "m/s", gt=0.0)
    s["exhaust_speed"] = G0 * isp if isp is not None else speed

    s["nozzle_exit_area"] = r.quantity(raw, "nozzle_exit_area", path, "m^2", default=0.0,
                                       ge=0.0)
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
    s["throttle_min"], s["throttle_max"] = tmin, tmax
    s["max_throttle_rate"] = r.quantity(raw, "max_throttle_rate", path, "1/s", gt=0.0)
    s["coast_after"] = r.quantity(raw, "coast_after", path, "s", default=0.0, ge=0.0)
    if last and s["coast_after"]:
        r.error(_join(path, "coast_after"),
                f"has no effect on the last stage, got {show(raw['coast_after'])}; a coast "
                f"after final burnout comes from objective: max_apogee")
    pmin = r.quantity(raw, "propellant_min", path, "kg", gt=0.0)
    pmax = r.quantity(raw, "propellant_max", path, "kg", gt=0.0)
    if pmin is not None and pmax is not None and pmin > pmax:
        r.error(path, f"propellant_min must not exceed propellant_max, got "
                      f"{show(raw['propellant_min'])} > {show(raw['propellant_max'])}")
    elif s["propellant_mass"] is not None and (
            (pmin is not None and s["propellant_mass"] < pmin)
            or (pmax is not None and s["propellant_mass"] > pmax)):
        r.error(_join(path, "propellant_mass"),
                f"must lie within propellant_min..propellant_max, got "
                f"{show(raw['propellant_mass'])}")
    s["propellant_min"], s["propellant_max"] = pmin, pmax
    if len(r.messages) > before:
        return None
    return s


def _build_vehicle(r: _Reader, payload: float, stages: list[dict]) -> Vehicle | None:
    """Stages from their fields; thrust from thrust_to_weight where needed."""
    masses = [s["propellant_mass"] + s["dry_mass"] for s in stages]
    built = []
    for i, s in enumerate(stages):
        ignition = payload + sum(masses[i:])
        thrust = s["thrust_vacuum"]
        if s["thrust_to_weight"] is not None:
            from_ratio = s["thrust_to_weight"] * G0 * ignition
            if thrust is None:
                thrust = from_ratio
            elif abs(thrust - from_ratio) > _THRUST_AGREEMENT * from_ratio:
                r.error(s["path"], f"thrust_vacuum {_fmt(thrust / 1e3)} kN and thrust_to_weight "
                                   f"{_fmt(s['thrust_to_weight'])} disagree: the ratio gives "
                                   f"{_fmt(from_ratio / 1e3)} kN at the ignition mass "
                                   f"{_fmt(ignition)} kg; give one, or make them agree")
                return None
        fields = {k: s[k] for k in ("name", "propellant_mass", "dry_mass", "exhaust_speed",
                                    "nozzle_exit_area", "throttle_min", "throttle_max",
                                    "max_throttle_rate", "coast_after", "structural_ratio",
                                    "propellant_min", "propellant_max", "thrust_to_weight")}
        built.append(Stage(thrust_vacuum=thrust, **fields))
    return Vehicle(payload_mass=payload, stages=tuple(built))


def _planar_only(r: _Reader, section: dict | None, key: str, path: str, vertical: bool):
    if vertical and section is not None and section.get(key) is not None:
        r.error(_join(path, key), f"applies to planar flight only (dynamics is vertical), "
                                  f"got {show(section[key])}; remove it or set dynamics: planar")
        return True
    return False


def _read_launch(r: _Reader, data: dict, vertical: bool, planet: Planet | None):
    section = r.section(data, "launch", "")
    r.keys(section, "launch", _LAUNCH_KEYS)
    lowest = -planet.radius if planet is not None else None
    altitude = r.quantity(section, "altitude", "launch", "m", default=0.0, gt=lowest)
    latitude = r.quantity(section, "latitude", "launch", "rad", default=0.0, ge=-_HALF_PI,
                          le=_HALF_PI, show_unit="deg")
    rise = r.quantity(section, "vertical_rise", "launch", "s", default=0.0, ge=0.0)
    pitch_over = 0.0
    if not _planar_only(r, section, "pitch_over", "launch", vertical):
        pitch_over = r.quantity(section, "pitch_over", "launch", "rad", default=0.0, ge=0.0,
                                le=_HALF_PI, show_unit="deg")
    if None in (altitude, latitude, rise, pitch_over):
        return None
    return Launch(altitude=altitude, latitude=latitude, vertical_rise=rise,
                  pitch_over=pitch_over)


def _read_limits(r: _Reader, data: dict, vertical: bool):
    section = r.section(data, "limits", "")
    r.keys(section, "limits", _LIMIT_KEYS)
    before = len(r.messages)
    values = {
        "max_dynamic_pressure": r.quantity(section, "max_dynamic_pressure", "limits", "Pa",
                                           gt=0.0, show_unit="kPa"),
        "max_axial_acceleration": r.quantity(section, "max_axial_acceleration", "limits",
                                             "g0", gt=0.0),
        "min_altitude": r.quantity(section, "min_altitude", "limits", "m", show_unit="km"),
    }
    if not _planar_only(r, section, "max_q_alpha", "limits", vertical):
        values["max_q_alpha"] = r.quantity(section, "max_q_alpha", "limits", "Pa*rad", gt=0.0,
                                           show_unit="kPa*deg")
    if len(r.messages) > before:
        return None
    return Limits(**values)


def _read_target(r: _Reader, data: dict, vertical: bool, launch: Launch | None):
    section = r.section(data, "target", "")
    r.keys(section, "target", _TARGET_KEYS)
    before = len(r.messages)
    floor = launch.altitude if launch is not None else None
    values = {
        "altitude": r.quantity(section, "altitude", "target", "m", gt=floor, show_unit="km"),
        "speed": r.quantity(section, "speed", "target", "m/s", gt=0.0),
    }
    orbit_floor = 0.0 if floor is None else max(floor, 0.0)
    for key, kw in (("flight_path_angle", dict(ge=-_HALF_PI, le=_HALF_PI)),
                    ("circular_orbit_altitude", dict(gt=orbit_floor))):
        if not _planar_only(r, section, key, "target", vertical):
            unit = "rad" if key == "flight_path_angle" else "m"
            show_unit = "deg" if key == "flight_path_angle" else "km"
            values[key] = r.quantity(section, key, "target", unit, show_unit=show_unit, **kw)
    if section is not None and section.get("circular_orbit_altitude") is not None:
        clash = [k for k in ("altitude", "speed", "flight_path_angle")
                 if section.get(k) is not None]
        if clash:
            r.error("target.circular_orbit_altitude",
                    f"cannot be combined with {', '.join(clash)} (a circular orbit fixes "
                    f"altitude, speed and flight-path angle), got "
                    f"{show(section['circular_orbit_altitude'])}")
    if len(r.messages) > before:
        return None
    return Target(**values)


def _read_mesh(r: _Reader, data: dict):
    section = r.section(data, "mesh", "")
    r.keys(section, "mesh", _MESH_KEYS)
    before = len(r.messages)
    defaults = Mesh()
    values = {
        "scheme": r.choice(section, "scheme", "mesh", list(SCHEMES), defaults.scheme,
                           "collocation scheme"),
        "nodes_per_phase": r.integer(section, "nodes_per_phase", "mesh",
                                     defaults.nodes_per_phase, 5),
        "max_refinements": r.integer(section, "max_refinements", "mesh",
                                     defaults.max_refinements, 0),
        "speed_tolerance": r.quantity(section, "speed_tolerance", "mesh", "m/s",
                                      default=defaults.speed_tolerance, gt=0.0),
        "speed_tolerance_fraction": r.quantity(section, "speed_tolerance_fraction", "mesh",
                                               "", default=defaults.speed_tolerance_fraction,
                                               gt=0.0, lt=1.0),
        "limit_tolerance_fraction": r.quantity(section, "limit_tolerance_fraction", "mesh",
                                               "", default=defaults.limit_tolerance_fraction,
                                               gt=0.0, lt=1.0),
    }
    if len(r.messages) > before:
        return None
    return Mesh(**values)


def _read_mass_split(r: _Reader, data: dict):
    if data.get("mass_split") is None:
        return None
    section = r.section(data, "mass_split", "", what="{hold: liftoff_mass|payload, ...}")
    if section is None:
        return None
    r.keys(section, "mass_split", _SPLIT_KEYS)
    before = len(r.messages)
    hold = r.choice(section, "hold", "mass_split", _SPLIT_HOLDS, "liftoff_mass", "hold")
    liftoff = r.quantity(section, "liftoff_mass", "mass_split", "kg", gt=0.0)
    map_points = r.integer(section, "map_points", "mass_split", 0, 0)
    if map_points not in (0, None) and (map_points < 3 or hold != "liftoff_mass"):
        r.error("mass_split.map_points", "must be 0 (no map) or at least 3, and needs "
                                         f"hold: liftoff_mass; got {show(map_points)}")
    if hold == "payload" and section.get("liftoff_mass") is not None:
        r.error("mass_split.liftoff_mass", f"is what hold: payload minimises; remove it, got "
                                           f"{show(section['liftoff_mass'])}")
    if len(r.messages) > before:
        return None
    return MassSplit(hold=hold, liftoff_mass=liftoff, map_points=map_points or 0)


def _read_schedule(r: _Reader, data: dict, vertical: bool):
    section = r.section(data, "schedule", "", what="{time: [...], throttle: [...], pitch: [...]}")
    if section is None:
        return None
    r.keys(section, "schedule", _SCHEDULE_KEYS)
    before = len(r.messages)
    lists = {}
    for key, unit in (("time", "s"), ("throttle", ""), ("pitch", "rad")):
        p = _join("schedule", key)
        if key == "pitch" and _planar_only(r, section, key, "schedule", vertical):
            continue
        if section.get(key) is None:
            if key != "pitch":
                r.error(p, "missing; expected a list, e.g. [0, 10, 60] for time in s")
            continue
        try:
            lists[key] = list_to_si(section[key], unit, p)
        except UnitError as exc:
            r.unit_error(exc)
    time = lists.get("time")
    if time is not None:
        if len(time) < 2:
            r.error("schedule.time", f"expected at least two times, got {show(section['time'])}")
        elif time[0] != 0.0:
            r.error("schedule.time[0]", f"must be 0 (time from liftoff), got {_fmt(time[0])} s")
        steps = [i for i in range(1, len(time)) if not time[i] > time[i - 1]]
        if steps:
            i = steps[0]
            r.error(f"schedule.time[{i}]", f"times must increase strictly, got {_fmt(time[i])} s "
                                           f"after {_fmt(time[i - 1])} s")
        for key in ("throttle", "pitch"):
            if key in lists and len(lists[key]) != len(time):
                r.error(f"schedule.{key}", f"expected {len(time)} values (one per time), got "
                                           f"{len(lists[key])}")
    for i, eta in enumerate(lists.get("throttle", ())):
        if not 0.0 <= eta <= 1.0:
            r.error(f"schedule.throttle[{i}]", f"must be between 0 and 1, got {_fmt(eta)}")
    if len(r.messages) > before:
        return None
    return TimeSchedule(time=lists["time"], throttle=lists["throttle"], pitch=lists.get("pitch"))


# -- checks across sections -------------------------------------------------------------
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
    return first.throttle_max * first.thrust_vacuum - pressure * first.nozzle_exit_area, pressure


def site_gravity(gravity_model, planet: Planet, launch: Launch) -> float:
    """Gravitational acceleration at the launch site [m s^-2] from the gravity model."""
    return float(gravity_model.acceleration(planet.radius + launch.altitude))


def _raw(data: dict, *keys) -> str:
    """The value at ``keys`` as written in the file, for messages."""
    node: Any = data
    for key in keys:
        node = node.get(key) if isinstance(node, dict) else None
    return show(node)


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


def _check_liftoff(r: _Reader, data: dict, p: _Parts) -> None:
    if p.vehicle is None or p.launch is None:
        return
    first = p.vehicle.stages[0]
    if None not in (p.atmosphere, p.planet, p.gravity):
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


def _check_objective(r: _Reader, data: dict, p: _Parts) -> None:
    objective, target = p.objective, p.target
    if objective is None or target is None:
        return
    # maximising a quantity that the target fixes leaves nothing to optimise
    fixes = {"max_burnout_speed": ("speed", "circular_orbit_altitude"),
             "max_burnout_altitude": ("altitude", "circular_orbit_altitude"),
             "max_apogee": ("circular_orbit_altitude",)}.get(objective, ())
    fixed = [k for k in fixes if getattr(target, k) is not None]
    if fixed:
        r.error("objective", f"{objective} maximises what target.{fixed[0]} fixes; expected "
                             f"another objective (e.g. max_payload) or no target.{fixed[0]}")
    if objective in _NEEDS_TARGET and target.is_empty():
        r.error("objective", f"{objective} needs a target (altitude, speed, flight_path_angle "
                             f"or circular_orbit_altitude), got no target section")


def _check_mass_split(r: _Reader, data: dict, p: _Parts) -> None:
    split = p.mass_split
    split_given = isinstance(data.get("mass_split"), dict)
    if p.objective == "min_liftoff_mass" and (
            not split_given or (split is not None and split.hold != "payload")):
        r.error("objective", "min_liftoff_mass varies the stage masses with the payload held; "
                             "expected mass_split: {hold: payload}")
    if split is None:
        return
    if p.objective == "max_payload" and split.hold == "payload":
        r.error("mass_split.hold", "payload holds the payload fixed, which objective "
                                   "max_payload varies; expected hold: liftoff_mass")
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
