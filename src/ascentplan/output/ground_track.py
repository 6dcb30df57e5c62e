"""The ground track of a three-dimensional flight: geodetic latitude against longitude on
the rotating planet, from liftoff to the end of the replay, with the launch site and the
burnout marked and each phase in its own colour."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ascentplan.models.dynamics import dynamics_kind


def has_ground_track(problem) -> bool:
    """Whether the problem's kind flies out of a plane and reports a latitude."""
    kind = dynamics_kind(problem.dynamics)
    return kind.spatial and kind.provides("latitude")


def ground_track(problem, trajectory) -> tuple[np.ndarray, np.ndarray]:
    """Longitude and geodetic latitude of the replay's samples [deg]; the longitude east
    of Greenwich of the site plus the planet's turn under the flight."""
    kind = dynamics_kind(problem.dynamics)
    lat = np.degrees(np.asarray(trajectory.quantities["latitude"], dtype=float))
    lon = np.degrees(kind.longitude(np.asarray(trajectory.time), np.asarray(trajectory.state),
                                    problem.planet, problem.launch.longitude))
    return lon, lat


def plot_ground_track(problem, trajectory, path, stamp) -> Path:
    """Write the ground-track PNG to ``path``; ``stamp`` as for the other figures."""
    # matplotlib only here: the figure list asks has_ground_track without drawing
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from ascentplan.output.figure_marks import save_png, stamp_figure

    lon, lat = ground_track(problem, trajectory)
    fig = Figure(figsize=(7.0, 4.2))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    phases = np.asarray(trajectory.phase)
    for k in np.unique(phases):
        sel = phases == k
        # break the line where it wraps at +-180 deg
        x = np.where(np.abs(np.diff(lon[sel], prepend=lon[sel][0])) > 180.0, np.nan, lon[sel])
        ax.plot(x, lat[sel], linewidth=1.6,
                label=f"phase {k} ({trajectory.phase_kinds[k]})")
    ax.plot(lon[0], lat[0], marker="^", color="k", linestyle="none", label="launch site")
    i = trajectory.burnout_index()
    ax.plot(lon[i], lat[i], marker="o", color="C3", linestyle="none", label="burnout")
    ax.set_xlabel("longitude [deg east]")
    ax.set_ylabel("geodetic latitude [deg]")
    ax.set_title("Ground track")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7, loc="best")
    fig.subplots_adjust(top=0.88, bottom=0.16)
    stamp_figure(fig, *stamp)
    out = Path(path)
    save_png(fig, out)
    return out
