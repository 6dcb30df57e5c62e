"""Time-history plots of an ascent (altitude, speed, loads, controls, mass) written as PNG files."""

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
from ascentplan.output.atomic import atomic_open
from ascentplan.output.text import printable
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem, phase_plan

__all__ = ["DPI", "PANELS", "plot_result", "plot_trajectory", "result_nodes"]

#: resolution of every PNG [dots per inch]
DPI = 150

_PANEL_SIZE = (7.0, 4.2)  # single-quantity figure [in]
_CELL_SIZE = (5.0, 3.4)  # one cell of the overview grid [in]
_REPLAY_STYLE = dict(color="C0", linewidth=1.6)
_AIR_RELATIVE_STYLE = dict(color="C2", linewidth=1.4, linestyle="--")
_NODE_STYLE = dict(color="C1", marker="o", markersize=3.2, linestyle="none")
_BOUND_STYLE = dict(color="C3", linewidth=1.2, linestyle="--")
_EVENT_STYLE = dict(color="0.35", linewidth=1.0, linestyle=":")
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


def _node_quantities(problem: Problem, nodes) -> list[dict]:
    """Per phase, the panel values at the optimiser's nodes (plot units), keyed by panel.

    Controls are always shown; quantities that need the state only when the node states
    are given (a third element of each entry).
    """
    phases = phase_plan(problem)
    model = flight_model(problem)
    out = []
    for j, entry in enumerate(nodes):
        times = np.asarray(entry[0], dtype=float).ravel()
        controls = np.atleast_2d(np.asarray(entry[1], dtype=float))
        values = {"time": times, "throttle": controls[model.kind.control_index("throttle")]}
        if model.kind.steered and controls.shape[0] > 1:
            values["pitch"] = np.degrees(controls[model.kind.control_index("pitch")])
        if len(entry) > 2 and entry[2] is not None and j < len(phases):
            states = np.atleast_2d(np.asarray(entry[2], dtype=float))
            ph = phases[j]
            prop = propulsion(problem.vehicle.stages[ph.stage], ph.powered)
            f = flight_quantities(states, controls, model, prop)
            values.update({quantity: _in_limit_unit(quantity, f[quantity])
                           for quantity in _LIMIT_OF_QUANTITY if quantity in f})
            values["speed"] = np.asarray(model.kind.speed(states))
            values["mass"] = model.kind.mass(states) / 1000.0
        out.append(values)
    return out


def _event_marks(problem: Problem, trajectory) -> list[tuple[float, str]]:
    """Event times [s] and labels; coincident events (burnout, then staging) share one."""
    stages = problem.vehicle.stages
    t = np.asarray(trajectory.time, dtype=float)
    span = float(t[-1] - t[0]) if t.size > 1 else 1.0
    groups: list[tuple[float, list[str], list[str]]] = []  # time, kinds, stage names
    for ev in sorted(getattr(trajectory, "events", []) or [], key=lambda e: e["time"]):
        kind = str(ev.get("kind", "event")).replace("_", " ")
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
    return [(time, " + ".join(kinds) + (f" ({', '.join(names)})" if names else ""))
            for time, kinds, names in groups]


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
    ax.set_title(panel.title, fontsize=10)
    ax.grid(True, alpha=0.3)
    if t.size > 1:
        # a little room on the right so an event at the last sample stays visible
        ax.set_xlim(t[0], t[-1] + 0.01 * (t[-1] - t[0]))
    if panel.key == "throttle":
        ax.set_ylim(0.0, 1.05 * max(1.0, ax.get_ylim()[1]))
    for time, _label in events:
        ax.axvline(time, gid="event", **_EVENT_STYLE)
    if label_events and events:
        _label_events(ax, events)
    if legend:
        ax.legend(fontsize=8, loc="best", framealpha=0.85)


def _label_events(ax, events) -> None:
    """Event names in a band added above the data, so that they never hide a curve."""
    low, high = ax.get_ylim()
    ax.set_ylim(low, high + _EVENT_BAND * (high - low) / (1.0 - _EVENT_BAND))
    x0, x1 = ax.get_xlim()
    for i, (time, label) in enumerate(events):
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


