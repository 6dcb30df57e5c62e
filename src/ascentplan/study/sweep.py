"""Trade studies: a problem solved at many points (a sweep of a limit, a dispersion of the
vehicle data), on local worker processes or a Dask distributed cluster, written row by row
so that an interrupted study resumes from what it wrote.

A study is a problem file and a list of points; a point is a mapping of dotted key paths
of the :class:`~ascentplan.problem.Problem` to new values in SI units, e.g.
``{"limits.max_dynamic_pressure": 30000.0}`` or
``{"vehicle.stages[1].thrust_vacuum": 82000.0, "vehicle.payload_mass": 450.0}``.
Workers receive the file path and the points (never CasADi objects), solve each point
with :func:`ascentplan.pipeline.solve`, warm-starting along a chunk of neighbouring
points, and return plain JSON-safe rows.

Files written in the study folder:

``study.jsonl``
    One JSON object per point, appended as each task finishes: the record a resumed
    study reads. A row of a point retried later supersedes the earlier one.
``study.csv``
    The same rows as a table (one per point), rebuilt from ``study.jsonl`` at the start
    of each run and appended to as rows arrive.
``study.json``
    The study: problem file and its SHA-256, the points, the columns and their units.
"""

from __future__ import annotations

import csv
import dataclasses
import difflib
import hashlib
import io
import json
import math
import multiprocessing
import numbers
import os
import re
import socket
import sys
import threading
import time as _time
import traceback
import zlib
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from contextlib import contextmanager
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from ascentplan.constants import G0
from ascentplan.problem.model import LIMIT_UNITS, Problem

__all__ = ["Study", "StudyError", "StudyIncomplete", "apply_changes", "dispersion",
           "limit_sweep", "run_study", "summarise_study", "sweep_command", "sweep_slopes",
           "STUDY_CSV", "STUDY_JSONL", "STUDY_JSON"]

STUDY_CSV = "study.csv"
STUDY_JSONL = "study.jsonl"
STUDY_JSON = "study.json"

#: largest number of neighbouring points solved in one task: the first point of a chunk is
#: solved cold, the others warm-started from their predecessor; an interrupted study loses
#: at most the chunks in flight
MAX_CHUNK = 8

#: the SI unit of each limit's values in a study (Limits holds the axial limit in g0)
LIMIT_SI_UNITS = {
    "max_dynamic_pressure": "Pa",
    "max_axial_acceleration": "g0",
    "max_q_alpha": "Pa*rad",
    "min_altitude": "m",
}

DISPERSION_KINDS = ("normal", "uniform")

_PROBLEM_FIELDS = tuple(f.name for f in dataclasses.fields(Problem))
#: parts of a problem a study cannot vary, with the reason
_FIXED_ROOTS = {
    "planet": "the gravity model and the launch site are built from the planet; write one "
              "problem file per planet",
    "gravity": "the gravity model must agree with the planet; write one problem file per "
               "planet",
}

#: bounds on changed values by field name: (lower, lower allowed, upper, upper allowed, unit)
_BOUNDS = {
    "propellant_mass": (0.0, False, None, False, "kg"),
    "dry_mass": (0.0, False, None, False, "kg"),
    "payload_mass": (0.0, True, None, False, "kg"),
    "thrust_vacuum": (0.0, False, None, False, "N"),
    "exhaust_speed": (0.0, False, None, False, "m/s"),
    "nozzle_exit_area": (0.0, True, None, False, "m^2"),
    "throttle_min": (0.0, True, 1.0, True, ""),
    "throttle_max": (0.0, False, 1.0, True, ""),
    "max_throttle_rate": (0.0, False, None, False, "1/s"),
    "coast_after": (0.0, True, None, False, "s"),
    "structural_ratio": (0.0, False, 1.0, False, ""),
    "thrust_to_weight": (0.0, False, None, False, ""),
    "propellant_min": (0.0, False, None, False, "kg"),
    "propellant_max": (0.0, False, None, False, "kg"),
    "max_dynamic_pressure": (0.0, False, None, False, "Pa"),
    "max_axial_acceleration": (0.0, False, None, False, "g0"),
    "max_q_alpha": (0.0, False, None, False, "Pa rad"),
    "reference_area": (0.0, False, None, False, "m^2"),
    "reference_length": (0.0, False, None, False, "m"),
    "vertical_rise": (0.0, True, None, False, "s"),
    "latitude": (-0.5 * math.pi, True, 0.5 * math.pi, True, "rad"),
    "pitch_over": (0.0, True, 0.5 * math.pi, True, "rad"),
    "speed": (0.0, False, None, False, "m/s"),
    "flight_path_angle": (-0.5 * math.pi, True, 0.5 * math.pi, True, "rad"),
    "liftoff_mass": (0.0, False, None, False, "kg"),
    "nodes_per_phase": (5, True, None, False, ""),
    "max_refinements": (0, True, None, False, ""),
    "map_points": (0, True, None, False, ""),
    "speed_tolerance": (0.0, False, None, False, "m/s"),
    "speed_tolerance_fraction": (0.0, False, 1.0, False, ""),
    "limit_tolerance_fraction": (0.0, False, 1.0, False, ""),
}
#: fields meaningful in planar flight only
_PLANAR_ONLY = ("max_q_alpha", "pitch_over", "flight_path_angle", "circular_orbit_altitude")


class StudyError(ValueError):
    """A study that cannot be run as described: a bad key, value, argument or folder.
    The message names the argument (or key path) and the value."""


class StudyIncomplete(RuntimeError):
    """Some points were not run because worker processes were lost; the finished rows are
    kept in the study folder and running the study again resumes it.

    Attributes
    ----------
    indices : list of int
        The points not run.
    rows : list of dict
        The rows of the points that were finished, by index.
    """

    def __init__(self, message: str, indices, rows):
        super().__init__(message)
        self.indices = list(indices)
        self.rows = list(rows)


# --------------------------------------------------------------------------------------
# key paths

_STEP = re.compile(r"^([A-Za-z_][A-Za-z0-9_]*)((?:\[\d+\])*)$")


def _parse_key(key: Any) -> list:
    """'vehicle.stages[1].thrust_vacuum' -> ['vehicle', 'stages', 1, 'thrust_vacuum']."""
    if not isinstance(key, str) or not key:
        raise StudyError(f"{key!r}: a change key must be a dotted path such as "
                         f"'limits.max_dynamic_pressure' or 'vehicle.stages[0].dry_mass'")
    steps: list = []
    for part in key.split("."):
        match = _STEP.match(part)
        if match is None:
            raise StudyError(f"{key}: cannot read {part!r} as a field name with optional "
                             f"[index]; expected a path such as 'vehicle.stages[0].dry_mass'")
        steps.append(match.group(1))
        steps.extend(int(i) for i in re.findall(r"\[(\d+)\]", match.group(2)))
    return steps


def _show_path(steps) -> str:
    text = ""
    for step in steps:
        text += f"[{step}]" if isinstance(step, int) else (f".{step}" if text else step)
    return text


