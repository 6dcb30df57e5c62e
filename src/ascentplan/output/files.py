"""Trajectory and schedule files, the simulation summary and its readable text."""

from __future__ import annotations

import csv
import json
import math
import os

import numpy as np

from ascentplan import __version__
from ascentplan.cautions import CAUTION
from ascentplan.output.atomic import atomic_open
from ascentplan.output.inputs import problem_inputs, provenance, unit_key
from ascentplan.output.text import printable
from ascentplan.problem.limits import LIMITS
from ascentplan.replay.budget import LOSS_NAMES
from ascentplan.replay.schedule import PhaseControls, PhaseSchedule, ScheduleError
from ascentplan.replay.trajectory import Trajectory
from ascentplan.replay.verify import limit_peaks

#: columns of a schedule CSV, in order
SCHEDULE_COLUMNS = ("phase", "kind", "stage", "phase_time_s", "time_s", "throttle", "pitch_deg")
#: the column added after them when a phase steers in heading (three-dimensional flight)
HEADING_COLUMN = "heading_deg"
_PHASE_KINDS = ("rise", "burn", "coast")


#: a line of a CSV file that starts with this is a comment (common practice: numpy's
#: ``loadtxt``, pandas' ``read_csv(comment="#")`` and R's ``read.csv`` read it so)
COMMENT = "#"

#: what every column name of the CSV files says, for the comment header
_UNITS_NOTE = ("units: each column's unit ends its name (_s, _m, _m_s, _kg, _N, _Pa, _kPa, "
               "_deg, _g0, _kg_s, _kg_m3, _kPa_deg); phase, stage and mach are plain "
               "numbers, throttle a fraction of full mass flow; pitch from the local "
               "horizontal")


class ScheduleFileError(ScheduleError):
    """A schedule CSV that cannot be read; the message names the file, line and column."""


def csv_header(what: str, problem_name: str, status: str, message: str = "") -> list[str]:
    """The comment lines that open a CSV file, so that the file carries its caution.

    Parameters
    ----------
    what : str
        What the file holds, e.g. ``"schedule"`` or ``"trajectory (the verified replay)"``.
    problem_name : str
        The problem's name.
    status : str
        The status of the run that wrote it (``optimal``, ``not_verified``, ``ok``, ...).
    message : str, optional
        The run's one-sentence verdict.

    Returns
    -------
    list of str
        Lines without line ends, each starting with ``"# "``: the product and version,
        the status, the caution and the units note. Text from the input is escaped
        (:func:`ascentplan.output.text.printable`), so that no line break splits a line.
    """
    verdict = f"status: {status}" + (f" - {message}" if message else "")
    lines = [f"ascentplan {__version__} {what} of problem {problem_name}", verdict,
             CAUTION, _UNITS_NOTE]
    return [f"{COMMENT} {printable(line)}" for line in lines]


def _default_header(what: str) -> list[str]:
    """The header of a file written without a run's verdict (e.g. from the Python API)."""
    return csv_header(what, "(not given)", "not stated (written without a result)")


# --------------------------------------------------------------------------------------
# trajectory CSV


def _trajectory_columns(traj: Trajectory):
    """(header, values) pairs of the trajectory CSV, SI units in the names."""
    # one list of columns for the file and for Trajectory.to_dataframe
    return traj.columns()


