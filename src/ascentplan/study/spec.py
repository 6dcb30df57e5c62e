"""What a trade study solves: a problem file and the points at which to solve it, made by
hand, as a sweep of one limit, or as a seeded dispersion of problem data."""

from __future__ import annotations

import difflib
import math
import numbers
import os
import zlib
from dataclasses import dataclass
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
    read_document,
)
from ascentplan.study.errors import StudyError

__all__ = ["DISPERSION_KINDS", "Study", "check_points", "dispersion", "limit_sweep"]

DISPERSION_KINDS = ("normal", "uniform")


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
            for key in point:
                parse_key(key)
            clean.append({key: _point_value(i, key, value) for key, value in point.items()})
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


def limit_sweep(problem_path, limit_name: str, values) -> Study:
    """A study of one limit at several values.

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
    unit = LIMITS[limit_name].si_unit
    si = []
    for i, value in enumerate(values):
        try:
            si.append(to_si(value, unit, f"values[{i}]"))
        except UnitError as exc:
            raise StudyError(str(exc)) from None
        except Exception as exc:  # noqa: BLE001 - any error of the unit parser means the
            # text cannot be read; it is told as a message about the value, never a traceback
            raise StudyError(f"values[{i}]: cannot read {value!r} as a value of "
                             f"{limit_name} ({type(exc).__name__}: {exc})") from None
    document, problem = read_document(problem_path)
    key = f"limits.{limit_name}"
    check_keys(document, [key], str(problem_path))
    return Study(problem_path, [{key: v} for v in si],
                 name=f"{problem.name}: {limit_name} sweep")


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
        Values as plain numbers in the loader's unit for each key (SI; a limit in its
        ``si_unit``).
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
    points = [{key: columns[key][i] for key in columns} for i in range(samples)]
    return Study(problem_path, points,
                 name=f"{problem.name}: dispersion, {samples} samples, seed {seed}")
