"""What a trade study solves: a problem file and the points at which to solve it, made by
hand, as a study of one or two inputs over given values (a grid for two; a sweep of one
limit is one case), or as a seeded dispersion of problem data about the nominal."""

from __future__ import annotations

import difflib
import itertools
import math
import numbers
import os
import re
import zlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ascentplan.problem.limits import LIMITS
from ascentplan.problem.units import UnitError, show, to_si
from ascentplan.study.document import (
    changed_problem,
    check_keys,
    checked_problem,
    file_number,
    holds_whole_number,
    is_number,
    parse_key,
    pint_unit,
    read_document,
    unit_of_text,
)
from ascentplan.study.errors import StudyError

__all__ = ["DISPERSION_KINDS", "MAX_VALUES_PER_KEY", "MAX_VARIED_KEYS", "STUDY_KINDS", "Study",
           "check_points", "dispersion", "limit_sweep", "parse_values", "pint_unit", "vary"]

DISPERSION_KINDS = ("normal", "uniform")
#: what a study is: points given by hand, a study of inputs over values, a dispersion
STUDY_KINDS = ("points", "vary", "dispersion")
#: most inputs varied together; their values make a grid
MAX_VARIED_KEYS = 2
#: most values of one varied input (a list's length or a range's COUNT)
MAX_VALUES_PER_KEY = 1000
#: a plain number as text: '25', '-2.5e3'
_PLAIN = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")


def _point_value(index: int, key: str, value: Any) -> Any:
    """A point's value as the study keeps it: a finite int or float, or text with a unit."""
    if isinstance(value, str) and value.strip():
        return value
    if is_number(value) and math.isfinite(float(value)):
        return int(value) if isinstance(value, numbers.Integral) else float(value)
    raise StudyError(f"points[{index}][{key!r}]: expected a finite number (in the unit the "
                     f"problem file reads plain numbers in) or text with a unit such as "
                     f"'30 kPa', got {value!r}")


@dataclass
class Study:
    """A problem file and the points at which to solve it.

    Attributes
    ----------
    problem_path : str
        The YAML problem file (kept as an absolute path so workers started elsewhere find
        it; on a cluster, every worker must see the file at this path).
    points : list of dict
        Per point, problem-file key path -> value as the file could hold it (see
        :func:`ascentplan.study.document.apply_changes`). The position of a point in the
        list is its ``index`` in the study files.
    name : str
        A title for messages and the summary; default: the file name.
    kind : str
        One of :data:`STUDY_KINDS`: ``'points'`` (given by hand), ``'vary'`` (inputs
        over values, see :func:`vary`), ``'dispersion'`` (see :func:`dispersion`).
    axes : list of dict
        For ``'vary'``: per varied key, ``{"key", "values"}`` (values as given, in the
        order of the points: the first key varies slowest).
    nominal_index : int, optional
        For ``'dispersion'``: the index of the nominal point (the file's own values).
    """

    problem_path: str
    points: list
    name: str = ""
    kind: str = "points"
    axes: list = field(default_factory=list)
    nominal_index: int | None = None

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
            for key in point:
                parse_key(key)
            clean.append({key: _point_value(i, key, value) for key, value in point.items()})
        self.points = clean
        if not self.name:
            self.name = Path(self.problem_path).stem
        if self.kind not in STUDY_KINDS:
            raise StudyError(f"kind: expected one of {', '.join(STUDY_KINDS)}, got "
                             f"{self.kind!r}")
        if self.nominal_index is not None and not 0 <= self.nominal_index < len(clean):
            raise StudyError(f"nominal_index: expected an index of the points (0 to "
                             f"{len(clean) - 1}), got {self.nominal_index!r}")

    @property
    def change_keys(self) -> list:
        """Every key varied by some point, in order of first appearance."""
        keys: dict = {}
        for point in self.points:
            keys.update(dict.fromkeys(point))
        return list(keys)


#: refused points told in full; the others are counted
_REFUSALS_TOLD = 5


def _check_point_keys(study: Study, document: dict) -> None:
    """StudyError for the first point with a key the problem file has no number at."""
    refused = {}
    for key in study.change_keys:
        try:
            checked_problem(document, [key], study.problem_path)
        except StudyError as exc:
            refused[key] = str(exc)
    for i, point in enumerate(study.points):
        for key in point:
            if key in refused:
                raise StudyError("\n".join(f"points[{i}]: {line}"
                                           for line in refused[key].split("\n")))


