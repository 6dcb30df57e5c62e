"""A JSON Schema (draft 2020-12) of the problem file, generated from the loader itself.

The schema is not written by hand. :func:`problem_schema` reads probe documents (the
example problems shipped with the package, each flown by every dynamics kind) with the
loader's own reader while it records every rule the reader applies: the keys each section
accepts, each value's unit and constant bounds, the names a choice accepts, whole numbers
and their least values, texts, required keys. The model sections (``atmosphere``,
``gravity``, ``aerodynamics.drag``) come from their registries and each model's declared
``parameters``; ``dynamics``, ``objective`` and ``limits`` from :data:`DYNAMICS`,
:data:`OBJECTIVE_SPECS` and :data:`LIMITS`. A key the loader learns is in the schema
as soon as the loader reads it.

What a schema cannot say is left to the loader (``ascentplan check``): rules across keys
(``dry_mass`` or ``structural_ratio``, keys a dynamics kind cannot use, a circular orbit
with an altitude), the dimension of a unit and the plausible range of a value. A document
the loader accepts always validates; one that validates may still be refused.
"""

from __future__ import annotations

import copy
import json
import math
import re
from contextlib import contextmanager
from functools import lru_cache

from ascentplan._registry import REQUIRED
from ascentplan.constants import PLANETS
from ascentplan.models import aero, atmosphere, gravity
from ascentplan.models.dynamics import DYNAMICS
from ascentplan.problem import reader as _reader_module
from ascentplan.problem import sections
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.problem.units import _MAX_QUANTITY_TEXT

__all__ = ["SCHEMA_ID", "QUANTITY_PATTERN", "problem_schema", "schema_text"]

SCHEMA_ID = "https://ascentplan.invalid/schema/problem.schema.json"

#: a number, optionally followed by a unit (the loader's unit grammar checks the unit)
QUANTITY_PATTERN = (r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
                    r"(?:\s*[A-Za-z_%(][A-Za-z0-9_%()*/^. -]*)?\s*$")

#: sections whose value names a registered model (``NAME`` or ``{model: NAME, ...}``)
_MODEL_SECTIONS = {"atmosphere": atmosphere.ATMOSPHERES, "gravity": gravity.GRAVITY_MODELS,
                   "aerodynamics.drag": aero.DRAG_MODELS}

#: keys the loader reads outside its value reader: (unit, kind) as the loader reads them
_READ_ELSEWHERE = {
    "schedule.time": ("s", "list"),
    "schedule.throttle": ("", "list"),
    "schedule.pitch": ("rad", "list"),
    "vehicle.stages[].propellant_reserve": ("kg, or % of the propellant", "scalar"),
}
#: keys the loader requires by a message of its own
_REQUIRED_ELSEWHERE = ("vehicle.stages",)
#: largest whole numbers, which the loader checks after the least value
_INTEGER_MAXIMA = {"mesh.nodes_per_phase": sections.MAX_NODES_PER_PHASE,
                   "mesh.max_refinements": sections.MAX_REFINEMENTS,
                   "mass_split.map_points": sections.MAX_MAP_POINTS}


# -- recording the loader's rules -------------------------------------------------------
def _normal(path: str) -> str:
    """A key path with list indices dropped: ``vehicle.stages[1]`` -> ``vehicle.stages[]``."""
    return re.sub(r"\[\d+\]", "[]", path)


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


class _Rules:
    """What the reader was asked to read, by normalised key path."""

    def __init__(self):
        self.keys: dict[str, list] = {}
        self.leaves: dict[str, list] = {}

    def add_keys(self, path: str, allowed) -> None:
        known = self.keys.setdefault(_normal(path), [])
        known += [str(k) for k in allowed if str(k) not in known]

    def add_leaf(self, path: str, key: str, rule: dict) -> None:
        self.leaves.setdefault(_normal(_join(path, key)), []).append(rule)


@contextmanager
def _recording(rules: _Rules):
    """The reader's methods wrapped so that every call is recorded in ``rules``."""
    cls = _reader_module._Reader
    saved = {name: getattr(cls, name) for name in ("keys", "quantity", "choice", "integer",
                                                   "text", "section")}

    def section(self, parent, key, path, required=False, **kw):
        rules.add_leaf(path, key, dict(kind="section", required=bool(required)))
        return saved["section"](self, parent, key, path, required, **kw)

    def keys(self, section, path, allowed):
        rules.add_keys(path, list(allowed))
        return saved["keys"](self, section, path, allowed)

    def quantity(self, section, key, path, unit, **kw):
        bounds = {k: kw.get(k) for k in ("gt", "ge", "lt", "le")}
        rules.add_leaf(path, key, dict(kind="quantity", unit=unit, bounds=bounds,
                                       required=kw.get("required") is True,
                                       shown=kw.get("show_unit")))
        return saved["quantity"](self, section, key, path, unit, **kw)

    def choice(self, section, key, path, names, default, what):
        rules.add_leaf(path, key, dict(kind="choice", names=list(names),
                                       required=default is None and key != "shutdown"))
        return saved["choice"](self, section, key, path, names, default, what)

    def integer(self, section, key, path, default, minimum):
        rules.add_leaf(path, key, dict(kind="integer", minimum=minimum))
        return saved["integer"](self, section, key, path, default, minimum)

    def text(self, section, key, path, required=False, default=None):
        rules.add_leaf(path, key, dict(kind="text", required=bool(required)))
        return saved["text"](self, section, key, path, required, default)

    wrapped = dict(keys=keys, quantity=quantity, choice=choice, integer=integer, text=text,
                   section=section)
    try:
        for name, function in wrapped.items():
            setattr(cls, name, function)
        yield rules
    finally:
        for name, function in saved.items():
            setattr(cls, name, function)


