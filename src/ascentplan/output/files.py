"""Trajectory and schedule files, the simulation summary and its readable text."""

from __future__ import annotations

import csv
import json
import math
import os

import numpy as np

from ascentplan.cautions import CAUTION
from ascentplan.output.atomic import atomic_open
from ascentplan.problem.limits import LIMITS
from ascentplan.replay.budget import LOSS_NAMES
from ascentplan.replay.schedule import PhaseControls, PhaseSchedule, ScheduleError
from ascentplan.replay.trajectory import Trajectory
from ascentplan.replay.verify import limit_peaks

#: columns of a schedule CSV, in order
SCHEDULE_COLUMNS = ("phase", "kind", "stage", "phase_time_s", "time_s", "throttle", "pitch_deg")
_PHASE_KINDS = ("rise", "burn", "coast")


class ScheduleFileError(ScheduleError):
    """A schedule CSV that cannot be read; the message names the file, line and column."""


# --------------------------------------------------------------------------------------
# trajectory CSV


def _trajectory_columns(traj: Trajectory):
    """(header, values) pairs of the trajectory CSV, SI units in the names."""
    # one list of columns for the file and for Trajectory.to_dataframe
    return traj.columns()


def write_trajectory_csv(trajectory: Trajectory, path) -> None:
    """Write one row per sample; the header names each column with its SI unit.

    Columns (planar): time_s, phase, altitude_m, speed_m_s (inertial),
    flight_path_angle_deg (inertial), mass_kg, throttle, pitch_deg, radius_m,
    range_angle_deg, radial_speed_m_s, horizontal_speed_m_s, relative_speed_m_s,
    dynamic_pressure_Pa, mach, axial_acceleration_g0, angle_of_attack_deg,
    q_alpha_Pa_rad, thrust_N, drag_N, mass_flow_kg_s, density_kg_m3, pressure_Pa and the
    running loss budget ideal_dv_m_s, gravity_loss_m_s, drag_loss_m_s,
    steering_loss_m_s, back_pressure_loss_m_s. Vertical: altitude_m,
    vertical_speed_m_s, mass_kg, throttle instead of the planar state and pitch, and no
    angle of attack.
    """
    cols = _trajectory_columns(trajectory)
    data = np.column_stack([np.asarray(v, dtype=float) for _, v in cols])
    header = ",".join(name for name, _ in cols)
    fmt = ["%.12g"] * len(cols)
    fmt[1] = "%d"
    with atomic_open(path, "w", encoding="utf-8", newline="") as fh:
        np.savetxt(fh, data, delimiter=",", header=header, comments="", fmt=fmt)


# --------------------------------------------------------------------------------------
# summary


def _clean(value):
    """JSON-ready copy: numpy scalars to Python, NaN and infinities to None."""
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, np.ndarray):
        return [_clean(v) for v in value.tolist()]
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def _event_summary(event: dict) -> dict:
    deg = 180.0 / math.pi
    out = dict(kind=event["kind"], time_s=event["time"], phase=event["phase"],
               stage=event["stage"], altitude_m=event["altitude"], speed_m_s=event["speed"],
               flight_path_angle_deg=event["flight_path_angle"] * deg, mass_kg=event["mass"])
    for key, name in (("propellant_remaining", "propellant_remaining_kg"),
                      ("dropped_mass", "dropped_mass_kg"), ("scheduled_end", "scheduled_end_s")):
        if event.get(key) is not None:
            out[name] = event[key]
    return out


def _at(traj, name, index):
    return float(traj.quantities[name][index])


