"""Time-history plots of an ascent (altitude, speed, loads, controls, mass) written as PNG files.

Every figure is stamped with the run's status and the caution
(:mod:`ascentplan.output.figure_marks`), drawn on a fixed layout (a constrained layout
solves for the margins at every draw, which cost most of the plotting time) and saved
with light PNG compression; :data:`FIGURES` is the one order of the figures, used by the
results folder and the report alike.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

# Figure with its own Agg canvas never touches pyplot's global state, so plotting works
# headless and inside a user's interactive session alike, and needs no explicit close.
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ascentplan.models.dynamics import dynamics_kind, flight_model, flight_quantities, propulsion
from ascentplan.output.figure_marks import (
    DPI,
    PngWriter,
    event_kind,
    save_png,
    stamp_figure,
    status_stamp,
)
from ascentplan.output.ground_track import has_ground_track, plot_ground_track
from ascentplan.output.split_map_plot import plot_split_map
from ascentplan.output.text import printable
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem, phase_plan

__all__ = ["DPI", "FIGURES", "PANELS", "draw_figures", "figure_stems", "order_figures",
           "plot_arguments", "plot_result", "plot_split_map", "plot_trajectory", "result_nodes"]


_PANEL_SIZE = (7.0, 4.2)  # single-quantity figure [in]
_CELL_SIZE = (5.0, 3.4)  # one cell of the overview grid [in]
#: height of the overview's bands [in]: title and status above, legend and caution below
_OVERVIEW_BANDS = 1.1
_REPLAY_STYLE = dict(color="C0", linewidth=1.6)
_AIR_RELATIVE_STYLE = dict(color="C2", linewidth=1.4, linestyle="--")
_NODE_STYLE = dict(color="C1", marker="o", markersize=3.2, linestyle="none")
_BOUND_STYLE = dict(color="C3", linewidth=1.2, linestyle="--")
#: events closer than this fraction of the flight time share one marker and label
_EVENT_MERGE_FRACTION = 0.004
#: fraction of an axes' height kept free above the data for event names
_EVENT_BAND = 0.14


@dataclass(frozen=True)
class _Panel:
    """One plotted quantity: file stem, title, axis label and which flights show it."""

    key: str
    title: str
    ylabel: str
    shown: Callable[[Problem], bool]


def _always(problem: Problem) -> bool:
    return True


def _steered(problem: Problem) -> bool:
    return dynamics_kind(problem.dynamics).steered


def _with_q_alpha_limit(problem: Problem) -> bool:
    spec = LIMITS["max_q_alpha"]
    return (spec.applies_to(dynamics_kind(problem.dynamics))
            and getattr(problem.limits, spec.name) is not None)


#: the limit on each limited quantity: its panel is drawn in the limit's user unit, so
#: that the curves and the bound line share one axis
_LIMIT_OF_QUANTITY = {spec.quantity: spec for spec in LIMITS.values()}


def _unit(quantity: str) -> str:
    return _LIMIT_OF_QUANTITY[quantity].unit


def _in_limit_unit(quantity: str, values) -> np.ndarray:
    """Values of a limited quantity as its limit measures them, in the limit's user unit."""
    spec = _LIMIT_OF_QUANTITY[quantity]
    return spec.to_user(spec.measured(np.asarray(values, dtype=float)))


#: the panels in plotting order; ``key`` is also the PNG file stem
PANELS = (
    _Panel("altitude", "Altitude", f"altitude [{_unit('altitude')}]", _always),
    _Panel("speed", "Speed", "speed [m/s]", _always),
    _Panel("dynamic_pressure", "Dynamic pressure",
           f"dynamic pressure [{_unit('dynamic_pressure')}]", _always),
    _Panel("axial_acceleration", "Sensed axial acceleration",
           f"axial acceleration [{_unit('axial_acceleration')}]", _always),
    _Panel("q_alpha", "Dynamic pressure times angle of attack",
           f"|q alpha| [{_unit('q_alpha')}]", _with_q_alpha_limit),
    _Panel("throttle", "Throttle", "throttle [fraction of full flow]", _always),
    _Panel("pitch", "Thrust pitch from local horizontal", "pitch [deg]", _steered),
    _Panel("mass", "Vehicle mass", "mass [t]", _always),
)