def _is_number(value: Any) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool)


def _chain(problem: Problem, key: str):
    """Walk ``key`` down ``problem``: the (container, step) pairs and the leaf value.

    Raises StudyError naming the key for unknown fields, bad indices and leaves that are
    not numbers a study can vary.
    """
    steps = _parse_key(key)
    if steps[0] in _FIXED_ROOTS:
        raise StudyError(f"{key}: the {steps[0]} cannot be varied in a study "
                         f"({_FIXED_ROOTS[steps[0]]})")
    obj: Any = problem
    chain = []
    annotation = None
    for depth, step in enumerate(steps):
        here = _show_path(steps[:depth]) or "the problem"
        if isinstance(step, str):
            if not dataclasses.is_dataclass(obj) or isinstance(obj, type):
                raise StudyError(f"{key}: {here} is {_describe(obj)}, which has no field "
                                 f"{step!r}")
            names = {f.name: f for f in dataclasses.fields(obj)
                     if f.init and not f.name.startswith("_")}
            if step not in names:
                close = difflib.get_close_matches(step, list(names), n=1)
                hint = f"; did you mean '{close[0]}'?" if close else ""
                raise StudyError(f"{key}: unknown key, {here} has no field {step!r}{hint} "
                                 f"(valid fields: {', '.join(names)})")
            chain.append((obj, step))
            annotation = str(names[step].type)
            obj = getattr(obj, step)
        else:
            if not isinstance(obj, (tuple, list)):
                raise StudyError(f"{key}: {here} is {_describe(obj)}, not a list; "
                                 f"[{step}] cannot index it")
            if step >= len(obj):
                raise StudyError(f"{key}: index {step} is out of range, {here} has "
                                 f"{len(obj)} entr{'y' if len(obj) == 1 else 'ies'} "
                                 f"(0 to {len(obj) - 1})")
            chain.append((obj, step))
            annotation = None
            obj = obj[step]
    optional_number = obj is None and annotation is not None and "float" in annotation
    if not (_is_number(obj) or optional_number):
        raise StudyError(f"{key}: is not a number a study can vary (it holds "
                         f"{_describe(obj)})")
    return chain, obj


def _describe(obj: Any) -> str:
    if obj is None:
        return "nothing (None)"
    if isinstance(obj, str):
        return f"the text {obj!r}"
    if isinstance(obj, (tuple, list)):
        return f"a list of {len(obj)}"
    if dataclasses.is_dataclass(obj):
        return f"a {type(obj).__name__}"
    return f"a {type(obj).__name__}"


def _leaf_value(key: str, current: Any, value: Any):
    if not _is_number(value):
        raise StudyError(f"{key}: expected a number in SI units, got {value!r}")
    if not math.isfinite(float(value)):
        raise StudyError(f"{key}: expected a finite number, got {value!r}")
    if isinstance(current, int) and not isinstance(current, bool):
        if float(value) != int(value):
            raise StudyError(f"{key}: expected a whole number, got {value!r}")
        return int(value)
    return float(value)


def _set(problem: Problem, key: str, value: Any) -> Problem:
    chain, current = _chain(problem, key)
    new = _leaf_value(key, current, value)
    for container, step in reversed(chain):
        if isinstance(step, int):
            items = list(container)
            items[step] = new
            new = type(container)(items)
        else:
            try:
                new = replace(container, **{step: new})
            except (ValueError, TypeError) as exc:
                raise StudyError(f"{key}: {exc}") from None
    return new


def check_keys(problem: Problem, keys) -> None:
    """Raise :class:`StudyError` naming the first key that is not a number of ``problem``
    a study can vary."""
    for key in keys:
        _chain(problem, key)


def apply_changes(problem: Problem, changes: dict) -> Problem:
    """The problem with the values of one study point.

    Quantities the problem file derives follow the changes: a stage given a structural
    ratio keeps it when its propellant mass changes (the dry mass follows) and takes the
    ratio implied by a new dry mass; a stage given a thrust-to-weight ratio keeps it when
    the masses change (the thrust follows) and takes the ratio implied by a new thrust.

    Parameters
    ----------
    problem : Problem
    changes : dict
        Dotted key path -> new value in SI units (limits as in
        :class:`~ascentplan.problem.Limits`: Pa, g0, Pa rad, m), e.g.
        ``{"limits.max_dynamic_pressure": 30000.0, "vehicle.stages[0].dry_mass": 420.0}``.

    Returns
    -------
    Problem

    Raises
    ------
    StudyError
        For an unknown key path (the message names it and suggests the closest field), a
        value that is not a finite number, or a value out of its physical range
        (``vehicle.stages[0].dry_mass: must be > 0 kg, got -50.0``).
    """
    if not isinstance(changes, dict):
        raise StudyError(f"changes: expected a mapping of key paths to values, got "
                         f"{changes!r}")
    changed = problem
    for key, value in changes.items():
        changed = _set(changed, key, value)
    changed = _derive_stage_quantities(changed, list(changes))
    _check_values(changed, changes)
    return changed


def _derive_stage_quantities(problem: Problem, keys) -> Problem:
    touched: dict[int, set] = {}
    vehicle_changed = False
    for key in keys:
        steps = _parse_key(key)
        if steps[0] != "vehicle":
            continue
        vehicle_changed = True
        if len(steps) >= 4 and steps[1] == "stages" and isinstance(steps[2], int):
            touched.setdefault(steps[2], set()).add(steps[3])
    if not vehicle_changed:
        return problem
    stages = list(problem.vehicle.stages)
    for i, fields in touched.items():
        s = stages[i]
        eps = s.structural_ratio
        if eps is None or not 0.0 < eps < 1.0 or s.propellant_mass <= 0.0:
            continue
        if "dry_mass" in fields and "structural_ratio" not in fields:
            stages[i] = replace(s, structural_ratio=s.dry_mass / (s.dry_mass + s.propellant_mass))
        else:
            stages[i] = replace(s, dry_mass=eps / (1.0 - eps) * s.propellant_mass)
    vehicle = replace(problem.vehicle, stages=tuple(stages))
    scaled = []
    for i, s in enumerate(vehicle.stages):
        if s.thrust_to_weight is not None:
            weight = G0 * vehicle.ignition_mass(i)
            fields = touched.get(i, set())
            if "thrust_vacuum" in fields and "thrust_to_weight" not in fields:
                s = replace(s, thrust_to_weight=s.thrust_vacuum / weight)
            else:
                s = replace(s, thrust_vacuum=s.thrust_to_weight * weight)
        scaled.append(s)
    return replace(problem, vehicle=replace(vehicle, stages=tuple(scaled)))


def _bound_text(value: float, unit: str) -> str:
    return f"{value:.6g} {unit}".rstrip()


