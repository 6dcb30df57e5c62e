"""Time-history plots of an ascent (altitude, speed, loads, controls, mass) written as PNG files.

Every figure is stamped with the run's status and the caution
(:mod:`ascentplan.output.figure_marks`), drawn on a fixed layout (a constrained layout
solves for the margins at every draw, which cost most of the plotting time) and saved
with light PNG compression; :data:`FIGURES` is the one order of the figures, used by the
results folder and the report alike.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

# Figures with their own Agg canvas (output/canvases.py) never touch pyplot's global
# state, so plotting works headless and inside a user's interactive session alike.
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ascentplan.models.dynamics import (
    dynamics_kind,
    flight_model,
    flight_quantities,
    phase_propulsion,
)
from ascentplan.output.canvases import Canvases, OverviewCanvas, PanelCanvas
from ascentplan.output.figure_list import (
    FIGURES,
    LIMIT_OF_QUANTITY,
    PANELS,
    Panel,
    figure_stems,
    order_figures,
    panels_for,
    plot_arguments,
    result_nodes,
)
from ascentplan.output.figure_marks import (
    DPI,
    PngWriter,
    event_kind,
    event_name,
    label_rows,
    save_png,
    stamp_figure,
    status_stamp,
)
from ascentplan.output.ground_track import plot_ground_track
from ascentplan.output.split_map_plot import plot_split_map
from ascentplan.output.text import printable
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem, phase_plan

__all__ = ["DPI", "FIGURES", "PANELS", "draw_figures", "figure_stems", "order_figures",
           "plot_arguments", "plot_result", "plot_split_map", "plot_trajectory", "result_nodes"]


_REPLAY_STYLE = dict(color="C0", linewidth=1.6)
_AIR_RELATIVE_STYLE = dict(color="C2", linewidth=1.4, linestyle="--")
_NODE_STYLE = dict(color="C1", marker="o", markersize=3.2, linestyle="none")
_BOUND_STYLE = dict(color="C3", linewidth=1.2, linestyle="--")
#: events closer than this fraction of the flight time share one marker and label
_EVENT_MERGE_FRACTION = 0.004
#: fraction of an axes' height kept free above the data for event names
_EVENT_BAND = 0.14


def _in_limit_unit(quantity: str, values) -> np.ndarray:
    """Values of a limited quantity as its limit measures them, in the limit's user unit."""
    spec = LIMIT_OF_QUANTITY[quantity]
    return spec.to_user(spec.measured(np.asarray(values, dtype=float)))


def _quantity(trajectory, name: str) -> np.ndarray:
    return np.asarray(trajectory.quantities[name], dtype=float)


