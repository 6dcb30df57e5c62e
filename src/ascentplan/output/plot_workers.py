"""Drawing a solve's figures in processes started before the solve.

Importing matplotlib and loading its fonts takes about half a second, and drawing the
figures of a solve about as long again: together longer than the solve of a small
problem. The ``solve`` verb therefore starts drawing processes first; they import the
plotting code and draw a small figure (fonts and caches loaded) while the problem is
read and solved, then each draws a share of the figures, all at once, while the main
process writes the summary and the CSV files.

A process that cannot be started, dies or fails leaves its figures to the main
process, which draws them itself (the figures are the same either way), so a machine
that does not allow processes only loses the speed.
"""

from __future__ import annotations

import multiprocessing
import os
import signal
import traceback
from pathlib import Path

__all__ = ["PendingPlots", "PlotWorkers", "share_figures", "warm_up"]

#: drawing processes at most: two share the figures about evenly
MAX_WORKERS = 2
#: the overview's work per panel it shows, a single panel's work being one: about half
#: (its smaller cells have fewer ticks, one legend; measured as processor time on
#: redrawn figures of the Goddard, two-stage and transfer-orbit examples: 0.45 to 0.58)
OVERVIEW_WEIGHT = 0.5
#: how long a closing worker may take to exit before it is stopped [s]
_EXIT_WAIT = 2.0
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


def _answer(job, canvases) -> tuple[str, object]:
    """Draw a job's figures: ("ok", file names) or ("error", the traceback's text)."""
    try:
        from ascentplan.output.plots import draw_figures

        return "ok", [str(p) for p in draw_figures(**job, canvases=canvases)]
    except Exception:  # any fault goes back: the main process then draws the share itself
        return "error", traceback.format_exc()


def _serve(conn) -> None:
    """A drawing process: warm up, then prepare figures and draw jobs until told to stop.

    A message is ("prepare", keywords of :meth:`Canvases.prepare`), answered by none, or
    ("draw", keywords of :func:`~ascentplan.output.plots.draw_figures`), answered by
    :func:`_answer`; None stops the process.
    """
    # Ctrl-C reaches the whole process group: the main process ends its workers itself
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    canvases = None
    try:
        # the plotting code, and the replay's module that a job's flight is read into
        # (it imports SciPy): imported now, not when the first job arrives
        import ascentplan.output.plots  # noqa: F401
        import ascentplan.replay.trajectory  # noqa: F401
        from ascentplan.output.canvases import Canvases

        warm_up()
        canvases = Canvases()
    except Exception:  # a job then fails too, and the main process draws its share
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
            conn.send(_answer(payload, canvases))
        except (OSError, ValueError):  # the main process is gone
            return


def _usable_cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every system
        return os.cpu_count() or 1


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


class PendingPlots:
    """Figures being drawn by the workers; :meth:`wait` returns their files."""

    def __init__(self, workers: PlotWorkers, jobs, files):
        self._workers = workers
        self._jobs = jobs  # (worker index or None, job) per share
        self._files = files

    def wait(self) -> list[Path]:
        """Wait for every share; draw here any share whose process failed. The files in
        :data:`~ascentplan.output.plots.FIGURES` order."""
        from ascentplan.output.plots import draw_figures

        for k, job in self._jobs:
            answer = self._workers.answer(k) if k is not None else None
            if answer is None or answer[0] != "ok":
                draw_figures(**job)
        return list(self._files)


class PlotWorkers:
    """Drawing processes, started at once and warming up in the background; a context
    manager that ends them on leaving.

    Parameters
    ----------
    count : int, optional
        Processes to start; by default :data:`MAX_WORKERS`, fewer on a machine with fewer
        usable CPUs. Zero starts none: every figure is then drawn in the main process.
    """

    def __init__(self, count: int | None = None):
        count = min(MAX_WORKERS, _usable_cpus()) if count is None else count
        self._workers = []
        self._busy: set[int] = set()
        context = multiprocessing.get_context("spawn")
        for _ in range(max(0, count)):
            try:
                parent, child = context.Pipe()
                process = context.Process(target=_serve, args=(child,), daemon=True,
                                          name="ascentplan-plots")
                process.start()
            except (OSError, RuntimeError):  # no processes here: the main process draws
                break
            child.close()
            self._workers.append((process, parent))

    def __enter__(self) -> PlotWorkers:
        return self

    def __exit__(self, exc_type, *exc) -> None:
        # after a fault or Ctrl-C, stop at once rather than wait for a drawing
        self.close(wait=exc_type is None)

    @property
    def count(self) -> int:
        return len(self._workers)

    def _shares(self, problem) -> tuple[list[str], list[list[str]]]:
        from ascentplan.output.figure_list import figure_stems

        stems = figure_stems(problem)
        panels = len(stems) - 1 - ("ground_track" in stems)
        return stems, share_figures(stems, panels, max(1, self.count))

    def prepare(self, problem) -> None:
        """Have each process make and draw once the figures it will draw for a solve of
        ``problem``, while the problem is solved (no wait)."""
        stems, shares = self._shares(problem)
        panels = len(stems) - 1 - ("ground_track" in stems)
        for k, share in enumerate(shares[:self.count]):
            payload = dict(panels=panels if "overview" in share else None,
                           single=any(s not in ("overview", "ground_track") for s in share))
            try:
                self._workers[k][1].send(("prepare", payload))
            except Exception:  # the process is gone: its share is drawn here
                pass

    def plot_result(self, result, out_dir, *, prefix: str = "") -> PendingPlots | None:
        """Start drawing the figures of a solve result (those of
        :func:`ascentplan.output.plots.plot_result`); None when it has no replay."""
        if result.trajectory is None:
            return None
        from ascentplan.output.figure_list import plot_arguments

        arguments = dict(plot_arguments(result), out_dir=str(out_dir), prefix=prefix)
        stems, shares = self._shares(arguments["problem"])
        jobs = []
        for k, share in enumerate(shares):
            job = dict(arguments, stems=share)
            jobs.append((k if self._send(k, job) else None, job))
        files = [Path(out_dir) / f"{prefix}{stem}.png" for stem in stems]
        return PendingPlots(self, jobs, files)

    def _send(self, k: int, job) -> bool:
        if k >= self.count or k in self._busy:
            return False
        try:
            self._workers[k][1].send(("draw", job))
        except Exception:  # the process is gone, or the job cannot be sent: drawn here
            return False
        self._busy.add(k)
        return True

    def answer(self, k: int):
        """The answer of worker ``k`` to its job: ("ok", files), ("error", text), or
        None when the process ended without one."""
        process, conn = self._workers[k]
        waited = 0.0
        try:
            # a process that died says so at once (end of file); one that hangs is
            # given up after a while
            while not conn.poll(0.5):
                waited += 0.5
                if not process.is_alive() or waited >= _ANSWER_WAIT:
                    return None
            self._busy.discard(k)
            return conn.recv()
        except (EOFError, OSError):
            return None

    def close(self, wait: bool = True) -> None:
        """End the processes: one drawing is waited for (unless ``wait`` is False), an
        idle one (still warming up, or done) is stopped at once."""
        for k, (process, conn) in enumerate(self._workers):
            if wait and k in self._busy:
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
        self._busy.clear()
