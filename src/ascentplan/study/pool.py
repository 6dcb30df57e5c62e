"""Local worker processes of a study: each a fresh interpreter (``spawn``, as on a
cluster, and safe when the main process runs threads) with a pipe of its own. A worker is
sent a chunk of neighbouring points and answers one row per point as it finishes, so the
main process writes each row at once while the worker keeps its built NLP and warm-starts
the next point of the chunk from the last.

Each worker has its own pipe, and no lock is shared between workers, so a worker killed
outright (SIGKILL, out of memory) takes with it only the point it was solving: the pool
reports that point, gives the rest of its chunk to another worker and starts a
replacement. A worker whose main process is gone ends when it next reads or writes its
pipe.
"""

from __future__ import annotations

import multiprocessing
import os
import signal
from collections import deque
from contextlib import contextmanager
from multiprocessing.connection import wait

from ascentplan.study.stopping import held
from ascentplan.study.worker import failed_row, solve_points

__all__ = ["LocalPool"]

#: seconds a worker has to end after it is told to stop, or after SIGTERM, before it is
#: killed
_GRACE_S = 5.0
#: one thread per worker for the numerical libraries' thread pools (OpenBLAS, OpenMP, MKL):
#: a worker solves one point at a time, and the workers already fill the cores. Left at
#: their default, each process started three more threads, and two workers on two
#: cores ran a 40-point sweep slower than one worker (30.4 s against 20.2 s, every point
#: 2.8 times as long, measured with other load on the machine)
_SINGLE_THREAD_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
                      "MKL_NUM_THREADS": "1"}


def _serve(conn) -> None:
    """The loop of a worker process: chunks in, one row per point out as it finishes,
    until told to stop (None) or the pipe closes."""
    # Ctrl-C at a terminal reaches every process of the foreground group; the main process
    # alone decides what it does (it stops the workers), so a worker does not print its own
    # KeyboardInterrupt
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # the solver's imports (about a second) while the main process hands out the chunks
    import ascentplan.pipeline  # noqa: F401
    while True:
        try:
            task = conn.recv()
        except (EOFError, OSError):
            return
        if task is None:
            return
        try:
            _answer_chunk(conn, task)
        except OSError:  # the main process is gone: nobody to answer to
            return


def _answer_chunk(conn, task: tuple) -> None:
    problem_path, digest, items, run, share = task
    answered = 0
    try:
        for row in solve_points(problem_path, digest, items, run, share):
            conn.send(row)
            answered += 1
    except OSError:
        raise
    except Exception as exc:  # noqa: BLE001 - the chunk cannot run at all (the solver
        # does not import): each of its points says why instead of the worker dying
        for index, changes in items[answered:]:
            conn.send(failed_row(index, run, changes, exc, 0.0,
                                 prefix="the worker could not run the task: "))


def _exit_text(process) -> str:
    code = process.exitcode
    if code is not None and code < 0:
        try:
            return f"killed by {signal.Signals(-code).name}"
        except ValueError:
            return f"killed by signal {-code}"
    return f"ended with exit code {code}"


@contextmanager
def _single_threaded_children():
    """The environment a started process inherits: one thread per numerical library
    (:data:`_SINGLE_THREAD_ENV`, where the user has not set them); this process's own
    environment is restored on leaving."""
    saved = {key: os.environ.get(key) for key in _SINGLE_THREAD_ENV}
    for key, value in _SINGLE_THREAD_ENV.items():
        os.environ.setdefault(key, value)
    try:
        yield
    finally:
        for key, value in saved.items():
            if value is None:
                os.environ.pop(key, None)
            else:
                os.environ[key] = value


class _Worker:
    """One worker process, its end of the pipe and the points it has yet to answer."""

    def __init__(self, context, number: int):
        self.conn, child = context.Pipe()
        self.process = context.Process(target=_serve, args=(child,), daemon=True,
                                       name=f"ascentplan-study-worker-{number}")
        with _single_threaded_children():
            self.process.start()
        # only the worker may hold its end: a worker that dies then reads as end of file
        child.close()
        self.left: list = []

    def give(self, chunk: list, task: tuple) -> bool:
        """Send a chunk; False when the worker is already gone."""
        try:
            self.conn.send(task)
        except OSError:
            return False
        self.left = list(chunk)
        return True