def _quantity(trajectory, name: str) -> np.ndarray:
    return np.asarray(trajectory.quantities[name], dtype=float)


def _replay_lines(problem: Problem, trajectory, key: str) -> list[tuple[np.ndarray, dict, str]]:
    """The replay's curves of a panel: (values in plot units, line style, legend label)."""
    if key in _LIMIT_OF_QUANTITY:
        return [(_in_limit_unit(key, _quantity(trajectory, key)), _REPLAY_STYLE, "replay")]
    kind = dynamics_kind(problem.dynamics)
    if key == "speed":
        steered = kind.steered
        lines = [(_quantity(trajectory, "speed"), _REPLAY_STYLE,
                  "inertial" if steered else "replay")]
        if steered and "relative_speed" in trajectory.quantities:
            lines.append((_quantity(trajectory, "relative_speed"), _AIR_RELATIVE_STYLE,
                          "air-relative"))
        return lines
    controls = np.asarray(trajectory.controls, dtype=float)
    if key == "throttle":
        return [(controls[kind.control_index("throttle")], _REPLAY_STYLE, "replay")]
    if key == "pitch":
        return [(np.degrees(controls[kind.control_index("pitch")]), _REPLAY_STYLE, "replay")]
    if key == "mass":
        return [(kind.mass(np.asarray(trajectory.state, dtype=float)) / 1000.0, _REPLAY_STYLE,
                 "replay")]
    raise KeyError(key)


def _bound(problem: Problem, key: str) -> tuple[float, str] | None:
    """The imposed limit drawn on a panel, in plot units, with its legend label."""
    for spec in LIMITS.values():
        bound = getattr(problem.limits, spec.name)
        if spec.quantity == key and bound is not None:
            value = spec.to_user(float(bound))
            return value, f"{spec.label} {value:.4g} {spec.unit}"
    return None


#: every figure a results folder holds, by file stem, in the one order in which the
#: results folder lists them and the report shows them: the overview, the time histories
#: in :data:`PANELS` order, then the split map (drawn by a stage-mass split with its map)
FIGURES = ("overview", *(p.key for p in PANELS), "ground_track", "split_map")


def order_figures(paths) -> list[Path]:
    """PNG paths in :data:`FIGURES` order (a file-name prefix is allowed); others last."""
    def key(path: Path) -> tuple:
        stem = path.stem
        # the longest name ending the stem, so that "q_alpha" is not taken for another
        found = [(len(name), i) for i, name in enumerate(FIGURES) if stem.endswith(name)]
        return (max(found)[1], stem) if found else (len(FIGURES), stem)

    return sorted((Path(p) for p in paths), key=key)


def _attitude_quantities(states, controls, model, prop) -> set:
    """Flight quantities that follow the commanded attitude: those that change when every
    control but the throttle is moved. On a coast the attitude is not flown (the replay
    holds no pitch command), so the optimiser's values of these are no result."""
    if controls.shape[0] < 2:
        return set()
    moved = controls.copy()
    moved[1:] += 0.1
    base = flight_quantities(states, controls, model, prop)
    other = flight_quantities(states, moved, model, prop)
    return {key for key in base if not np.allclose(np.asarray(base[key], dtype=float),
                                                   np.asarray(other[key], dtype=float))}