def simulation_summary(problem, trajectory: Trajectory) -> dict:
    """Machine-readable summary of a flight (JSON-ready, stable keys, SI units in names).

    Keys: ``problem``, ``dynamics``, ``status`` (``ok``, ``limits_exceeded``,
    ``impact`` or ``failed``; see :func:`flight_verdict`), ``message``, ``burnout`` (time_s,
    altitude_m, speed_m_s, flight_path_angle_deg, mass_kg), ``apogee`` (time_s,
    altitude_m, or None), ``peaks`` (``dynamic_pressure``: value_Pa, time_s, altitude_m,
    mach; ``axial_acceleration``: value_g0, time_s, altitude_m; planar ``q_alpha``:
    value_Pa_rad, time_s, altitude_m, mach; ``min_altitude``: value_m, time_s),
    ``limits`` (each limit of the file against its peak, :func:`limit_rows`),
    ``losses_m_s`` (ideal, achieved, gravity, drag, steering, back_pressure, residual =
    ideal - achieved - losses), ``phases`` (index, kind, stage, start_s, end_s),
    ``events`` and ``caution``.
    """
    traj = trajectory
    deg = 180.0 / math.pi
    i = traj.burnout_index()
    burnout = dict(time_s=float(traj.time[i]), altitude_m=_at(traj, "altitude", i),
                   speed_m_s=_at(traj, "speed", i),
                   flight_path_angle_deg=_at(traj, "flight_path_angle", i) * deg,
                   mass_kg=float(traj.kind.mass(traj.state[:, i])))
    apogees = [e for e in traj.events if e["kind"] == "apogee"]
    apogee = (dict(time_s=apogees[-1]["time"], altitude_m=apogees[-1]["altitude"])
              if apogees else None)
    peaks = {}

    def at_peak(name):
        value, time, j = traj.peak(name)
        return value, time, traj.quantities_at(time, phase=int(traj.phase[j]))

    value, time, q = at_peak("dynamic_pressure")
    peaks["dynamic_pressure"] = dict(value_Pa=value, time_s=time, altitude_m=q["altitude"],
                                     mach=q["mach"])
    value, time, q = at_peak("axial_acceleration")
    peaks["axial_acceleration"] = dict(value_g0=value, time_s=time, altitude_m=q["altitude"])
    if "q_alpha" in traj.quantities:
        value, time, q = at_peak("q_alpha")
        peaks["q_alpha"] = dict(value_Pa_rad=value, time_s=time, altitude_m=q["altitude"],
                                mach=q["mach"])
    value, time, _ = traj.peak("min_altitude")
    peaks["min_altitude"] = dict(value_m=value, time_s=time)
    losses = dict(traj.losses)
    losses["residual"] = losses["ideal"] - losses["achieved"] - sum(
        losses[name] for name in LOSS_NAMES if name != "ideal")
    phases = [dict(index=k, kind=kind, stage=stage, start_s=bounds[0], end_s=bounds[1])
              for k, (kind, stage, bounds) in enumerate(zip(
                  traj.phase_kinds, traj.phase_stages, traj.phase_bounds))]
    limits = limit_rows(problem, traj)
    status, message = flight_verdict(traj, limits)
    summary = dict(problem=problem.name, dynamics=traj.dynamics, status=status,
                   message=message, burnout=burnout, apogee=apogee, peaks=peaks,
                   limits=limits, losses_m_s=losses, phases=phases,
                   events=[_event_summary(e) for e in traj.events], caution=CAUTION)
    return _clean(summary)


def limit_rows(problem, trajectory: Trajectory) -> list[dict]:
    """Each limit of the problem file against its peak in a flight, in the user's units.

    The peak is taken as verification takes it (:func:`ascentplan.replay.verify.limit_peaks`:
    the extreme sample on the phases the limit applies to), over every phase flown. A
    limit counts as exceeded beyond ``mesh.limit_tolerance_fraction`` of its bound, the
    tolerance of verification.

    Returns
    -------
    list of dict
        ``name``, ``bound``, ``unit``, ``peak`` (None when no phase flown is one the
        limit applies to), ``peak_time_s``, ``excess_fraction`` (> 0 beyond the bound),
        ``tolerance_fraction``, ``exceeded``.
    """
    tolerance = float(problem.mesh.limit_tolerance_fraction)
    rows = []
    for check in limit_peaks(problem, trajectory, phase_kinds=trajectory.phase_kinds):
        spec = LIMITS[check.name]
        rows.append(dict(name=check.name, bound=spec.to_user(check.bound), unit=spec.unit,
                         peak=spec.to_user(check.peak), peak_time_s=check.time,
                         excess_fraction=check.excess_fraction,
                         tolerance_fraction=tolerance,
                         exceeded=bool(check.excess_fraction > tolerance)))
    return rows


