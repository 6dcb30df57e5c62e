"""Control schedules and the control laws that fly them.

A schedule says what the controls are; a :class:`ControlLaw` turns it, phase by phase,
into rules ``u(t, x)`` for the integration and says where phases end and where the
controls may kink.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from ascentplan.models import dynamics
from ascentplan.problem.model import Phase, TimeSchedule
from ascentplan.problem.model import phase_plan as plan_of
from ascentplan.problem.plan import booster_phase_duration

#: length of the pitch-over kick of the default steering [s]
KICK_DURATION = 5.0

#: slack on the throttle range and the pitch range of a given schedule [-], [rad]: a
#: schedule written by the optimiser sits on its bounds to rounding, not beyond
RANGE_SLACK = 1e-9


class ScheduleError(ValueError):
    """A control schedule that does not fit the problem: its phase plan, a stage's
    throttle range or the pitch convention. The message names the node."""


# --------------------------------------------------------------------------------------
# schedules


@dataclass(frozen=True)
class PhaseControls:
    """Controls of one phase at its nodes, linearly interpolated in time between them.

    This is the control representation of the optimiser: piecewise linear in time
    within a phase, held constant outside the node range.

    Attributes
    ----------
    duration : float
        Phase duration [s]. A burn whose propellant runs out earlier records a
        ``flameout`` and coasts, engine off, to this scheduled end (staging is commanded
        by time); a phase that ends at apogee ends there whatever its duration.
    time : numpy.ndarray
        Node times relative to the phase start [s], strictly increasing.
    throttle : numpy.ndarray
        Throttle at the nodes (fraction of full mass flow).
    pitch : numpy.ndarray or None
        Thrust pitch from the local horizontal at the nodes [rad]; required for a burn
        of a steered kind, ignored in rise (held at 90 deg) and coast phases.
    heading : numpy.ndarray or None
        Thrust heading from north towards east at the nodes [rad]; required for a burn
        of a kind that steers in heading (three-dimensional), ignored elsewhere.
    kind, stage : str or None, int or None
        The phase kind and stage this entry was written for; when given they are
        checked against the phase plan.
    source_lines : tuple of int or None
        Line of each node in the schedule file it was read from, for messages.
    """

    duration: float
    time: np.ndarray
    throttle: np.ndarray
    pitch: np.ndarray | None = None
    kind: str | None = None
    stage: int | None = None
    source_lines: tuple | None = field(default=None, compare=False, repr=False)
    heading: np.ndarray | None = None

    def __post_init__(self):
        time = np.asarray(self.time, dtype=float).reshape(-1)
        throttle = np.asarray(self.throttle, dtype=float).reshape(-1)
        duration = float(self.duration)
        if not (np.isfinite(duration) and duration >= 0.0):
            raise ScheduleError(f"phase duration: must be a finite number >= 0 s, got {duration}")
        if time.size == 0:
            raise ScheduleError("phase node times: need at least one node")
        if not np.all(np.isfinite(time)) or np.any(np.diff(time) <= 0.0):
            raise ScheduleError("phase node times: must be finite and strictly increasing")
        if throttle.shape != time.shape:
            raise ScheduleError(f"phase throttle: expected {time.size} values (one per node), "
                             f"got {throttle.size}")
        if not np.all(np.isfinite(throttle)) or np.any(throttle < 0.0):
            raise ScheduleError("phase throttle: must be finite and >= 0")
        object.__setattr__(self, "duration", duration)
        object.__setattr__(self, "time", time)
        object.__setattr__(self, "throttle", throttle)
        if self.pitch is not None:
            pitch = np.asarray(self.pitch, dtype=float).reshape(-1)
            if pitch.shape != time.shape:
                raise ScheduleError(f"phase pitch: expected {time.size} values (one per node), "
                                 f"got {pitch.size}")
            if not np.all(np.isfinite(pitch)):
                raise ScheduleError("phase pitch: must be finite")
            object.__setattr__(self, "pitch", pitch)
        if self.heading is not None:
            heading = np.asarray(self.heading, dtype=float).reshape(-1)
            if heading.shape != time.shape or not np.all(np.isfinite(heading)):
                raise ScheduleError(f"phase heading: expected {time.size} finite values (one "
                                    f"per node), got {heading.size}")
            object.__setattr__(self, "heading", heading)


@dataclass(frozen=True)
class PhaseSchedule:
    """One :class:`PhaseControls` per phase of :func:`~ascentplan.problem.phase_plan`."""

    phases: tuple[PhaseControls, ...]

    def __post_init__(self):
        object.__setattr__(self, "phases", tuple(self.phases))

    def rows(self, phase_plan=None) -> list[tuple]:
        """One row per node, as in ``schedule.csv``.

        Parameters
        ----------
        phase_plan : sequence of Phase, or Problem, optional
            The phases flown (:func:`~ascentplan.problem.phase_plan`, or a problem to
            take it from), for the kind and stage of each phase; without it those come
            from the :class:`PhaseControls` (None when not recorded there).

        Returns
        -------
        list of tuple
            ``(phase, kind, stage, phase_time_s, time_s, throttle, pitch_deg)``:
            ``time_s`` [s] is from liftoff with the scheduled durations, ``pitch_deg``
            [deg] is None where the phase has no pitch. Each phase ends with a node at
            its duration (the last controls held), so the rows give back the durations.
        """
        plan = self._plan(phase_plan)
        rows, start = [], 0.0
        for k, pc in enumerate(self.phases):
            kind = plan[k].kind if plan is not None else pc.kind
            stage = plan[k].stage if plan is not None else pc.stage
            times, throttle, pitch = pc.time, pc.throttle, pc.pitch
            if times[-1] < pc.duration:
                times = np.append(times, pc.duration)
                throttle = np.append(throttle, throttle[-1])
                pitch = None if pitch is None else np.append(pitch, pitch[-1])
            for j, tj in enumerate(times):
                pitch_deg = None if pitch is None else math.degrees(float(pitch[j]))
                rows.append((k, kind, stage, float(tj), float(start + tj),
                             float(throttle[j]), pitch_deg))
            start += pc.duration
        return rows

    def _plan(self, phase_plan):
        """The phase plan as a list, from a plan or a problem; None when not given."""
        if phase_plan is None:
            return None
        if hasattr(phase_plan, "vehicle"):
            phase_plan = plan_of(phase_plan)
        plan = list(phase_plan)
        if len(plan) != len(self.phases):
            raise ValueError(f"phase_plan: {len(plan)} phases, the schedule has "
                             f"{len(self.phases)}")
        return plan

    def to_dataframe(self, phase_plan=None):
        """The node controls as a :class:`pandas.DataFrame`, one row per node.

        Columns as in ``schedule.csv``: ``phase``, ``kind``, ``stage``,
        ``phase_time_s`` [s], ``time_s`` [s from liftoff], ``throttle`` [-],
        ``pitch_deg`` [deg] (NaN where the phase has no pitch); see :meth:`rows`.

        Parameters
        ----------
        phase_plan : sequence of Phase, or Problem, optional
            For the kind and stage of each phase (e.g. ``result.problem``).

        Raises
        ------
        ImportError
            When pandas is not installed (``pip install "ascentplan[pandas]"``).
        """
        from ascentplan.replay.trajectory import require_pandas
        pd = require_pandas()
        columns = ("phase", "kind", "stage", "phase_time_s", "time_s", "throttle",
                   "pitch_deg")
        frame = pd.DataFrame(self.rows(phase_plan), columns=list(columns))
        frame["pitch_deg"] = frame["pitch_deg"].astype(float)
        if frame["stage"].notna().all():
            frame["stage"] = frame["stage"].astype(int)
        return frame


def check_schedule(problem, plan, schedule) -> None:
    """Refuse a schedule that does not fit the problem's phase plan.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    plan : list of ascentplan.problem.model.Phase
        ``phase_plan(problem)``.
    schedule : PhaseSchedule, TimeSchedule or None

    Raises
    ------
    ScheduleError
        Naming the first mismatch.
    """
    if schedule is None:
        return
    if isinstance(schedule, TimeSchedule):
        _check_time_schedule(schedule)
        return
    if not isinstance(schedule, PhaseSchedule):
        raise ScheduleError(f"schedule: expected None, a TimeSchedule or a PhaseSchedule, "
                         f"got {type(schedule).__name__}")
    if len(schedule.phases) != len(plan):
        raise ScheduleError(f"schedule: has {len(schedule.phases)} phases, the phase plan has "
                         f"{len(plan)} ({', '.join(p.kind for p in plan)})")
    kind = dynamics.dynamics_kind(problem.dynamics)
    steered = kind.steered
    for k, (pc, phase) in enumerate(zip(schedule.phases, plan)):
        if pc.kind is not None and pc.kind != phase.kind:
            raise ScheduleError(f"schedule phase {k}: kind {pc.kind!r}, the plan has "
                             f"{phase.kind!r}")
        if pc.stage is not None and pc.stage != phase.stage:
            raise ScheduleError(f"schedule phase {k}: stage {pc.stage}, the plan has "
                             f"{phase.stage}")
        if steered and phase.kind == "burn" and pc.pitch is None:
            raise ScheduleError(f"schedule phase {k}: a {problem.dynamics} burn needs a pitch at "
                             f"each node")
        if kind.has_control("heading") and phase.kind == "burn" and pc.heading is None:
            raise ScheduleError(f"schedule phase {k}: a {problem.dynamics} burn needs a heading "
                                f"at each node")


def _check_time_schedule(schedule: TimeSchedule) -> None:
    time = np.asarray(schedule.time, dtype=float)
    throttle = np.asarray(schedule.throttle, dtype=float)
    if time.ndim != 1 or time.size == 0 or np.any(np.diff(time) <= 0):
        raise ScheduleError("schedule.time: must be a non-empty, strictly increasing list [s]")
    if throttle.shape != time.shape or np.any(throttle < 0) or not np.all(
            np.isfinite(throttle)):
        raise ScheduleError(f"schedule.throttle: expected {time.size} finite values >= 0")
    if schedule.pitch is not None and np.asarray(schedule.pitch).shape != time.shape:
        raise ScheduleError(f"schedule.pitch: expected {time.size} values [rad]")


def check_control_ranges(problem, plan, schedule) -> None:
    """Refuse scheduled controls outside the ranges the optimiser itself keeps to.

    Those are: in a rise or a burn, the throttle within the burning stage's range
    [``throttle_min``, ``throttle_max``]; in a coast, a throttle of 0 (the engine is
    off); in a burn, the pitch within [-90, 90] deg of the local horizontal (a rise
    flies 90 deg, a coast along the air-relative velocity, whatever the schedule says).
    A :class:`~ascentplan.problem.TimeSchedule` has its pitch checked here and its
    throttle by :func:`check_flown_throttle` once the phase times are known.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    plan : list of ascentplan.problem.model.Phase
        ``phase_plan(problem)``; the schedule already fits it (:func:`check_schedule`).
    schedule : PhaseSchedule, TimeSchedule or None

    Raises
    ------
    ScheduleError
        Naming the first node out of range: its file line when known, its time from
        liftoff [s], the stage and the range.
    """
    if isinstance(schedule, TimeSchedule):
        _check_time_pitch(schedule)
        return
    if not isinstance(schedule, PhaseSchedule):
        return
    start = 0.0
    for k, (pc, phase) in enumerate(zip(schedule.phases, plan)):
        stage = problem.vehicle.stages[phase.stage]
        for j, t in enumerate(pc.time):
            where = _node_place(pc, k, j, start + t, phase, stage)
            eta = float(pc.throttle[j])
            if phase.powered and not _within(eta, stage.throttle_min, stage.throttle_max):
                raise ScheduleError(f"{where}: throttle {eta:g} is outside the stage's "
                                    f"throttle range [{stage.throttle_min:g}, "
                                    f"{stage.throttle_max:g}]")
            if not phase.powered and not _within(eta, 0.0, 0.0):
                raise ScheduleError(f"{where}: throttle {eta:g} in a coast; the engine is "
                                    f"off there, the throttle must be 0")
            if phase.kind == "burn" and pc.pitch is not None:
                _check_pitch(float(pc.pitch[j]), where)
        start += pc.duration


def check_flown_throttle(problem, schedule, phase_bounds, phase_kinds, phase_stages) -> None:
    """Refuse a time schedule whose throttle leaves a burning stage's range.

    The throttle is linear between the schedule's nodes, so it is within range over a
    powered phase when it is at the phase's ends and at the nodes inside it.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    schedule : TimeSchedule
    phase_bounds : list of (float, float)
        Start and end of each phase flown [s].
    phase_kinds, phase_stages : sequence
        Kind and stage index of each phase flown.

    Raises
    ------
    ScheduleError
        Naming the time, the stage and its range.
    """
    nodes = np.asarray(schedule.time, dtype=float)
    values = np.asarray(schedule.throttle, dtype=float)
    for (t0, t1), kind, index in zip(phase_bounds, phase_kinds, phase_stages):
        if kind not in ("rise", "burn"):
            continue
        stage = problem.vehicle.stages[index]
        inside = np.flatnonzero((nodes >= t0) & (nodes <= t1))
        times = [(t0, None), *[(nodes[i], i) for i in inside], (t1, None)]
        for t, i in times:
            eta = float(np.interp(t, nodes, values))
            if _within(eta, stage.throttle_min, stage.throttle_max):
                continue
            node = f"schedule.throttle[{i}]" if i is not None else "schedule.throttle"
            raise ScheduleError(f"{node}: {eta:g} at t = {t:.3f} s, while stage "
                                f"{index} ({stage.name!r}) burns, is outside its throttle "
                                f"range [{stage.throttle_min:g}, {stage.throttle_max:g}]")


def _within(value: float, low: float, high: float) -> bool:
    return low - RANGE_SLACK <= value <= high + RANGE_SLACK


def _check_pitch(pitch: float, where: str) -> None:
    """Pitch from the local horizontal [rad] within [-90, 90] deg: thrust never points aft."""
    if not _within(pitch, -0.5 * math.pi, 0.5 * math.pi):
        raise ScheduleError(f"{where}: pitch {math.degrees(pitch):g} deg is outside "
                            f"[-90, 90] deg (measured from the local horizontal)")


def _check_time_pitch(schedule: TimeSchedule) -> None:
    if schedule.pitch is None:
        return
    for i, (t, pitch) in enumerate(zip(schedule.time, schedule.pitch)):
        _check_pitch(float(pitch), f"schedule.pitch[{i}] at t = {float(t):g} s "
                                   f"({float(pitch):g} rad)")


def _node_place(pc: PhaseControls, k: int, j: int, t: float, phase, stage) -> str:
    """Where node ``j`` of phase ``k`` is, in words: file line, time, phase and stage."""
    line = f"line {pc.source_lines[j]}, " if pc.source_lines is not None else ""
    return (f"schedule {line}phase {k} ({phase.kind} of stage {phase.stage} "
            f"{stage.name!r}) at t = {t:g} s")


# --------------------------------------------------------------------------------------
# control rules: u(t, x), vectorised over a trailing axis of samples


class _Rule:
    """Throttle(t) and, when steered, pitch(t, x) (and heading(t, x) when the kind steers
    in heading); returns a list of controls."""

    __slots__ = ("throttle", "pitch", "heading")

    def __init__(self, throttle: Callable, pitch: Callable | None,
                 heading: Callable | None = None):
        self.throttle = throttle
        self.pitch = pitch
        self.heading = heading

    def __call__(self, t, x):
        if self.pitch is None:
            return [self.throttle(t)]
        if self.heading is None:
            return [self.throttle(t), self.pitch(t, x)]
        return [self.throttle(t), self.pitch(t, x), self.heading(t, x)]

    def sample(self, t, x) -> np.ndarray:
        """Controls at sample times ``t`` (N,) and states ``x`` (n, N) as an (n_u, N) array."""
        return np.vstack(np.broadcast_arrays(*[np.asarray(c, float) for c in self(t, x)]))

    def engine_off(self) -> _Rule:
        """The same steering with the throttle at zero (a stage that ran dry)."""
        return _Rule(_Constant(0.0), self.pitch, self.heading)


class _Constant:
    """A constant control, for any t."""

    __slots__ = ("value",)

    def __init__(self, value):
        self.value = float(value)

    def __call__(self, t, x=None):
        return self.value + 0.0 * np.asarray(t, dtype=float)


class _Interp:
    """Linear interpolation on node times measured from ``offset``, held outside them."""

    __slots__ = ("offset", "times", "values", "_t", "_v")

    def __init__(self, offset, times, values):
        self.offset, self.times, self.values = float(offset), times, values
        self._t = [float(v) for v in np.ravel(times)]
        self._v = [float(v) for v in np.ravel(values)]

    def __call__(self, t, x=None):
        if not isinstance(t, float):
            return np.interp(t - self.offset, self.times, self.values)
        # one time, as the integrator asks: numpy's formula on Python floats, several
        # times faster than np.interp on a scalar
        s, ts, vs = t - self.offset, self._t, self._v
        if s <= ts[0]:
            return vs[0]
        if s >= ts[-1]:
            return vs[-1]
        i = bisect.bisect_right(ts, s)
        slope = (vs[i] - vs[i - 1]) / (ts[i] - ts[i - 1])
        return slope * (s - ts[i - 1]) + vs[i - 1]


class _AirPath:
    """Steering control ``index`` (0 pitch, 1 heading) along the air-relative velocity:
    zero angle of attack."""

    __slots__ = ("model", "index")

    def __init__(self, model, index: int = 0):
        self.model = model
        self.index = index

    def __call__(self, t, x):
        return self.model.kind.air_steering(x, self.model)[self.index]


class _PlaneHeading:
    """Heading that keeps the thrust in a plane of unit normal ``normal`` (inertial): along
    normal x up, the direction of motion in that plane (the default three-dimensional
    steering and the first guess)."""

    __slots__ = ("kind", "normal")

    def __init__(self, kind, normal):
        self.kind, self.normal = kind, np.asarray(normal, dtype=float)

    def __call__(self, t, x):
        return self.kind.plane_heading(x, self.normal)


class ControlLaw:
    """Which rule flies each part of each phase, and where phases end.

    ``throttle_source`` / ``pitch_source`` are ``"phases"`` (a :class:`PhaseSchedule`),
    ``"time"`` (a :class:`~ascentplan.problem.TimeSchedule`) or ``"default"``.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    plan : list of ascentplan.problem.model.Phase
        ``phase_plan(problem)``.
    schedule : PhaseSchedule, TimeSchedule or None
        Checked beforehand by :func:`check_schedule`.
    """

    def __init__(self, problem, plan, schedule):
        self.problem = problem
        self.plan = plan
        self.model = dynamics.flight_model(problem)
        # steered kinds fly a pitch schedule or the default gravity turn
        self.steered = self.model.kind.steered
        self.schedule = schedule
        if isinstance(schedule, PhaseSchedule):
            self.throttle_source = self.pitch_source = "phases"
        elif isinstance(schedule, TimeSchedule):
            self.throttle_source = "time"
            self.pitch_source = "time" if (self.steered and schedule.pitch is not None) \
                else "default"
            self.time_nodes = np.asarray(schedule.time, dtype=float)
            self.time_throttle = np.asarray(schedule.throttle, dtype=float)
            self.time_pitch = (None if schedule.pitch is None
                               else np.asarray(schedule.pitch, dtype=float))
        else:
            self.throttle_source = self.pitch_source = "default"
        # the default steering kicks over in the first burn (after the vertical rise)
        self.kick_phase = next(i for i, p in enumerate(plan) if p.kind == "burn")

    def controls(self, k) -> PhaseControls | None:
        """The scheduled controls of phase ``k``, or None when it has none."""
        if self.throttle_source == "phases" and k < len(self.schedule.phases):
            return self.schedule.phases[k]
        return None

    def phase_end(self, k, phase: Phase, t0: float) -> float | None:
        """Scheduled end of phase ``k`` [s], or None when it ends on an event."""
        if phase.ends_at_apogee:
            return None
        pc = self.controls(k)
        if pc is not None:
            return t0 + pc.duration
        if phase.burnouts:
            return t0 + float(booster_phase_duration(self.problem, self.plan, k))
        fairing = self.problem.vehicle.fairing
        if phase.drops_fairing and fairing.time is not None:
            return max(t0, fairing.time)
        if phase.duration is not None:
            return t0 + float(phase.duration)
        return None

    def breaks(self, k, phase: Phase, t0: float) -> np.ndarray:
        """Times [s] where the controls may kink: integration restarts there."""
        if phase.kind == "coast":
            return np.empty(0)
        pc = self.controls(k)
        if pc is not None:
            return t0 + pc.time
        if self.throttle_source == "time":
            return self.time_nodes
        return np.empty(0)

    def modes(self, k, phase: Phase, t0: float):
        """Control modes of the phase in order: (mode, end time or None, switch event)."""
        if phase.kind in ("rise", "coast"):
            return [(phase.kind, None, None)]
        if self.steered and self.pitch_source == "default":
            if k == self.kick_phase:
                return [("kick", t0 + KICK_DURATION, self._kick_event()), ("turn", None, None)]
            return [("turn", None, None)]
        return [("fly", None, None)]

    def _kick_event(self):
        target = 0.5 * np.pi - self.problem.launch.pitch_over
        if self.problem.launch.pitch_over == 0.0:
            return None
        c, s, model = math.cos(target), math.sin(target), self.model

        def kick_done(t, y):
            # sin(gamma_air - target)|w|: the air-relative flight path reached the kick
            w_radial, w_horizontal = model.kind.air_relative_velocity(y, model)
            return w_radial * c - w_horizontal * s

        kick_done.terminal = True
        kick_done.direction = -1
        return kick_done

    def rule(self, k, phase: Phase, t0: float, mode: str) -> _Rule:
        """The controls ``u(t, x)`` of phase ``k`` (started at ``t0`` [s]) in ``mode``."""
        stage = self.problem.vehicle.stages[phase.stage]
        pc = self.controls(k)
        if mode == "coast":
            throttle = _Constant(0.0)
        elif pc is not None:
            throttle = _Interp(t0, pc.time, pc.throttle)
        elif self.throttle_source == "time":
            throttle = _Interp(0.0, self.time_nodes, self.time_throttle)
        else:
            throttle = _Constant(stage.throttle_max)
        if not self.steered:
            return _Rule(throttle, None)
        return _Rule(throttle, self._pitch_rule(k, t0, mode, pc),
                     self._heading_rule(k, t0, mode, pc))

    def _heading_rule(self, k, t0: float, mode: str, pc):
        """Heading of a kind that steers in heading (None for the others): the schedule's
        in a burn it gives, along the air in a coast, else in the launch plane."""
        kind = self.model.kind
        if not kind.has_control("heading"):
            return None
        if mode == "coast":
            return _AirPath(self.model, 1)
        if mode in ("fly", "turn") and pc is not None and pc.heading is not None:
            return _Interp(t0, pc.time, pc.heading)
        return _PlaneHeading(kind, kind.launch_plane_normal(self.problem))

    def _pitch_rule(self, k, t0: float, mode: str, pc):
        """Pitch of a steered kind in ``mode``."""
        if mode == "rise":
            pitch = _Constant(0.5 * np.pi)
        elif mode in ("coast", "turn"):
            pitch = _AirPath(self.model)
        elif mode == "kick":
            pitch = _Constant(0.5 * np.pi - self.problem.launch.pitch_over)
        elif pc is not None:
            pitch = _Interp(t0, pc.time, pc.pitch)
        else:
            pitch = _Interp(0.0, self.time_nodes, self.time_pitch)
        return pitch

