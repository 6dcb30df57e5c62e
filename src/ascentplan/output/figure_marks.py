"""What every figure carries so that a reviewer can trust it on its own: the run's status
and the caution stamped on the image, and event lines drawn and named by kind.

A PNG is often looked at apart from the printed summary and the report (pasted into a
review, attached to a message), so it must say by itself whether it shows a verified
optimum, a flight that is not a solution, or a simulation of a given schedule.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ascentplan.cautions import CAUTION
from ascentplan.output.atomic import atomic_open

__all__ = ["DPI", "EVENT_KINDS", "EventKind", "PngWriter", "caution_line", "event_kind",
           "event_name", "label_rows", "save_png", "stamp_figure", "status_stamp"]

#: resolution of every PNG [dots per inch]
DPI = 150
#: zlib level of the PNG files: level 1 writes several times faster than the default 6,
#: for files somewhat larger (plots are flat colour and compress well either way)
_PNG_COMPRESSION = 1

#: a solve's status: the stamp's text and whether the figure shows a trustworthy answer
_SOLVE_STAMPS = {
    "optimal": ("optimal and verified by replay", True),
    "not_verified": ("NOT VERIFIED - optimal on the mesh, but the replay disagrees", False),
    "infeasible": ("INFEASIBLE - not a solution", False),
    "failed": ("SOLVER FAILED - not a solution", False),
}
#: a forward simulation's status (no optimisation): the stamp's text and whether it is clean
_SIMULATION_STAMPS = {
    "ok": ("forward simulation of a given schedule - not optimised", True),
    "impact": ("IMPACT - forward simulation of a given schedule, not optimised", False),
    "failed": ("INTEGRATION FAILED - forward simulation of a given schedule", False),
    "limits_exceeded": ("LIMITS EXCEEDED - forward simulation of a given schedule", False),
}
_GOOD_COLOUR = "#1b6e20"
_BAD_COLOUR = "#b00020"


def status_stamp(status: str, *, simulation: bool = False) -> tuple[str, bool]:
    """The stamp of a run's status: (text, whether the figure shows a trustworthy result).

    Parameters
    ----------
    status : str
        A solve's status (``optimal``, ``not_verified``, ``infeasible``, ``failed``) or,
        with ``simulation``, a forward simulation's (``ok``, ``impact``, ``failed``,
        ``limits_exceeded``). An unknown status is shown in capitals as not trustworthy.
    simulation : bool
        The figure shows a flown schedule, not an optimisation result.
    """
    table = _SIMULATION_STAMPS if simulation else _SOLVE_STAMPS
    if status in table:
        return table[status]
    return f"{str(status).upper()} - status not recognised, not a verified result", False


def caution_line() -> str:
    """The caution's first sentence (the whole caution is in the report and the summary)."""
    first = CAUTION.split(". ", 1)[0]
    return first if first.endswith(".") else first + "."


def stamp_figure(fig, text: str, good: bool) -> None:
    """Write the status (top left, green when trustworthy, red otherwise) and the caution
    line (bottom centre) on ``fig``; the layout must leave room for both."""
    fig.text(0.008, 0.992, text, ha="left", va="top", fontsize=8.5, fontweight="bold",
             color=_GOOD_COLOUR if good else _BAD_COLOUR, gid="status", parse_math=False)
    fig.text(0.5, 0.006, caution_line(), ha="center", va="bottom", fontsize=7,
             color="0.35", gid="caution", parse_math=False)


@dataclass(frozen=True)
class EventKind:
    """How one kind of event is drawn, named in the legend, and labelled beside its line
    (``short``; the kind's own words when None)."""

    legend: str
    style: dict
    short: str | None = None


#: the events of a replay by kind (``replay.simulate`` records), each drawn and named its
#: own way: a burnout is a burn ending as planned, a flameout a stage running dry before
#: its scheduled end, staging the drop of the spent stage; the vehicle stack's events
#: (booster groups, fairing, cut-offs and restarts) are named short beside their lines
EVENT_KINDS = {
    "burnout": EventKind("burnout (a burn ends as scheduled)",
                         dict(color="0.3", linewidth=1.0, linestyle=":")),
    "flameout": EventKind("flameout (ran dry before its scheduled end)",
                          dict(color="tab:purple", linewidth=1.1, linestyle="-.")),
    "staging": EventKind("staging (spent stage dropped)",
                         dict(color="tab:brown", linewidth=1.0, linestyle=(0, (5, 3)))),
    "apogee": EventKind("apogee", dict(color="tab:olive", linewidth=1.0,
                                       linestyle=(0, (1, 3)))),
    "impact": EventKind("impact", dict(color="black", linewidth=1.2, linestyle="-")),
    "booster_burnout": EventKind("booster burnout (casings dropped)",
                                 dict(color="tab:pink", linewidth=1.1, linestyle="--"),
                                 "boosters out"),
    "booster_ignition": EventKind("booster ignition (air-lit group)",
                                  dict(color="darkgoldenrod", linewidth=1.0,
                                       linestyle=(0, (3, 2))),
                                  "boosters lit"),
    "fairing_jettison": EventKind("fairing jettison",
                                  dict(color="tab:cyan", linewidth=1.0, linestyle="-."),
                                  "fairing"),
    "cutoff": EventKind("cut-off (coast before a restart)",
                        dict(color="navy", linewidth=1.0, linestyle=(0, (2, 2))), "cut-off"),
    "restart": EventKind("restart", dict(color="darkgreen", linewidth=1.0,
                                         linestyle=(0, (6, 2, 1, 2))), "restart"),
}