def _check_values(problem: Problem, changes: dict) -> None:
    vertical = problem.dynamics == "vertical"
    for key in changes:
        steps = _parse_key(key)
        name = next((s for s in reversed(steps) if isinstance(s, str)), "")
        chain, value = _chain(problem, key)
        if vertical and name in _PLANAR_ONLY:
            raise StudyError(f"{key}: applies to planar flight only (dynamics is vertical), "
                             f"got {changes[key]!r}")
        rule = _BOUNDS.get(name)
        if rule is None or value is None:
            continue
        lower, lower_ok, upper, upper_ok, unit = rule
        bad_low = lower is not None and (value < lower or (value == lower and not lower_ok))
        bad_high = upper is not None and (value > upper or (value == upper and not upper_ok))
        if bad_low or bad_high:
            parts = []
            if lower is not None:
                parts.append(f"{'>=' if lower_ok else '>'} {_bound_text(lower, unit)}")
            if upper is not None:
                parts.append(f"{'<=' if upper_ok else '<'} {_bound_text(upper, unit)}")
            raise StudyError(f"{key}: must be {' and '.join(parts)}, got {changes[key]!r}")
    _check_problem(problem, list(changes))


def _check_problem(problem: Problem, keys) -> None:
    """Checks across fields that the loader makes on a file, repeated for a changed point."""
    from ascentplan.problem.loader import liftoff_thrust, site_gravity

    where = keys[0] if len(keys) == 1 else "changes " + ", ".join(keys)
    vehicle = problem.vehicle
    for i, s in enumerate(vehicle.stages):
        if s.throttle_min > s.throttle_max:
            raise StudyError(f"{where}: vehicle.stages[{i}] throttle_min {s.throttle_min:.6g} "
                             f"exceeds throttle_max {s.throttle_max:.6g}")
        if s.propellant_mass <= 0.0 or s.dry_mass <= 0.0:
            raise StudyError(f"{where}: vehicle.stages[{i}] would have propellant mass "
                             f"{s.propellant_mass:.6g} kg and dry mass {s.dry_mass:.6g} kg; "
                             f"both must be > 0 kg")
    if vehicle.stages[-1].coast_after:
        raise StudyError(f"{where}: vehicle.stages[{len(vehicle.stages) - 1}].coast_after has "
                         f"no effect on the last stage, got {vehicle.stages[-1].coast_after:.6g} s")
    thrust, _ = liftoff_thrust(vehicle, problem.atmosphere, problem.launch)
    weight = vehicle.liftoff_mass * site_gravity(problem.gravity, problem.planet, problem.launch)
    if thrust <= weight:
        raise StudyError(f"{where}: liftoff thrust-to-weight would be {thrust / weight:.3f} "
                         f"(thrust {thrust / 1e3:.6g} kN, liftoff mass "
                         f"{vehicle.liftoff_mass:.6g} kg); the vehicle cannot lift off")
    burn = vehicle.stages[0].full_throttle_burn_time
    if problem.launch.vertical_rise > burn:
        raise StudyError(f"{where}: launch.vertical_rise {problem.launch.vertical_rise:.6g} s "
                         f"is longer than the first stage's full-throttle burn of {burn:.1f} s")
    floor = problem.limits.min_altitude
    if floor is not None and floor > problem.launch.altitude:
        raise StudyError(f"{where}: limits.min_altitude {floor:.6g} m is above the launch "
                         f"altitude {problem.launch.altitude:.6g} m")


# --------------------------------------------------------------------------------------
# study descriptions


@dataclass
class Study:
    """A problem file and the points at which to solve it.

    Attributes
    ----------
    problem_path : str
        The YAML problem file (kept as an absolute path so workers started elsewhere find
        it; on a cluster, every worker must see the file at this path).
    points : list of dict
        Per point, dotted key path -> value in SI units (see :func:`apply_changes`). The
        position of a point in the list is its ``index`` in the study files.
    name : str
        A title for messages and the summary; default: the file name.
    """

    problem_path: str
    points: list
    name: str = ""

    def __post_init__(self):
        if not isinstance(self.problem_path, (str, os.PathLike)):
            raise StudyError(f"problem_path: expected a file path, got {self.problem_path!r}")
        self.problem_path = str(Path(self.problem_path).expanduser().resolve())
        if not isinstance(self.points, (list, tuple)) or not self.points:
            raise StudyError(f"points: expected a non-empty list of mappings, got "
                             f"{self.points!r}")
        clean = []
        for i, point in enumerate(self.points):
            if not isinstance(point, dict) or not point:
                raise StudyError(f"points[{i}]: expected a non-empty mapping of key paths to "
                                 f"values, got {point!r}")
            entry = {}
            for key, value in point.items():
                _parse_key(key)
                if not _is_number(value) or not math.isfinite(float(value)):
                    raise StudyError(f"points[{i}][{key!r}]: expected a finite number in SI "
                                     f"units, got {value!r}")
                entry[key] = int(value) if isinstance(value, numbers.Integral) else float(value)
            clean.append(entry)
        self.points = clean
        if not self.name:
            self.name = Path(self.problem_path).stem

    @property
    def change_keys(self) -> list:
        """Every key varied by some point, in order of first appearance."""
        keys: dict = {}
        for point in self.points:
            keys.update(dict.fromkeys(point))
        return list(keys)


def _closest_limit(name: Any) -> str:
    close = difflib.get_close_matches(str(name), list(LIMIT_UNITS), n=1)
    return f"; did you mean '{close[0]}'?" if close else ""


def limit_sweep(problem_path, limit_name: str, values) -> Study:
    """A study of one limit at several values.

    Parameters
    ----------
    problem_path : str or pathlib.Path
    limit_name : str
        One of :data:`ascentplan.problem.LIMIT_UNITS` (``max_dynamic_pressure``, ...).
    values : sequence of float or str
        Plain numbers in the limit's SI unit (:data:`LIMIT_SI_UNITS`: Pa, g0, Pa rad, m),
        or strings with units (``"25 kPa"``).

    Returns
    -------
    Study
        One point per value, in the order given.
    """
    from ascentplan.problem.loader import load_problem
    from ascentplan.problem.units import UnitError, to_si

    if limit_name not in LIMIT_UNITS:
        raise StudyError(f"limit: unknown limit {limit_name!r}{_closest_limit(limit_name)} "
                         f"(valid names: {', '.join(LIMIT_UNITS)})")
    if isinstance(values, (str, bytes)) or not hasattr(values, "__len__") or not len(values):
        raise StudyError(f"values: expected a non-empty list of values of {limit_name}, got "
                         f"{values!r}")
    unit = LIMIT_SI_UNITS[limit_name]
    si = []
    for i, value in enumerate(values):
        try:
            si.append(to_si(value, unit, f"values[{i}]"))
        except UnitError as exc:
            raise StudyError(str(exc)) from None
    problem = load_problem(problem_path)
    key = f"limits.{limit_name}"
    check_keys(problem, [key])
    return Study(problem_path, [{key: v} for v in si],
                 name=f"{problem.name}: {limit_name} sweep")


