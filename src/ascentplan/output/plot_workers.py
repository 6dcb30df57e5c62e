"""Drawing a solve's figures in a process started before the solve.

Importing matplotlib and loading its fonts takes about half a second, and drawing the
figures of a solve about as long again: together longer than the solve of a small
problem. The ``solve`` verb therefore starts a drawing process before the solve; it
imports matplotlib, loads the fonts and makes and draws once the figures it will draw
(:class:`~ascentplan.output.canvases.Canvases`) while the problem is solved. When the
solve ends, it draws the figures while the main process writes the summary and the CSV
files; on Linux it first forks a copy of itself, warm as it is, and the two draw half
the figures each (by work, :func:`share_figures`), one per processor.

One process warms up rather than two: its start costs a processor about a second,
taken from the solve when the machine has no idle one (measured on a shared two-core
machine, two warming processes slowed the solve more than they sped up the drawing).

A process that cannot be started, dies or fails leaves its figures to the main
process, which draws them itself (the figures are the same either way), so a machine
that does not allow processes only loses the speed.
"""

from __future__ import annotations

import multiprocessing
import os
import signal
import sys
import threading
import traceback
from pathlib import Path

__all__ = ["PendingPlots", "PlotWorkers", "share_figures", "warm_up"]

#: processes drawing at once at most: the drawing process and its forked copy
MAX_SHARES = 2
#: the overview's work per panel it shows, a single panel's work being one: about half
#: (its smaller cells have fewer ticks, one legend; measured as processor time on
#: redrawn figures of the Goddard, two-stage and transfer-orbit examples: 0.45 to 0.58)
OVERVIEW_WEIGHT = 0.5
#: how long a closing worker may take to exit before it is stopped [s]
_EXIT_WAIT = 2.0
#: idle processors (usable ones less the 1-minute load average) needed to start the
#: drawing process: half a processor, as the average lags and counts this process
#: itself (back-to-back solves on an otherwise idle two-core machine read 1.0 to 1.2)
IDLE_NEEDED = 0.5
#: how much lower the drawing process's priority is than the main process's (nice)
_NICENESS = 10
#: longest wait for a process's figures [s]: past it the main process draws them
_ANSWER_WAIT = 300.0


