"""A problem built in code written as a problem document, so that study changes can be
applied to it as to a parsed problem file.

The document holds plain numbers in the loader's SI units; a field left at its default
is left out, as a file would leave it out. A stage is written in the form the problem
keeps: with its structural ratio when it has one (else its dry mass), with its
thrust-to-weight ratio when it has one (else its vacuum thrust), and with its exhaust
speed. Models are written as ``{model: NAME, ...parameters}`` from their registries.
"""

from __future__ import annotations

import copy
import dataclasses
from typing import Any

from ascentplan.models.aero import DRAG_MODELS
from ascentplan.models.atmosphere import ATMOSPHERES
from ascentplan.models.gravity import GRAVITY_MODELS
from ascentplan.problem.loader import ProblemError, problem_from_dict
from ascentplan.problem.model import Problem, Stage
from ascentplan.study.errors import StudyError

__all__ = ["problem_document"]


def _plain(value: Any) -> Any:
    if isinstance(value, tuple):
        return [_plain(v) for v in value]
    return value


def _section(obj: Any) -> dict:
    """The fields of a dataclass that are set and differ from their defaults."""
    out = {}
    for f in dataclasses.fields(obj):
        value = getattr(obj, f.name)
        if value is None or (f.default is not dataclasses.MISSING and value == f.default):
            continue
        out[f.name] = _plain(value)
    return out


def _model(model: Any, registry: dict, kind: str) -> dict:
    name = next((n for n, cls in registry.items() if type(model) is cls), None)
    if name is None:
        raise StudyError(f"{kind}: a {type(model).__name__} is not a registered {kind} model "
                         f"(valid names: {', '.join(registry)}); give the problem file")
    entry: dict = {"model": name}
    for param in getattr(type(model), "parameters", {}):
        value = getattr(model, param, None)
        # a parameter that the model keeps under another name is left to its default;
        # the round trip in problem_document catches a default that differs
        if value is not None and not callable(value):
            entry[param] = _plain(value)
    return entry


def _stage(stage: Stage) -> dict:
    entry: dict = {"name": stage.name, "propellant_mass": stage.propellant_mass}
    if stage.structural_ratio is not None:
        entry["structural_ratio"] = stage.structural_ratio
    else:
        entry["dry_mass"] = stage.dry_mass
    if stage.thrust_to_weight is not None:
        entry["thrust_to_weight"] = stage.thrust_to_weight
    else:
        entry["thrust_vacuum"] = stage.thrust_vacuum
    entry["exhaust_speed"] = stage.exhaust_speed
    entry["throttle"] = {"min": stage.throttle_min, "max": stage.throttle_max}
    for name in ("nozzle_exit_area", "max_throttle_rate", "max_steering_rate", "coast_after",
                 "propellant_min", "propellant_max", "shutdown", "propellant_reserve"):
        value = getattr(stage, name, None)
        if value:
            entry[name] = value
    return entry


def _aerodynamics(problem: Problem) -> dict:
    aero = problem.aerodynamics
    entry = {"reference_area": aero.reference_area,
             "drag": _model(aero.drag, DRAG_MODELS, "drag")}
    if aero.reference_length is not None:
        entry["reference_length"] = aero.reference_length
    if aero.drag_scale != 1.0:
        entry["drag_scale"] = aero.drag_scale
    return entry


def _written(problem: Problem) -> dict:
    document: dict = {
        "name": problem.name,
        "dynamics": problem.dynamics,
        # every planet field: a known planet's name would otherwise bring its own values
        "planet": {f.name: getattr(problem.planet, f.name)
                   for f in dataclasses.fields(problem.planet)},
        "atmosphere": _model(problem.atmosphere, ATMOSPHERES, "atmosphere"),
        "gravity": _model(problem.gravity, GRAVITY_MODELS, "gravity"),
        "aerodynamics": _aerodynamics(problem),
        "vehicle": {"payload_mass": problem.vehicle.payload_mass,
                    "stages": [_stage(s) for s in problem.vehicle.stages]},
        "objective": problem.objective,
    }
    if problem.description:
        document["description"] = problem.description
    for name in ("launch", "limits", "target", "mesh", "schedule"):
        section = getattr(problem, name)
        if section is not None and _section(section):
            document[name] = _section(section)
    if problem.mass_split is not None:
        document["mass_split"] = _section(problem.mass_split)
    return document


def _same_model(a: Any, b: Any) -> bool:
    return type(a) is type(b) and (a == b or not getattr(type(a), "parameters", {}))


def problem_document(problem: Problem) -> dict:
    """The problem as a problem document that the loader reads back into it.

    Parameters
    ----------
    problem : Problem

    Returns
    -------
    dict
        Plain numbers in SI units (limits in the ``si_unit`` of their
        :class:`~ascentplan.problem.limits.LimitSpec`).

    Raises
    ------
    StudyError
        When the loader refuses the document, or a model does not read back as it was
        built; give the problem file instead.
    """
    document = _written(problem)
    try:
        read = problem_from_dict(copy.deepcopy(document), problem.source_path)
    except ProblemError as exc:
        raise StudyError("the problem cannot be written as a problem file:\n"
                         + "\n".join(exc.messages)) from None
    for kind, built, back in (("atmosphere", problem.atmosphere, read.atmosphere),
                              ("gravity", problem.gravity, read.gravity),
                              ("aerodynamics.drag", problem.aerodynamics.drag,
                               read.aerodynamics.drag)):
        if not _same_model(built, back):
            entry = _entry_at(document, kind)
            raise StudyError(f"{kind}: the {type(built).__name__} of the problem does not "
                             f"read back from its problem-file entry {entry}; give the "
                             f"problem file")
    return document


def _entry_at(document: dict, key: str) -> Any:
    node: Any = document
    for step in key.split("."):
        node = node.get(step) if isinstance(node, dict) else None
    return node
