"""The map of the objective over the stage-mass split around the coupled optimum.

Each map point is a separate re-solve, so neighbouring values differ by the solver's
tolerance as well as by the split. Contour lines through a coarse grid of such values
draw closed islands around points that differ in the last digits (8951.10 beside 8951.79
at the centre of a 5 x 5 map), which read as rival optima. The map of three stages is
therefore drawn as filled cells, one per solved point, each with its value written in it,
on a colour scale from the lowest to the highest value: a reader sees the numbers, not
an artefact of interpolation.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from ascentplan.output.figure_marks import save_png, stamp_figure, status_stamp
from ascentplan.output.text import printable

__all__ = ["plot_split_map"]


def _cell_edges(centres: np.ndarray) -> np.ndarray:
    """Edges of cells centred on sorted, evenly or unevenly spaced ``centres``."""
    centres = np.asarray(centres, dtype=float)
    if centres.size == 1:
        return np.array([centres[0] - 0.5, centres[0] + 0.5])
    mid = 0.5 * (centres[1:] + centres[:-1])
    return np.concatenate([[2 * centres[0] - mid[0]], mid, [2 * centres[-1] - mid[-1]]])


def _draw_line(ax, fractions, values, center, names, label) -> None:
    ax.plot(100 * fractions[:, 0], values, "o-", color="tab:blue", label="re-solved point")
    ax.axvline(100 * center[0], color="tab:red", linestyle=":", label="coupled optimum")
    ax.set_xlabel(f"{names[0]} share of the total stage mass [%]", parse_math=False)
    ax.set_ylabel(label)
    ax.legend(loc="best", fontsize=8)


def _draw_cells(fig, ax, fractions, values, center, names, label, unit) -> None:
    n = int(round(np.sqrt(len(values))))
    # the map is a grid: offsets of the second stage run fastest (staging.coupled)
    f1 = 100 * fractions[:, 0].reshape(n, n)[:, 0]
    f2 = 100 * fractions[:, 1].reshape(n, n)[0, :]
    z = np.ma.masked_invalid(values.reshape(n, n))
    mesh = ax.pcolormesh(_cell_edges(f1), _cell_edges(f2), z.T, cmap="viridis",
                         shading="flat", edgecolors="white", linewidth=0.6)
    mesh.set_gid("split-cells")
    fig.colorbar(mesh, ax=ax, label=label)
    span = float(np.nanmax(values) - np.nanmin(values)) if np.any(np.isfinite(values)) else 0
    low = float(np.nanmin(values)) if np.any(np.isfinite(values)) else 0.0
    # values in the lower half of each cell: the optimum's marker sits at its centre
    shift = 0.25 * (np.diff(_cell_edges(f2)).min() if f2.size else 0.0)
    for i, x in enumerate(f1):
        for k, y in enumerate(f2):
            value = values.reshape(n, n)[i, k]
            light = np.isfinite(value) and span > 0 and (value - low) > 0.6 * span
            ax.text(x, y - shift, f"{value:,.1f}" if np.isfinite(value) else "no solution",
                    ha="center", va="center", fontsize=7, gid="split-value",
                    color="black" if light else "white")
    ax.plot(100 * center[0], 100 * center[1], marker="*", color="red", markersize=14,
            markeredgecolor="white", linestyle="none", label="coupled optimum",
            gid="optimum")
    ax.set_xlabel(f"{names[0]} share of the total stage mass [%]", parse_math=False)
    ax.set_ylabel(f"{names[1]} share of the total stage mass [%]", parse_math=False)
    ax.legend(loc="upper right", fontsize=8, framealpha=0.85)
    ax.set_aspect("auto")
    ax.text(0.0, -0.16, f"each cell: one re-solve, its objective in {unit}; neighbours "
            f"within the solver's tolerance are equal optima", transform=ax.transAxes,
            fontsize=7, color="0.3", parse_math=False)


def plot_split_map(split_map: dict, out_dir, *, unit: str, objective: str,
                   name: str = "split_map.png", status: str = "optimal") -> Path:
    """Plot the objective over the stage-mass split around the coupled optimum.

    Two stages: a line over the first stage's share of the total stage mass; three
    stages: one filled cell per re-solved point over the first two stages' shares, its
    value written in it (no contours: see the module's notes). The coupled optimum is
    marked, and the figure is stamped with the status and the caution.

    Parameters
    ----------
    split_map : dict
        From :func:`ascentplan.staging.coupled.split_map`.
    out_dir : str or Path
    unit : str
        Unit of the objective values.
    objective : str
        Objective name, for the axis label.
    name : str
        File name.
    status : str
        Status of the coupled solve the map is centred on (a map is drawn only around
        an optimal, verified one).

    Returns
    -------
    Path
        The file written.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    fractions = np.array(split_map["fractions"], dtype=float)
    values = np.array(split_map["objective"], dtype=float)
    names = [printable(n) for n in split_map["stage_names"]]
    center = split_map["center_fractions"]
    fig = Figure(figsize=(7.0, 5.6))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    fig.subplots_adjust(left=0.12, right=0.97 if fractions.shape[1] == 2 else 0.98,
                        top=0.87, bottom=0.17)
    label = f"{objective.replace('_', ' ')} [{unit}]"
    if fractions.shape[1] == 2:
        _draw_line(ax, fractions, values, center, names, label)
    else:
        _draw_cells(fig, ax, fractions, values, center, names, label, unit)
    ax.set_title("Objective around the optimal stage-mass split (re-solved at each point)",
                 fontsize=10)
    # grid lines would cut through the cells and their values
    if fractions.shape[1] == 2:
        ax.grid(True, alpha=0.3)
    stamp_figure(fig, *status_stamp(status))
    path = out / name
    save_png(fig, path)
    return path