def _refusal(document: dict, problem, study: Study, i: int) -> list:
    """The loader's messages about point ``i`` (empty when it reads the point)."""
    point = study.points[i]
    try:
        changed_problem(document, problem, point, study.problem_path)
    except StudyError as exc:
        messages = str(exc).split("\n")
    except Exception as exc:  # noqa: BLE001 - the unit parser's own errors: a message
        # naming the point, not a traceback
        messages = [f"cannot read the point's values ({type(exc).__name__}: {exc})"]
    else:
        return []
    told = ", ".join(f"{key} = {value!r}" for key, value in point.items())
    return [f"points[{i}] ({told}): {message}" for message in messages]


def check_points(study: Study, document: dict, problem) -> None:
    """Raise :class:`StudyError` unless the problem loader reads every point.

    Each point's changes are written into the problem document and read back by the
    loader, exactly as a worker will, so that a value the loader refuses stops the study
    before any worker starts or any file is written.

    Parameters
    ----------
    study : Study
    document : dict
        The problem document of ``study.problem_path``.
    problem : Problem
        What the loader reads from the unchanged document.

    Raises
    ------
    StudyError
        For a key the problem file has no number at, or with one line per loader message
        for each refused point (the first few points, then how many more), each naming
        the point, its keys and values, e.g. ``points[1] (limits.max_dynamic_pressure =
        -5000.0): limits.max_dynamic_pressure: must be > 0 kPa, got -5000.0``.
    """
    _check_point_keys(study, document)
    lines: list = []
    refused = 0
    for i in range(len(study.points)):
        told = _refusal(document, problem, study, i)
        if told:
            refused += 1
            if refused <= _REFUSALS_TOLD:
                lines += told
    if refused > _REFUSALS_TOLD:
        lines.append(f"... and {refused - _REFUSALS_TOLD} more points the problem loader "
                     f"refuses")
    if lines:
        raise StudyError("\n".join(lines))


def _closest_limit(name: Any) -> str:
    close = difflib.get_close_matches(str(name), list(LIMITS), n=1)
    return f"; did you mean '{close[0]}'?" if close else ""


def _to_si(value: Any, unit: str, label: str) -> float:
    """``value`` in ``unit``, any fault of the unit parser told as a message naming it."""
    try:
        return to_si(value, pint_unit(unit), label)
    except UnitError as exc:
        raise StudyError(str(exc)) from None
    except Exception as exc:  # noqa: BLE001 - any error of the unit parser means the
        # text cannot be read; it is told as a message about the value, never a traceback
        raise StudyError(f"{label}: cannot read {value!r} as a number with a unit "
                         f"({type(exc).__name__}: {exc})") from None


def _list_value(key: str, i: int, item: Any) -> Any:
    """One value of a list: a plain number, or text with a unit as the file could hold it."""
    if is_number(item):
        if not math.isfinite(float(item)):
            raise StudyError(f"{key} values[{i}]: expected a finite number, got {item!r}")
        return item
    if not isinstance(item, str) or not item.strip():
        raise StudyError(f"{key} values[{i}]: expected a number with a unit such as "
                         f"'30 kPa', got {item!r}")
    if _PLAIN.match(item):
        return _plain_number(key, i, item)
    if not unit_of_text(item):
        raise StudyError(f"{key} values[{i}]: cannot read {item!r} as a number with a "
                         f"unit such as '30 kPa' or '320 s'")
    return item.strip()