def _node_quantities(problem: Problem, nodes) -> list[dict]:
    """Per phase, the panel values at the optimiser's nodes (plot units), keyed by panel.

    Controls are shown on powered phases only: on a coast no control is flown, so
    the optimiser's throttle and pitch there (and what follows from the pitch, such as
    q alpha) are free values with no meaning. Quantities that need the state only when
    the node states are given (a third element of each entry).
    """
    phases = phase_plan(problem)
    model = flight_model(problem)
    out = []
    for j, entry in enumerate(nodes):
        times = np.asarray(entry[0], dtype=float).ravel()
        controls = np.atleast_2d(np.asarray(entry[1], dtype=float))
        powered = j >= len(phases) or phases[j].powered
        values = {"time": times}
        if powered:
            values["throttle"] = controls[model.kind.control_index("throttle")]
            if model.kind.steered and controls.shape[0] > 1:
                values["pitch"] = np.degrees(controls[model.kind.control_index("pitch")])
        if len(entry) > 2 and entry[2] is not None and j < len(phases):
            states = np.atleast_2d(np.asarray(entry[2], dtype=float))
            prop = propulsion(problem.vehicle.stages[phases[j].stage], powered)
            f = flight_quantities(states, controls, model, prop)
            hidden = set() if powered else _attitude_quantities(states, controls, model, prop)
            values.update({quantity: _in_limit_unit(quantity, f[quantity])
                           for quantity in _LIMIT_OF_QUANTITY
                           if quantity in f and quantity not in hidden})
            values["speed"] = np.asarray(model.kind.speed(states))
            values["mass"] = model.kind.mass(states) / 1000.0
        out.append(values)
    return out


def _event_marks(problem: Problem, trajectory) -> list[tuple[float, str, list[str]]]:
    """Events as (time [s], label, kinds); coincident events (burnout, then staging)
    share one label and are drawn one line per kind."""
    stages = problem.vehicle.stages
    t = np.asarray(trajectory.time, dtype=float)
    span = float(t[-1] - t[0]) if t.size > 1 else 1.0
    groups: list[tuple[float, list[str], list[str]]] = []  # time, kinds, stage names
    for ev in sorted(getattr(trajectory, "events", []) or [], key=lambda e: e["time"]):
        kind = str(ev.get("kind", "event"))
        if kind == "liftoff":
            continue
        time = float(ev["time"])
        stage = ev.get("stage")
        name = (printable(stages[stage].name) if isinstance(stage, (int, np.integer))
                and 0 <= stage < len(stages) and kind != "apogee" else None)
        if not groups or time - groups[-1][0] > _EVENT_MERGE_FRACTION * span:
            groups.append((time, [], []))
        _, kinds, names = groups[-1]
        if kind not in kinds:
            kinds.append(kind)
        if name is not None and name not in names:
            names.append(name)
    return [(time, " + ".join(k.replace("_", " ") for k in kinds)
             + (f" ({', '.join(names)})" if names else ""), kinds)
            for time, kinds, names in groups]


def _event_kinds(events) -> list[str]:
    """The kinds of event drawn, in order of first appearance."""
    return list(dict.fromkeys(kind for _time, _label, kinds in events for kind in kinds))


def _draw_events(ax, events, *, legend_labels: bool) -> None:
    named = set()
    for time, _label, kinds in events:
        for kind in kinds:
            drawn = event_kind(kind)
            label = drawn.legend if legend_labels and kind not in named else "_nolegend_"
            named.add(kind)
            ax.axvline(time, gid="event", label=label, **drawn.style)


def _draw_panel(ax, problem: Problem, trajectory, panel: _Panel, node_values, events,
                *, label_events: bool, legend: bool) -> None:
    t = np.asarray(trajectory.time, dtype=float)
    for values, style, label in _replay_lines(problem, trajectory, panel.key):
        ax.plot(t, values, label=label, **style)
    if node_values:
        first = True
        for values in node_values:
            if panel.key in values:
                ax.plot(values["time"], values[panel.key],
                        label="optimiser nodes" if first else "_nolegend_", **_NODE_STYLE)
                first = False
    bound = _bound(problem, panel.key)
    if bound is not None:
        ax.axhline(bound[0], label=bound[1], gid="bound", **_BOUND_STYLE)
    ax.set_xlabel("time [s]")
    ax.set_ylabel(panel.ylabel)
    # a title at a fixed height: matplotlib otherwise measures the axes at every draw to
    # place it
    ax.set_title(panel.title, fontsize=10, y=1.0, pad=4.0)
    ax.grid(True, alpha=0.3)
    if t.size > 1:
        # a little room on the right so an event at the last sample stays visible
        ax.set_xlim(t[0], t[-1] + 0.01 * (t[-1] - t[0]))
    if panel.key == "throttle":
        ax.set_ylim(0.0, 1.05 * max(1.0, ax.get_ylim()[1]))
    _draw_events(ax, events, legend_labels=legend)
    if label_events and events:
        _label_events(ax, events)
    if legend:
        ax.legend(fontsize=7, loc="best", framealpha=0.85)