#: a small invented problem with every section given, so that the loader reads each key
#: (absent keys are read too, for their defaults); one stage suffices for the stage keys
_PROBE = {
    "name": "probe", "planet": {"name": "earth"},
    "aerodynamics": {"reference_area": 1.0, "drag": 0.3},
    "vehicle": {"payload_mass": 100.0, "stages": [{
        "propellant_mass": 1000.0, "dry_mass": 150.0, "thrust_vacuum": 40e3,
        "isp_vacuum": 280.0, "throttle": {"min": 0.5, "max": 1.0}, "shutdown": "early"}]},
    "launch": {}, "limits": {}, "target": {}, "mesh": {},
    "mass_split": {"hold": "liftoff_mass"},
    "schedule": {"time": [0.0, 1.0], "throttle": [1.0, 1.0]},
}


def _probe_documents() -> list[dict]:
    """The probe problem flown by every dynamics kind, in air and in a vacuum (where
    ``aerodynamics`` may be left out)."""
    documents = []
    for kind in DYNAMICS:
        for air in ("us1976", "vacuum"):
            document = copy.deepcopy(_PROBE)
            document["dynamics"] = kind
            document["atmosphere"] = {"model": air}
            documents.append(document)
    return documents


def _record_rules() -> _Rules:
    from ascentplan.problem.loader import ProblemError, problem_from_dict

    rules = _Rules()
    with _recording(rules):
        for document in _probe_documents():
            try:
                problem_from_dict(document)
            except ProblemError:
                pass  # a probe flown by a kind that cannot fly it still shows its keys
    return rules


# -- schema pieces ------------------------------------------------------------------------
def _unit_words(unit: str) -> str:
    return f"[{unit}]" if unit else "[-]"


def _quantity(unit: str, doc: str = "", bounds: dict | None = None) -> dict:
    """A number in ``unit`` or a string with its unit."""
    number: dict = {"type": "number"}
    for key, word in (("gt", "exclusiveMinimum"), ("ge", "minimum"),
                      ("lt", "exclusiveMaximum"), ("le", "maximum")):
        value = (bounds or {}).get(key)
        if value is not None and math.isfinite(value):
            number[word] = value
    text = {"$ref": "#/$defs/quantity_text"}
    words = f"a plain number is in {unit}" if unit else "a plain number"
    description = f"{doc + '; ' if doc else ''}{_unit_words(unit)}: {words}, or a string " \
                  f"with a unit, e.g. '35 kPa'"
    return {"description": description, "anyOf": [number, text]}


def _quantity_list(unit: str, doc: str = "") -> dict:
    """A list of quantities, or ``{unit: ..., values: [...]}``."""
    item = _quantity(unit)
    with_unit = {"type": "object", "required": ["values"], "additionalProperties": False,
                 "properties": {"unit": {"type": "string"},
                                "values": {"type": "array", "minItems": 1,
                                           "items": {"type": "number"}}}}
    return {"description": f"{doc + '; ' if doc else ''}list {_unit_words(unit)}",
            "anyOf": [{"type": "array", "minItems": 1, "items": item}, with_unit]}


#: a quantity written as text, referenced by every quantity of the schema
_QUANTITY_TEXT = {"type": "string", "pattern": QUANTITY_PATTERN, "maxLength": _MAX_QUANTITY_TEXT,
                  "description": "a number and a unit, e.g. '35 kPa', '24 t', '28.5 deg'"}


def _same(values):
    """The one value all entries share, or None."""
    first = values[0]
    return first if all(v == first for v in values) else None


def _leaf(path: str, calls: list) -> dict:
    """The schema of a key from the reader calls recorded for it."""
    kind = _same([c["kind"] for c in calls])
    if kind == "quantity":
        unit = _same([c["unit"] for c in calls]) or ""
        bounds = {k: _same([c["bounds"][k] for c in calls]) for k in ("gt", "ge", "lt", "le")}
        shown = _same([c["shown"] for c in calls])
        doc = f"written in {shown} in messages" if shown and shown != unit else ""
        return _quantity(unit, doc, bounds)
    if kind == "choice":
        names = []
        for c in calls:
            names += [n for n in c["names"] if n not in names]
        return {"enum": names}
    if kind == "integer":
        schema = {"type": "integer", "minimum": min(c["minimum"] for c in calls)}
        if path in _INTEGER_MAXIMA:
            schema["maximum"] = _INTEGER_MAXIMA[path]
        return schema
    if kind == "text":
        return {"type": "string"}
    return {}


