"""The sections of a problem file other than the vehicle, each read into its data class.

Each reader returns None for a section that is missing where required or holds a bad
value, after reporting every fault to the :class:`~ascentplan.problem.reader._Reader`.
Keys that a dynamics kind cannot use (a pitch for a vehicle that flies straight up) are
refused with the kinds that can use them, as the dynamics registry says.
"""

from __future__ import annotations

import math
from typing import Any

from ascentplan._registry import REQUIRED, unknown_name_message
from ascentplan.constants import PLANETS
from ascentplan.models import aero, atmosphere, gravity
from ascentplan.models.dynamics import DYNAMICS, DynamicsKind
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import (
    SCHEMES,
    Aerodynamics,
    Launch,
    Limits,
    MassSplit,
    Mesh,
    Planet,
    Target,
    TimeSchedule,
)
from ascentplan.problem.orbit_sections import (
    _read_flag,
    _read_launch_spatial,
    _read_orbit_target,
    _refuse_gravity_without_position,
    _refused_for_kind,
    _steered,
)
from ascentplan.problem.reader import (
    _did_you_mean,
    _fmt,
    _is_number,
    _join,
    _kind_of,
    _Reader,
    _unit_text,
    _unknown_choice,
)
from ascentplan.problem.units import UnitError, expected_text, list_to_si, show, to_si

_PLANET_KEYS = ("name", "radius", "gravitational_parameter", "rotation_rate", "shape",
                "flattening", "j2")
_PLANET_SHAPES = ("ellipsoid", "sphere")
_AERO_KEYS = ("reference_area", "reference_length", "drag", "drag_scale")
_LAUNCH_KEYS = ("altitude", "latitude", "vertical_rise", "pitch_over", "longitude", "azimuth",
                "direction", "dog_leg", "in_circular_orbit")
_TARGET_KEYS = ("altitude", "speed", "flight_path_angle", "circular_orbit_altitude",
                "perigee_altitude", "apogee_altitude", "semi_major_axis", "eccentricity",
                "inclination", "ascending_node", "argument_of_perigee", "inject_at_perigee")
_MESH_KEYS = ("scheme", "nodes_per_phase", "max_refinements", "speed_tolerance",
              "speed_tolerance_fraction", "limit_tolerance_fraction", "limit_margin",
              "control_smoothing")
_SPLIT_KEYS = ("hold", "liftoff_mass", "map_points")
_SPLIT_HOLDS = ("liftoff_mass", "payload")
_SCHEDULE_KEYS = ("time", "throttle", "pitch")
_HALF_PI = 0.5 * math.pi
#: the most collocation nodes a phase may start with, and after all its refinements
#: (each refinement turns n nodes into 2n - 1)
MAX_NODES_PER_PHASE = 2_000
MAX_REFINED_NODES = 10_000
MAX_REFINEMENTS = 6
#: solver memory per collocation node of a phase [bytes]: the peak resident memory of a
#: two-stage planar solve grew by 39 MB from 40 to 320 nodes per phase (2.25 phases'
#: worth of nodes), about 62 kB per node
BYTES_PER_NODE = 64_000
#: the most points per axis of a stage-mass map; a three-stage map solves points^2 times
MAX_MAP_POINTS = 25
#: wall time of one map point [s]: a cold solve of a two-stage planar problem at 40
#: nodes per phase took 2.1 s; the warm-started re-solves of a map take less
_SECONDS_PER_MAP_POINT = 2.0


# -- planet and models ------------------------------------------------------------------
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
    # a custom planet that names a known one takes that planet's values as defaults
    known = PLANETS.get(pname, {}) if pname is not None else {}
    radius = r.quantity(section, "radius", "planet", "m", required="radius" not in known,
                        default=known.get("radius"), gt=0.0, show_unit="km")
    mu = r.quantity(section, "gravitational_parameter", "planet", "m^3/s^2",
                    required="gravitational_parameter" not in known,
                    default=known.get("gravitational_parameter"), gt=0.0)
    omega = r.quantity(section, "rotation_rate", "planet", "rad/s",
                       default=known.get("rotation_rate", 0.0))
    flattening = _read_flattening(r, section, known)
    j2 = r.quantity(section, "j2", "planet", "", default=known.get("j2", 0.0), ge=0.0, lt=0.1)
    if None in (pname, radius, mu, omega, flattening, j2):
        return None
    return Planet(name=pname, radius=radius, gravitational_parameter=mu, rotation_rate=omega,
                  flattening=flattening, j2=j2)