def flight_verdict(trajectory: Trajectory, limits: list[dict]) -> tuple[str, str]:
    """Status and message of a flight: the trajectory's own unless it is ``"ok"`` and a
    limit is exceeded, which makes it ``"limits_exceeded"`` (an impact or a failure says
    more about the flight than a limit does)."""
    exceeded = [row for row in limits if row["exceeded"]]
    if trajectory.status != "ok" or not exceeded:
        return trajectory.status, trajectory.message
    words = [f"{row['name']} {row['peak']:.4g} {row['unit']} against {row['bound']:.4g} "
             f"{row['unit']} ({100 * row['excess_fraction']:+.1f} %) at t = "
             f"{row['peak_time_s']:.2f} s" for row in exceeded]
    return "limits_exceeded", (f"{len(exceeded)} limit(s) exceeded beyond "
                               f"{100 * exceeded[0]['tolerance_fraction']:g} % of the bound: "
                               + "; ".join(words))


def write_json(d: dict, path) -> None:
    """Write a JSON-ready dict (NaN becomes null), indented, with a final newline.

    Written to a temporary file and renamed (:func:`ascentplan.output.atomic.atomic_open`).
    """
    with atomic_open(path, "w", encoding="utf-8") as fh:
        json.dump(_clean(d), fh, indent=2, allow_nan=False)
        fh.write("\n")


def write_simulation(problem, trajectory: Trajectory, folder) -> tuple[dict, str, str]:
    """Write the results folder of a flight: ``trajectory.csv`` and ``summary.json``.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    trajectory : Trajectory
    folder : str or path-like
        Created if missing.

    Returns
    -------
    summary, csv_path, json_path : dict, str, str
        :func:`simulation_summary` and the files written.
    """
    folder = os.fspath(folder)
    os.makedirs(folder, exist_ok=True)
    csv_path = os.path.join(folder, "trajectory.csv")
    json_path = os.path.join(folder, "summary.json")
    write_trajectory_csv(trajectory, csv_path)
    summary = simulation_summary(problem, trajectory)
    write_json(summary, json_path)
    return summary, csv_path, json_path


def format_summary(summary: dict) -> str:
    """The readable text of :func:`simulation_summary` printed by the simulate verb."""
    lines = [f"{summary['problem']} ({summary['dynamics']}): status {summary['status']}"
             f" - {summary['message']}"]

    def num(value, fmt):
        return "n/a" if value is None else format(value, fmt)

    b = summary["burnout"]
    lines.append(f"burnout      t = {num(b['time_s'], '.2f')} s, altitude "
                 f"{num(b['altitude_m'] / 1e3 if b['altitude_m'] is not None else None, '.3f')}"
                 f" km, speed {num(b['speed_m_s'], '.2f')} m/s, flight-path angle "
                 f"{num(b['flight_path_angle_deg'], '.3f')} deg, mass "
                 f"{num(b['mass_kg'], '.1f')} kg")
    a = summary.get("apogee")
    if a:
        lines.append(f"apogee       t = {num(a['time_s'], '.2f')} s, altitude "
                     f"{num(a['altitude_m'] / 1e3, '.3f')} km")
    p = summary["peaks"]
    dynamic_pressure, q_alpha = LIMITS["max_dynamic_pressure"], LIMITS["max_q_alpha"]
    q = p["dynamic_pressure"]
    lines.append(f"max q        {num(dynamic_pressure.to_user(q['value_Pa']), '.3f')} "
                 f"{dynamic_pressure.unit} at t = "
                 f"{num(q['time_s'], '.2f')} s, altitude {num(q['altitude_m'] / 1e3, '.2f')}"
                 f" km, Mach {num(q['mach'], '.2f')}")
    g = p["axial_acceleration"]
    lines.append(f"max axial    {num(g['value_g0'], '.3f')} g0 at t = {num(g['time_s'], '.2f')} s")
    if "q_alpha" in p:
        qa = p["q_alpha"]
        lines.append(f"max q-alpha  {num(q_alpha.to_user(qa['value_Pa_rad']), '.3f')} "
                     f"{q_alpha.unit} at t = {num(qa['time_s'], '.2f')} s")
    lines += _limit_lines(summary.get("limits") or [])
    lines.append("velocity budget [m/s]")
    losses = summary["losses_m_s"]
    for key, label in (("ideal", "ideal"), ("gravity", "gravity loss"),
                       ("drag", "drag loss"), ("steering", "steering loss"),
                       ("back_pressure", "back-pressure loss"), ("achieved", "achieved"),
                       ("residual", "residual")):
        lines.append(f"  {label:<20s}{num(losses[key], '12.3f')}")
    return "\n".join(lines)