def dispersion(problem_path, spreads: dict, samples: int, seed: int = 0) -> Study:
    """A study of random variations of problem data about their values in the file.

    Each point draws, for every key, value = nominal (1 + s z) with z standard normal
    (``'normal'``, s the relative standard deviation) or uniform on [-1, 1]
    (``'uniform'``, s the relative half-width). Each key draws from its own stream of
    :func:`numpy.random.default_rng` seeded by ``seed`` and the key's name, so the draws
    of one key do not change when other keys are added, and the first n samples do not
    change when more are asked for (a resumed study can be extended).

    Parameters
    ----------
    problem_path : str or pathlib.Path
    spreads : dict
        Key path -> (kind, relative spread), e.g.
        ``{"vehicle.stages[0].thrust_vacuum": ("normal", 0.02)}``.
    samples : int
        Number of points, >= 1.
    seed : int
        Seed of the generator, >= 0.

    Returns
    -------
    Study
    """
    from ascentplan.problem.loader import load_problem

    if isinstance(samples, bool) or not isinstance(samples, numbers.Integral) or samples < 1:
        raise StudyError(f"samples: expected a whole number >= 1, got {samples!r}")
    if isinstance(seed, bool) or not isinstance(seed, numbers.Integral) or seed < 0:
        raise StudyError(f"seed: expected a whole number >= 0, got {seed!r}")
    if not isinstance(spreads, dict) or not spreads:
        raise StudyError(f"spreads: expected a mapping of key paths to (kind, relative "
                         f"spread), got {spreads!r}")
    problem = load_problem(problem_path)
    columns = {}
    for key, spec in spreads.items():
        kind, size = _read_spread(key, spec)
        _, nominal = _chain(problem, key)
        if nominal is None or nominal == 0:
            raise StudyError(f"{key}: a relative spread needs a nonzero value in the problem "
                             f"file, got {nominal!r}")
        if isinstance(nominal, int):
            raise StudyError(f"{key}: holds a whole number ({nominal}); only real-valued "
                             f"data can be dispersed")
        rng = np.random.default_rng([int(seed), zlib.crc32(key.encode("utf-8"))])
        draws = (rng.standard_normal(samples) if kind == "normal"
                 else rng.uniform(-1.0, 1.0, samples))
        values = float(nominal) * (1.0 + size * draws)
        columns[key] = [float(v) for v in values]
    points = [{key: columns[key][i] for key in columns} for i in range(samples)]
    return Study(problem_path, points,
                 name=f"{problem.name}: dispersion, {samples} samples, seed {seed}")


_dispersion_study = dispersion


def _read_spread(key: str, spec: Any) -> tuple[str, float]:
    if not isinstance(spec, (tuple, list)) or len(spec) != 2:
        raise StudyError(f"spreads[{key!r}]: expected (kind, relative spread) with kind one "
                         f"of {', '.join(DISPERSION_KINDS)}, got {spec!r}")
    kind, size = spec
    if kind not in DISPERSION_KINDS:
        raise StudyError(f"spreads[{key!r}]: unknown kind {kind!r} (valid kinds: "
                         f"{', '.join(DISPERSION_KINDS)})")
    if not _is_number(size) or not math.isfinite(float(size)) or size <= 0:
        raise StudyError(f"spreads[{key!r}]: the relative spread must be a number > 0 (0.02 "
                         f"for 2 %), got {size!r}")
    return kind, float(size)


# --------------------------------------------------------------------------------------
# the worker side: plain arguments in, plain rows out

#: Dask workers may run several tasks in threads of one process; the NLP cache and the
#: solver are not shared between threads safely, so solves in one process take turns
_SOLVE_LOCK = threading.Lock()
_BASE_PROBLEMS: dict = {}


def _file_digest(path: str) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def _base_problem(path: str, digest: str) -> Problem:
    from ascentplan.problem.loader import load_problem

    try:
        found = _file_digest(path)
    except OSError as exc:
        raise StudyError(f"{path}: the problem file cannot be read on worker "
                         f"{_worker_name()} ({exc.strerror or exc}); every worker must see "
                         f"the file at this path") from None
    if found != digest:
        raise StudyError(f"{path}: the problem file on worker {_worker_name()} differs from "
                         f"the one the study started with (SHA-256 {found[:12]}... instead "
                         f"of {digest[:12]}...)")
    key = (path, digest)
    if key not in _BASE_PROBLEMS:
        _BASE_PROBLEMS.clear()
        _BASE_PROBLEMS[key] = load_problem(path)
    return _BASE_PROBLEMS[key]


def _worker_name() -> str:
    return f"{socket.gethostname()}:{os.getpid()}"


def _solve_chunk(problem_path: str, digest: str, items: list, run: int) -> list:
    """Solve neighbouring points in order, each warm-started from the previous converged
    one of the same NLP structure; one row per point, a raised error in its row."""
    from ascentplan.transcription.nlp import structure_key
    from ascentplan.pipeline import solve

    rows = []
    with _SOLVE_LOCK:
        previous = None
        for index, changes in items:
            start = _time.perf_counter()
            try:
                problem = apply_changes(_base_problem(problem_path, digest), changes)
                warm = (previous is not None
                        and structure_key(previous.problem) == structure_key(problem))
                result = solve(problem, warm_start=previous if warm else None)
                if warm and result.solution.status != "optimal":
                    # a sweep must not report an artefact of its warm start
                    result, warm = solve(problem), False
                rows.append(_result_row(index, run, changes, result, warm,
                                        _time.perf_counter() - start))
                previous = result if result.solution.status == "optimal" else None
            except Exception as exc:  # noqa: BLE001 - a failed point must not end the study
                rows.append(_failed_row(index, run, changes, exc,
                                        _time.perf_counter() - start))
                previous = None
    return rows


def _finite(value: Any):
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _result_row(index, run, changes, result, warm: bool, elapsed: float) -> dict:
    from ascentplan.pipeline import OBJECTIVE_UNITS

    problem = result.problem
    unit, divisor = OBJECTIVE_UNITS[problem.objective]
    converged = result.solution.status == "optimal"
    row = {"index": int(index), "run": int(run), **changes, "status": result.status,
           "objective": _finite(result.objective_value / divisor) if converged else None,
           "objective_unit": unit, "objective_name": problem.objective,
           "burnout_speed_m_s": None, "burnout_altitude_m": None,
           "verified": bool(result.verification.passed)}
    if converged:
        burnout = result.burnout()
        row["burnout_speed_m_s"] = _finite(burnout["speed_m_s"])
        row["burnout_altitude_m"] = _finite(burnout["altitude_m"])
    for lim in result.limits():
        name = lim["name"]
        row[f"{name}.bound"] = _finite(lim["bound"])
        row[f"{name}.peak"] = _finite(lim["peak"])
        row[f"{name}.unit"] = lim["unit"]
        row[f"{name}.active"] = bool(lim["active"])
        row[f"{name}.shadow_price"] = _finite(lim["shadow_price"])
        row[f"{name}.shadow_price_unit"] = lim["shadow_price_unit"]
    row.update({"iterations": int(result.iterations), "nodes": int(result.nodes),
                "warm_started": bool(warm), "wall_time_s": float(elapsed),
                "worker": _worker_name(), "error": None, "message": result.message})
    return row