def write_trajectory_csv(trajectory: Trajectory, path, header: list[str] | None = None
                         ) -> None:
    """Write one row per sample; the header names each column with its SI unit.

    The file opens with comment lines (``# ``, :func:`csv_header`: ``header`` when
    given, else one naming the trajectory's own status), then the line of column names.

    Columns (planar): time_s, phase, altitude_m, speed_m_s (inertial),
    flight_path_angle_deg (inertial), mass_kg, throttle, pitch_deg, radius_m,
    range_angle_deg, radial_speed_m_s, horizontal_speed_m_s, relative_speed_m_s,
    dynamic_pressure_kPa, mach, axial_acceleration_g0, angle_of_attack_deg,
    q_alpha_kPa_deg, thrust_N, drag_N, mass_flow_kg_s, density_kg_m3, pressure_Pa and the
    running loss budget ideal_velocity_increment_m_s, gravity_loss_m_s, drag_loss_m_s,
    steering_loss_m_s, back_pressure_loss_m_s. Vertical: altitude_m,
    vertical_speed_m_s, mass_kg, throttle instead of the planar state and pitch, and no
    angle of attack.
    """
    cols = _trajectory_columns(trajectory)
    data = np.column_stack([np.asarray(v, dtype=float) for _, v in cols])
    if header is None:
        header = csv_header("trajectory", "(not given)", trajectory.status, trajectory.message)
    names = ",".join(name for name, _ in cols)
    fmt = ["%.12g"] * len(cols)
    fmt[1] = "%d"
    with atomic_open(path, "w", encoding="utf-8", newline="") as fh:
        np.savetxt(fh, data, delimiter=",", header="\n".join([*header, names]), comments="",
                   fmt=fmt)


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


def _peak_key(limit: str) -> str:
    """The key of a peak's value: ``value_`` and the user unit of the limit on it."""
    return "value_" + unit_key(LIMITS[limit].unit)


def _user(limit: str, value_si: float) -> float:
    return LIMITS[limit].to_user(value_si)


def simulation_summary(problem, trajectory: Trajectory) -> dict:
    """Machine-readable summary of a flight (JSON-ready, stable keys, SI units in names).

    Keys: ``problem``, ``dynamics``, ``status`` (``ok``, ``limits_exceeded``,
    ``impact`` or ``failed``; see :func:`flight_verdict`), ``message``, ``burnout`` (time_s,
    altitude_m, speed_m_s, flight_path_angle_deg, mass_kg), ``apogee`` (time_s,
    altitude_m, or None), ``peaks`` (each in the user unit of the limit on it, as a
    solve's ``limits`` give it: ``dynamic_pressure``: value_kPa, time_s, altitude_m,
    mach; ``axial_acceleration``: value_g0, time_s, altitude_m; planar ``q_alpha``:
    value_kPa_deg, time_s, altitude_m, mach; ``min_altitude``: value_km, time_s),
    ``limits`` (each limit of the file against its peak, :func:`limit_rows`),
    ``losses_m_s`` (ideal, achieved, gravity, drag, steering, back_pressure, residual =
    ideal - achieved - losses), ``phases`` (index, kind, stage, start_s, end_s),
    ``events``, ``caution``, and the problem's ``inputs`` and the run's ``provenance``
    (:mod:`ascentplan.output.inputs`), so that a report renders from the summary alone.
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

    # each peak in the user unit of the limit on it, as a solve's limits give it
    value, time, q = at_peak("dynamic_pressure")
    peaks["dynamic_pressure"] = {_peak_key("max_dynamic_pressure"): _user(
        "max_dynamic_pressure", value), "time_s": time, "altitude_m": q["altitude"],
        "mach": q["mach"]}
    value, time, q = at_peak("axial_acceleration")
    peaks["axial_acceleration"] = {_peak_key("max_axial_acceleration"): _user(
        "max_axial_acceleration", value), "time_s": time, "altitude_m": q["altitude"]}
    if "q_alpha" in traj.quantities:
        value, time, q = at_peak("q_alpha")
        peaks["q_alpha"] = {_peak_key("max_q_alpha"): _user("max_q_alpha", value),
                            "time_s": time, "altitude_m": q["altitude"], "mach": q["mach"]}
    value, time, _ = traj.peak("min_altitude")
    peaks["min_altitude"] = {_peak_key("min_altitude"): _user("min_altitude", value),
                             "time_s": time}
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
                   events=[_event_summary(e) for e in traj.events], caution=CAUTION,
                   inputs=problem_inputs(problem), provenance=provenance(problem))
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
    summary = simulation_summary(problem, trajectory)
    write_trajectory_csv(trajectory, csv_path, header=csv_header(
        "trajectory (forward simulation of a given schedule, not optimised)", problem.name,
        summary["status"], summary["message"]))
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
    q = p["dynamic_pressure"]
    lines.append(f"max q        {_peak_text(q, 'max_dynamic_pressure')} at t = "
                 f"{num(q['time_s'], '.2f')} s, altitude {num(q['altitude_m'] / 1e3, '.2f')}"
                 f" km, Mach {num(q['mach'], '.2f')}")
    g = p["axial_acceleration"]
    lines.append(f"max axial    {_peak_text(g, 'max_axial_acceleration')} at t = "
                 f"{num(g['time_s'], '.2f')} s")
    if "q_alpha" in p:
        qa = p["q_alpha"]
        lines.append(f"max q-alpha  {_peak_text(qa, 'max_q_alpha')} at t = "
                     f"{num(qa['time_s'], '.2f')} s")
    lines += _limit_lines(summary.get("limits") or [])
    lines.append("velocity budget [m/s]")
    losses = summary["losses_m_s"]
    for key, label in (("ideal", "ideal"), ("gravity", "gravity loss"),
                       ("drag", "drag loss"), ("steering", "steering loss"),
                       ("back_pressure", "back-pressure loss"), ("achieved", "achieved"),
                       ("residual", "residual")):
        lines.append(f"  {label:<20s}{num(losses[key], '12.3f')}")
    return "\n".join(lines)


def _peak_text(peak: dict, limit: str) -> str:
    """A peak's value with the unit of the limit on it, e.g. ``46.920 kPa``."""
    value = peak.get(_peak_key(limit))
    return f"{'n/a' if value is None else format(value, '.3f')} {LIMITS[limit].unit}"