class LocalPool:
    """Worker processes on this machine, used as a context manager: started on entry,
    stopped on exit (told to finish when the study ended normally, terminated at once
    when it is stopping).

    Parameters
    ----------
    count : int
        Worker processes.
    """

    def __init__(self, count: int):
        self.count = count
        self.where = f"{count} local worker process{'es' if count > 1 else ''}"
        self._context = multiprocessing.get_context("spawn")
        self._workers: list = []
        self._started = 0

    def __enter__(self):
        try:
            for _ in range(self.count):
                self._start_worker()
        except BaseException:
            self._stop(at_once=True)
            raise
        return self

    def __exit__(self, exc_type, exc, tb):
        self._stop(at_once=exc_type is not None)
        return False

    def _start_worker(self) -> None:
        # a signal in the middle of a start must not leave a process the pool does not
        # know of, to be orphaned when the study stops
        with held():
            self._started += 1
            self._workers.append(_Worker(self._context, self._started))

    def solve(self, chunks: list, problem_path: str, digest: str, run: int,
              share: int | None = None):
        """Solve the chunks on the workers, each chunk given to the next free worker.

        ``share`` is the number of points each worker is expected to solve in all.

        Yields
        ------
        tuple
            ``("row", row)`` as each point finishes, ``("lost", [index], reason)`` for a
            point whose worker died while solving it.
        """
        pending = deque(chunks)
        while True:
            self._hand_out(pending, (problem_path, digest, run, share))
            busy = {w.conn: w for w in self._workers if w.left}
            if not busy and not pending:
                return
            for conn in wait(list(busy)) if busy else ():
                yield from self._answer(busy[conn], pending)

    def _hand_out(self, pending: deque, task: tuple) -> None:
        problem_path, digest, run, share = task
        for worker in list(self._workers):
            if worker.left or not pending:
                continue
            chunk = pending.popleft()
            if not worker.give(chunk, (problem_path, digest, chunk, run, share)):
                # gone while idle: no point was lost with it
                pending.appendleft(chunk)
                self._replace(worker, pending)

    def _replace(self, worker: _Worker, pending: deque) -> None:
        """Forget a dead worker; start another while there are chunks to hand out."""
        worker.process.join(_GRACE_S)
        self._workers.remove(worker)
        worker.conn.close()
        if pending:
            self._start_worker()

    def _answer(self, worker: _Worker, pending: deque):
        try:
            row = worker.conn.recv()
        except (EOFError, OSError):
            yield from self._lost(worker, pending)
            return
        # a worker answers every point of its chunk once: idle after the last
        worker.left = [item for item in worker.left if item[0] != row["index"]]
        yield "row", row

    def _lost(self, worker: _Worker, pending: deque):
        """A worker died while solving: its first unanswered point is lost, the rest of its
        chunk goes back to the queue, and a replacement starts if there is work left (each
        such death costs a point, so there are at most as many replacements as points)."""
        worker.process.join(_GRACE_S)
        reason = f"worker process {worker.process.pid} {_exit_text(worker.process)}"
        solving, rest = worker.left[0], worker.left[1:]
        if rest:
            pending.appendleft(rest)
        self._replace(worker, pending)
        yield "lost", [solving[0]], reason

    def _stop(self, at_once: bool) -> None:
        """End every worker: tell idle ones to stop, terminate the others (or all of them
        when the study is stopping), kill any still running after the grace period."""
        with held():
            for worker in self._workers:
                if not at_once and not worker.left:
                    try:
                        worker.conn.send(None)
                    except OSError:
                        pass
                elif worker.process.is_alive():
                    worker.process.terminate()
            for worker in self._workers:
                worker.process.join(_GRACE_S)
                if worker.process.is_alive():
                    worker.process.kill()
                    worker.process.join()
                worker.conn.close()
            self._workers = []
