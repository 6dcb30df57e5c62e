"""Plots of a trade study: the performance curve of one input with the exchange ratio drawn
as a tangent at each point, the performance map of two inputs, and the spread of a
dispersion's cases against the reserve that covers them."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from scipy.interpolate import RegularGridInterpolator

from ascentplan.cautions import CAUTION
from ascentplan.output.atomic import atomic_open
from ascentplan.output.text import printable

__all__ = ["PERFORMANCE_CURVE", "PERFORMANCE_MAP", "DISPERSION_PLOT", "plot_dispersion",
           "plot_performance_curve", "plot_performance_map"]

PERFORMANCE_CURVE = "performance.png"
PERFORMANCE_MAP = "performance_map.png"
DISPERSION_PLOT = "dispersion.png"

#: resolution of the PNG files [dots per inch]
_DPI = 150
#: half-length of a tangent, as a fraction of the smallest spacing of the input
_TANGENT_FRACTION = 0.35
#: points per axis of the interpolated map: fine enough that the contours follow the
#: linear interpolation between grid points, which has no extremum inside a cell (so it
#: draws no island that no grid point supports)
_MAP_RESOLUTION = 241


def _figure(size=(7.5, 4.8), box=(0.12, 0.17, 0.84, 0.72)) -> tuple[Figure, object]:
    fig = Figure(figsize=size)
    FigureCanvasAgg(fig)
    ax = fig.add_axes(box)
    return fig, ax


def _pad(ax, xs: list, ys: list) -> None:
    """Room around the grid so that the points on its edges are seen whole."""
    for values, setter in ((xs, ax.set_xlim), (ys, ax.set_ylim)):
        if len(values) >= 2:
            room = 0.04 * (values[-1] - values[0])
            setter(values[0] - room, values[-1] + room)


def _label_optimum(ax, best, xs: list, ys: list, unit: str) -> None:
    """The optimum's star and value, the label turned towards the middle of the map."""
    ax.plot(best[0], best[1], "*", color="white", markeredgecolor="k", markersize=16,
            zorder=5)
    right = len(xs) >= 2 and best[0] > 0.5 * (xs[0] + xs[-1])
    high = len(ys) >= 2 and best[1] > 0.5 * (ys[0] + ys[-1])
    ax.annotate(printable(f"optimum {best[2]:.6g} {unit}") + "\n"
                + printable(f"at {best[0]:.5g}, {best[1]:.5g}"),
                (best[0], best[1]), textcoords="offset points",
                xytext=(-10 if right else 10, -10 if high else 10),
                ha="right" if right else "left", va="top" if high else "bottom",
                fontsize=8, bbox=dict(boxstyle="round", fc="white", alpha=0.85), zorder=6)


def _stamp(fig: Figure, title: str) -> None:
    """The title at the top and the caution's first sentence at the bottom: a PNG is
    often looked at apart from the report."""
    fig.text(0.01, 0.985, printable(title), ha="left", va="top", fontsize=9.5,
             fontweight="bold", parse_math=False)
    first = CAUTION.split(". ", 1)[0].rstrip(".") + "."
    fig.text(0.5, 0.008, first, ha="center", va="bottom", fontsize=7, color="0.35",
             parse_math=False)


def _save(fig: Figure, path: Path) -> Path:
    with atomic_open(path, "wb") as fh:
        fig.savefig(fh, format="png", dpi=_DPI)
    return path


def _tangent_half_width(x: np.ndarray) -> float:
    steps = np.diff(np.unique(x))
    if steps.size:
        return _TANGENT_FRACTION * float(steps.min())
    return 0.05 * max(abs(float(x[0])), 1.0)


def plot_performance_curve(points: list, key: str, unit: str, objective: str,
                           objective_unit: str, path, title: str = "") -> Path:
    """The objective against one input, with each point's exchange ratio as a tangent.

    Parameters
    ----------
    points : list of dict
        :func:`ascentplan.study.summary.curve_slopes`: ``x`` (the input in ``unit``),
        ``objective``, ``ratio`` (d objective / d input, or None: no tangent),
        ``status``, ``verified``.
    key, unit : str
        The input's key path and its unit ('' for a plain number).
    objective, objective_unit : str
    path : str or pathlib.Path
    title : str

    Returns
    -------
    pathlib.Path
    """
    fig, ax = _figure()
    good = [p for p in points if p["objective"] is not None]
    x = np.array([p["x"] for p in good], dtype=float)
    y = np.array([p["objective"] for p in good], dtype=float)
    if good:
        ax.plot(x, y, color="C0", linewidth=1.2, zorder=2)
        ok = np.array([p["status"] == "optimal" and bool(p["verified"]) for p in good])
        ax.plot(x[ok], y[ok], "o", color="C0", markersize=5, zorder=3)
        ax.plot(x[~ok], y[~ok], "o", markerfacecolor="white", color="C3", markersize=6,
                zorder=3)
        half = _tangent_half_width(x)
        for p in good:
            if p["ratio"] is None or not math.isfinite(p["ratio"]):
                continue
            ax.plot([p["x"] - half, p["x"] + half],
                    [p["objective"] - p["ratio"] * half, p["objective"] + p["ratio"] * half],
                    color="C1", linewidth=2.2, solid_capstyle="round", zorder=4)
    missing = len(points) - len(good)
    ax.set_xlabel(printable(f"{key} [{unit or '-'}]"))
    ax.set_ylabel(printable(f"{objective} [{objective_unit}]"))
    ax.grid(True, alpha=0.3)
    handles = [Line2D([], [], color="C0", marker="o", label="optimal and verified"),
               Line2D([], [], color="C3", marker="o", markerfacecolor="white",
                      linestyle="none", label="not verified"),
               Line2D([], [], color="C1", linewidth=2.2,
                      label="exchange ratio d(objective)/d(input)")]
    ax.legend(handles=handles, fontsize=8, loc="best")
    note = f" ({missing} point(s) without an optimum not drawn)" if missing else ""
    _stamp(fig, (title or f"{objective} against {key}") + note)
    return _save(fig, Path(path))


