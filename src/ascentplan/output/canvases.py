"""Figures of the time-history plots that are drawn on again: a figure's axis ticks are
made at its first drawing, and making them was most of the work of drawing a fresh
figure (measured on the overview of the Goddard example), so a figure emptied and
drawn again costs less than a new one.

A drawing process (:mod:`ascentplan.output.plot_workers`) makes and draws its figures
once while the problem is solved (:meth:`Canvases.prepare`), so that the figures of the
solve are redrawings.
"""

from __future__ import annotations

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

__all__ = ["Canvases", "OverviewCanvas", "PanelCanvas"]

PANEL_SIZE = (7.0, 4.2)  # single-quantity figure [in]
CELL_SIZE = (5.0, 3.4)  # one cell of the overview grid [in]
#: height of the overview's bands [in]: title and status above, legend and caution below
OVERVIEW_BANDS = 1.1
#: columns of the overview's grid
OVERVIEW_COLUMNS = 3


def fixed_margins(fig: Figure, *, left: float, right: float, top: float, bottom: float,
                  **spacing) -> dict:
    """Subplot parameters for margins given in inches (labels, stamp and caution fit)."""
    width, height = fig.get_size_inches()
    return dict(left=left / width, right=1.0 - right / width, top=1.0 - top / height,
                bottom=bottom / height, **spacing)


def _new_figure(size) -> Figure:
    # a Figure with its own Agg canvas never touches pyplot's global state
    fig = Figure(figsize=size)
    FigureCanvasAgg(fig)
    return fig


def _empty_axes(ax) -> None:
    """Axes with no data, texts or legend, scaling to new data."""
    for artist in [*ax.lines, *ax.texts, *ax.collections, *ax.patches]:
        artist.remove()
    if ax.get_legend() is not None:
        ax.get_legend().remove()
    ax.set_xlim(auto=True)
    ax.set_ylim(auto=True)
    ax.autoscale(True)
    ax.relim()


def _empty_figure(fig: Figure) -> None:
    for artist in [*fig.texts, *fig.legends]:
        artist.remove()


def _rehearse(fig: Figure, axes) -> None:
    """Draw the axes once with some numbers, so that their ticks exist."""
    for ax in axes:
        # a colour given: the axes' colour cycle is not advanced
        ax.plot(np.linspace(0.0, 1000.0, 11), np.linspace(-100.0, 100.0, 11), color="C0")
        ax.set_title("title")
        ax.set_xlabel("x")
        ax.set_ylabel("y")
    fig.canvas.draw()


class PanelCanvas:
    """One figure and axes for the single-panel PNGs, emptied between panels."""

    def __init__(self):
        self.fig = _new_figure(PANEL_SIZE)
        self.ax = self.fig.add_subplot()
        self.fig.subplots_adjust(**fixed_margins(self.fig, left=0.85, right=0.2, top=0.62,
                                                 bottom=0.78))

    def empty(self):
        """The figure and axes with no data, labels or stamps, scaling to new data."""
        _empty_axes(self.ax)
        _empty_figure(self.fig)
        return self.fig, self.ax


class OverviewCanvas:
    """The overview's figure: ``count`` axes on a grid of :data:`OVERVIEW_COLUMNS`
    columns, filled row by row, emptied between drawings."""

    def __init__(self, count: int):
        nrows = -(-count // OVERVIEW_COLUMNS)
        self.fig = _new_figure((CELL_SIZE[0] * OVERVIEW_COLUMNS,
                                CELL_SIZE[1] * nrows + OVERVIEW_BANDS))
        grid = self.fig.add_gridspec(nrows, OVERVIEW_COLUMNS, **fixed_margins(
            self.fig, left=0.75, right=0.2, top=0.95, bottom=1.25, hspace=0.55,
            wspace=0.28))
        self.axes = [self.fig.add_subplot(grid[i // OVERVIEW_COLUMNS, i % OVERVIEW_COLUMNS])
                     for i in range(count)]

    def empty(self):
        """The figure and its axes with no data, labels, legend or stamps."""
        for ax in self.axes:
            _empty_axes(ax)
        _empty_figure(self.fig)
        return self.fig, self.axes


class Canvases:
    """The figures of one process kept for drawing again: the single panel's, and the
    overview's by its number of panels."""

    def __init__(self):
        self._panel: PanelCanvas | None = None
        self._overviews: dict[int, OverviewCanvas] = {}

    def panel(self) -> PanelCanvas:
        if self._panel is None:
            self._panel = PanelCanvas()
        return self._panel

    def overview(self, count: int) -> OverviewCanvas:
        if count not in self._overviews:
            self._overviews[count] = OverviewCanvas(count)
        return self._overviews[count]

    def prepare(self, panels: int | None, single: bool) -> None:
        """Make and draw once the overview of ``panels`` panels (None: no overview) and,
        with ``single``, the single panel's figure."""
        if panels is not None:
            _rehearse(*self.overview(panels).empty())
        if single:
            fig, ax = self.panel().empty()
            _rehearse(fig, [ax])
