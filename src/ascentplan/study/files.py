"""The files of a study folder, written row by row so that an interrupted study resumes
from what it wrote.

``study.jsonl``
    One JSON object per point, appended as each point arrives: the record a resumed
    study reads. A row of a point retried later supersedes the earlier one.
``study.csv``
    The same rows as a table (one per point), rebuilt from ``study.jsonl`` at the start
    of each run and appended to as rows arrive. Every column of a quantity carries its
    unit in its name, the user unit of its key: a varied input in the unit its values
    are written in (``target.altitude [km]``), a limit in its user unit
    (``limits.max_dynamic_pressure [kPa]``, ``max_dynamic_pressure.peak [kPa]``), the
    objective in the objective's unit (``objective [m/s]``).
``study.json``
    The study: problem file and its SHA-256, the points, the varied inputs, the columns
    with their units; after a run, what the rows say (a dispersion's reserve).

Whole files (``study.json``, a rebuilt ``study.csv``) are written to a temporary file
and renamed over the old one, so a run killed at any instant leaves either file whole.
"""

from __future__ import annotations

import csv
import dataclasses
import hashlib
import io
import json
import math
import os
import re
from pathlib import Path

import numpy as np

from ascentplan.problem.limits import LIMITS
from ascentplan.problem.loader import read_problem_file
from ascentplan.problem.model import Problem
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.problem.units import to_si, ureg
from ascentplan.study.document import parse_key, pint_unit, plain_unit, unit_of_text
from ascentplan.study.errors import StudyError

__all__ = ["STUDY_CSV", "STUDY_JSON", "STUDY_JSONL", "KeyUnit", "StudyFiles", "StudyTable",
           "change_keys_of", "exchange_ratio", "file_digest", "key_units", "read_study",
           "study_columns"]

STUDY_CSV = "study.csv"
STUDY_JSONL = "study.jsonl"
STUDY_JSON = "study.json"

#: the sections of a problem file, which start every change key of a row
_SECTIONS = tuple(f.name for f in dataclasses.fields(Problem))


def file_digest(path: str) -> str:
    """SHA-256 of a file, hexadecimal."""
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def change_keys_of(row: dict) -> list:
    """The change keys of a row, in its order (result columns such as
    ``max_dynamic_pressure.peak`` do not start with a problem-file section)."""
    return [k for k in row if "." in k and re.split(r"[.\[]", k)[0] in _SECTIONS]


def study_columns(change_keys, problem: Problem) -> list:
    """The columns of ``study.csv``: the changes, then the result, then per limit of the
    problem or of the changes its bound, peak, activity and shadow price."""
    names = list(problem.limits.active_names())
    for key in change_keys:
        steps = parse_key(key)
        if steps[0] == "limits" and len(steps) == 2 and steps[1] not in names:
            names.append(steps[1])
    names = [name for name in LIMITS if name in names]
    cols = ["index", "run", *change_keys, "status", "objective", "objective_unit",
            "objective_name", "burnout_speed_m_s", "burnout_altitude_m", "verified"]
    for name in names:
        cols += [f"{name}.{part}" for part in ("bound", "peak", "unit", "active",
                                               "shadow_price", "shadow_price_unit")]
    return cols + ["iterations", "nodes", "warm_started", "wall_time_s", "worker", "error",
                   "message"]


# --------------------------------------------------------------------------------------
# units of the columns


@dataclasses.dataclass(frozen=True)
class KeyUnit:
    """The unit a study shows a changed key in, and the unit the loader reads plain
    numbers in there.

    Attributes
    ----------
    shown : str
        The user unit ('km', 'kPa', '' for a plain number).
    plain : str or None
        The loader's unit of plain numbers at the key ('m', 'Pa'); None when unknown.
    """

    shown: str
    plain: str | None

    @property
    def label(self) -> str:
        return self.shown or "-"

    def user_value(self, value):
        """A point's value (text with a unit, or a plain number in ``plain``) in
        ``shown``; None when it cannot be converted."""
        try:
            if isinstance(value, str):
                return float(to_si(value, pint_unit(self.shown), "value"))
            if value is None or self.plain is None:
                return None
            quantity = ureg.Quantity(float(value), pint_unit(self.plain))
            return float(quantity.to(pint_unit(self.shown)).magnitude)
        except Exception:  # noqa: BLE001 - a value shown blank, never a failed table
            return None


