"""Study rows as a pandas DataFrame, with the columns and order of ``study.csv``.

pandas is an optional extra (``pip install "ascentplan[pandas]"``); nothing else in the
study needs it.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

from ascentplan.problem.limits import LIMITS
from ascentplan.replay.trajectory import require_pandas
from ascentplan.study.files import STUDY_JSON, STUDY_JSONL, _read_jsonl, change_keys_of

__all__ = ["study_frame"]

#: the unit that a column name's ending states (as the study files name them)
_SUFFIX_UNITS = {"_m_s": "m/s", "_m": "m", "_s": "s", "_kg": "kg"}
#: per-limit columns whose unit is in the row's ``<limit>.unit`` or
#: ``<limit>.shadow_price_unit`` column
_LIMIT_VALUE_PARTS = {"bound": "unit", "peak": "unit", "shadow_price": "shadow_price_unit"}
#: the order of ``study.csv`` (:func:`ascentplan.study.files.study_columns`) around the
#: change keys and the per-limit columns
_HEAD = ("index", "run")
_RESULT = ("status", "objective", "objective_unit", "objective_name", "burnout_speed_m_s",
           "burnout_altitude_m", "verified")
_LIMIT_PARTS = ("bound", "peak", "unit", "active", "shadow_price", "shadow_price_unit")
_TAIL = ("iterations", "nodes", "warm_started", "wall_time_s", "worker", "error", "message")


def study_frame(source):
    """The rows of a trade study as a :class:`pandas.DataFrame`, one row per point.

    Parameters
    ----------
    source : str, pathlib.Path or list of dict
        A study folder (its ``study.jsonl``, with the column order of its
        ``study.json``), or the rows :func:`~ascentplan.study.runner.run_study` returns.

    Returns
    -------
    pandas.DataFrame
        Sorted by ``index``; the columns of ``study.csv`` in its order (``index``,
        ``run``, the change keys, ``status``, ``objective``, ``objective_unit``, ...,
        per limit ``<name>.bound``, ``.peak``, ``.unit``, ``.active``,
        ``.shadow_price``, ``.shadow_price_unit``, then solver columns); a missing value
        is NaN or None. ``frame.attrs["units"]`` maps each column whose values carry a
        unit to that unit (``objective`` to ``objective_unit``'s value, a limit's bound
        and peak to its ``.unit``, ``burnout_speed_m_s`` to ``m/s``, ...).

    Raises
    ------
    ImportError
        When pandas is not installed.
    FileNotFoundError
        For a folder without ``study.jsonl``.
    """
    pd = require_pandas()
    rows, columns = _rows_and_columns(source)
    rows = sorted(rows, key=lambda row: row["index"])
    if not columns:
        columns = _columns_of(rows)
    for row in rows:
        columns += [key for key in row if key not in columns]
    frame = pd.DataFrame([{k: _missing(row.get(k)) for k in columns} for row in rows],
                         columns=columns)
    frame.attrs["units"] = _units(rows, columns)
    return frame


def _rows_and_columns(source) -> tuple[list, list]:
    """The rows, and the column order the study recorded (empty when none is known)."""
    if isinstance(source, (list, tuple)):
        return [dict(row) for row in source], []
    folder = Path(source)
    record = folder / STUDY_JSONL
    if not record.is_file():
        raise FileNotFoundError(f"{folder}: no {STUDY_JSONL} (not a study folder, or no "
                                f"point has finished yet)")
    columns = []
    meta = folder / STUDY_JSON
    if meta.is_file():
        columns = list(json.loads(meta.read_text(encoding="utf-8")).get("columns", []))
    return list(_read_jsonl(record).values()), columns


def _columns_of(rows) -> list:
    """The columns of ``study.csv`` for rows without their study's record of them."""
    keys = {key for row in rows for key in row}
    changes = []
    for row in rows:
        changes += [key for key in change_keys_of(row) if key not in changes]
    limits = [f"{name}.{part}" for name in LIMITS for part in _LIMIT_PARTS]
    order = [*_HEAD, *changes, *_RESULT, *limits, *_TAIL]
    return [key for key in order if key in keys]


def _missing(value):
    """None for a value the study could not give (JSON writes NaN as null)."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _one_unit(rows, column: str):
    """The unit that every row gives in ``column``, or None when rows disagree or give none."""
    units = {row.get(column) for row in rows} - {None, ""}
    return units.pop() if len(units) == 1 else None


def _units(rows, columns) -> dict:
    """Column name to unit, for the columns whose values carry one."""
    units = {}
    for column in columns:
        head, dot, part = column.rpartition(".")
        if column == "objective":
            unit = _one_unit(rows, "objective_unit")
        elif dot and part in _LIMIT_VALUE_PARTS and f"{head}.unit" in columns:
            unit = _one_unit(rows, f"{head}.{_LIMIT_VALUE_PARTS[part]}")
        else:
            unit = next((u for suffix, u in _SUFFIX_UNITS.items() if column.endswith(suffix)),
                        None)
        if unit is not None:
            units[column] = unit
    return units