def _read_flattening(r: _Reader, section: dict, known: dict) -> float | None:
    """Flattening of the planet: 0 for ``shape: sphere``, else as given or the known
    planet's (WGS 84 for ``earth``)."""
    shape = r.choice(section, "shape", "planet", list(_PLANET_SHAPES), "ellipsoid", "shape")
    flattening = r.quantity(section, "flattening", "planet", "",
                            default=known.get("flattening", 0.0), ge=0.0, lt=0.5)
    if shape == "sphere":
        if section.get("flattening") not in (None, 0, 0.0):
            r.error("planet.flattening", f"a sphere has no flattening; remove it or set "
                                         f"shape: ellipsoid, got {show(section['flattening'])}")
            return None
        return 0.0
    return flattening


def _model_name(r: _Reader, raw: Any, path: str, registry: dict, kind: str):
    """``(name, params, path of the name)`` of ``NAME`` or ``{model: NAME, ...}``, or None."""
    if isinstance(raw, str):
        name, params, name_path = raw, {}, path
    elif isinstance(raw, dict):
        params = {k: v for k, v in raw.items() if k != "model"}
        name, name_path = raw.get("model"), _join(path, "model")
        if name is None:
            r.error(name_path, f"missing; expected a {kind} model name "
                               f"(one of: {', '.join(sorted(registry))})")
            return None
    else:
        r.error(path, f"expected {{model: NAME, ...}} or a {kind} model name, got "
                      f"{_kind_of(raw)} {show(raw)}")
        return None
    if not isinstance(name, str) or name not in registry:
        r.error(name_path, unknown_name_message(kind, name, registry)
                + _did_you_mean(name, registry))
        return None
    return name, params, name_path


def _read_model(r: _Reader, raw: Any, path: str, registry: dict, kind: str,
                planet: Planet | None = None, uses_planet: bool = False):
    """A model from ``NAME`` or ``{model: NAME, ...params}``: (name, instance) or (name, None)."""
    named = _model_name(r, raw, path, registry, kind)
    if named is None:
        return None, None
    name, params, _ = named
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
    return name, _build_model(r, cls, kwargs, declared, path, planet if uses_planet else None)


def _build_model(r: _Reader, cls, kwargs: dict, declared: dict, path: str,
                 planet: Planet | None):
    """An instance of the model class ``cls``, or None with its complaint reported."""
    try:
        if planet is not None:
            return cls.from_planet(planet, **kwargs)
        if hasattr(cls, "from_params"):
            return cls.from_params(**kwargs)
        return cls(**kwargs)
    except (ValueError, TypeError) as exc:
        # model constructors word their messages "param: what is wrong"; put the
        # parameter into the key path when it is one
        head, sep, rest = str(exc).partition(": ")
        if sep and head in declared:
            r.error(_join(path, head), rest)
        else:
            r.error(path, str(exc))
        return None


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
    """``(model name, atmosphere model)``; either may be None."""
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
    drag_name, drag = _read_drag(r, section.get("drag"), in_vacuum)
    needs_length = drag_name is not None and getattr(aero.DRAG_MODELS[drag_name],
                                                     "needs_reynolds", False)
    length = r.quantity(section, "reference_length", "aerodynamics", "m", gt=0.0)
    if needs_length and section.get("reference_length") is None:
        r.error("aerodynamics.reference_length",
                f"missing; the {drag_name} drag model needs a length for the Reynolds "
                f"number (e.g. '1.2 m')")
    # a factor on every C_D of the model: what a trade of the drag estimate varies
    drag_scale = r.quantity(section, "drag_scale", "aerodynamics", "", default=1.0, gt=0.0)
    if area is None or drag is None or drag_scale is None:
        return None
    return Aerodynamics(reference_area=area, drag=drag, reference_length=length,
                        drag_scale=drag_scale)


def _read_drag(r: _Reader, raw: Any, in_vacuum: bool):
    """``(model name, drag model)`` of ``aerodynamics.drag``; a plain number is a constant C_D."""
    if raw is None:
        if in_vacuum:
            return None, _vacuum_drag()
        r.error("aerodynamics.drag", "missing; expected a drag coefficient (a plain "
                "number) or {model: NAME, ...} with NAME one of: "
                f"{', '.join(sorted(aero.DRAG_MODELS))}")
        return None, None
    if _is_number(raw):
        raw = {"model": "constant", "cd": raw}
    return _read_model(r, raw, "aerodynamics.drag", aero.DRAG_MODELS, "drag")