def _param_schema(param) -> dict:
    doc = getattr(param, "doc", "")
    if getattr(param, "kind", "scalar") == "list":
        return _quantity_list(param.unit, doc)
    bounds = {"gt": 0.0} if param.positive else {"ge": 0.0} if param.nonnegative else None
    return _quantity(param.unit, doc, bounds)


def _model_schema(registry: dict, kind: str, number_means: str | None = None) -> dict:
    """``NAME`` or ``{model: NAME, parameters...}`` of one registry."""
    variants = []
    for name in sorted(registry):
        declared = dict(getattr(registry[name], "parameters", {}) or {})
        properties = {"model": {"const": name}}
        properties.update({p: _param_schema(param) for p, param in declared.items()})
        required = ["model"] + [p for p, param in declared.items()
                                if param.default is REQUIRED]
        variants.append({"type": "object", "title": f"{kind} model {name}",
                         "properties": properties, "required": required,
                         "additionalProperties": False})
    bare = [name for name in sorted(registry)
            if not any(param.default is REQUIRED for param in
                       (getattr(registry[name], "parameters", {}) or {}).values())]
    options = [{"enum": bare}, *variants]
    if number_means:
        options.insert(0, {"type": "number", "description": number_means})
    return {"description": f"a {kind} model: a name, or {{model: NAME, ...parameters}}",
            "anyOf": options}


# -- the schema -----------------------------------------------------------------------------
def _property(path: str, rules: _Rules) -> dict:
    """The schema of the value at ``path``."""
    if path in _MODEL_SECTIONS:
        number = "a drag coefficient C_D [-]" if path == "aerodynamics.drag" else None
        return _model_schema(_MODEL_SECTIONS[path], path.rsplit(".", 1)[-1], number)
    if path == "dynamics":
        return {"enum": list(DYNAMICS), "description": "dynamics kind"}
    if path == "objective":
        return {"enum": list(OBJECTIVE_SPECS), "description": "objective"}
    if path == "limits":
        return _limits_schema()
    if path in _READ_ELSEWHERE:
        unit, kind = _READ_ELSEWHERE[path]
        if kind == "list":
            return _quantity_list(unit)
        return _quantity(unit)
    if path == "planet":
        return {"anyOf": [{"enum": sorted(PLANETS)}, _object(path, rules)]}
    if path == "vehicle.stages":
        return {"type": "array", "minItems": 1, "items": _object("vehicle.stages[]", rules),
                "description": "the stages, first stage first"}
    if path in rules.keys:
        return _object(path, rules)
    leaves = [c for c in rules.leaves.get(path, []) if c["kind"] != "section"]
    if leaves:
        return _leaf(path, leaves)
    return {"description": "read by the loader; see the README"}


def _object(path: str, rules: _Rules) -> dict:
    """A section: exactly the keys the loader accepts there, with their schemas."""
    keys = rules.keys.get(path, [])
    properties = {}
    required = []
    for key in keys:
        child = _join(path, key)
        schema = _property(child, rules)
        calls = rules.leaves.get(child, [])
        if child in _REQUIRED_ELSEWHERE or (calls and all(c.get("required") for c in calls)):
            required.append(key)
        else:
            # the loader reads a key written with no value (null) as absent
            schema = {"anyOf": [schema, {"type": "null"}]}
        properties[key] = schema
    schema = {"type": "object", "properties": properties, "additionalProperties": False}
    if required:
        schema["required"] = required
    return schema


def _limits_schema() -> dict:
    properties = {}
    for name, spec in LIMITS.items():
        unit = " ".join(spec.si_unit.split())
        doc = f"{spec.label if hasattr(spec, 'label') else name}; shown in {spec.unit}"
        bounds = {"gt": 0.0} if spec.positive else None
        properties[name] = {"anyOf": [_quantity(unit, doc, bounds), {"type": "null"}]}
    return {"type": "object", "properties": properties, "additionalProperties": False}


@lru_cache(maxsize=1)
def _schema_text() -> str:
    rules = _record_rules()
    top = _object("", rules)
    schema = {"$schema": "https://json-schema.org/draft/2020-12/schema", "$id": SCHEMA_ID,
              "title": "ascentplan problem file",
              "description": "A YAML problem file of ascentplan. Plain numbers are SI "
                             "(kg, m, s, N, Pa, rad); strings carry their unit ('35 kPa'). "
                             "Rules across keys, unit dimensions and plausible ranges are "
                             "checked by 'ascentplan check'.",
              **top, "$defs": {"quantity_text": _QUANTITY_TEXT}}
    return json.dumps(schema, indent=1, sort_keys=False)


def problem_schema() -> dict:
    """The JSON Schema (draft 2020-12) of a problem file, as a dict (a fresh copy).

    Generated from the loader's rules and the registries on first use (about a tenth of
    a second), then kept.
    """
    return json.loads(_schema_text())


def schema_text() -> str:
    """The schema as indented JSON text, ending with a line break."""
    return _schema_text() + "\n"
