"""Running a study: points cut into chunks of neighbours, as many chunks for every worker
and as even as they can be, handed to whichever worker is free (local worker processes or
a Dask distributed cluster), each row written as its point arrives; SIGINT and SIGTERM stop
the workers and leave the folder ready to resume.

Measured before the chunks were evened out: a 20-point sweep on 2 workers ran at 0.82 times
the speed of 1 worker, its chunks of 8, 8 and 4 points leaving one worker with 12 points
and each worker paying a derivative expansion that a three-solve rule triggered whether or
not it paid. Now the chunks are 10 and 10, each worker is told how many points it is
expected to solve, so that it expands its derivatives only when they repay the cost
(:meth:`ascentplan.optimisation.nlp.AscentNLP.expansion_pays`), and local workers run
their numerical libraries on one thread (:mod:`ascentplan.study.pool`);
``tests/benchmarks/bench_study.py`` measures the speed-up, beside how much CPU two
processes can get on the machine at the time.
"""

from __future__ import annotations

import math
import os
from concurrent.futures import as_completed
from contextlib import contextmanager
from pathlib import Path

from ascentplan.study.document import read_document
from ascentplan.study.errors import StudyError, StudyIncomplete, StudyInterrupted
from ascentplan.study.files import StudyFiles, file_digest, study_columns
from ascentplan.study.pool import LocalPool
from ascentplan.study.progress import Progress
from ascentplan.study.spec import Study, check_points
from ascentplan.study.stopping import held, stop_on_signals
from ascentplan.study.worker import failed_row, solve_chunk

__all__ = ["MAX_CHUNK", "chunk_points", "run_study"]

#: largest number of neighbouring points solved in one task: the first point of a chunk is
#: solved cold, the others warm-started from their predecessor (a chunk is also what a
#: Dask task answers at once)
MAX_CHUNK = 10


# --------------------------------------------------------------------------------------
# where the points run: local processes or a Dask cluster, both yielding the same events


def _lost_worker(exc: BaseException) -> bool:
    """True when a Dask task died with its worker (not when the task raised)."""
    return type(exc).__name__ == "KilledWorker"


class _DaskPool:
    """The workers of a Dask cluster; a task answers once, with the rows of its chunk."""

    def __init__(self, client, own: bool):
        self.client, self.own = client, own
        threads = client.nthreads()
        if not threads:
            raise StudyError(f"scheduler: the Dask scheduler at {client.scheduler.address} "
                             f"has no workers")
        self.count = sum(threads.values())
        self.where = (f"Dask scheduler {client.scheduler.address}: {len(threads)} workers, "
                      f"{self.count} threads")
        self._futures: dict = {}

    def solve(self, chunks: list, problem_path: str, digest: str, run: int,
              share: int | None = None):
        """As :meth:`ascentplan.study.pool.LocalPool.solve`, a chunk's rows at a time."""
        executor = self.client.get_executor(pure=False)
        self._futures = {executor.submit(solve_chunk, problem_path, digest, chunk, run,
                                         share): chunk
                         for chunk in chunks}
        for future in as_completed(self._futures):
            chunk = self._futures[future]
            try:
                rows = future.result()
            except Exception as exc:  # noqa: BLE001
                if _lost_worker(exc):
                    yield "lost", [i for i, _ in chunk], f"{type(exc).__name__}: {exc}"
                    continue
                rows = [failed_row(i, run, p, exc, 0.0,
                                   prefix="the worker could not run the task: ")
                        for i, p in chunk]
            for row in rows:
                yield "row", row

    def close(self) -> None:
        for future in self._futures:
            future.cancel()
        if self.own:
            self.client.close()


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
def _executor(workers, scheduler, todo: int):
    """The pool of local processes or of a Dask cluster (``count``, ``where``,
    ``solve``) for ``todo`` points."""
    if scheduler is None:
        # no more processes than points: a worker's start costs an interpreter and the
        # solver's imports; the chunks come out the same (one point each) either way
        with LocalPool(min(workers or os.cpu_count() or 1, todo)) as pool:
            yield pool
        return
    client, own = _dask_client(scheduler)
    try:
        pool = _DaskPool(client, own)
    except BaseException:
        if own:
            client.close()
        raise
    try:
        yield pool
    finally:
        pool.close()


def chunk_points(items: list, workers: int, chunk_size: int | None = None) -> list:
    """Cut ``items`` into chunks of neighbouring points, one task each.

    With ``chunk_size``, chunks of that size (the last one shorter). Otherwise as many
    chunks as workers, or the smallest multiple of it that keeps every chunk within
    :data:`MAX_CHUNK` points, with sizes that differ by one point at most: every worker
    then gets the same number of chunks and of points, to within one point, and the
    chunks given out to whichever worker is free even out the differences in speed.
    (Chunks of at most ``MAX_CHUNK`` cut in turn left 20 points as 8, 8 and 4 on two
    workers: one worker solved 12 of them.)
    """
    if not items:
        return []
    if chunk_size is not None:
        return [items[i:i + chunk_size] for i in range(0, len(items), chunk_size)]
    count = min(len(items), workers * math.ceil(len(items) / (workers * MAX_CHUNK)))
    size, longer = divmod(len(items), count)
    chunks, start = [], 0
    for k in range(count):
        end = start + size + (1 if k < longer else 0)
        chunks.append(items[start:end])
        start = end
    return chunks


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


def _record(files: StudyFiles, rows: dict, row: dict) -> None:
    # a stop signal waits until the row is in both files and in the rows returned
    with held():
        files.append([row])
        rows[row["index"]] = row