def _limit_lines(limits: list[dict]) -> list[str]:
    """The limits block of the printed summary: bound, peak, excess, verdict."""
    if not limits:
        return []
    lines = [f"limits       {'name':<24s}{'bound':>14s}{'peak':>12s}{'excess':>10s}"]
    for row in limits:
        bound = f"{row['bound']:g} {row['unit']}"
        if row["peak"] is None:
            lines.append(f"             {row['name']:<24s}{bound:>14s}{'not flown':>12s}")
            continue
        verdict = "  EXCEEDED" if row["exceeded"] else ""
        lines.append(f"             {row['name']:<24s}{bound:>14s}{row['peak']:12.4g}"
                     f"{100 * row['excess_fraction']:+9.2f}%{verdict}")
    return lines


# --------------------------------------------------------------------------------------
# schedule CSV


def write_schedule_csv(schedule: PhaseSchedule, path, phase_plan) -> None:
    """Write a :class:`~ascentplan.replay.schedule.PhaseSchedule` as a schedule CSV.

    Columns ``phase,kind,stage,phase_time_s,time_s,throttle,pitch_deg``, one row per
    node; ``time_s`` is from liftoff with the scheduled durations, ``pitch_deg`` is
    empty where the phase has no pitch. Each phase ends with a node at its duration so
    that reading the file back gives the same durations.
    """
    plan = list(phase_plan)
    if len(plan) != len(schedule.phases):
        raise ValueError(f"write_schedule_csv: {len(schedule.phases)} phases in the schedule,"
                         f" {len(plan)} in the phase plan")
    start = 0.0
    with atomic_open(path, "w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(SCHEDULE_COLUMNS)
        for k, (pc, phase) in enumerate(zip(schedule.phases, plan)):
            times = pc.time
            throttle = pc.throttle
            pitch = pc.pitch
            if times[-1] < pc.duration:
                # the held last value, made explicit so the duration survives
                times = np.append(times, pc.duration)
                throttle = np.append(throttle, throttle[-1])
                pitch = None if pitch is None else np.append(pitch, pitch[-1])
            for j, tj in enumerate(times):
                pitch_text = "" if pitch is None else repr(float(np.degrees(pitch[j])))
                writer.writerow([k, phase.kind, phase.stage, repr(float(tj)),
                                 repr(float(start + tj)), repr(float(throttle[j])), pitch_text])
            start += pc.duration


def read_schedule_csv(path) -> PhaseSchedule:
    """Read a schedule CSV into a :class:`~ascentplan.replay.schedule.PhaseSchedule`.

    The phase duration is the last ``phase_time_s`` of the phase; ``time_s`` is read
    for checking only. Phases must be numbered 0, 1, ... in order; ``kind`` and
    ``stage`` are kept on each :class:`~ascentplan.replay.schedule.PhaseControls` and
    checked against the problem's phase plan when flown.

    Raises
    ------
    ScheduleFileError
        With the file, line and column of the first problem found.
    """
    name = os.fspath(path)
    groups: list[list] = []
    for line_no, cells in _schedule_rows(name):
        k = _number(name, line_no, cells, "phase", integer=True)
        if k == len(groups):
            groups.append([])
        elif k != len(groups) - 1:
            expected = f"{len(groups) - 1} or {len(groups)}" if groups else "0"
            raise ScheduleFileError(f"{name} line {line_no}: phase: expected {expected} "
                                    f"(phases numbered from 0, in order), got {k}")
        groups[-1].append(_schedule_node(name, line_no, cells, k, groups[-1]))

    phases = []
    for group in groups:
        times = np.array([g[3] for g in group])
        pitch = None if group[0][5] is None else np.radians([g[5] for g in group])
        try:
            phases.append(PhaseControls(duration=float(times[-1]), time=times,
                                        throttle=np.array([g[4] for g in group]),
                                        pitch=pitch, kind=group[0][1], stage=group[0][2],
                                        source_lines=tuple(g[0] for g in group)))
        except ScheduleError as exc:
            raise ScheduleFileError(f"{name} line {group[0][0]}: {exc}") from None
    return PhaseSchedule(tuple(phases))


def _schedule_rows(name: str) -> list[tuple[int, dict]]:
    """The non-blank rows of a schedule CSV after its header: (line number, cells)."""
    try:
        fh = open(name, newline="", encoding="utf-8")
    except OSError as exc:
        raise ScheduleFileError(f"{name}: cannot read the schedule file ({exc.strerror})") \
            from None
    with fh:
        reader = csv.reader(fh)
        try:
            header = next(reader)
        except StopIteration:
            raise ScheduleFileError(f"{name}: empty file; expected the header "
                                    f"{','.join(SCHEDULE_COLUMNS)}") from None
        header = [h.strip() for h in header]
        missing = [c for c in SCHEDULE_COLUMNS if c not in header]
        if missing:
            raise ScheduleFileError(f"{name}: missing column(s) {', '.join(missing)}; "
                                    f"expected {','.join(SCHEDULE_COLUMNS)}")
        col = {c: header.index(c) for c in SCHEDULE_COLUMNS}
        rows = []
        for line_no, row in enumerate(reader, start=2):
            if not row or all(not cell.strip() for cell in row):
                continue
            if len(row) < len(header):
                raise ScheduleFileError(f"{name} line {line_no}: expected {len(header)} "
                                        f"fields, got {len(row)}")
            rows.append((line_no, {c: row[col[c]].strip() for c in SCHEDULE_COLUMNS}))
    if not rows:
        raise ScheduleFileError(f"{name}: no schedule rows after the header")
    return rows


def _number(name, line_no, cells, column, integer=False, optional=False):
    """The number in one cell; None for an empty optional cell."""
    text = cells[column]
    if optional and text == "":
        return None
    try:
        value = int(text) if integer else float(text)
    except ValueError:
        kind = "an integer" if integer else "a number"
        raise ScheduleFileError(f"{name} line {line_no}: {column}: expected {kind}, "
                                f"got {text!r}") from None
    if not integer and not math.isfinite(value):
        raise ScheduleFileError(f"{name} line {line_no}: {column}: must be finite, "
                                f"got {text!r}")
    return value


def _schedule_node(name, line_no, cells, k, group) -> tuple:
    """One node of phase ``k``, checked against the nodes of the phase read so far.

    Returns ``(line_no, kind, stage, phase_time_s, throttle, pitch_deg or None)``.
    """
    kind = cells["kind"]
    if kind not in _PHASE_KINDS:
        raise ScheduleFileError(f"{name} line {line_no}: kind: expected one of "
                                f"{', '.join(_PHASE_KINDS)}, got {kind!r}")
    stage = _number(name, line_no, cells, "stage", integer=True)
    if stage < 0:
        raise ScheduleFileError(f"{name} line {line_no}: stage: must be >= 0, got {stage}")
    t_rel = _number(name, line_no, cells, "phase_time_s")
    _number(name, line_no, cells, "time_s")
    throttle = _number(name, line_no, cells, "throttle")
    if throttle < 0:
        raise ScheduleFileError(f"{name} line {line_no}: throttle: must be >= 0, "
                                f"got {throttle}")
    pitch = _number(name, line_no, cells, "pitch_deg", optional=True)
    if group:
        first_line, first_kind, first_stage = group[0][0], group[0][1], group[0][2]
        if (kind, stage) != (first_kind, first_stage):
            raise ScheduleFileError(
                f"{name} line {line_no}: phase {k} was {first_kind!r} of stage "
                f"{first_stage} on line {first_line}, now {kind!r} of stage {stage}")
        if t_rel <= group[-1][3]:
            raise ScheduleFileError(f"{name} line {line_no}: phase_time_s: must increase "
                                    f"within phase {k}, got {t_rel} after "
                                    f"{group[-1][3]}")
        if (pitch is None) != (group[-1][5] is None):
            raise ScheduleFileError(f"{name} line {line_no}: pitch_deg: give it on every "
                                    f"node of phase {k} or on none")
    elif t_rel < 0:
        raise ScheduleFileError(f"{name} line {line_no}: phase_time_s: must be >= 0, "
                                f"got {t_rel}")
    return (line_no, kind, stage, t_rel, throttle, pitch)