def _failed_row(index, run, changes, exc: BaseException, elapsed: float,
                prefix: str = "") -> dict:
    trace = "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))
    return {"index": int(index), "run": int(run), **changes, "status": "failed",
            "objective": None, "verified": False, "wall_time_s": float(elapsed),
            "worker": _worker_name(), "error": f"{prefix}{type(exc).__name__}: {exc}",
            "message": "the point raised an error before a result was made",
            "traceback": trace}


# --------------------------------------------------------------------------------------
# study files


def _columns(study: Study, problem: Problem) -> list:
    limits = list(problem.limits.active_names())
    for key in study.change_keys:
        steps = _parse_key(key)
        if steps[0] == "limits" and len(steps) == 2 and steps[1] not in limits:
            limits.append(steps[1])
    limits = [name for name in LIMIT_UNITS if name in limits]
    cols = ["index", "run", *study.change_keys, "status", "objective", "objective_unit",
            "objective_name", "burnout_speed_m_s", "burnout_altitude_m", "verified"]
    for name in limits:
        cols += [f"{name}.{part}" for part in ("bound", "peak", "unit", "active",
                                               "shadow_price", "shadow_price_unit")]
    return cols + ["iterations", "nodes", "warm_started", "wall_time_s", "worker", "error",
                   "message"]


def _change_keys_of(row: dict) -> list:
    return [k for k in row if "." in k and re.split(r"[.\[]", k)[0] in _PROBLEM_FIELDS]


def _atomic_write(path: Path, text: str) -> None:
    tmp = path.with_name(path.name + ".tmp")
    with open(tmp, "w", encoding="utf-8", newline="") as fh:
        fh.write(text)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)


def _read_jsonl(path: Path) -> dict:
    """Rows by index (a later row of an index supersedes an earlier one). A last line cut
    short by an interruption is dropped (its point is solved again)."""
    if not path.exists():
        return {}
    text = path.read_text(encoding="utf-8")
    lines = text.split("\n")
    rows: dict = {}
    for number, line in enumerate(lines, start=1):
        if not line.strip():
            continue
        try:
            row = json.loads(line)
            index = row["index"]
            if isinstance(index, bool) or not isinstance(index, int):
                raise ValueError("index")
        except (ValueError, KeyError, TypeError):
            if number == len(lines) and not text.endswith("\n"):
                kept = "\n".join(lines[:-1])
                _atomic_write(path, kept + "\n" if kept else "")
                break
            raise StudyError(f"{path}: line {number} is not a study row (expected a JSON "
                             f"object with an integer 'index'); repair or remove the "
                             f"line") from None
        rows[index] = row
    return rows


def _csv_text(rows, columns, header: bool) -> str:
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=columns, extrasaction="ignore", restval="")
    if header:
        writer.writeheader()
    for row in rows:
        writer.writerow({k: ("" if v is None else v) for k, v in row.items()})
    return buffer.getvalue()


class _StudyFiles:
    """The three files of a study folder; rows are appended and flushed to disk at once."""

    def __init__(self, out_dir: Path, columns: list):
        self.dir = out_dir
        self.jsonl = out_dir / STUDY_JSONL
        self.csv = out_dir / STUDY_CSV
        self.meta = out_dir / STUDY_JSON
        self.columns = columns

    def rebuild_csv(self, rows) -> None:
        _atomic_write(self.csv, _csv_text(rows, self.columns, header=True))

    def append(self, rows) -> None:
        lines = "".join(json.dumps(_json_safe(row), allow_nan=False) + "\n" for row in rows)
        with open(self.jsonl, "a", encoding="utf-8") as fh:
            fh.write(lines)
            fh.flush()
            os.fsync(fh.fileno())
        with open(self.csv, "a", encoding="utf-8", newline="") as fh:
            fh.write(_csv_text(rows, self.columns, header=False))
            fh.flush()


def _json_safe(row: dict) -> dict:
    out = {}
    for key, value in row.items():
        if isinstance(value, float) and not math.isfinite(value):
            value = None
        elif isinstance(value, np.generic):
            value = value.item()
        out[key] = value
    return out


def _check_existing(study: Study, out_dir: Path, digest: str, rows: dict) -> None:
    meta_path = out_dir / STUDY_JSON
    if meta_path.exists():
        try:
            meta = json.loads(meta_path.read_text(encoding="utf-8"))
        except ValueError:
            raise StudyError(f"{meta_path}: not a readable study description; remove it to "
                             f"start the study again") from None
        if meta.get("problem_sha256") not in (None, digest):
            raise StudyError(f"out_dir: {out_dir} holds a study of a different problem file "
                             f"(SHA-256 {str(meta.get('problem_sha256'))[:12]}..., now "
                             f"{digest[:12]}...); choose another folder, or restore the file "
                             f"to resume")
    for index, row in sorted(rows.items()):
        if not 0 <= index < len(study.points):
            raise StudyError(f"out_dir: {out_dir}/{STUDY_JSONL} has a row for point {index}, "
                             f"but this study has {len(study.points)} points; choose another "
                             f"folder")
        point = study.points[index]
        recorded = {k: row[k] for k in _change_keys_of(row)}
        if recorded != point:
            raise StudyError(f"out_dir: {out_dir}/{STUDY_JSONL} row {index} was computed for "
                             f"{recorded} but point {index} of this study is {point}; choose "
                             f"another folder for a different study")


# --------------------------------------------------------------------------------------
# executors: local processes or a Dask cluster, behind the concurrent.futures interface


def _lost_worker(exc: BaseException) -> bool:
    """True when a task died with its worker process (not when the task raised)."""
    return isinstance(exc, BrokenProcessPool) or type(exc).__name__ == "KilledWorker"


@contextmanager
def _executor(workers, scheduler):
    if scheduler is None:
        count = workers or os.cpu_count() or 1
        # spawn: a fresh interpreter per worker, as on a cluster, and safe when the parent
        # runs threads (fork copies their locks)
        pool = ProcessPoolExecutor(max_workers=count,
                                   mp_context=multiprocessing.get_context("spawn"))
        try:
            yield pool, count, f"{count} local worker process{'es' if count > 1 else ''}"
        finally:
            pool.shutdown(wait=True, cancel_futures=True)
        return
    try:
        import distributed
    except ImportError:
        raise StudyError("scheduler: running on a Dask scheduler needs the distributed "
                         "package; install it with: pip install ascentplan[cluster]") from None
    own = isinstance(scheduler, str)
    if own:
        try:
            client = distributed.Client(scheduler, timeout="20s")
        except (OSError, TimeoutError, ValueError) as exc:
            raise StudyError(f"scheduler: cannot reach the Dask scheduler at {scheduler!r}: "
                             f"{exc}") from None
    elif hasattr(scheduler, "get_executor") and hasattr(scheduler, "nthreads"):
        client = scheduler
    else:
        raise StudyError(f"scheduler: expected an address such as 'tcp://127.0.0.1:8786' or "
                         f"a distributed.Client, got {scheduler!r}")
    try:
        threads = client.nthreads()
        if not threads:
            raise StudyError(f"scheduler: the Dask scheduler at {client.scheduler.address} "
                             f"has no workers")
        count = sum(threads.values())
        pool = client.get_executor(pure=False)
        yield pool, count, (f"Dask scheduler {client.scheduler.address}: {len(threads)} "
                            f"workers, {count} threads")
    finally:
        if own:
            client.close()


