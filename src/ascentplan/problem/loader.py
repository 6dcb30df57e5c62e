"""Reading a YAML problem file into a validated Problem, reporting every fault found by
its key path, value and what was expected.

The work is shared out by concept: :mod:`~ascentplan.problem.reader` reads single values
and words the messages, :mod:`~ascentplan.problem.sections` and
:mod:`~ascentplan.problem.stages` read the sections, :mod:`~ascentplan.problem.checks`
checks them against each other. This module is the front: a file or a dict in, a
:class:`Problem` or a :class:`ProblemError` listing every fault out.
"""

from __future__ import annotations

import yaml

from ascentplan.models.dynamics import DYNAMICS, dynamics_kind
from ascentplan.problem.checks import _cross_checks, _Parts, liftoff_thrust, site_gravity
from ascentplan.problem.model import OBJECTIVE_SPECS, Problem
from ascentplan.problem.reader import InputLimitError, _kind_of, _Reader, _StrictLoader
from ascentplan.problem.screen import MAX_FILE_BYTES, name_fault, screen, tidy_messages
from ascentplan.problem.sections import (
    _read_aerodynamics,
    _read_atmosphere,
    _read_gravity,
    _read_launch,
    _read_limits,
    _read_mass_split,
    _read_mesh,
    _read_planet,
    _read_schedule,
    _read_target,
)
from ascentplan.problem.stages import _build_vehicle, _read_vehicle
from ascentplan.problem.units import show

__all__ = ["ProblemError", "liftoff_thrust", "load_problem", "problem_from_dict",
           "read_problem_file", "site_gravity"]


class ProblemError(ValueError):
    """A problem file (or dict) that cannot be turned into a :class:`Problem`.

    Attributes
    ----------
    messages : list of str
        Every problem found, one sentence each, starting with the key path; printable
        (control characters escaped) and of bounded length and number.
    source : str or None
        The file the messages are about, when there is one.
    """

    def __init__(self, messages, source: str | None = None):
        self.messages = tidy_messages(messages)
        self.source = source
        super().__init__("\n".join(self.messages))


_TOP_KEYS = ("name", "description", "dynamics", "planet", "atmosphere", "gravity",
             "aerodynamics", "vehicle", "launch", "limits", "target", "objective", "mesh",
             "mass_split", "schedule")
#: what a file that names no dynamics kind or objective flies and optimises
_DEFAULT_DYNAMICS = "planar"
_DEFAULT_OBJECTIVE = "max_burnout_speed"


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
        When the file cannot be read, is larger than :data:`MAX_FILE_BYTES`, is not valid
        YAML (the message gives the line), has duplicate keys, nests too deep, uses too
        many aliases or expands to too many values (see
        :mod:`~ascentplan.problem.screen`), or is not a mapping at the top.
    """
    source = str(path)
    text = _read_text(path, source)
    try:
        data = yaml.load(text, Loader=_StrictLoader)
    except InputLimitError as exc:
        raise ProblemError([f"{exc.message} (line {exc.mark.line + 1})"], source) from None
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


def _read_text(path, source: str) -> str:
    """The text of a problem file of at most :data:`MAX_FILE_BYTES`, refused unread
    when it is larger."""
    try:
        with open(path, "rb") as stream:
            raw = stream.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise ProblemError(["no such problem file"], source) from None
    except IsADirectoryError:
        raise ProblemError(["is a folder, not a problem file"], source) from None
    except OSError as exc:
        raise ProblemError([f"cannot read the problem file: {exc.strerror or exc}"],
                           source) from None
    if len(raw) > MAX_FILE_BYTES:
        raise ProblemError([f"the file is larger than {MAX_FILE_BYTES} bytes (1 MiB), the "
                            f"most a problem file may be; the examples are about 3 kB"],
                           source)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ProblemError([f"not a text file (UTF-8 decoding failed at byte {exc.start})"],
                           source) from None
    # as text mode reads it: line ends as written by any system become "\n"
    return text.replace("\r\n", "\n").replace("\r", "\n")


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
    # sizes, nesting and characters first, so that no value is read from a problem
    # that would cost more than a normal one
    faults = screen(data)
    if faults:
        raise ProblemError(faults, source_path)
    r = _Reader()
    r.keys(data, "", _TOP_KEYS)

    name = _read_name(r, data)
    description = r.text(data, "description", "", default="")
    dynamics = r.choice(data, "dynamics", "", list(DYNAMICS), _DEFAULT_DYNAMICS, "dynamics")
    kind = dynamics_kind(dynamics) if dynamics is not None else None

    planet = _read_planet(r, data)
    atmosphere_name, atmos = _read_atmosphere(r, data)
    gravity_model = _read_gravity(r, data, planet)
    aerodynamics = _read_aerodynamics(r, data, atmosphere_name)
    payload, stages = _read_vehicle(r, data)
    launch = _read_launch(r, data, kind, planet)
    limits = _read_limits(r, data, kind)
    target = _read_target(r, data, kind, launch)
    objective = r.choice(data, "objective", "", list(OBJECTIVE_SPECS), _DEFAULT_OBJECTIVE,
                         "objective")
    mesh = _read_mesh(r, data)
    mass_split = _read_mass_split(r, data)
    schedule = _read_schedule(r, data, kind)

    vehicle = None
    if payload is not None and stages is not None and None not in stages:
        vehicle = _build_vehicle(r, payload, stages, data)
    _cross_checks(r, data, _Parts(vehicle, planet, atmos, atmosphere_name, gravity_model,
                                  launch, limits, target, objective, mass_split))

    if r.messages:
        raise ProblemError(r.messages, source_path)
    return Problem(name=name, dynamics=dynamics, vehicle=vehicle, planet=planet,
                   atmosphere=atmos, gravity=gravity_model, aerodynamics=aerodynamics,
                   launch=launch, limits=limits, target=target, objective=objective,
                   mesh=mesh, mass_split=mass_split, schedule=schedule,
                   description=description, source_path=source_path)


def _read_name(r: _Reader, data: dict) -> str | None:
    """The problem's name, which names its results folder too."""
    name = r.text(data, "name", "", required=True)
    if name is not None:
        fault = name_fault(name)
        if fault:
            r.error("name", f"must be usable as a folder name on every common file system: "
                            f"{fault}; got {show(name)}")
            return None
    return name