def warm_up() -> None:
    """Draw one small figure, not saved: a process's first drawing loads the fonts and
    fills matplotlib's caches, which a drawing process does while it waits for work."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from PIL import Image

    Image.preinit()  # the PNG encoder's plugin, loaded once
    fig = Figure(figsize=(2.0, 1.5))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    ax.plot([0.0, 1.0], [0.0, 1.0], label="line", marker="o")
    ax.axvline(0.5, linestyle=":")
    ax.set_title("title", fontsize=10)
    ax.legend(fontsize=7)
    fig.text(0.5, 0.0, "text", fontweight="bold", fontsize=8.5)
    fig.canvas.draw()


def _can_fork() -> bool:
    """Whether this process may fork: on Linux, with one thread (a fork copies only the
    calling thread, so a lock held by another would never be released in the copy)."""
    return (sys.platform.startswith("linux") and threading.active_count() == 1
            and hasattr(os, "fork"))


def _draw(job, shares, canvases) -> list[str]:
    """Draw a job's figures, ``shares`` of its stems at once where this process can fork
    a copy of itself: the copy draws the last share, this process the others (and the
    last one too if the copy failed)."""
    from ascentplan.output.plots import draw_figures

    child = 0
    if len(shares) > 1 and _can_fork():
        child = os.fork()
        if child == 0:  # the copy: draw its share, then end without any clean-up
            code = 1
            try:
                draw_figures(**job, stems=shares[-1], canvases=canvases)
                code = 0
            finally:
                os._exit(code)
    mine = shares[:-1] if child else shares
    for share in mine:
        draw_figures(**job, stems=share, canvases=canvases)
    if child and os.waitstatus_to_exitcode(os.waitpid(child, 0)[1]) != 0:
        draw_figures(**job, stems=shares[-1], canvases=canvases)
    return [stem for share in shares for stem in share]


def _answer(job, shares, canvases) -> tuple[str, object]:
    """Draw a job: ("ok", the stems drawn) or ("error", the traceback's text)."""
    try:
        return "ok", _draw(job, shares, canvases)
    except Exception:  # any fault goes back: the main process then draws the figures
        return "error", traceback.format_exc()


def _serve(conn) -> None:
    """The drawing process: warm up, then prepare figures and draw jobs until told to stop.

    A message is ("prepare", keywords of :meth:`Canvases.prepare`), answered by none, or
    ("draw", (keywords of :func:`~ascentplan.output.plots.draw_figures` but the stems,
    the shares of stems)), answered by :func:`_answer`; None stops the process.
    """
    # Ctrl-C reaches the whole process group: the main process ends its workers itself
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # a lower priority than the solve's: when the machine has no idle processor after
    # all, the warm-up waits rather than slow the solve down
    try:
        os.nice(_NICENESS)
    except (AttributeError, OSError):  # not on every system
        pass
    canvases = None
    try:
        # the plotting code, and the replay's module that a job's flight is read into
        # (it imports SciPy): imported now, not when the first job arrives
        import ascentplan.output.plots  # noqa: F401
        import ascentplan.replay.trajectory  # noqa: F401
        from ascentplan.output.canvases import Canvases

        warm_up()
        canvases = Canvases()
    except Exception:  # a job then fails too, and the main process draws the figures
        pass
    while True:
        try:
            message = conn.recv()
        except (EOFError, OSError):
            return
        if message is None:
            return
        kind, payload = message
        if kind == "prepare":
            try:
                canvases.prepare(**payload)
            except Exception:  # only the speed is lost: a job makes its own figures
                pass
            continue
        try:
            conn.send(_answer(*payload, canvases))
        except (OSError, ValueError):  # the main process is gone
            return


def _usable_cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every system
        return os.cpu_count() or 1


def _idle_processors() -> float:
    """Processors left idle over the last minute (usable ones less the load average,
    which counts this process); all of them where the system gives no load average."""
    try:
        load = os.getloadavg()[0]
    except (AttributeError, OSError):
        return float(_usable_cpus())
    return _usable_cpus() - load


def share_figures(stems, panels: int, workers: int) -> list[list[str]]:
    """Split figure stems between ``workers`` processes by their work: the overview
    counts as :data:`OVERVIEW_WEIGHT` times its ``panels`` panels, every other figure as
    one. Largest first, each to the least loaded process; each share keeps the order of
    ``stems``."""
    weight = {stem: (OVERVIEW_WEIGHT * panels if stem == "overview" else 1.0)
              for stem in stems}
    shares: list[list[str]] = [[] for _ in range(workers)]
    loads = [0.0] * workers
    for stem in sorted(stems, key=lambda s: -weight[s]):
        k = loads.index(min(loads))
        shares[k].append(stem)
        loads[k] += weight[stem]
    order = {stem: i for i, stem in enumerate(stems)}
    return [sorted(share, key=order.__getitem__) for share in shares if share]


def _panels(stems) -> int:
    """Panels on the overview: every figure but the overview and the ground track."""
    return len(stems) - 1 - ("ground_track" in stems)


class PendingPlots:
    """Figures being drawn by the drawing process; :meth:`wait` returns their files."""

    def __init__(self, workers: PlotWorkers, job, sent: bool, files):
        self._workers = workers
        self._job = job
        self._sent = sent
        self._files = files

    def wait(self) -> list[Path]:
        """Wait for the figures; draw them here if the process failed. The files in
        :data:`~ascentplan.output.figure_list.FIGURES` order."""
        answer = self._workers.answer() if self._sent else None
        if answer is None or answer[0] != "ok":
            from ascentplan.output.plots import draw_figures

            draw_figures(**self._job, stems=[f.stem[len(self._job["prefix"]):]
                                             for f in self._files])
        return list(self._files)


def _start_method() -> str:
    """Fork where it is safe (:func:`_can_fork`): the child inherits the modules already
    imported (NumPy, SciPy, CasADi, the package) and imports only matplotlib. Elsewhere
    a fresh interpreter (spawn)."""
    if _can_fork() and "fork" in multiprocessing.get_all_start_methods():
        return "fork"
    return "spawn"


class PlotWorkers:
    """The drawing process, started at once and warming up in the background; a context
    manager that ends it on leaving.

    Parameters
    ----------
    problem : Problem, optional
        The problem about to be solved: the process then also makes and draws once the
        figures it will draw (:meth:`prepare`).
    count : int, optional
        1 starts the drawing process; 0 starts none, and every figure is then drawn in
        the main process. By default 1 when half a processor has been idle (the load
        average, which counts this process and the last minute's runs, at least
        :data:`IDLE_NEEDED` below the usable processors), else 0: on a busy machine the
        process would only take time from the solve.
    shares : int, optional
        Processes drawing at once (the drawing process and forked copies of it); by
        default :data:`MAX_SHARES`, fewer on a machine with fewer usable processors.
    """

    def __init__(self, problem=None, count: int | None = None, shares: int | None = None):
        if count is None:
            count = 1 if _idle_processors() >= IDLE_NEEDED else 0
        self._shares = max(1, min(MAX_SHARES, _usable_cpus()) if shares is None else shares)
        self._workers = []
        self._busy = False
        if count > 0:
            # imported before a fork (the solve needs it anyway), so that the child
            # inherits it; matplotlib is left to the child
            import ascentplan.replay.trajectory  # noqa: F401
        context = multiprocessing.get_context(_start_method())
        for _ in range(min(1, max(0, count))):
            try:
                parent, child = context.Pipe()
                process = context.Process(target=_serve, args=(child,), daemon=True,
                                          name="ascentplan-plots")
                process.start()
            except (OSError, RuntimeError):  # no processes here: the main process draws
                break
            child.close()
            self._workers.append((process, parent))
        if problem is not None:
            self.prepare(problem)

    def __enter__(self) -> PlotWorkers:
        return self

    def __exit__(self, exc_type, *exc) -> None:
        # after a fault or Ctrl-C, stop at once rather than wait for a drawing
        self.close(wait=exc_type is None)

    @property
    def count(self) -> int:
        """Drawing processes running (0 or 1)."""
        return len(self._workers)

    def _send(self, message) -> bool:
        if not self._workers:
            return False
        try:
            self._workers[0][1].send(message)
        except Exception:  # the process is gone, or the job cannot be sent: drawn here
            return False
        return True

    def prepare(self, problem) -> None:
        """Have the process make and draw once the figures of a solve of ``problem``,
        while the problem is solved (no wait)."""
        from ascentplan.output.figure_list import figure_stems

        stems = figure_stems(problem)
        self._send(("prepare", dict(panels=_panels(stems), single=len(stems) > 1)))

    def plot_result(self, result, out_dir, *, prefix: str = "") -> PendingPlots | None:
        """Start drawing the figures of a solve result (those of
        :func:`ascentplan.output.plots.plot_result`); None when it has no replay."""
        if result.trajectory is None:
            return None
        from ascentplan.output.figure_list import figure_stems, plot_arguments

        job = dict(plot_arguments(result), out_dir=str(out_dir), prefix=prefix)
        stems = figure_stems(job["problem"])
        shares = share_figures(stems, _panels(stems), self._shares)
        sent = not self._busy and self._send(("draw", (job, shares)))
        self._busy = self._busy or sent
        files = [Path(out_dir) / f"{prefix}{stem}.png" for stem in stems]
        return PendingPlots(self, job, sent, files)

    def answer(self):
        """The process's answer to its job: ("ok", stems), ("error", text), or None
        when it ended without one or took too long."""
        process, conn = self._workers[0]
        waited = 0.0
        try:
            # a process that died says so at once (end of file); one that hangs is
            # given up after a while
            while not conn.poll(0.5):
                waited += 0.5
                if not process.is_alive() or waited >= _ANSWER_WAIT:
                    return None
            self._busy = False
            return conn.recv()
        except (EOFError, OSError):
            return None

    def close(self, wait: bool = True) -> None:
        """End the process: a drawing is waited for (unless ``wait`` is False); an idle
        process (still warming up, or done) is stopped at once."""
        for process, conn in self._workers:
            if wait and self._busy:
                try:
                    conn.send(None)
                except (OSError, ValueError):
                    pass
                process.join(_EXIT_WAIT)
            if process.is_alive():
                process.terminate()
            process.join(_EXIT_WAIT)
            conn.close()
        self._workers = []
        self._busy = False