def _panel_figure(problem: Problem, trajectory, key: str, nodes=None) -> Figure:
    """The figure of one panel (``key`` from :data:`PANELS`), not yet saved."""
    panel = next(p for p in PANELS if p.key == key)
    fig = Figure(figsize=_PANEL_SIZE, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    node_values = _node_quantities(problem, nodes) if nodes is not None else None
    _draw_panel(ax, problem, trajectory, panel, node_values, _event_marks(problem, trajectory),
                label_events=True, legend=True)
    # a name is shown as written: no mathtext from a '$' in it
    fig.suptitle(printable(problem.name), fontsize=9, color="0.3", x=0.99, ha="right",
                 parse_math=False)
    return fig


def _overview_figure(problem: Problem, trajectory, nodes=None) -> Figure:
    """All panels of the flight on one grid: 2x3 (vertical flight) or 3x3 (planar)."""
    panels = _panels_for(problem)
    ncols = 3
    nrows = -(-len(panels) // ncols)
    fig = Figure(figsize=(_CELL_SIZE[0] * ncols, _CELL_SIZE[1] * nrows + 0.6),
                 layout="constrained")
    FigureCanvasAgg(fig)
    node_values = _node_quantities(problem, nodes) if nodes is not None else None
    events = _event_marks(problem, trajectory)
    axes = fig.subplots(nrows, ncols, squeeze=False).ravel()
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
    if events:
        handles.append(Line2D([], [], **_EVENT_STYLE, label="event (see first panel)"))
    fig.legend(handles=handles, loc="outside lower center", ncols=len(handles), fontsize=9,
               frameon=False)
    fig.suptitle(f"{printable(problem.name)}: {problem.dynamics} ascent", fontsize=12,
                 parse_math=False)
    return fig


def plot_trajectory(problem: Problem, trajectory, out_dir, *, nodes=None,
                    prefix: str = "") -> list[Path]:
    """Write the time-history plots of a flight as PNG files.

    One file per quantity, against time from liftoff [s]: ``altitude.png`` [km],
    ``speed.png`` [m/s] (inertial; air-relative dashed for planar flight),
    ``dynamic_pressure.png`` [kPa], ``axial_acceleration.png`` [g0], ``throttle.png``,
    ``pitch.png`` [deg] (planar only), ``q_alpha.png`` [kPa deg] (planar with a q alpha
    limit only) and ``mass.png`` [t]; then ``overview.png`` with all of them on one grid.
    Imposed limits are drawn as dashed horizontal lines, events (burnout, staging,
    apogee, ...) as labelled dotted vertical lines.

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
        Drawn as markers over the replay; with states, on every panel, else on the
        control panels only.
    prefix : str, optional
        Prepended to every file name.

    Returns
    -------
    list of Path
        The files written, overview last.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    paths = []
    for panel in _panels_for(problem):
        fig = _panel_figure(problem, trajectory, panel.key, nodes)
        path = out / f"{prefix}{panel.key}.png"
        _save(fig, path)
        paths.append(path)
    fig = _overview_figure(problem, trajectory, nodes)
    path = out / f"{prefix}overview.png"
    _save(fig, path)
    paths.append(path)
    return paths


def _save(fig: Figure, path: Path) -> None:
    """Write a figure as PNG whole or not at all (:func:`~ascentplan.output.atomic.atomic_open`)."""
    with atomic_open(path, "wb") as fh:
        fig.savefig(fh, format="png", dpi=DPI)


def result_nodes(result) -> list[tuple]:
    """The optimiser's mesh of a solve result as ``nodes`` for :func:`plot_trajectory`."""
    sol = result.solution
    states = getattr(sol, "states", None) or [None] * len(sol.times)
    return [(t, u, x) for t, u, x in zip(sol.times, sol.controls, states)]


def plot_result(result, out_dir, *, prefix: str = "") -> list[Path]:
    """Write the plots of a solve result: its verified replay with the optimiser's nodes.

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
        The files written, overview last (see :func:`plot_trajectory`); empty when the
        result has no replay.
    """
    if result.trajectory is None:
        return []
    # the replay flew the optimised masses, so the node quantities must use them too
    problem = getattr(result, "solved_problem", None) or result.problem
    return plot_trajectory(problem, result.trajectory, out_dir, nodes=result_nodes(result),
                           prefix=prefix)


def plot_split_map(split_map: dict, out_dir, *, unit: str, objective: str,
                   name: str = "split_map.png") -> Path:
    """Plot the objective over the stage-mass split around the coupled optimum.

    Two stages: a line over the first stage's share of the total stage mass; three
    stages: filled contours over the first two stages' shares. The optimum is marked.

    Parameters
    ----------
    split_map : dict
        From :func:`ascentplan.split.split_map`.
    out_dir : str or Path
    unit : str
        Unit of the objective values.
    objective : str
        Objective name, for the axis label.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    fractions = np.array(split_map["fractions"])
    values = np.array(split_map["objective"], dtype=float)
    names = [printable(name) for name in split_map["stage_names"]]
    center = split_map["center_fractions"]
    fig = Figure(figsize=(7.0, 5.0))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    label = f"{objective.replace('_', ' ')} [{unit}]"
    if fractions.shape[1] == 2:
        ax.plot(100 * fractions[:, 0], values, "o-", color="tab:blue")
        ax.axvline(100 * center[0], color="tab:red", linestyle=":", label="coupled optimum")
        ax.set_xlabel(f"{names[0]} share of the total stage mass [%]", parse_math=False)
        ax.set_ylabel(label)
        ax.legend(loc="best")
    else:
        n = int(round(np.sqrt(len(values))))
        f1 = 100 * fractions[:, 0].reshape(n, n)
        f2 = 100 * fractions[:, 1].reshape(n, n)
        z = values.reshape(n, n)
        filled = ax.contourf(f1, f2, z, levels=12, cmap="viridis")
        ax.contour(f1, f2, z, levels=12, colors="k", linewidths=0.4)
        fig.colorbar(filled, ax=ax, label=label)
        ax.plot(100 * center[0], 100 * center[1], "r*", markersize=12,
                label="coupled optimum")
        ax.set_xlabel(f"{names[0]} share of the total stage mass [%]", parse_math=False)
        ax.set_ylabel(f"{names[1]} share of the total stage mass [%]", parse_math=False)
        ax.legend(loc="best")
    ax.set_title("Objective around the optimal stage-mass split (re-solved at each point)")
    ax.grid(True, alpha=0.3)
    fig.tight_layout()
    path = out / name
    _save(fig, path)
    return path