def _limit_lines(limits: list[dict]) -> list[str]:
    """The limits block of the printed summary: bound, peak (each with its unit),
    excess, verdict."""
    if not limits:
        return []
    lines = [f"limits       {'name':<24s}{'bound':>14s}{'peak':>14s}{'excess':>10s}"]
    for row in limits:
        bound = f"{row['bound']:g} {row['unit']}"
        if row["peak"] is None:
            lines.append(f"             {row['name']:<24s}{bound:>14s}{'not flown':>14s}")
            continue
        verdict = "  EXCEEDED" if row["exceeded"] else ""
        peak = f"{row['peak']:.4g} {row['unit']}"
        lines.append(f"             {row['name']:<24s}{bound:>14s}{peak:>14s}"
                     f"{100 * row['excess_fraction']:+9.2f}%{verdict}")
    return lines


# --------------------------------------------------------------------------------------
# schedule CSV


def write_schedule_csv(schedule: PhaseSchedule, path, phase_plan,
                       header: list[str] | None = None) -> None:
    """Write a :class:`~ascentplan.replay.schedule.PhaseSchedule` as a schedule CSV.

    Comment lines first (``# ``: ``header``, from :func:`csv_header`; without it, one
    that says no verdict was given), then the columns
    ``phase,kind,stage,phase_time_s,time_s,throttle,pitch_deg``, one row per node;
    ``time_s`` is from liftoff with the scheduled durations, ``pitch_deg`` is empty
    where the phase has no pitch. When a phase steers in heading (three-dimensional
    flight) a last column ``heading_deg`` (from north towards east) follows, empty where
    the phase has none. Each phase ends with a node at its duration so that reading the
    file back gives the same durations.
    """
    plan = list(phase_plan)
    if len(plan) != len(schedule.phases):
        raise ValueError(f"write_schedule_csv: {len(schedule.phases)} phases in the schedule,"
                         f" {len(plan)} in the phase plan")
    start = 0.0
    with atomic_open(path, "w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        for line in _default_header("schedule") if header is None else header:
            fh.write(line + "\r\n")  # the line end csv.writer uses for its rows
        with_heading = any(pc.heading is not None for pc in schedule.phases)
        writer.writerow(SCHEDULE_COLUMNS + ((HEADING_COLUMN,) if with_heading else ()))
        for k, (pc, phase) in enumerate(zip(schedule.phases, plan)):
            times = pc.time
            throttle = pc.throttle
            pitch, heading = pc.pitch, pc.heading
            if times[-1] < pc.duration:
                # the held last value, made explicit so the duration survives
                times = np.append(times, pc.duration)
                throttle = np.append(throttle, throttle[-1])
                pitch = None if pitch is None else np.append(pitch, pitch[-1])
                heading = None if heading is None else np.append(heading, heading[-1])
            for j, tj in enumerate(times):
                row = [k, phase.kind, phase.stage, repr(float(tj)), repr(float(start + tj)),
                       repr(float(throttle[j])), _degrees_text(pitch, j)]
                writer.writerow(row + ([_degrees_text(heading, j)] if with_heading else []))
            start += pc.duration


def _degrees_text(angles, j: int) -> str:
    """Node ``j`` of ``angles`` [rad] in degrees as written, or empty without angles."""
    return "" if angles is None else repr(float(np.degrees(angles[j])))


def read_schedule_csv(path) -> PhaseSchedule:
    """Read a schedule CSV into a :class:`~ascentplan.replay.schedule.PhaseSchedule`.

    Lines starting with ``#`` are comments (the header :func:`write_schedule_csv`
    writes, or a user's notes) and are skipped; line numbers in messages are the file's.

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
        heading = None if group[0][6] is None else np.radians([g[6] for g in group])
        try:
            phases.append(PhaseControls(duration=float(times[-1]), time=times,
                                        throttle=np.array([g[4] for g in group]),
                                        pitch=pitch, heading=heading, kind=group[0][1],
                                        stage=group[0][2],
                                        source_lines=tuple(g[0] for g in group)))
        except ScheduleError as exc:
            raise ScheduleFileError(f"{name} line {group[0][0]}: {exc}") from None
    return PhaseSchedule(tuple(phases))


def _without_comments(lines):
    """The lines of a file with each comment line (``#`` first, after any blanks) made
    blank, so that the CSV reader skips it and line numbers stay those of the file."""
    for line in lines:
        yield "\n" if line.lstrip().startswith(COMMENT) else line


def _schedule_rows(name: str) -> list[tuple[int, dict]]:
    """The non-blank rows of a schedule CSV after its header: (line number, cells).

    Comment lines (``#``) are skipped wherever they are, the header included."""
    try:
        fh = open(name, newline="", encoding="utf-8")
    except OSError as exc:
        raise ScheduleFileError(f"{name}: cannot read the schedule file ({exc.strerror})") \
            from None
    with fh:
        reader = csv.reader(_without_comments(fh))
        header = next((row for row in reader if any(cell.strip() for cell in row)), None)
        if header is None:
            raise ScheduleFileError(f"{name}: empty file; expected the header "
                                    f"{','.join(SCHEDULE_COLUMNS)}")
        header = [h.strip() for h in header]
        missing = [c for c in SCHEDULE_COLUMNS if c not in header]
        if missing:
            raise ScheduleFileError(f"{name}: missing column(s) {', '.join(missing)}; "
                                    f"expected {','.join(SCHEDULE_COLUMNS)}")
        # heading_deg is optional: files of flight in a plane have none
        columns = SCHEDULE_COLUMNS + ((HEADING_COLUMN,) if HEADING_COLUMN in header else ())
        col = {c: header.index(c) for c in columns}
        rows = []
        for row in reader:
            line_no = reader.line_num
            if not row or all(not cell.strip() for cell in row):
                continue
            if len(row) < len(header):
                raise ScheduleFileError(f"{name} line {line_no}: expected {len(header)} "
                                        f"fields, got {len(row)}")
            cells = {c: row[col[c]].strip() for c in columns}
            cells.setdefault(HEADING_COLUMN, "")
            rows.append((line_no, cells))
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

    Returns ``(line_no, kind, stage, phase_time_s, throttle, pitch_deg or None,
    heading_deg or None)``.
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
    heading = _number(name, line_no, cells, HEADING_COLUMN, optional=True)
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
        if (heading is None) != (group[-1][6] is None):
            raise ScheduleFileError(f"{name} line {line_no}: {HEADING_COLUMN}: give it on "
                                    f"every node of phase {k} or on none")
    elif t_rel < 0:
        raise ScheduleFileError(f"{name} line {line_no}: phase_time_s: must be >= 0, "
                                f"got {t_rel}")
    return (line_no, kind, stage, t_rel, throttle, pitch, heading)