def _grid(cells: list, xs: list, ys: list) -> np.ndarray:
    """The objective on the grid of ``xs`` by ``ys`` (NaN where a point has none)."""
    z = np.full((len(xs), len(ys)), np.nan)
    for x, y, value, _ in cells:
        if value is None or x is None or y is None:
            continue
        i = int(np.argmin(np.abs(np.asarray(xs) - x)))
        j = int(np.argmin(np.abs(np.asarray(ys) - y)))
        z[i, j] = value
    return z


def _optimum(cells: list, maximise: bool):
    good = [c for c in cells if c[2] is not None and c[3]]
    if not good:
        return None
    return (max if maximise else min)(good, key=lambda c: c[2])


def plot_performance_map(cells: list, axes: list, objective: str, objective_unit: str,
                         maximise: bool, path, title: str = "") -> Path:
    """A contour map of the objective over a grid of two inputs, the optimum labelled.

    The map is the linear interpolation of the grid points on a fine grid (filled
    contours); grid points are drawn (a cross where a point has no verified optimum) and
    cells next to a point without an objective are left blank.

    Parameters
    ----------
    cells : list of tuple
        Per point ``(x, y, objective or None, verified optimum: bool)``, x and y in the
        axes' units.
    axes : list of dict
        Two ``{"key", "unit", "values"}`` (values in the unit).
    objective, objective_unit : str
    maximise : bool
        Whether the optimum is the largest objective.
    path : str or pathlib.Path
    title : str
    """
    fig, ax = _figure((7.5, 5.6), (0.12, 0.13, 0.66, 0.77))
    xs = sorted(v for v in axes[0]["values"] if v is not None)
    ys = sorted(v for v in axes[1]["values"] if v is not None)
    z = _grid(cells, xs, ys)
    if len(xs) >= 2 and len(ys) >= 2 and np.isfinite(z).any():
        interpolate = RegularGridInterpolator((xs, ys), z, method="linear")
        fx = np.linspace(xs[0], xs[-1], _MAP_RESOLUTION)
        fy = np.linspace(ys[0], ys[-1], _MAP_RESOLUTION)
        gx, gy = np.meshgrid(fx, fy, indexing="ij")
        fine = np.ma.masked_invalid(interpolate(np.stack([gx, gy], axis=-1)))
        filled = ax.contourf(gx, gy, fine, levels=14, cmap="viridis")
        ax.contour(gx, gy, fine, levels=filled.levels, colors="k", linewidths=0.4,
                   alpha=0.5)
        bar = fig.colorbar(filled, cax=fig.add_axes((0.82, 0.13, 0.03, 0.77)))
        bar.set_label(printable(f"{objective} [{objective_unit}]"))
    good = [c for c in cells if c[3]]
    bad = [c for c in cells if not c[3]]
    ax.plot([c[0] for c in good], [c[1] for c in good], "o", color="k", markersize=3,
            zorder=4)
    ax.plot([c[0] for c in bad], [c[1] for c in bad], "x", color="C3", markersize=7,
            zorder=4)
    _pad(ax, xs, ys)
    best = _optimum(cells, maximise)
    if best is not None:
        _label_optimum(ax, best, xs, ys, objective_unit)
    ax.set_xlabel(printable(f"{axes[0]['key']} [{axes[0]['unit'] or '-'}]"))
    ax.set_ylabel(printable(f"{axes[1]['key']} [{axes[1]['unit'] or '-'}]"))
    note = f" ({len(bad)} grid point(s) without a verified optimum: x)" if bad else ""
    _stamp(fig, (title or f"{objective} over {axes[0]['key']} and {axes[1]['key']}") + note)
    return _save(fig, Path(path))


def plot_dispersion(objectives: list, reserve: dict, path, title: str = "") -> Path:
    """The objective of a dispersion's cases (histogram), the nominal, and the value the
    reserve covers with its confidence interval.

    Parameters
    ----------
    objectives : list of float
        The objective of each dispersed case with an optimum.
    reserve : dict
        :func:`ascentplan.study.summary.dispersion_reserve`.
    path : str or pathlib.Path
    title : str
    """
    fig, ax = _figure()
    unit = reserve.get("objective_unit", "")
    if objectives:
        ax.hist(objectives, bins=max(5, min(40, int(math.sqrt(len(objectives))) + 1)),
                color="C0", alpha=0.75, label=f"{len(objectives)} cases")
    nominal, covered = reserve.get("nominal"), reserve.get("covered_value")
    if nominal is not None:
        ax.axvline(nominal, color="k", linewidth=1.5, label=f"nominal {nominal:.6g} {unit}")
    if covered is not None:
        pct = 100.0 * reserve["confidence"]
        ax.axvline(covered, color="C3", linewidth=1.8,
                   label=f"covers {pct:.4g} % of cases: {covered:.6g} {unit}")
        ends = [reserve.get("lower"), reserve.get("upper")]
        if nominal is not None and None not in ends:
            sign = 1.0 if covered <= nominal else -1.0
            lo, hi = sorted(nominal - sign * e for e in ends)
            ax.axvspan(lo, hi, color="C3", alpha=0.15,
                       label=f"{100 * reserve['interval_confidence']:.3g} % interval")
    ax.set_xlabel(printable(f"{reserve.get('objective_name', 'objective')} [{unit}]"))
    ax.set_ylabel("cases")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8, loc="best")
    _stamp(fig, title or "dispersion of the objective")
    return _save(fig, Path(path))