def _chunks(items: list, workers: int, chunk_size: int | None) -> list:
    if chunk_size is None:
        chunk_size = max(1, min(MAX_CHUNK, math.ceil(len(items) / workers)))
    return [items[i:i + chunk_size] for i in range(0, len(items), chunk_size)]


class _Progress:
    """tqdm when it is installed, else one line per finished point on stderr."""

    def __init__(self, enabled: bool, total: int, done: int, name: str):
        self.enabled, self.total, self.count = enabled, total, done
        self.bar = None
        if not enabled:
            return
        try:
            from tqdm import tqdm
        except ImportError:
            return
        self.bar = tqdm(total=total, initial=done, desc=name, unit="point", file=sys.stderr)

    def note(self, text: str) -> None:
        if self.enabled:
            (self.bar.write if self.bar is not None else _stderr)(text)

    def point(self, row: dict) -> None:
        self.count += 1
        if not self.enabled:
            return
        if self.bar is not None:
            self.bar.update(1)
            return
        if row.get("error"):
            what = f"failed: {row['error']}"
        elif row.get("objective") is not None:
            what = f"{row['status']}, objective {row['objective']:.6g} {row['objective_unit']}"
        else:
            what = row["status"]
        _stderr(f"[{self.count}/{self.total}] point {row['index']}: {what} "
                f"({row.get('wall_time_s', 0.0):.2f} s)")

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


def _stderr(text: str) -> None:
    print(text, file=sys.stderr, flush=True)


def run_study(study: Study, out_dir, *, workers: int | None = None, scheduler=None,
              progress: bool = True, chunk_size: int | None = None,
              retry_failed: bool = False) -> list:
    """Solve every point of a study that ``out_dir`` does not hold yet.

    Points are cut into chunks of neighbouring points (up to :data:`MAX_CHUNK`); each
    chunk is one task, solved in order in one worker so that each point warm-starts from
    the previous one and reuses the built NLP. Rows are appended to ``study.jsonl`` and
    ``study.csv`` as each task finishes. Points whose index is already in
    ``study.jsonl`` are skipped, so running an interrupted study again resumes it.

    Parameters
    ----------
    study : Study
    out_dir : str or pathlib.Path
        The study folder (created if missing).
    workers : int, optional
        Local worker processes (default ``os.cpu_count()``). Not with ``scheduler``.
        They are started fresh (``spawn``), so a script that calls this function must
        do so under ``if __name__ == "__main__":``.
    scheduler : str or distributed.Client, optional
        Run on an existing Dask distributed cluster: the scheduler address
        (``"tcp://127.0.0.1:8786"``) or a connected client. The same chunk function runs
        there; each worker must import ascentplan and see the problem file at
        ``study.problem_path``. Give Dask workers one thread each (``--nthreads 1``):
        solves in one worker process take turns.
    progress : bool
        A progress bar (tqdm, if installed) or one line per point on stderr.
    chunk_size : int, optional
        Points per task; default: the remaining points shared among the workers, at most
        :data:`MAX_CHUNK`. The chunks, hence the warm starts, depend only on the points,
        the chunk size and the number of workers, not on where the tasks run.
    retry_failed : bool
        Also solve again the points whose earlier row records a raised error.

    Returns
    -------
    list of dict
        One row per point of the study, by index (see the module docstring for the
        files). Row keys: ``index``, ``run`` (1 for the first run of the folder, 2 for the
        first resume, ...), the point's change keys (SI), ``status`` (a result status,
        or ``failed`` with ``error`` set when the point raised), ``objective`` (in
        ``objective_unit``; None unless the solver converged), ``burnout_speed_m_s``,
        ``burnout_altitude_m``, ``verified``, per limit ``<name>.bound``, ``.peak``,
        ``.unit``, ``.active``, ``.shadow_price`` (in ``.shadow_price_unit``),
        ``iterations``, ``nodes``, ``warm_started``, ``wall_time_s``, ``worker``,
        ``error``, ``message``.

    Raises
    ------
    StudyError
        For bad arguments, unknown key paths (before anything runs), or a folder that
        holds another study.
    StudyIncomplete
        When worker processes died and some points were not run; the finished rows are
        written.
    """
    from ascentplan.problem.loader import load_problem

    if not isinstance(study, Study):
        raise StudyError(f"study: expected a Study, got {study!r}")
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int)
                                or workers < 1):
        raise StudyError(f"workers: expected a whole number >= 1, got {workers!r}")
    if workers is not None and scheduler is not None:
        raise StudyError(f"workers: give workers ({workers}) for local processes or a "
                         f"scheduler ({scheduler!r}), not both; a Dask cluster has its own "
                         f"workers")
    if chunk_size is not None and (isinstance(chunk_size, bool)
                                   or not isinstance(chunk_size, int) or chunk_size < 1):
        raise StudyError(f"chunk_size: expected a whole number >= 1, got {chunk_size!r}")
    problem = load_problem(study.problem_path)
    for i, point in enumerate(study.points):
        try:
            check_keys(problem, point)
        except StudyError as exc:
            raise StudyError(f"points[{i}]: {exc}") from None
    digest = _file_digest(study.problem_path)

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    files = _StudyFiles(out, _columns(study, problem))
    if files.csv.exists() and not files.jsonl.exists():
        raise StudyError(f"out_dir: {out} has {STUDY_CSV} but not {STUDY_JSONL}, the record "
                         f"a study resumes from; restore it or choose another folder")
    existing = _read_jsonl(files.jsonl)
    _check_existing(study, out, digest, existing)
    keep = {i: r for i, r in existing.items() if not (retry_failed and r.get("error"))}
    run = 1 + max((int(r.get("run", 0)) for r in existing.values()), default=0)
    _atomic_write(files.meta, json.dumps({
        "name": study.name, "problem_path": study.problem_path, "problem_sha256": digest,
        "points": study.points, "columns": files.columns,
        "objective_unit": _objective_unit(problem),
        "limit_units": {name: LIMIT_UNITS[name][0] for name in LIMIT_UNITS},
    }, indent=1) + "\n")
    files.rebuild_csv([keep[i] for i in sorted(keep)])

    todo = [(i, p) for i, p in enumerate(study.points) if i not in keep]
    rows = dict(keep)
    if not todo:
        return [rows[i] for i in sorted(rows)]
    bar = _Progress(progress, len(study.points), len(keep), study.name)
    lost: list = []
    lost_reason = ""
    try:
        with _executor(workers, scheduler) as (pool, count, where):
            chunks = _chunks(todo, count, chunk_size)
            bar.note(f"{study.name}: {len(todo)} of {len(study.points)} points to solve on "
                     f"{where}, {len(chunks)} task(s); {len(keep)} already in {out}")
            futures = {pool.submit(_solve_chunk, study.problem_path, digest, chunk, run): chunk
                       for chunk in chunks}
            try:
                for future in as_completed(futures):
                    chunk = futures[future]
                    try:
                        new = future.result()
                    except Exception as exc:  # noqa: BLE001
                        if _lost_worker(exc):
                            lost += [i for i, _ in chunk]
                            lost_reason = f"{type(exc).__name__}: {exc}"
                            continue
                        new = [_failed_row(i, run, p, exc, 0.0,
                                           prefix="the worker could not run the task: ")
                               for i, p in chunk]
                    files.append(new)
                    for row in new:
                        rows[row["index"]] = row
                        bar.point(row)
            except KeyboardInterrupt:
                for future in futures:
                    future.cancel()
                _stderr(f"interrupted: {len(rows)} of {len(study.points)} points are in "
                        f"{out}/{STUDY_JSONL}; run the study again to resume")
                raise
    finally:
        bar.close()
    ordered = [rows[i] for i in sorted(rows)]
    if lost:
        raise StudyIncomplete(
            f"{len(lost)} of {len(study.points)} points were not run because worker "
            f"processes were lost ({lost_reason}); the {len(rows)} finished rows are in "
            f"{out}/{STUDY_JSONL}; run the study again to resume", sorted(lost), ordered)
    return ordered