def _file_value(document: dict, key: str):
    node = document
    for step in parse_key(key):
        if isinstance(step, int):
            node = node[step] if isinstance(node, list) and step < len(node) else None
        else:
            node = node.get(step) if isinstance(node, dict) else None
    return node


def key_units(points, document: dict, source_path: str | None = None) -> dict:
    """Per changed key, its :class:`KeyUnit`.

    The unit shown is, in this order: a limit's user unit (:data:`LIMITS`); the unit the
    study's values are written in (the first with a unit); the unit the problem file
    writes the key in; the loader's unit of plain numbers at the key.
    """
    keys = list(dict.fromkeys(k for point in points for k in point))
    out = {}
    for key in keys:
        steps = parse_key(key)
        if steps[0] == "limits" and len(steps) == 2 and steps[1] in LIMITS:
            spec = LIMITS[steps[1]]
            out[key] = KeyUnit(spec.unit, spec.si_unit)
            continue
        plain = plain_unit(document, key, source_path)
        written = [unit_of_text(p[key]) for p in points if key in p]
        shown = next((u for u in written if u), "") or unit_of_text(
            _file_value(document, key)) or (plain or "")
        out[key] = KeyUnit(shown, plain)
    return out


def exchange_ratio(row: dict, key: str, unit: KeyUnit, objective_unit: str):
    """d(objective)/d(input) of a row for a changed key, in the objective's unit per the
    key's shown unit, or None when the row has none.

    A limit's ratio is its shadow price (``<name>.shadow_price``, already per the limit's
    user unit); another key's is the entry of the row's ``exchange_ratios`` whose
    ``input`` is the key, converted from its ``objective_unit`` per ``input_unit``.
    """
    steps = parse_key(key)
    if steps[0] == "limits" and len(steps) == 2 and steps[1] in LIMITS:
        value = row.get(f"{steps[1]}.shadow_price")
        return float(value) if value is not None else None
    entry = next((e for e in row.get("exchange_ratios") or []
                  if isinstance(e, dict) and e.get("input") == key), None)
    if entry is None or entry.get("value") is None:
        return None
    try:
        per_input = ureg.Quantity(1.0, pint_unit(unit.shown or "")).to(
            pint_unit(entry.get("input_unit") or "")).magnitude
        in_objective = ureg.Quantity(1.0, pint_unit(entry.get("objective_unit") or "")).to(
            pint_unit(objective_unit)).magnitude
    except Exception:  # noqa: BLE001 - units that do not convert: no ratio, no tangent
        return None
    return float(entry["value"]) * float(per_input) * float(in_objective)