def _solve_points(study: Study, digest: str, todo: list, run: int, files: StudyFiles,
                  rows: dict, *, workers, scheduler, chunk_size, progress) -> tuple[list, str]:
    """Solve ``todo`` into ``rows`` and the files; the points lost with their workers, and
    why."""
    bar = Progress(progress, len(study.points), len(rows), study.name)
    lost: list = []
    lost_reason = ""
    try:
        with _executor(workers, scheduler, len(todo)) as pool:
            chunks = chunk_points(todo, pool.count, chunk_size)
            # the points each worker is expected to solve: what its derivative expansion
            # must repay
            share = math.ceil(len(todo) / pool.count)
            bar.note(f"{study.name}: {len(todo)} of {len(study.points)} points to solve on "
                     f"{pool.where}, {len(chunks)} task(s); {len(rows)} already in "
                     f"{files.dir}")
            for event in pool.solve(chunks, study.problem_path, digest, run, share):
                if event[0] == "lost":
                    lost += event[1]
                    lost_reason = event[2]
                    bar.note(f"point(s) {', '.join(map(str, event[1]))} lost with their "
                             f"worker ({lost_reason}); a resume solves them again")
                    continue
                _record(files, rows, event[1])
                bar.point(event[1])
    except KeyboardInterrupt as exc:
        # our handler's StudyInterrupted names its signal; a bare KeyboardInterrupt is an
        # interrupt where no handler could be set (a study run outside the main thread)
        stopped = exc if isinstance(exc, StudyInterrupted) else StudyInterrupted(
            "interrupted", [])
        raise StudyInterrupted(
            f"{stopped}: {len(rows)} of {len(study.points)} points are in {files.jsonl}; "
            f"run the study again to resume", [rows[i] for i in sorted(rows)],
            stopped.signal_number) from None
    finally:
        bar.close()
    return lost, lost_reason


def run_study(study: Study, out_dir, *, workers: int | None = None, scheduler=None,
              progress: bool = True, chunk_size: int | None = None,
              retry_failed: bool = False) -> list:
    """Solve every point of a study that ``out_dir`` does not hold yet.

    Points are cut into chunks of neighbouring points (:func:`chunk_points`: the same
    number for every worker, up to :data:`MAX_CHUNK` points each, sizes within one point
    of each other); each chunk is one task, given to the next free worker and solved in
    order there, so that each point warm-starts from the previous one. A worker reads
    the problem file, imports the solver and builds the NLP once, for all its chunks.
    Before any worker starts or any file is written, every point's changed problem is
    read by the problem loader. A row is appended to ``study.jsonl`` (flushed to disk)
    and ``study.csv`` as its point finishes on a local worker, and as its chunk finishes
    on Dask. Points whose index is already in ``study.jsonl`` are skipped, so running an
    interrupted study again resumes it.

    SIGINT and SIGTERM (when called from the main thread) stop the workers and raise
    :class:`StudyInterrupted`. A local worker process that dies (killed outright) loses
    the point it was solving: it is reported in :class:`StudyIncomplete` after the other
    points are solved, and a resume solves it again.

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
        solves in one worker process take turns; and start them with
        ``OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1``, as local workers are started, so
        that the numerical libraries do not start thread pools that fight over the
        cores.
    progress : bool
        A progress bar on stderr (tqdm); False for none (the command's ``--quiet``).
    chunk_size : int, optional
        Points per task; default: see :func:`chunk_points`. The chunks, hence the warm
        starts, depend only on the points, the chunk size and the number of workers, not
        on where the tasks run.
    retry_failed : bool
        Also solve again the points whose earlier row records a raised error.

    Returns
    -------
    list of dict
        One row per point of the study, by index (see :mod:`ascentplan.study.files` for
        the files). Row keys: ``index``, ``run`` (1 for the first run of the folder, 2
        for the first resume, ...), the point's change keys as given, ``status`` (a
        result status, or ``failed`` with ``error`` set when the point raised in its
        worker), ``objective`` (in ``objective_unit``; None unless
        the solver converged), ``burnout_speed_m_s``, ``burnout_altitude_m``,
        ``verified``, per limit ``<name>.bound``, ``.peak``, ``.unit``, ``.active``,
        ``.shadow_price`` (in ``.shadow_price_unit``), ``iterations``, ``nodes``,
        ``warm_started``, ``wall_time_s``, ``worker``, ``error``, ``message``.

    Raises
    ------
    ProblemError
        For a problem file the loader refuses.
    StudyError
        Before anything runs or is written: for bad arguments, unknown key paths, values
        the problem loader refuses (its messages, naming the point, key and value), or a
        folder that holds another study.
    StudyIncomplete
        When worker processes died and some points were not run; the finished rows are
        written.
    StudyInterrupted
        On SIGINT (Ctrl-C) or SIGTERM (a :class:`KeyboardInterrupt`, with the signal's
        number); the workers are stopped and the finished rows are written.
    """
    with stop_on_signals():
        return _run(study, Path(out_dir), workers=workers, scheduler=scheduler,
                    progress=progress, chunk_size=chunk_size, retry_failed=retry_failed)


def _run(study: Study, out_dir: Path, *, workers, scheduler, progress, chunk_size,
         retry_failed) -> list:
    _check_arguments(study, workers, scheduler, chunk_size)
    document, problem = read_document(study.problem_path)
    check_points(study, document, problem)
    digest = file_digest(study.problem_path)

    files = StudyFiles(out_dir, study_columns(study.change_keys, problem))
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