def _objective_unit(problem: Problem) -> str:
    from ascentplan.pipeline import OBJECTIVE_UNITS

    return OBJECTIVE_UNITS[problem.objective][0]


# --------------------------------------------------------------------------------------
# summaries


def _sweep_limit(rows) -> str | None:
    """The limit a study sweeps alone, or None."""
    keys = {tuple(_change_keys_of(r)) for r in rows}
    if len(keys) != 1:
        return None
    (only,) = keys
    if len(only) == 1 and only[0].startswith("limits.") and only[0][7:] in LIMIT_UNITS:
        return only[0][7:]
    return None


def sweep_slopes(rows) -> list:
    """Finite-difference slopes of the objective against the bound of a one-limit sweep.

    For each pair of neighbouring bounds (sorted) whose points both converged: the slope
    (objective difference over bound difference) in the shadow price's unit (objective
    unit per limit user unit), next to the shadow prices reported at both ends. At a
    smooth optimum the slope lies near the mean of the two prices (exactly between them
    when the objective is concave in the bound).

    Returns
    -------
    list of dict
        Keys ``lower_index``, ``upper_index``, ``lower_bound``, ``upper_bound`` (user
        unit), ``slope``, ``lower_price``, ``upper_price``, ``mean_price``. Empty when the
        rows are not a one-limit sweep.
    """
    name = _sweep_limit(rows)
    if name is None:
        return []
    factor = LIMIT_UNITS[name][1]
    key = f"limits.{name}"
    ordered = sorted(rows, key=lambda r: r[key])
    out = []
    for a, b in zip(ordered, ordered[1:]):
        x_a, x_b = a[key] / factor, b[key] / factor
        usable = all(r.get("objective") is not None and
                     r.get(f"{name}.shadow_price") is not None for r in (a, b))
        if not usable or x_b == x_a:
            continue
        p_a, p_b = a[f"{name}.shadow_price"], b[f"{name}.shadow_price"]
        out.append({"lower_index": a["index"], "upper_index": b["index"],
                    "lower_bound": x_a, "upper_bound": x_b,
                    "slope": (b["objective"] - a["objective"]) / (x_b - x_a),
                    "lower_price": p_a, "upper_price": p_b, "mean_price": 0.5 * (p_a + p_b)})
    return out


def _fmt(value: Any, spec: str = ".6g") -> str:
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return format(value, spec)
    return str(value)


def _table(header: list, lines: list) -> list:
    widths = [max(len(h), *(len(line[i]) for line in lines)) if lines else len(h)
              for i, h in enumerate(header)]
    text = ["  ".join(h.rjust(w) for h, w in zip(header, widths))]
    text += ["  ".join(c.rjust(w) for c, w in zip(line, widths)) for line in lines]
    return text