def _replay_lines(problem: Problem, trajectory, key: str) -> list[tuple[np.ndarray, dict, str]]:
    """The replay's curves of a panel: (values in plot units, line style, legend label)."""
    if key in LIMIT_OF_QUANTITY:
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
            # the phase's engines as flown: the stage and any boosters beside it
            prop = phase_propulsion(problem.vehicle, phases[j])
            f = flight_quantities(states, controls, model, prop)
            hidden = set() if powered else _attitude_quantities(states, controls, model, prop)
            values.update({quantity: _in_limit_unit(quantity, f[quantity])
                           for quantity in LIMIT_OF_QUANTITY
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
        name = event_name(ev, stages)
        name = None if name is None else printable(name)
        if not groups or time - groups[-1][0] > _EVENT_MERGE_FRACTION * span:
            groups.append((time, [], []))
        _, kinds, names = groups[-1]
        if kind not in kinds:
            kinds.append(kind)
        if name is not None and name not in names:
            names.append(name)
    return [(time, " + ".join(event_kind(k).short for k in kinds)
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


def _draw_panel(ax, problem: Problem, trajectory, panel: Panel, node_values, events,
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
    x0, x1 = ax.get_xlim()
    # close events take further rows so that their labels stay legible
    rows = label_rows(events, x0, x1, ax.get_position().width * ax.figure.get_figwidth() * 72)
    band = _EVENT_BAND + 0.065 * max(0, max(rows) - 1)
    ax.set_ylim(low, high + band * (high - low) / (1.0 - band))
    for i, (time, label, _kinds) in enumerate(events):
        # left of the line in the right half, right of it in the left half: stays inside
        right_half = (time - x0) > 0.5 * (x1 - x0)
        y = 0.985 - 0.065 * rows[i]
        ax.annotate(label, xy=(time, y), xycoords=ax.get_xaxis_transform(),
                    xytext=(-3 if right_half else 3, 0), textcoords="offset points",
                    ha="right" if right_half else "left", va="top", fontsize=7,
                    color="0.25", parse_math=False)


def _stamp(fig: Figure, problem: Problem, stamp: tuple[str, bool], title: str,
           *, centred: bool) -> None:
    stamp_figure(fig, *stamp)
    # a name is shown as written: no mathtext from a '$' in it
    if centred:
        fig.text(0.5, 0.995 - 0.24 / fig.get_size_inches()[1], title, ha="center",
                 va="top", fontsize=12, parse_math=False)
    else:
        fig.text(0.992, 0.992, title, ha="right", va="top", fontsize=8.5, color="0.3",
                 parse_math=False)


def _panel_figure(problem: Problem, trajectory, key: str, nodes=None, *, stamp=None,
                  node_values=None, events=None, canvas: PanelCanvas | None = None) -> Figure:
    """The figure of one panel (``key`` from :data:`PANELS`), not yet saved.

    ``stamp`` is (text, trustworthy) from :func:`status_stamp`; by default that of a
    forward simulation with the trajectory's status. ``canvas`` is a figure to draw on
    again (emptied first); by default a new one.
    """
    panel = next(p for p in PANELS if p.key == key)
    fig, ax = (canvas or PanelCanvas()).empty()
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
                     node_values=None, events=None,
                     canvas: OverviewCanvas | None = None) -> Figure:
    """All panels of the flight on one grid: 2x3 (vertical flight) or 3x3 (planar).

    ``canvas`` is a figure of as many panels to draw on again; by default a new one.
    """
    panels = panels_for(problem)
    kind = dynamics_kind(problem.dynamics)
    fig, axes = (canvas or OverviewCanvas(len(panels))).empty()
    if node_values is None and nodes is not None:
        node_values = _node_quantities(problem, nodes)
    if events is None:
        events = _event_marks(problem, trajectory)
    for i, (ax, panel) in enumerate(zip(axes, panels)):
        # event names on the first panel only: nine copies would hide the curves
        _draw_panel(ax, problem, trajectory, panel, node_values, events,
                    label_events=i == 0, legend=panel.key == "speed" and kind.steered)
    handles = [Line2D([], [], **_REPLAY_STYLE, label="replay (forward integration)")]
    if node_values:
        handles.append(Line2D([], [], **_NODE_STYLE, label="optimiser nodes"))
    if any(_bound(problem, p.key) for p in panels):
        handles.append(Line2D([], [], **_BOUND_STYLE, label="imposed limit"))
    handles += [Line2D([], [], **event_kind(k).style, label=event_kind(k).legend)
                for k in _event_kinds(events)]
    # up to five columns, so that a stack's many kinds of event fit in two rows
    fig.legend(handles=handles, loc="lower center", fontsize=9,
               ncols=min(len(handles), max(4, -(-len(handles) // 2)), 5),
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


def draw_figures(problem: Problem, trajectory, out_dir, stems, *, nodes=None,
                 prefix: str = "", status: str | None = None,
                 canvases: Canvases | None = None) -> list[Path]:
    """Write the figures named by ``stems`` (from :func:`figure_stems`) as PNG files;
    the arguments as for :func:`plot_trajectory`, which draws them all. Drawing processes
    each draw some of them (:mod:`ascentplan.output.plot_workers`) on figures they keep
    (``canvases``); by default new ones."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    canvases = canvases or Canvases()
    stamp = _simulation_stamp(trajectory) if status is None else status_stamp(status)
    # computed once for all the figures
    shared = dict(stamp=stamp, events=_event_marks(problem, trajectory),
                  node_values=_node_quantities(problem, nodes) if nodes is not None else None)
    paths = []
    with PngWriter() as writer:
        for stem in stems:
            path = out / f"{prefix}{stem}.png"
            if stem == "overview":
                canvas = canvases.overview(len(panels_for(problem)))
                fig = _overview_figure(problem, trajectory, canvas=canvas, **shared)
            elif stem == "ground_track":
                plot_ground_track(problem, trajectory, path, stamp)
                paths.append(path)
                continue
            else:
                fig = _panel_figure(problem, trajectory, stem, canvas=canvases.panel(),
                                    **shared)
            save_png(fig, path, writer=writer)
            paths.append(path)
    return paths


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