def event_kind(kind: str) -> EventKind:
    """How an event of ``kind`` is drawn; a kind not listed is named as recorded."""
    if kind in EVENT_KINDS:
        drawn = EVENT_KINDS[kind]
        return drawn if drawn.short else replace(drawn, short=kind.replace("_", " "))
    return EventKind(kind.replace("_", " "), dict(color="0.5", linewidth=1.0, linestyle=":"),
                     kind.replace("_", " "))


def event_name(event: dict, stages) -> str | None:
    """What an event's label names: a booster group's name, else its stage's (none for
    an apogee)."""
    if event.get("group"):
        return str(event["group"])
    stage = event.get("stage")
    if isinstance(stage, (int, np.integer)) and 0 <= stage < len(stages) \
            and event.get("kind") != "apogee":
        return stages[stage].name
    return None


#: a label's mean character width, as a fraction of its font size (measured on the
#: event labels in DejaVu Sans: about 0.46)
_CHAR_WIDTH = 0.5
#: most rows of event labels above a panel's data
MAX_LABEL_ROWS = 4


def label_rows(events, x0: float, x1: float, width_pt: float,
               fontsize: float = 7.0) -> list[int]:
    """A row for each event label (0 the top row), in time order, so that labels in one
    row do not overlap: each takes the first row where it fits, else the row where it
    overlaps least, among :data:`MAX_LABEL_ROWS`.

    Parameters
    ----------
    events : list of (time [s], label, kinds)
    x0, x1 : float
        The time axis' limits [s].
    width_pt : float
        The axes' width [pt].
    fontsize : float
        The labels' font size [pt].

    A label is written right of its line in the left half of the axes and left of it in
    the right half, 3 pt from the line; its width is estimated from its length.
    """
    span = max(x1 - x0, 1e-12)
    taken: list[list[tuple[float, float]]] = [[] for _ in range(MAX_LABEL_ROWS)]
    rows = []
    for time, label, _kinds in events:
        width = (len(label) * _CHAR_WIDTH * fontsize + 3.0) / max(width_pt, 1.0) * span
        right_half = (time - x0) > 0.5 * span
        left, right = (time - width, time) if right_half else (time, time + width)
        overlap = [sum(max(0.0, min(right, b) - max(left, a)) for a, b in taken[r])
                   for r in range(MAX_LABEL_ROWS)]
        free = [r for r in range(MAX_LABEL_ROWS) if overlap[r] == 0.0]
        row = free[0] if free else min(range(MAX_LABEL_ROWS), key=overlap.__getitem__)
        taken[row].append((left, right))
        rows.append(row)
    return rows


def save_png(fig, path: Path, writer: PngWriter | None = None) -> None:
    """Write a figure as PNG at :data:`DPI`, whole or not at all
    (:func:`~ascentplan.output.atomic.atomic_open`); through ``writer`` when given (the
    figure is drawn now, its file written in the background)."""
    if writer is not None:
        writer.save(fig, path)
        return
    with atomic_open(path, "wb") as fh:
        fig.savefig(fh, format="png", dpi=DPI, pil_kwargs={"compress_level": _PNG_COMPRESSION})


def _write_pixels(pixels: np.ndarray, path: Path) -> None:
    from PIL import Image

    with atomic_open(path, "wb") as fh:
        Image.fromarray(pixels, "RGBA").save(fh, format="png", dpi=(DPI, DPI),
                                             compress_level=_PNG_COMPRESSION)


class PngWriter:
    """Draws each figure when asked and writes its PNG in a background thread, so that
    the compression of one file (Pillow's encoder runs outside the interpreter lock)
    overlaps the drawing of the next figure. A context manager: leaving it waits for
    every file and raises the first error of a write.
    """

    def __init__(self):
        self._executor = ThreadPoolExecutor(max_workers=1, thread_name_prefix="png-writer")
        self._futures: list = []

    def __enter__(self) -> PngWriter:
        return self

    def __exit__(self, *exc) -> None:
        try:
            for future in self._futures:
                future.result()
        finally:
            self._executor.shutdown(wait=True)

    def save(self, fig, path: Path) -> None:
        """Draw ``fig`` at :data:`DPI` now; its file is written in the background."""
        fig.set_dpi(DPI)
        fig.canvas.draw()
        # a copy: the figure may be drawn again (a reused canvas) before the file is done
        pixels = np.array(fig.canvas.buffer_rgba(), copy=True)
        self._futures.append(self._executor.submit(_write_pixels, pixels, Path(path)))