def _elide(lines: list, max_rows: int, total: int) -> list:
    if len(lines) <= max_rows:
        return lines
    half = max(1, max_rows // 2)
    return lines[:half] + [f"... {total - 2 * half} rows not shown (all in {STUDY_CSV})"] + \
        lines[-half:]


def summarise_study(rows, *, max_rows: int = 40) -> str:
    """A readable table of a study's rows.

    For a one-limit sweep: the objective against the bound, the peak, the shadow price,
    and the finite-difference slope from the previous bound next to the mean of the two
    shadow prices (they should agree where the optimum is smooth in the bound). For other
    studies: the changes and the objective per point, then the statistics of the
    objective over the converged points and, per varied key, its correlation with the
    objective and the objective change per 1 % change of the key (least squares).

    Parameters
    ----------
    rows : list of dict
        Rows as returned by :func:`run_study` (or read from ``study.jsonl``).
    max_rows : int
        Tables longer than this show their first and last rows only.
    """
    rows = sorted(rows, key=lambda r: r["index"])
    if not rows:
        return "no points"
    counts: dict = {}
    for r in rows:
        counts[r["status"]] = counts.get(r["status"], 0) + 1
    raised = sum(1 for r in rows if r.get("error"))
    unit = next((r["objective_unit"] for r in rows if r.get("objective_unit")), "")
    objective = next((r["objective_name"] for r in rows if r.get("objective_name")), "objective")
    head = [f"{len(rows)} points: " + ", ".join(f"{n} {s}" for s, n in counts.items())
            + (f" ({raised} raised an error; see the error column)" if raised else "")]
    name = _sweep_limit(rows)
    if name is not None:
        return "\n".join(head + _sweep_table(rows, name, objective, unit, max_rows))
    return "\n".join(head + _generic_table(rows, objective, unit, max_rows))


def _sweep_table(rows, name, objective, unit, max_rows) -> list:
    limit_unit, factor = LIMIT_UNITS[name]
    price_unit = f"{unit} per {limit_unit}"
    key = f"limits.{name}"
    slopes = {s["upper_index"]: s for s in sweep_slopes(rows)}
    lines = []
    for r in sorted(rows, key=lambda r: r[key]):
        s = slopes.get(r["index"])
        check = "-"
        if s is not None and s["mean_price"]:
            check = f"{100.0 * (s['slope'] / s['mean_price'] - 1.0):+.1f} %"
        lines.append([str(r["index"]), _fmt(r[key] / factor), r["status"],
                      _fmt(r.get("objective"), ".7g"), _fmt(r.get(f"{name}.peak"), ".5g"),
                      _fmt(r.get(f"{name}.active")), _fmt(r.get(f"{name}.shadow_price"), ".5g"),
                      _fmt(None if s is None else s["slope"], ".5g"),
                      _fmt(None if s is None else s["mean_price"], ".5g"), check,
                      _fmt(r.get("verified"))])
    header = ["index", f"{name} [{limit_unit}]", "status", f"{objective} [{unit}]",
              f"peak [{limit_unit}]", "active", f"shadow price [{price_unit}]",
              "slope from previous", "mean price of pair", "slope vs price", "verified"]
    table = _elide(_table(header, lines), max_rows + 1, len(lines))
    return table + [f"slope from previous: finite difference of the objective between "
                    f"neighbouring bounds [{price_unit}], to compare with the mean of the "
                    f"two shadow prices"]


def _generic_table(rows, objective, unit, max_rows) -> list:
    keys = list(dict.fromkeys(k for r in rows for k in _change_keys_of(r)))
    lines = [[str(r["index"]), *(_fmt(r.get(k)) for k in keys), r["status"],
              _fmt(r.get("objective"), ".7g"), _fmt(r.get("verified")),
              _fmt(r.get("iterations")), _fmt(r.get("wall_time_s"), ".2f")] for r in rows]
    header = ["index", *keys, "status", f"{objective} [{unit}]", "verified", "iterations",
              "time [s]"]
    out = _elide(_table(header, lines), max_rows + 1, len(lines))
    good = [r for r in rows if r.get("objective") is not None and r["status"] == "optimal"]
    if len(good) < 2:
        return out
    y = np.array([r["objective"] for r in good])
    p5, p50, p95 = np.percentile(y, [5, 50, 95])
    out.append(f"{objective} over {len(good)} optimal points [{unit}]: mean {y.mean():.6g}, "
               f"standard deviation {y.std(ddof=1):.4g}, min {y.min():.6g}, 5 % {p5:.6g}, "
               f"median {p50:.6g}, 95 % {p95:.6g}, max {y.max():.6g}")
    for k in keys:
        x = np.array([r.get(k, np.nan) for r in good], dtype=float)
        ok = np.isfinite(x)
        if ok.sum() < 3 or np.std(x[ok]) == 0.0 or np.std(y[ok]) == 0.0:
            continue
        xs, ys = x[ok], y[ok]
        corr = float(np.corrcoef(xs, ys)[0, 1])
        slope = float(np.polyfit(xs, ys, 1)[0])
        out.append(f"  {k}: correlation {corr:+.3f}, {slope * 0.01 * abs(xs.mean()):+.4g} "
                   f"{unit} per +1 % (least squares)")
    return out


# --------------------------------------------------------------------------------------
# command line


def _parse_dispersion(spec) -> dict:
    """{key: (kind, spread)} from a dict or from strings 'KEY=KIND:SPREAD' ('2%' or 0.02)."""
    if isinstance(spec, dict):
        return spec
    if isinstance(spec, str):
        spec = [spec]
    out = {}
    for i, item in enumerate(spec or []):
        match = re.match(r"^\s*([^=\s]+)\s*=\s*(\w+)\s*:\s*([-+0-9.eE]+)\s*(%?)\s*$", str(item))
        if match is None:
            raise StudyError(f"dispersion[{i}]: expected KEY=KIND:SPREAD such as "
                             f"'vehicle.stages[0].thrust_vacuum=normal:2%', got {item!r}")
        key, kind, number, percent = match.groups()
        try:
            size = float(number) / (100.0 if percent else 1.0)
        except ValueError:
            raise StudyError(f"dispersion[{i}]: cannot read the spread {number!r} in "
                             f"{item!r}") from None
        out[key] = (kind, size)
    if not out:
        raise StudyError("dispersion: expected at least one KEY=KIND:SPREAD")
    return out


def sweep_command(problem_path, *, limit: str | None = None, values=None, dispersion=None,
                  samples: int | None = None, seed: int = 0, workers: int | None = None,
                  scheduler=None, out=None, retry_failed: bool = False,
                  progress: bool = True) -> int:
    """Run a limit sweep or a dispersion from the command line; print the summary.

    Parameters
    ----------
    problem_path : str
    limit : str, optional
        The limit to sweep, with ``values`` (strings with units, e.g. ``"25 kPa"``, or
        plain numbers in the limit's SI unit: Pa, g0, Pa rad, m).
    dispersion : dict or list of str, optional
        Instead of a limit: ``{key: (kind, spread)}`` or strings
        ``"KEY=KIND:SPREAD"`` (``vehicle.stages[0].thrust_vacuum=normal:2%``), with
        ``samples`` and ``seed``.
    workers, scheduler, retry_failed, progress
        As for :func:`run_study`.
    out : str, optional
        Study folder; default ``results/<problem name>-sweep-<limit>`` or
        ``results/<problem name>-dispersion-seed<seed>``.

    Returns
    -------
    int
        0 when every point finished (whatever its status), 1 when any point raised an
        error or was not run, 2 for bad input.
    """
    from ascentplan.cautions import CAUTION
    from ascentplan.problem.loader import ProblemError, load_problem

    try:
        if (limit is None) == (dispersion is None):
            raise StudyError("give either a limit with values to sweep, or a dispersion "
                             "with a number of samples")
        if limit is not None:
            if dispersion is not None or samples is not None:
                raise StudyError("samples: applies to a dispersion, not to a limit sweep")
            study = limit_sweep(problem_path, limit, values)
            default = f"{load_problem(problem_path).name}-sweep-{limit}"
        else:
            if values is not None:
                raise StudyError("values: applies to a limit sweep, not to a dispersion")
            if samples is None:
                raise StudyError("samples: a dispersion needs a number of samples")
            study = _dispersion_study(problem_path, _parse_dispersion(dispersion), samples,
                                      seed)
            default = f"{load_problem(problem_path).name}-dispersion-seed{seed}"
        folder = Path(out) if out is not None else Path("results") / default
        rows = run_study(study, folder, workers=workers, scheduler=scheduler,
                         progress=progress, retry_failed=retry_failed)
        status = 1 if any(r.get("error") for r in rows) else 0
    except ProblemError as exc:
        for message in exc.messages:
            print(f"{exc.source or problem_path}: {message}", file=sys.stderr)
        return 2
    except StudyError as exc:
        print(f"ascentplan sweep: {exc}", file=sys.stderr)
        return 2
    except StudyIncomplete as exc:
        rows, status = exc.rows, 1
        print(f"ascentplan sweep: {exc}", file=sys.stderr)
    print(f"ascentplan sweep: {study.name}")
    print(summarise_study(rows))
    print(f"rows written to {folder / STUDY_CSV} and {folder / STUDY_JSONL}")
    print(CAUTION)
    return status
