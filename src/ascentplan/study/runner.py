"""Running a study: points cut into chunks of neighbours, solved on local worker processes
or a Dask distributed cluster behind the one ``concurrent.futures`` interface, rows
written as each chunk finishes."""

from __future__ import annotations

import math
import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from contextlib import contextmanager
from pathlib import Path

from ascentplan.study.document import checked_problem, read_document
from ascentplan.study.errors import StudyError, StudyIncomplete, StudyInterrupted
from ascentplan.study.files import StudyFiles, file_digest, study_columns
from ascentplan.study.progress import Progress
from ascentplan.study.spec import Study
from ascentplan.study.worker import failed_row, solve_chunk

__all__ = ["MAX_CHUNK", "run_study"]

#: largest number of neighbouring points solved in one task: the first point of a chunk is
#: solved cold, the others warm-started from their predecessor; an interrupted study loses
#: at most the chunks in flight
MAX_CHUNK = 8


# --------------------------------------------------------------------------------------
# executors: local processes or a Dask cluster, behind the concurrent.futures interface


def _lost_worker(exc: BaseException) -> bool:
    """True when a task died with its worker process (not when the task raised)."""
    return isinstance(exc, BrokenProcessPool) or type(exc).__name__ == "KilledWorker"


@contextmanager
def _local_pool(workers):
    count = workers or os.cpu_count() or 1
    # spawn: a fresh interpreter per worker, as on a cluster, and safe when the parent
    # runs threads (fork copies their locks)
    pool = ProcessPoolExecutor(max_workers=count,
                               mp_context=multiprocessing.get_context("spawn"))
    try:
        yield pool, count, f"{count} local worker process{'es' if count > 1 else ''}"
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _dask_client(scheduler):
    """(client, whether this study opened it) for an address or a connected client."""
    try:
        import distributed
    except ImportError:
        raise StudyError("scheduler: running on a Dask scheduler needs the distributed "
                         "package; install it with: pip install ascentplan[cluster]") from None
    if isinstance(scheduler, str):
        try:
            return distributed.Client(scheduler, timeout="20s"), True
        except (OSError, TimeoutError, ValueError) as exc:
            raise StudyError(f"scheduler: cannot reach the Dask scheduler at {scheduler!r}: "
                             f"{exc}") from None
    if hasattr(scheduler, "get_executor") and hasattr(scheduler, "nthreads"):
        return scheduler, False
    raise StudyError(f"scheduler: expected an address such as 'tcp://127.0.0.1:8786' or "
                     f"a distributed.Client, got {scheduler!r}")


@contextmanager
def _executor(workers, scheduler):
    """(pool, number of workers, where they run) for local processes or a Dask cluster."""
    if scheduler is None:
        with _local_pool(workers) as local:
            yield local
        return
    client, own = _dask_client(scheduler)
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


# --------------------------------------------------------------------------------------
# a run


def _check_arguments(study, workers, scheduler, chunk_size) -> None:
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


def _chunk_rows(future, chunk: list, run: int) -> tuple[list, str]:
    """The rows of a finished task, and why its worker was lost ("" when it was not)."""
    try:
        return future.result(), ""
    except Exception as exc:  # noqa: BLE001
        if _lost_worker(exc):
            return [], f"{type(exc).__name__}: {exc}"
        return [failed_row(i, run, p, exc, 0.0, prefix="the worker could not run the task: ")
                for i, p in chunk], ""


def _solve_points(study: Study, digest: str, todo: list, run: int, files: StudyFiles,
                  rows: dict, *, workers, scheduler, chunk_size, progress) -> tuple[list, str]:
    """Solve ``todo`` into ``rows`` and the files; the points lost with their workers, and
    why."""
    bar = Progress(progress, len(study.points), len(rows), study.name)
    lost: list = []
    lost_reason = ""
    try:
        with _executor(workers, scheduler) as (pool, count, where):
            chunks = _chunks(todo, count, chunk_size)
            bar.note(f"{study.name}: {len(todo)} of {len(study.points)} points to solve on "
                     f"{where}, {len(chunks)} task(s); {len(rows)} already in {files.dir}")
            futures = {pool.submit(solve_chunk, study.problem_path, digest, chunk, run): chunk
                       for chunk in chunks}
            try:
                for future in as_completed(futures):
                    new, gone = _chunk_rows(future, futures[future], run)
                    if gone:
                        lost += [i for i, _ in futures[future]]
                        lost_reason = gone
                        continue
                    files.append(new)
                    for row in new:
                        rows[row["index"]] = row
                        bar.point(row)
            except KeyboardInterrupt:
                for future in futures:
                    future.cancel()
                raise StudyInterrupted(
                    f"interrupted: {len(rows)} of {len(study.points)} points are in "
                    f"{files.jsonl}; run the study again to resume",
                    [rows[i] for i in sorted(rows)]) from None
    finally:
        bar.close()
    return lost, lost_reason


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
        One row per point of the study, by index (see :mod:`ascentplan.study.files` for
        the files). Row keys: ``index``, ``run`` (1 for the first run of the folder, 2
        for the first resume, ...), the point's change keys as given, ``status`` (a
        result status, or ``failed`` with ``error`` set when the point raised, e.g. when
        the loader refuses its values), ``objective`` (in ``objective_unit``; None unless
        the solver converged), ``burnout_speed_m_s``, ``burnout_altitude_m``,
        ``verified``, per limit ``<name>.bound``, ``.peak``, ``.unit``, ``.active``,
        ``.shadow_price`` (in ``.shadow_price_unit``), ``iterations``, ``nodes``,
        ``warm_started``, ``wall_time_s``, ``worker``, ``error``, ``message``.

    Raises
    ------
    ProblemError
        For a problem file the loader refuses.
    StudyError
        For bad arguments, unknown key paths (before anything runs), or a folder that
        holds another study.
    StudyIncomplete
        When worker processes died and some points were not run; the finished rows are
        written.
    StudyInterrupted
        On Ctrl-C (a :class:`KeyboardInterrupt`); the finished rows are written.
    """
    _check_arguments(study, workers, scheduler, chunk_size)
    document, problem = read_document(study.problem_path)
    _check_point_keys(study, document)
    digest = file_digest(study.problem_path)

    files = StudyFiles(Path(out_dir), study_columns(study.change_keys, problem))
    existing = files.rows_to_resume(study.points, digest)
    keep = {i: r for i, r in existing.items() if not (retry_failed and r.get("error"))}
    run = 1 + max((int(r.get("run", 0)) for r in existing.values()), default=0)
    files.describe(study, digest, problem)
    files.rebuild_csv([keep[i] for i in sorted(keep)])

    todo = [(i, p) for i, p in enumerate(study.points) if i not in keep]
    rows = dict(keep)
    if not todo:
        return [rows[i] for i in sorted(rows)]
    lost, lost_reason = _solve_points(study, digest, todo, run, files, rows, workers=workers,
                                      scheduler=scheduler, chunk_size=chunk_size,
                                      progress=progress)
    ordered = [rows[i] for i in sorted(rows)]
    if lost:
        raise StudyIncomplete(
            f"{len(lost)} of {len(study.points)} points were not run because worker "
            f"processes were lost ({lost_reason}); the {len(rows)} finished rows are in "
            f"{files.jsonl}; run the study again to resume", sorted(lost), ordered)
    return ordered