class StudyTable:
    """The columns of ``study.csv`` with their units, and a row's cells in them.

    Parameters
    ----------
    columns : list of str
        The row keys (:func:`study_columns`).
    units : dict
        :class:`KeyUnit` per changed key (:func:`key_units`).
    objective_unit : str
    ratio_keys : list of str
        Changed keys whose exchange ratio gets a column of its own.
    """

    def __init__(self, columns: list, units: dict, objective_unit: str, ratio_keys=()):
        self.units, self.objective_unit = units, objective_unit
        self.columns, self.ratio_keys = list(columns), list(ratio_keys)
        self.cells: list = []  # (header, function of a row)
        for col in columns:
            self.cells += self._cells_of(col)
            if col == "objective":
                for key in ratio_keys:
                    self.cells.append(self._ratio_cell(key))

    @property
    def header(self) -> list:
        return [h for h, _ in self.cells]

    def _ratio_cell(self, key: str):
        unit = self.units[key]
        return (f"{key}.exchange_ratio [{self.objective_unit} per {unit.label}]",
                lambda r: exchange_ratio(r, key, unit, self.objective_unit))

    def _cells_of(self, col: str) -> list:
        def get(r, c=col):
            return r.get(c)
        if col in self.units:
            unit = self.units[col]
            return [(f"{col} [{unit.label}]", lambda r: unit.user_value(r.get(col)))]
        if col in ("objective_unit",) or col.endswith((".unit", ".shadow_price_unit")):
            return []  # the unit is in the column name
        if col == "objective":
            return [(f"objective [{self.objective_unit}]", get)]
        if col == "burnout_speed_m_s":
            return [("burnout_speed [m/s]", get)]
        if col == "burnout_altitude_m":
            return [("burnout_altitude [km]",
                     lambda r: None if r.get(col) is None else r[col] / 1000.0)]
        if col == "wall_time_s":
            return [("wall_time [s]", get)]
        name, _, part = col.partition(".")
        if name in LIMITS and part in ("bound", "peak"):
            return [(f"{col} [{LIMITS[name].unit}]", get)]
        if name in LIMITS and part == "shadow_price":
            return [(f"{col} [{self.objective_unit} per {LIMITS[name].unit}]", get)]
        return [(col, get)]

    def row(self, row: dict) -> dict:
        """The cells of one row by header (blank where the row has no value)."""
        return {header: cell(row) for header, cell in self.cells}

    @classmethod
    def of_record(cls, meta: dict) -> StudyTable:
        """The table a study recorded in its ``study.json``."""
        units = {k: KeyUnit(**u) for k, u in meta.get("key_units", {}).items()}
        return cls(meta.get("columns", []), units, meta.get("objective_unit", ""),
                   meta.get("ratio_keys", []))

    @classmethod
    def of_study(cls, study, problem: Problem, columns: list) -> StudyTable:
        """The table of a study of ``problem`` (its file is read for the keys' units)."""
        try:
            document = read_problem_file(study.problem_path)
        except Exception:  # noqa: BLE001 - the loader read this file a moment ago
            document = {}
        units = key_units(study.points, document, study.problem_path)
        ratio_keys = [a["key"] for a in getattr(study, "axes", [])
                      if not a["key"].startswith("limits.")]
        return cls(columns, units, OBJECTIVE_SPECS[problem.objective].unit, ratio_keys)


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


