"""The worker side of a study: plain arguments in (the problem file's path and SHA-256, the
points), plain JSON-safe rows out, so that local processes and Dask workers run the same
function and no CasADi object crosses a process boundary."""

from __future__ import annotations

import math
import os
import socket
import threading
import time as _time
import traceback
from typing import Any

from ascentplan.problem.model import Problem
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.study.document import changed_problem, read_document
from ascentplan.study.errors import StudyError
from ascentplan.study.files import file_digest

__all__ = ["failed_row", "solve_chunk", "solve_points", "worker_name"]

#: Dask workers may run several tasks in threads of one process; the NLP cache and the
#: solver are not shared between threads safely, so solves in one process take turns
_SOLVE_LOCK = threading.Lock()
#: the problem document and problem of the file last read, by (path, SHA-256)
_BASES: dict = {}
#: points this process has solved for each study run, by (path, SHA-256, run)
_SOLVED: dict = {}


def worker_name() -> str:
    """host:pid of this process."""
    return f"{socket.gethostname()}:{os.getpid()}"


def _base(path: str, digest: str) -> tuple[dict, Problem]:
    """The study's problem document and problem, read once per process."""
    try:
        found = file_digest(path)
    except OSError as exc:
        raise StudyError(f"{path}: the problem file cannot be read on worker "
                         f"{worker_name()} ({exc.strerror or exc}); every worker must see "
                         f"the file at this path") from None
    if found != digest:
        raise StudyError(f"{path}: the problem file on worker {worker_name()} differs from "
                         f"the one the study started with (SHA-256 {found[:12]}... instead "
                         f"of {digest[:12]}...)")
    key = (path, digest)
    if key not in _BASES:
        _BASES.clear()
        _BASES[key] = read_document(path)
    return _BASES[key]


def solve_points(problem_path: str, digest: str, items: list, run: int,
                 share: int | None = None):
    """Solve neighbouring points in order, each warm-started from the previous converged
    one of the same NLP structure, and yield each row as its point finishes.

    The built NLP stays in the process for the next chunk. Before each point the NLP
    cache is told how many points this process still expects to solve (``share`` less
    those it has solved in this run), so that it expands the NLP's derivatives only when
    that repays its cost.

    Parameters
    ----------
    problem_path : str
    digest : str
        SHA-256 of the problem file when the study started.
    items : list of (int, dict)
        Index and changes of each point.
    run : int
        The run of the study folder that solves them.
    share : int, optional
        Points this process is expected to solve in the whole run (all its chunks).

    Yields
    ------
    dict
        One row per point, in order; a point that raised has its error in its row.
    """
    from ascentplan.optimisation.nlp import structure_key
    from ascentplan.pipeline import NLP_CACHE, solve

    counted = (problem_path, digest, run)
    with _SOLVE_LOCK:
        previous = None
        for index, changes in items:
            solved_here = _SOLVED.get(counted, 0)
            NLP_CACHE.expect(None if share is None else max(1, share - solved_here))
            _SOLVED[counted] = solved_here + 1
            start = _time.perf_counter()
            try:
                document, base = _base(problem_path, digest)
                problem = changed_problem(document, base, changes, problem_path)
                warm = (previous is not None
                        and structure_key(previous.problem) == structure_key(problem))
                result = solve(problem, warm_start=previous if warm else None)
                if warm and result.solution.status != "optimal":
                    # a sweep must not report an artefact of its warm start
                    result, warm = solve(problem), False
                row = _result_row(index, run, changes, result, warm,
                                  _time.perf_counter() - start)
                previous = result if result.solution.status == "optimal" else None
            except Exception as exc:  # noqa: BLE001 - a failed point must not end the study
                row = failed_row(index, run, changes, exc, _time.perf_counter() - start)
                previous = None
            yield row
        NLP_CACHE.expect(None)


def solve_chunk(problem_path: str, digest: str, items: list, run: int,
                share: int | None = None) -> list:
    """The rows of :func:`solve_points` as one list, for a task that answers once (a Dask
    task).

    Returns
    -------
    list of dict
        One row per point, in order.
    """
    return list(solve_points(problem_path, digest, items, run, share))


def _finite(value: Any):
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _limit_columns(result) -> dict:
    columns = {}
    for lim in result.limits():
        name = lim["name"]
        columns[f"{name}.bound"] = _finite(lim["bound"])
        columns[f"{name}.peak"] = _finite(lim["peak"])
        columns[f"{name}.unit"] = lim["unit"]
        columns[f"{name}.active"] = bool(lim["active"])
        columns[f"{name}.shadow_price"] = _finite(lim["shadow_price"])
        columns[f"{name}.shadow_price_unit"] = lim["shadow_price_unit"]
    return columns


def _exchange_ratios(result) -> list:
    """d(objective)/d(input) per input of the result (``Result.exchange_ratios()``, where
    the result has them), as JSON-safe entries of the study row."""
    found = getattr(result, "exchange_ratios", None)
    entries = found() if callable(found) else found
    return [{"input": e.get("input"), "value": _finite(e.get("value")),
             "unit": e.get("unit"), "objective_unit": e.get("objective_unit"),
             "input_unit": e.get("input_unit")}
            for e in entries or [] if isinstance(e, dict)]


def _result_row(index, run, changes, result, warm: bool, elapsed: float) -> dict:
    problem = result.problem
    spec = OBJECTIVE_SPECS[problem.objective]
    converged = result.solution.status == "optimal"
    row = {"index": int(index), "run": int(run), **changes, "status": result.status,
           "objective": _finite(result.objective_value / spec.divisor) if converged else None,
           "objective_unit": spec.unit, "objective_name": problem.objective,
           "burnout_speed_m_s": None, "burnout_altitude_m": None,
           "verified": bool(result.verification.passed)}
    if converged:
        burnout = result.burnout()
        row["burnout_speed_m_s"] = _finite(burnout["speed_m_s"])
        row["burnout_altitude_m"] = _finite(burnout["altitude_m"])
    row.update(_limit_columns(result))
    row["exchange_ratios"] = _exchange_ratios(result)
    row.update({"iterations": int(result.iterations), "nodes": int(result.nodes),
                "warm_started": bool(warm), "wall_time_s": float(elapsed),
                "worker": worker_name(), "error": None, "message": result.message})
    return row


def failed_row(index, run, changes, exc: BaseException, elapsed: float,
               prefix: str = "") -> dict:
    """The row of a point that raised: status ``failed``, the error and its traceback."""
    trace = "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))
    return {"index": int(index), "run": int(run), **changes, "status": "failed",
            "objective": None, "verified": False, "wall_time_s": float(elapsed),
            "worker": worker_name(), "error": f"{prefix}{type(exc).__name__}: {exc}",
            "message": "the point raised an error before a result was made",
            "traceback": trace}