# -- launch, limits, target -------------------------------------------------------------
def _read_launch(r: _Reader, data: dict, kind: DynamicsKind | None, planet: Planet | None):
    section = r.section(data, "launch", "")
    r.keys(section, "launch", _LAUNCH_KEYS)
    lowest = -planet.radius if planet is not None else None
    altitude = r.quantity(section, "altitude", "launch", "m", default=0.0, gt=lowest)
    latitude = r.quantity(section, "latitude", "launch", "rad", default=0.0, ge=-_HALF_PI,
                          le=_HALF_PI, show_unit="deg")
    rise = r.quantity(section, "vertical_rise", "launch", "s", default=0.0, ge=0.0)
    pitch_over = 0.0
    if not _refused_for_kind(r, section, "pitch_over", "launch", kind, _steered):
        pitch_over = r.quantity(section, "pitch_over", "launch", "rad", default=0.0, ge=0.0,
                                le=_HALF_PI, show_unit="deg")
    spatial = _read_launch_spatial(r, section, kind)
    _refuse_gravity_without_position(r, data, kind)
    in_orbit = False
    if not _refused_for_kind(r, section, "in_circular_orbit", "launch", kind,
                             lambda k: k.steered and not k.spatial):
        in_orbit = _read_flag(r, section, "in_circular_orbit", "launch")
        if in_orbit and (rise or pitch_over):
            r.error("launch.in_circular_orbit", "a flight that starts in orbit has no vertical "
                                                "rise or pitch-over; remove them")
    if None in (altitude, latitude, rise, pitch_over, spatial):
        return None
    return Launch(altitude=altitude, latitude=latitude, vertical_rise=rise,
                  pitch_over=pitch_over, in_circular_orbit=bool(in_orbit), **spatial)


def _limits_in_reading_order():
    """The limits, those every kind computes first: the order their messages have had."""
    def kind_dependent(spec):
        return not all(spec.applies_to(kind) for kind in DYNAMICS.values())
    return sorted(LIMITS.values(), key=kind_dependent)


def _read_limits(r: _Reader, data: dict, kind: DynamicsKind | None):
    section = r.section(data, "limits", "")
    r.keys(section, "limits", LIMITS)
    before = len(r.messages)
    values = {}
    for spec in _limits_in_reading_order():
        if _refused_for_kind(r, section, spec.name, "limits", kind, spec.applies_to):
            continue
        values[spec.name] = r.quantity(section, spec.name, "limits", _unit_text(spec.si_unit),
                                       gt=0.0 if spec.positive else None,
                                       show_unit=_unit_text(spec.unit))
    if len(r.messages) > before:
        return None
    return Limits(**values)


def _read_target(r: _Reader, data: dict, kind: DynamicsKind | None, launch: Launch | None):
    section = r.section(data, "target", "")
    r.keys(section, "target", _TARGET_KEYS)
    before = len(r.messages)
    floor = launch.altitude if launch is not None else None
    values = {
        "altitude": r.quantity(section, "altitude", "target", "m", gt=floor, show_unit="km"),
        "speed": r.quantity(section, "speed", "target", "m/s", gt=0.0),
    }
    orbit_floor = 0.0 if floor is None else max(floor, 0.0)
    # a flight-path angle other than vertical, and the horizontal speed of an orbit, need
    # a vehicle that steers
    steered_keys = {
        "flight_path_angle": dict(unit="rad", show_unit="deg", ge=-_HALF_PI, le=_HALF_PI),
        "circular_orbit_altitude": dict(unit="m", show_unit="km", gt=orbit_floor),
    }
    for key, read in steered_keys.items():
        if not _refused_for_kind(r, section, key, "target", kind, _steered):
            values[key] = r.quantity(section, key, "target", **read)
    _read_orbit_target(r, section, kind, values, orbit_floor, before)
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


# -- mesh, mass split, schedule ---------------------------------------------------------
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
        "limit_margin": r.quantity(section, "limit_margin", "mesh", "",
                                   default=defaults.limit_margin, ge=0.0, lt=0.5),
        "control_smoothing": r.quantity(section, "control_smoothing", "mesh", "",
                                        default=defaults.control_smoothing, ge=0.0, le=1.0),
    }
    _check_mesh_size(r, values["nodes_per_phase"], values["max_refinements"])
    if len(r.messages) > before:
        return None
    return Mesh(**values)