def read_study(folder) -> tuple[dict, list]:
    """The record of a study folder: ``study.json`` and the rows of ``study.jsonl`` by
    index.

    Raises
    ------
    StudyError
        For a folder without them, or a record that cannot be read.
    """
    folder = Path(folder)
    try:
        meta = json.loads((folder / STUDY_JSON).read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise StudyError(f"{folder}: cannot read {STUDY_JSON} ({exc}); not a study "
                         f"folder") from None
    rows = _read_jsonl(folder / STUDY_JSONL)
    return meta, [rows[i] for i in sorted(rows)]


def _csv_text(rows, columns, header: bool, table: StudyTable | None = None) -> str:
    buffer = io.StringIO()
    fields = table.header if table is not None else columns
    writer = csv.DictWriter(buffer, fieldnames=fields, extrasaction="ignore", restval="")
    if header:
        writer.writeheader()
    for row in rows:
        cells = table.row(row) if table is not None else row
        writer.writerow({k: ("" if v is None else v) for k, v in cells.items()})
    return buffer.getvalue()


def _json_safe(row: dict) -> dict:
    out = {}
    for key, value in row.items():
        if isinstance(value, float) and not math.isfinite(value):
            value = None
        elif isinstance(value, np.generic):
            value = value.item()
        out[key] = value
    return out


class StudyFiles:
    """The three files of a study folder; rows are appended and flushed to disk at once.

    Parameters
    ----------
    out_dir : pathlib.Path
        The study folder (created if missing).
    columns : list of str
        The columns of ``study.csv`` (:func:`study_columns`).
    """

    def __init__(self, out_dir: Path, columns: list):
        self.dir = out_dir
        self.jsonl = out_dir / STUDY_JSONL
        self.csv = out_dir / STUDY_CSV
        self.meta = out_dir / STUDY_JSON
        self.columns = columns
        #: the columns of study.csv with their units, set by :meth:`describe`
        self.table: StudyTable | None = None
        out_dir.mkdir(parents=True, exist_ok=True)

    def rows_to_resume(self, points: list, digest: str) -> dict:
        """The rows already written, by index, once they are known to belong to a study of
        these points of the same problem file.

        Raises
        ------
        StudyError
            For a folder that holds another study, or a table without its record.
        """
        if self.csv.exists() and not self.jsonl.exists():
            raise StudyError(f"out_dir: {self.dir} has {STUDY_CSV} but not {STUDY_JSONL}, "
                             f"the record a study resumes from; restore it or choose another "
                             f"folder")
        rows = _read_jsonl(self.jsonl)
        self._check_same_file(digest)
        for index, row in sorted(rows.items()):
            self._check_row(index, row, points)
        return rows

    def _check_same_file(self, digest: str) -> None:
        if not self.meta.exists():
            return
        try:
            meta = json.loads(self.meta.read_text(encoding="utf-8"))
        except ValueError:
            raise StudyError(f"{self.meta}: not a readable study description; remove it to "
                             f"start the study again") from None
        if meta.get("problem_sha256") not in (None, digest):
            raise StudyError(f"out_dir: {self.dir} holds a study of a different problem file "
                             f"(SHA-256 {str(meta.get('problem_sha256'))[:12]}..., now "
                             f"{digest[:12]}...); choose another folder, or restore the file "
                             f"to resume")

    def _check_row(self, index: int, row: dict, points: list) -> None:
        if not 0 <= index < len(points):
            raise StudyError(f"out_dir: {self.dir}/{STUDY_JSONL} has a row for point {index}, "
                             f"but this study has {len(points)} points; choose another "
                             f"folder")
        recorded = {k: row[k] for k in change_keys_of(row)}
        if recorded != points[index]:
            raise StudyError(f"out_dir: {self.dir}/{STUDY_JSONL} row {index} was computed for "
                             f"{recorded} but point {index} of this study is {points[index]}; "
                             f"choose another folder for a different study")

    def describe(self, study, digest: str, problem: Problem) -> None:
        """Fix the columns of ``study.csv`` with their units (:class:`StudyTable`) and
        write ``study.json``: the problem file, the kind of study, the varied inputs with
        their values in their units, the points, the columns."""
        self.table = StudyTable.of_study(study, problem, self.columns)
        units = self.table.units
        axes = [{"key": a["key"], "unit": units[a["key"]].shown,
                 "values": [units[a["key"]].user_value(v) for v in a["values"]],
                 "given": a["values"]} for a in getattr(study, "axes", [])]
        _atomic_write(self.meta, json.dumps(_json_safe({
            "name": study.name, "problem_path": study.problem_path, "problem_sha256": digest,
            "problem_name": problem.name, "kind": getattr(study, "kind", "points"),
            "axes": axes, "nominal_index": getattr(study, "nominal_index", None),
            "key_units": {k: dataclasses.asdict(u) for k, u in units.items()},
            "ratio_keys": self.table.ratio_keys,
            "points": study.points, "columns": self.columns,
            "csv_columns": self.table.header,
            "objective_name": problem.objective,
            "objective_unit": OBJECTIVE_SPECS[problem.objective].unit,
            "limit_units": {name: spec.unit for name, spec in LIMITS.items()},
        }), indent=1) + "\n")

    def record_results(self, results: dict) -> None:
        """Add ``results`` (what the rows say, e.g. a dispersion's reserve) to
        ``study.json`` under ``results``, replacing earlier ones."""
        meta = json.loads(self.meta.read_text(encoding="utf-8"))
        meta["results"] = results
        _atomic_write(self.meta, json.dumps(meta, indent=1, allow_nan=False) + "\n")

    def rebuild_csv(self, rows) -> None:
        """Write ``study.csv`` from ``rows`` (temporary file and rename).

        ``study.jsonl`` is made first if missing: a table without its record is a folder
        a study cannot resume from, and a study stopped before its first row must resume.
        """
        self.jsonl.touch(exist_ok=True)
        _atomic_write(self.csv, _csv_text(rows, self.columns, True, self.table))

    def append(self, rows) -> None:
        """Append rows to ``study.jsonl`` (flushed to disk: the record a resume reads),
        then to ``study.csv``."""
        lines = "".join(json.dumps(_json_safe(row), allow_nan=False) + "\n" for row in rows)
        with open(self.jsonl, "a", encoding="utf-8") as fh:
            fh.write(lines)
            fh.flush()
            os.fsync(fh.fileno())
        with open(self.csv, "a", encoding="utf-8", newline="") as fh:
            fh.write(_csv_text(rows, self.columns, False, self.table))
            fh.flush()
