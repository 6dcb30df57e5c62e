"""The JSON Schema of the problem file: a valid draft 2020-12 schema (checked by the
``jsonschema`` package, the reference implementation of the JSON Schema specification)
that every example validates against and that stays in step with the loader: the same
keys in every section, every registered model, limit, objective and dynamics kind, and
documents the loader refuses for a key or a name refused by the schema too."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest

from ascentplan import cli
from ascentplan.models import aero, atmosphere, gravity
from ascentplan.models.dynamics import DYNAMICS
from ascentplan.problem import loader, sections, stages
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.loader import ProblemError, problem_from_dict, read_problem_file
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.problem.schema import problem_schema

jsonschema = pytest.importorskip("jsonschema")

PROBLEMS = Path(__file__).resolve().parent.parent / "problems"
EXAMPLES = sorted(PROBLEMS.glob("*.yaml"))


@pytest.fixture(scope="module")
def schema():
    return problem_schema()


@pytest.fixture(scope="module")
def validator(schema):
    return jsonschema.Draft202012Validator(schema)


def _object_at(schema: dict, path: str) -> dict:
    """The object schema of a section (``""`` the top, ``vehicle.stages[]`` a stage)."""
    node = schema
    for step in [s for s in path.split(".") if s]:
        node = _unwrapped(node)["properties"][step.removesuffix("[]")]
        node = _unwrapped(node)
        if step.endswith("[]"):
            node = node["items"]
    return _unwrapped(node)


def _unwrapped(node: dict) -> dict:
    """The object or array alternative of an ``anyOf`` (null, a name, an object)."""
    for option in node.get("anyOf", []):
        if option.get("type") in ("object", "array"):
            return option
        if "anyOf" in option:
            inner = _unwrapped(option)
            if inner is not option:
                return inner
    return node


#: the loader's key list of each section, read from the loader's modules
SECTIONS = {
    "": loader._TOP_KEYS,
    "planet": sections._PLANET_KEYS,
    "aerodynamics": sections._AERO_KEYS,
    "launch": sections._LAUNCH_KEYS,
    "target": sections._TARGET_KEYS,
    "mesh": sections._MESH_KEYS,
    "mass_split": sections._SPLIT_KEYS,
    "schedule": sections._SCHEDULE_KEYS,
    "vehicle": stages._VEHICLE_KEYS,
    "vehicle.stages[]": stages._STAGE_KEYS,
    "vehicle.stages[].throttle": stages._THROTTLE_KEYS,
    "limits": tuple(LIMITS),
}


def test_schema_is_valid_draft_2020_12(schema):
    jsonschema.Draft202012Validator.check_schema(schema)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema["required"] == ["name", "vehicle"]


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_every_example_validates(path, validator):
    document = read_problem_file(path)
    problem_from_dict(document)  # the loader accepts it
    errors = [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(document)]
    assert errors == []


@pytest.mark.parametrize("path", list(SECTIONS), ids=[p or "top" for p in SECTIONS])
def test_each_section_has_exactly_the_loaders_keys(path, schema):
    section = _object_at(schema, path)
    assert section["additionalProperties"] is False
    assert list(section["properties"]) == list(SECTIONS[path])


@pytest.mark.parametrize("path, registry", [("atmosphere", atmosphere.ATMOSPHERES),
                                            ("gravity", gravity.GRAVITY_MODELS),
                                            ("aerodynamics.drag", aero.DRAG_MODELS)])
def test_every_registered_model_and_parameter_is_in_the_schema(path, registry, schema):
    node = schema
    for step in path.split("."):
        node = _unwrapped(node)["properties"][step]
    options = [o for option in node["anyOf"] for o in option.get("anyOf", [option])]
    objects = {o["properties"]["model"]["const"]: o for o in options
               if o.get("type") == "object"}
    assert set(objects) == set(registry)
    for name, cls in registry.items():
        declared = dict(getattr(cls, "parameters", {}) or {})
        assert set(objects[name]["properties"]) == {"model", *declared}
        assert objects[name]["additionalProperties"] is False


def test_names_come_from_the_registries(schema):
    top = schema["properties"]
    assert set(_enum(top["dynamics"])) == set(DYNAMICS)
    assert set(_enum(top["objective"])) == set(OBJECTIVE_SPECS)


def _enum(node: dict) -> list:
    for option in node.get("anyOf", [node]):
        if "enum" in option:
            return option["enum"]
    raise AssertionError(f"no enum in {node}")


def _example() -> dict:
    return read_problem_file(PROBLEMS / "small_launcher.yaml")


def _section(document: dict, path: str) -> dict:
    node = document
    for step in [s for s in path.split(".") if s]:
        node = node.setdefault(step.removesuffix("[]"), {})
        if step.endswith("[]"):
            node = node[0]
    return node


@pytest.mark.parametrize("path", [p for p in SECTIONS if p != "schedule"],
                         ids=[p or "top" for p in SECTIONS if p != "schedule"])
def test_an_unknown_key_is_refused_by_both(path, validator):
    document = _example()
    document["planet"] = {"name": document.get("planet", "earth")}
    _section(document, path)["no_such_key"] = 1.0
    with pytest.raises(ProblemError, match="no_such_key: unknown key"):
        problem_from_dict(document)
    assert not validator.is_valid(document)


def _set(path, value):
    def change(document):
        *head, last = path.split(".")
        node = document
        for step in head:
            node = node[int(step)] if isinstance(node, list) else node.setdefault(step, {})
        node[last] = value
    return change


def _drop(path):
    def change(document):
        *head, last = path.split(".")
        node = document
        for step in head:
            node = node[int(step)] if isinstance(node, list) else node[step]
        del node[last]
    return change


REFUSED = [
    ("objective misspelt", _set("objective", "max_speed")),
    ("unknown dynamics kind", _set("dynamics", "spatial_flat")),
    ("unknown atmosphere model", _set("atmosphere", {"model": "us1962"})),
    ("unknown planet", _set("planet", "vulcan")),
    ("nodes as text", _set("mesh.nodes_per_phase", "forty")),
    ("too few nodes", _set("mesh.nodes_per_phase", 3)),
    ("too many nodes", _set("mesh.nodes_per_phase", 5000)),
    ("scheme misspelt", _set("mesh.scheme", "simpson")),
    ("no vehicle", _drop("vehicle")),
    ("no stages", _drop("vehicle.stages")),
    ("stage without propellant", _drop("vehicle.stages.0.propellant_mass")),
    ("stages not a list", _set("vehicle.stages", {"name": "first"})),
    ("mach table without cd", _set("aerodynamics.drag", {"model": "mach_table",
                                                         "mach": [0.0, 1.0]})),
    ("quantity as a list", _set("limits.max_dynamic_pressure", [30, 40])),
    ("text that is no number", _set("vehicle.payload_mass", "heavy")),
    ("negative throttle fraction", _set("mesh.control_smoothing", -1.0)),
    ("shutdown misspelt", _set("vehicle.stages.0.shutdown", "later")),
]


@pytest.mark.parametrize("label, change", REFUSED, ids=[r[0] for r in REFUSED])
def test_invalid_documents_refused_by_both(label, change, validator):
    document = _example()
    change(document)
    with pytest.raises(ProblemError):
        problem_from_dict(document)
    assert not validator.is_valid(document), label


ACCEPTED = [
    ("null means absent", _set("mesh.max_refinements", None)),
    ("planet as a mapping", _set("planet", {"name": "earth"})),
    ("drag as a number", _set("aerodynamics.drag", 0.3)),
    ("list with its unit", _set("aerodynamics.drag", {
        "model": "mach_table", "mach": [0.0, 1.0, 3.0], "cd": {"unit": "", "values":
                                                              [0.3, 0.5, 0.3]}})),
    ("reserve as a percentage", _set("vehicle.stages.1.propellant_reserve", "2 %")),
    ("quoted plain number", _set("limits.max_axial_acceleration", "5.5")),
    ("smoothing on", _set("mesh.control_smoothing", 1e-4)),
]


@pytest.mark.parametrize("label, change", ACCEPTED, ids=[a[0] for a in ACCEPTED])
def test_valid_variants_accepted_by_both(label, change, validator):
    document = _example()
    change(document)
    problem_from_dict(copy.deepcopy(document))
    assert validator.is_valid(document), list(validator.iter_errors(document))


def test_schema_verb_prints_and_writes_the_schema(tmp_path, capsys, schema):
    assert cli.main(["schema"]) == 0
    assert json.loads(capsys.readouterr().out) == schema
    out = tmp_path / "problem.schema.json"
    assert cli.main(["schema", "--out", str(out)]) == 0
    assert json.loads(out.read_text(encoding="utf-8")) == schema
    assert cli.main(["schema", "--out", str(tmp_path / "missing" / "x.json")]) == 2
    assert "cannot write the schema" in capsys.readouterr().err