def _memory_text(nodes: int) -> str:
    """The solver memory ``nodes`` collocation nodes of one phase need, in words."""
    if nodes > 10**12:
        return "far more solver memory than any computer has"
    size = nodes * BYTES_PER_NODE
    for unit, scale in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6)):
        if size >= scale:
            return f"about {size / scale:.3g} {unit} of solver memory per phase"
    return f"about {size / 1e3:.3g} kB of solver memory per phase"


def _check_mesh_size(r: _Reader, nodes: int | None, refinements: int | None) -> None:
    """A mesh the solver can hold: nodes per phase, refinements and refined nodes capped."""
    if nodes is not None and nodes > MAX_NODES_PER_PHASE:
        r.error("mesh.nodes_per_phase", f"must be <= {MAX_NODES_PER_PHASE}, got {show(nodes)} "
                                        f"(that mesh would need {_memory_text(nodes)})")
        return
    if refinements is not None and refinements > MAX_REFINEMENTS:
        r.error("mesh.max_refinements", f"must be <= {MAX_REFINEMENTS}, got {show(refinements)} "
                                        f"(each refinement doubles the nodes of a phase)")
        return
    if nodes is None or refinements is None:
        return
    refined = (nodes - 1) * 2 ** refinements + 1
    if refined > MAX_REFINED_NODES:
        r.error("mesh.max_refinements",
                f"{refinements} refinements of {nodes} nodes per phase can reach {refined} "
                f"nodes per phase, which would need {_memory_text(refined)}; at most "
                f"{MAX_REFINED_NODES} after refinement (fewer nodes or refinements), got "
                f"{refinements}")


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
    if map_points is not None and map_points > MAX_MAP_POINTS:
        r.error("mass_split.map_points",
                f"must be <= {MAX_MAP_POINTS} points per axis, got {show(map_points)} (a map "
                f"re-solves the problem at every point, {show(map_points)} times for two "
                f"stages and the square of that for three, about "
                f"{_SECONDS_PER_MAP_POINT:g} s each)")
    elif map_points not in (0, None) and (map_points < 3 or hold != "liftoff_mass"):
        r.error("mass_split.map_points", "must be 0 (no map) or at least 3, and needs "
                                         f"hold: liftoff_mass; got {show(map_points)}")
    if hold == "payload" and section.get("liftoff_mass") is not None:
        r.error("mass_split.liftoff_mass", f"is what hold: payload minimises; remove it, got "
                                           f"{show(section['liftoff_mass'])}")
    if len(r.messages) > before:
        return None
    return MassSplit(hold=hold, liftoff_mass=liftoff, map_points=map_points or 0)


def _read_schedule(r: _Reader, data: dict, kind: DynamicsKind | None):
    section = r.section(data, "schedule", "", what="{time: [...], throttle: [...], pitch: [...]}")
    if section is None:
        return None
    r.keys(section, "schedule", _SCHEDULE_KEYS)
    before = len(r.messages)
    lists = {}
    for key, unit in (("time", "s"), ("throttle", ""), ("pitch", "rad")):
        p = _join("schedule", key)
        if key == "pitch" and _refused_for_kind(r, section, key, "schedule", kind, _steered):
            continue
        if section.get(key) is None:
            if key != "pitch":
                r.error(p, "missing; expected a list, e.g. [0, 10, 60] for time in s")
            continue
        try:
            lists[key] = list_to_si(section[key], unit, p)
        except UnitError as exc:
            r.unit_error(exc)
    if lists.get("time") is not None:
        _check_schedule_times(r, section, lists)
    for i, eta in enumerate(lists.get("throttle", ())):
        if not 0.0 <= eta <= 1.0:
            r.error(f"schedule.throttle[{i}]", f"must be between 0 and 1, got {_fmt(eta)}")
    if len(r.messages) > before:
        return None
    return TimeSchedule(time=lists["time"], throttle=lists["throttle"], pitch=lists.get("pitch"))


def _check_schedule_times(r: _Reader, section: dict, lists: dict) -> None:
    """Times from liftoff, strictly increasing, one per throttle and pitch value [s]."""
    time = lists["time"]
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