def _plain_number(key: str, i: int, text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise StudyError(f"{key} values[{i}]: expected a finite number, got {text!r}")
    return int(value) if value.is_integer() and "." not in text and "e" not in \
        text.lower() else value


def _count(key: str, text: str, given: str) -> int:
    try:
        count = int(text)
    except ValueError:
        count = 0
    if not 2 <= count <= MAX_VALUES_PER_KEY:
        raise StudyError(f"{key}: the COUNT of START:STOP:COUNT must be a whole number from "
                         f"2 to {MAX_VALUES_PER_KEY}, got {text.strip()!r} in {given!r}")
    return count


def _range(key: str, text: str) -> list:
    """The values of 'START:STOP:COUNT': COUNT evenly spaced values in START's unit."""
    parts = text.split(":")
    if len(parts) != 3 or not all(p.strip() for p in parts):
        raise StudyError(f"{key}: expected a range START:STOP:COUNT such as '200km:800km:7' "
                         f"or a list V1,V2,... such as '20 kPa,30 kPa', got {text!r}")
    start, stop, count = (p.strip() for p in parts)
    count = _count(key, count, text)
    unit = unit_of_text(start)
    if not unit and not _PLAIN.match(start):
        raise StudyError(f"{key}: cannot read the START {start!r} of {text!r} as a number "
                         f"with a unit")
    if unit:
        a = _to_si(start, unit, f"{key} (range START)")
        b = _to_si(stop, unit, f"{key} (range STOP)")
    elif _PLAIN.match(stop):
        a, b = float(start), float(stop)
    else:
        raise StudyError(f"{key}: START {start!r} is a plain number but STOP {stop!r} is "
                         f"not; give both with a unit ('200km:800km:7') or neither")
    if a == b:
        raise StudyError(f"{key}: START and STOP of {text!r} are the same value")
    values = np.linspace(a, b, count)
    if not unit:
        return [float(v) for v in values]
    return [f"{float(v):.12g} {unit}" for v in values]


def parse_values(key: str, given: Any) -> list:
    """The values of one varied key.

    Parameters
    ----------
    key : str
        Problem-file key path, e.g. ``target.altitude``.
    given : str or sequence
        ``'V1,V2,...'`` (``'20 kPa,30 kPa'``), ``'START:STOP:COUNT'`` (``'200km:800km:7'``:
        COUNT evenly spaced values from START to STOP, both included, in the unit of
        START), or a list of values. A value is text with a unit or a plain number in
        the unit the problem loader reads plain numbers in at ``key``.

    Returns
    -------
    list
        Plain numbers and texts with units (a range: ``'300 km'``, twelve significant
        digits), not yet checked by the problem loader.
    """
    if isinstance(given, str):
        text = given.strip()
        if ":" in text:
            return _range(key, text)
        items: list = [t.strip() for t in text.split(",")]
    elif isinstance(given, (list, tuple)):
        items = list(given)
    else:
        raise StudyError(f"{key}: expected values 'V1,V2,...' or a range 'START:STOP:COUNT', "
                         f"got {given!r}")
    if not items or items == [""]:
        raise StudyError(f"{key}: expected at least one value, got {given!r}")
    if len(items) > MAX_VALUES_PER_KEY:
        raise StudyError(f"{key}: at most {MAX_VALUES_PER_KEY} values, got {len(items)}")
    return [_list_value(key, i, item) for i, item in enumerate(items)]


def _limit_values(key: str, values: list) -> list:
    """A limit's values as plain numbers in its ``si_unit`` (the unit the loader reads
    plain numbers in there), so that a limit's points read the same however given."""
    spec = LIMITS[key.split(".", 1)[1]]
    return [v if is_number(v) else _to_si(v, spec.si_unit, f"{key} values[{i}]")
            for i, v in enumerate(values)]


def _is_limit_key(key: str) -> bool:
    steps = parse_key(key)
    return steps[0] == "limits" and len(steps) == 2 and steps[1] in LIMITS


def vary(problem_path, inputs: dict, name: str = "") -> Study:
    """A study of one input of a problem file over values, or of two over a grid.

    Parameters
    ----------
    problem_path : str or pathlib.Path
    inputs : dict
        One or two problem-file key paths -> values as for :func:`parse_values`, e.g.
        ``{"target.altitude": "200km:800km:7"}`` or
        ``{"vehicle.stages[1].isp_vacuum": ["320 s", "340 s"],
        "limits.max_dynamic_pressure": "20 kPa,30 kPa"}``.
    name : str, optional
        A title; default ``'<problem name>: <key> [x <key>]'``.

    Returns
    -------
    Study
        Kind ``'vary'``; with two keys, every pair of values, the first key varying
        slowest. A limit's values are plain numbers in its ``si_unit``; other values are
        kept as given (texts with units), so that the loader reads them as it would read
        them in the file. Every value is checked by the loader when the study runs,
        before any worker starts.
    """
    if not isinstance(inputs, dict) or not 1 <= len(inputs) <= MAX_VARIED_KEYS:
        raise StudyError(f"vary: expected one or two keys with their values, got "
                         f"{inputs!r}")
    document, problem = read_document(problem_path)
    check_keys(document, list(inputs), str(problem_path))
    axes = []
    for key, given in inputs.items():
        values = parse_values(key, given)
        if _is_limit_key(key):
            values = _limit_values(key, values)
        if len({repr(v) for v in values}) != len(values):
            raise StudyError(f"{key}: a value is given twice in {given!r}")
        axes.append({"key": key, "values": values})
    keys = [a["key"] for a in axes]
    points = [dict(zip(keys, combo)) for combo in itertools.product(*(a["values"]
                                                                      for a in axes))]
    return Study(problem_path, points, name=name or f"{problem.name}: {' x '.join(keys)}",
                 kind="vary", axes=axes)


def limit_sweep(problem_path, limit_name: str, values) -> Study:
    """A study of one limit at several values: :func:`vary` of ``limits.<name>``.

    Parameters
    ----------
    problem_path : str or pathlib.Path
    limit_name : str
        A name of :data:`ascentplan.problem.limits.LIMITS` (``max_dynamic_pressure``, ...).
    values : sequence of float or str
        Strings with units (``"25 kPa"``), or plain numbers in the limit's ``si_unit``
        (Pa, g0, Pa rad, m), the unit the problem loader reads plain numbers in.

    Returns
    -------
    Study
        One point per value, in the order given, each value in the limit's ``si_unit``.
    """
    if not isinstance(limit_name, str) or limit_name not in LIMITS:
        raise StudyError(f"limit: unknown limit {limit_name!r}{_closest_limit(limit_name)} "
                         f"(valid names: {', '.join(LIMITS)})")
    if isinstance(values, (str, bytes)) or not hasattr(values, "__len__") or not len(values):
        raise StudyError(f"values: expected a non-empty list of values of {limit_name}, got "
                         f"{values!r}")
    key = f"limits.{limit_name}"
    _, problem = read_document(problem_path)
    return vary(problem_path, {key: list(values)}, name=f"{problem.name}: {limit_name} sweep")


def _read_spread(key: str, spec: Any) -> tuple[str, float]:
    if not isinstance(spec, (tuple, list)) or len(spec) != 2:
        raise StudyError(f"spreads[{key!r}]: expected (kind, relative spread) with kind one "
                         f"of {', '.join(DISPERSION_KINDS)}, got {spec!r}")
    kind, size = spec
    if kind not in DISPERSION_KINDS:
        raise StudyError(f"spreads[{key!r}]: unknown kind {kind!r} (valid kinds: "
                         f"{', '.join(DISPERSION_KINDS)})")
    if not is_number(size) or not math.isfinite(float(size)) or size <= 0:
        raise StudyError(f"spreads[{key!r}]: the relative spread must be a number > 0 (0.02 "
                         f"for 2 %), got {size!r}")
    return kind, float(size)


def _nominal(document: dict, problem, key: str) -> float:
    """The value a key disperses about: the file's, as a plain number."""
    nominal = file_number(document, key)
    if nominal is None or nominal == 0:
        written = "nothing" if nominal is None else show(nominal)
        raise StudyError(f"{key}: a relative spread needs a nonzero value in the problem "
                         f"file, got {written}")
    if holds_whole_number(problem, key):
        raise StudyError(f"{key}: holds a whole number ({nominal}); only real-valued "
                         f"data can be dispersed")
    return float(nominal)


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
        Problem-file key path -> (kind, relative spread), e.g.
        ``{"vehicle.stages[0].thrust_vacuum": ("normal", 0.02)}``. The file must give a
        nonzero value at each key.
    samples : int
        Number of points, >= 1.
    seed : int
        Seed of the generator, >= 0.

    Returns
    -------
    Study
        Kind ``'dispersion'``: point 0 is the nominal (the file's values; the reference
        of the reserve, see :func:`ascentplan.study.summary.dispersion_reserve`), points
        1 to ``samples`` the draws. Values as plain numbers in the loader's unit for each
        key (SI; a limit in its ``si_unit``).
    """
    if isinstance(samples, bool) or not isinstance(samples, numbers.Integral) or samples < 1:
        raise StudyError(f"samples: expected a whole number >= 1, got {samples!r}")
    if isinstance(seed, bool) or not isinstance(seed, numbers.Integral) or seed < 0:
        raise StudyError(f"seed: expected a whole number >= 0, got {seed!r}")
    if not isinstance(spreads, dict) or not spreads:
        raise StudyError(f"spreads: expected a mapping of key paths to (kind, relative "
                         f"spread), got {spreads!r}")
    document, problem = read_document(problem_path)
    columns = {}
    for key, spec in spreads.items():
        kind, size = _read_spread(key, spec)
        check_keys(document, [key], str(problem_path))
        nominal = _nominal(document, problem, key)
        rng = np.random.default_rng([int(seed), zlib.crc32(key.encode("utf-8"))])
        draws = (rng.standard_normal(samples) if kind == "normal"
                 else rng.uniform(-1.0, 1.0, samples))
        values = nominal * (1.0 + size * draws)
        columns[key] = [float(v) for v in values]
    nominal = {key: _nominal(document, problem, key) for key in columns}
    points = [nominal] + [{key: columns[key][i] for key in columns} for i in range(samples)]
    return Study(problem_path, points,
                 name=f"{problem.name}: dispersion, {samples} samples, seed {seed}",
                 kind="dispersion", nominal_index=0)