def _label_events(ax, events) -> None:
    """Event names in a band added above the data, so that they never hide a curve."""
    low, high = ax.get_ylim()
    ax.set_ylim(low, high + _EVENT_BAND * (high - low) / (1.0 - _EVENT_BAND))
    x0, x1 = ax.get_xlim()
    for i, (time, label, _kinds) in enumerate(events):
        # left of the line in the right half, right of it in the left half: stays inside
        right_half = (time - x0) > 0.5 * (x1 - x0)
        # successive labels alternate between two rows so that close events stay legible
        y = 0.985 - 0.065 * (i % 2)
        ax.annotate(label, xy=(time, y), xycoords=ax.get_xaxis_transform(),
                    xytext=(-3 if right_half else 3, 0), textcoords="offset points",
                    ha="right" if right_half else "left", va="top", fontsize=7,
                    color="0.25", parse_math=False)


def _panels_for(problem: Problem) -> list[_Panel]:
    return [p for p in PANELS if p.shown(problem)]


def _fixed_margins(fig: Figure, *, left: float, right: float, top: float, bottom: float,
                   **spacing) -> dict:
    """Subplot parameters for margins given in inches (labels, stamp and caution fit)."""
    width, height = fig.get_size_inches()
    return dict(left=left / width, right=1.0 - right / width, top=1.0 - top / height,
                bottom=bottom / height, **spacing)


def _stamp(fig: Figure, problem: Problem, stamp: tuple[str, bool], title: str,
           *, centred: bool) -> None:
    stamp_figure(fig, *stamp)
    # a name is shown as written: no mathtext from a '$' in it
    if centred:
        fig.suptitle(title, fontsize=12, y=0.995 - 0.24 / fig.get_size_inches()[1],
                     va="top", parse_math=False)
    else:
        fig.text(0.992, 0.992, title, ha="right", va="top", fontsize=8.5, color="0.3",
                 parse_math=False)


class _PanelCanvas:
    """One figure and axes for the single-panel PNGs, emptied between panels: its axis
    ticks are made once (a fresh figure makes them again, and its first draw took about
    1.6 times as long as a redraw, measured on the two-stage panels)."""

    def __init__(self):
        self.fig = Figure(figsize=_PANEL_SIZE)
        FigureCanvasAgg(self.fig)
        self.ax = self.fig.add_subplot()
        self.fig.subplots_adjust(**_fixed_margins(self.fig, left=0.85, right=0.2, top=0.62,
                                                  bottom=0.78))

    def empty(self):
        """The figure and axes with no data, labels or stamps, scaling to new data."""
        ax = self.ax
        for artist in [*ax.lines, *ax.texts, *ax.collections, *ax.patches, *self.fig.texts]:
            artist.remove()
        if ax.get_legend() is not None:
            ax.get_legend().remove()
        ax.set_xlim(auto=True)
        ax.set_ylim(auto=True)
        ax.autoscale(True)
        ax.relim()
        return self.fig, ax


