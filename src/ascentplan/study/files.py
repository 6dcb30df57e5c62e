"""The files of a study folder, written row by row so that an interrupted study resumes
from what it wrote.

``study.jsonl``
    One JSON object per point, appended as each point arrives: the record a resumed
    study reads. A row of a point retried later supersedes the earlier one.
``study.csv``
    The same rows as a table (one per point), rebuilt from ``study.jsonl`` at the start
    of each run and appended to as rows arrive.
``study.json``
    The study: problem file and its SHA-256, the points, the columns and their units.

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
from ascentplan.problem.model import Problem
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.study.document import parse_key
from ascentplan.study.errors import StudyError

__all__ = ["STUDY_CSV", "STUDY_JSON", "STUDY_JSONL", "StudyFiles", "change_keys_of",
           "file_digest", "study_columns"]

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
        """Write ``study.json``: the problem file, the points, the columns and units."""
        _atomic_write(self.meta, json.dumps({
            "name": study.name, "problem_path": study.problem_path, "problem_sha256": digest,
            "points": study.points, "columns": self.columns,
            "objective_unit": OBJECTIVE_SPECS[problem.objective].unit,
            "limit_units": {name: spec.unit for name, spec in LIMITS.items()},
        }, indent=1) + "\n")

    def rebuild_csv(self, rows) -> None:
        """Write ``study.csv`` from ``rows`` (temporary file and rename).

        ``study.jsonl`` is made first if missing: a table without its record is a folder
        a study cannot resume from, and a study stopped before its first row must resume.
        """
        self.jsonl.touch(exist_ok=True)
        _atomic_write(self.csv, _csv_text(rows, self.columns, header=True))

    def append(self, rows) -> None:
        """Append rows to ``study.jsonl`` (flushed to disk: the record a resume reads),
        then to ``study.csv``."""
        lines = "".join(json.dumps(_json_safe(row), allow_nan=False) + "\n" for row in rows)
        with open(self.jsonl, "a", encoding="utf-8") as fh:
            fh.write(lines)
            fh.flush()
            os.fsync(fh.fileno())
        with open(self.csv, "a", encoding="utf-8", newline="") as fh:
            fh.write(_csv_text(rows, self.columns, header=False))
            fh.flush()