def _panel_figure(problem: Problem, trajectory, key: str, nodes=None, *, stamp=None,
                  node_values=None, events=None, canvas: _PanelCanvas | None = None) -> Figure:
    """The figure of one panel (``key`` from :data:`PANELS`), not yet saved.

    ``stamp`` is (text, trustworthy) from :func:`status_stamp`; by default that of a
    forward simulation with the trajectory's status. ``canvas`` is a figure to draw on
    again (emptied first); by default a new one.
    """
    panel = next(p for p in PANELS if p.key == key)
    fig, ax = (canvas or _PanelCanvas()).empty()
    if node_values is None and nodes is not None:
        node_values = _node_quantities(problem, nodes)
    if events is None:
        events = _event_marks(problem, trajectory)
    _draw_panel(ax, problem, trajectory, panel, node_values, events,
                label_events=True, legend=True)
    _stamp(fig, problem, stamp or _simulation_stamp(trajectory), printable(problem.name),
           centred=False)
    return fig


def _overview_figure(problem: Problem, trajectory, nodes=None, *, stamp=None,
                     node_values=None, events=None) -> Figure:
    """All panels of the flight on one grid: 2x3 (vertical flight) or 3x3 (planar)."""
    panels = _panels_for(problem)
    ncols = 3
    nrows = -(-len(panels) // ncols)
    fig = Figure(figsize=(_CELL_SIZE[0] * ncols, _CELL_SIZE[1] * nrows + _OVERVIEW_BANDS))
    FigureCanvasAgg(fig)
    if node_values is None and nodes is not None:
        node_values = _node_quantities(problem, nodes)
    if events is None:
        events = _event_marks(problem, trajectory)
    axes = fig.subplots(nrows, ncols, squeeze=False, gridspec_kw=_fixed_margins(
        fig, left=0.75, right=0.2, top=0.95, bottom=1.25, hspace=0.55, wspace=0.28)).ravel()
    for i, (ax, panel) in enumerate(zip(axes, panels)):
        # event names on the first panel only: nine copies would hide the curves
        _draw_panel(ax, problem, trajectory, panel, node_values, events,
                    label_events=i == 0, legend=panel.key == "speed" and _steered(problem))
    for ax in axes[len(panels):]:
        ax.remove()
    handles = [Line2D([], [], **_REPLAY_STYLE, label="replay (forward integration)")]
    if node_values:
        handles.append(Line2D([], [], **_NODE_STYLE, label="optimiser nodes"))
    if any(_bound(problem, p.key) for p in panels):
        handles.append(Line2D([], [], **_BOUND_STYLE, label="imposed limit"))
    handles += [Line2D([], [], **event_kind(k).style, label=event_kind(k).legend)
                for k in _event_kinds(events)]
    fig.legend(handles=handles, loc="lower center", ncols=min(len(handles), 4), fontsize=9,
               frameon=False, bbox_to_anchor=(0.5, 0.22 / fig.get_size_inches()[1]))
    _stamp(fig, problem, stamp or _simulation_stamp(trajectory),
           f"{printable(problem.name)}: {problem.dynamics} ascent", centred=True)
    return fig


def _simulation_stamp(trajectory) -> tuple[str, bool]:
    return status_stamp(str(getattr(trajectory, "status", "ok") or "ok"), simulation=True)


def plot_trajectory(problem: Problem, trajectory, out_dir, *, nodes=None,
                    prefix: str = "", status: str | None = None) -> list[Path]:
    """Write the time-history plots of a flight as PNG files.

    ``overview.png`` with every quantity on one grid, then one file per quantity,
    against time from liftoff [s]: ``altitude.png`` [km], ``speed.png`` [m/s]
    (inertial; air-relative dashed for planar flight), ``dynamic_pressure.png`` [kPa],
    ``axial_acceleration.png`` [g0], ``q_alpha.png`` [kPa deg] (planar with a q alpha
    limit only), ``throttle.png``, ``pitch.png`` [deg] (planar only) and ``mass.png``
    [t] (the order of :data:`FIGURES`). Imposed limits are dashed horizontal lines;
    events are vertical lines styled by kind (burnout, flameout, staging, apogee,
    impact), named in the legend and labelled above the curves. Every figure is stamped
    with the run's status and the caution.

    Parameters
    ----------
    problem : Problem
        The problem flown (its dynamics, limits, stages and planet are used).
    trajectory : Trajectory
        A flight from :func:`ascentplan.simulate.simulate`.
    out_dir : str or Path
        Folder to write into; created if missing.
    nodes : list, optional
        The optimiser's mesh, one entry per phase of ``phase_plan(problem)``:
        ``(times, controls)`` or ``(times, controls, states)``, with node times from
        liftoff [s] (N,), controls (n_u, N) (throttle, pitch [rad]) and states (n, N).
        Drawn as markers over the replay (controls on powered phases only); with states,
        on every panel, else on the control panels only.
    prefix : str, optional
        Prepended to every file name.
    status : str, optional
        The solve's status (``optimal``, ``not_verified``, ``infeasible``, ``failed``)
        stamped on every figure; without it, the figures are stamped as a forward
        simulation with the trajectory's own status.

    Returns
    -------
    list of Path
        The files written, in :data:`FIGURES` order (overview first).
    """
    return draw_figures(problem, trajectory, out_dir, figure_stems(problem), nodes=nodes,
                        prefix=prefix, status=status)


def figure_stems(problem: Problem) -> list[str]:
    """The file stems of the figures of a flight of ``problem``, in :data:`FIGURES` order."""
    stems = ["overview", *(panel.key for panel in _panels_for(problem))]
    return stems + ["ground_track"] if has_ground_track(problem) else stems


def draw_figures(problem: Problem, trajectory, out_dir, stems, *, nodes=None,
                 prefix: str = "", status: str | None = None) -> list[Path]:
    """Write the figures named by ``stems`` (from :func:`figure_stems`) as PNG files;
    the arguments as for :func:`plot_trajectory`, which draws them all. Drawing processes
    each draw some of them (:mod:`ascentplan.output.plot_workers`)."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    stamp = _simulation_stamp(trajectory) if status is None else status_stamp(status)
    # computed once for all the figures
    shared = dict(stamp=stamp, events=_event_marks(problem, trajectory),
                  node_values=_node_quantities(problem, nodes) if nodes is not None else None)
    paths = []
    canvas = None
    with PngWriter() as writer:
        for stem in stems:
            path = out / f"{prefix}{stem}.png"
            if stem == "overview":
                fig = _overview_figure(problem, trajectory, **shared)
            elif stem == "ground_track":
                plot_ground_track(problem, trajectory, path, stamp)
                paths.append(path)
                continue
            else:
                canvas = canvas or _PanelCanvas()
                fig = _panel_figure(problem, trajectory, stem, canvas=canvas, **shared)
            save_png(fig, path, writer=writer)
            paths.append(path)
    return paths


def result_nodes(result) -> list[tuple]:
    """The optimiser's mesh of a solve result as ``nodes`` for :func:`plot_trajectory`."""
    sol = result.solution
    states = getattr(sol, "states", None) or [None] * len(sol.times)
    return [(t, u, x) for t, u, x in zip(sol.times, sol.controls, states)]


def plot_result(result, out_dir, *, prefix: str = "") -> list[Path]:
    """Write the plots of a solve result: its replay with the optimiser's nodes, every
    figure stamped with the result's status.

    Parameters
    ----------
    result : ascentplan.pipeline.Result
    out_dir : str or Path
        Folder to write into; created if missing.
    prefix : str, optional
        Prepended to every file name.

    Returns
    -------
    list of Path
        The files written, in :data:`FIGURES` order (see :func:`plot_trajectory`); empty
        when the result has no replay.
    """
    if result.trajectory is None:
        return []
    return plot_trajectory(out_dir=out_dir, prefix=prefix, **plot_arguments(result))


def plot_arguments(result) -> dict:
    """What :func:`plot_trajectory` draws of a solve result: the problem flown, its
    replay, the optimiser's nodes and the status, as keyword arguments."""
    # the replay flew the optimised masses, so the node quantities must use them too
    problem = getattr(result, "solved_problem", None) or result.problem
    return dict(problem=problem, trajectory=result.trajectory, nodes=result_nodes(result),
                status=result.status)
