"""Forward simulation of an ascent under a control schedule, with its velocity-loss budget."""

from __future__ import annotations

import functools
import math
import os
import sys
from dataclasses import dataclass, field
from typing import Any, Callable

import casadi as ca
import numpy as np
from scipy.integrate import OdeSolution, solve_ivp
from scipy.optimize import minimize_scalar

from ascentplan import _math as m_
from ascentplan.models import dynamics
from ascentplan.cautions import CAUTION
from ascentplan.problem.model import Phase, TimeSchedule, phase_plan

#: names of the velocity-loss budget terms integrated beside the flight states, in order
LOSS_NAMES = ("ideal", "gravity", "drag", "steering", "back_pressure")
#: the name under which each budget term's running total appears in ``quantities``
LOSS_QUANTITIES = {
    "ideal": "ideal_dv",
    "gravity": "gravity_loss",
    "drag": "drag_loss",
    "steering": "steering_loss",
    "back_pressure": "back_pressure_loss",
}
#: length of the pitch-over kick of the default steering [s]
KICK_DURATION = 5.0
#: uniform samples per phase added to the solver steps
SAMPLES_PER_PHASE = 400
#: shortest cap on a coast to apogee and on a burn that ends on depletion [s]
FLIGHT_CAP = 3.0 * 3600.0
#: longest cap on a coast to apogee, whatever the orbit [s]
_LONGEST_COAST = 30.0 * 86400.0
#: softening of |v| in the direction of the inertial velocity [m s^-1]; the identity of
#: the budget holds for any value, it only keeps v/|v| finite at zero speed
_SPEED_EPS = 1e-6
#: a depletion this much of the scheduled burn (or 1 s) before its end is a flame-out
_FLAMEOUT_FRACTION = 1e-6
#: impact is declared this far below the launch altitude [m]
IMPACT_MARGIN = 1.0


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
        of the planar model, ignored in rise (held at 90 deg) and coast phases.
    kind, stage : str or None, int or None
        The phase kind and stage this entry was written for; when given they are
        checked against the phase plan.
    """

    duration: float
    time: np.ndarray
    throttle: np.ndarray
    pitch: np.ndarray | None = None
    kind: str | None = None
    stage: int | None = None

    def __post_init__(self):
        time = np.asarray(self.time, dtype=float).reshape(-1)
        throttle = np.asarray(self.throttle, dtype=float).reshape(-1)
        duration = float(self.duration)
        if not (np.isfinite(duration) and duration >= 0.0):
            raise ValueError(f"phase duration: must be a finite number >= 0 s, got {duration}")
        if time.size == 0:
            raise ValueError("phase node times: need at least one node")
        if not np.all(np.isfinite(time)) or np.any(np.diff(time) <= 0.0):
            raise ValueError("phase node times: must be finite and strictly increasing")
        if throttle.shape != time.shape:
            raise ValueError(f"phase throttle: expected {time.size} values (one per node), "
                             f"got {throttle.size}")
        if not np.all(np.isfinite(throttle)) or np.any(throttle < 0.0):
            raise ValueError("phase throttle: must be finite and >= 0")
        object.__setattr__(self, "duration", duration)
        object.__setattr__(self, "time", time)
        object.__setattr__(self, "throttle", throttle)
        if self.pitch is not None:
            pitch = np.asarray(self.pitch, dtype=float).reshape(-1)
            if pitch.shape != time.shape:
                raise ValueError(f"phase pitch: expected {time.size} values (one per node), "
                                 f"got {pitch.size}")
            if not np.all(np.isfinite(pitch)):
                raise ValueError("phase pitch: must be finite")
            object.__setattr__(self, "pitch", pitch)


@dataclass(frozen=True)
class PhaseSchedule:
    """One :class:`PhaseControls` per phase of :func:`~ascentplan.problem.phase_plan`."""

    phases: tuple[PhaseControls, ...]

    def __post_init__(self):
        object.__setattr__(self, "phases", tuple(self.phases))


# --------------------------------------------------------------------------------------
# the equations integrated: flight states plus the loss budget


def _loss_rates(x, u, model, prop):
    """Rates of the budget terms [m s^-2], in the order of :data:`LOSS_NAMES`."""
    f = dynamics.flight_quantities(x, u, model, prop)
    throttle = u[0]
    mass = model.kind.mass(x)
    speed = m_.smooth_norm(f["radial_speed"], f["horizontal_speed"], eps=_SPEED_EPS)
    sin_gamma = f["radial_speed"] / speed
    return [
        throttle * prop.thrust_vacuum / mass,
        f["gravity"] * sin_gamma,
        f["drag_along_velocity"] / mass,
        f["thrust"] / mass - f["thrust_along_velocity"] / mass,
        # nozzle back-pressure: what the ambient pressure takes from the vacuum thrust
        (throttle * prop.thrust_vacuum - f["thrust"]) / mass,
    ]


def _build_rates(model):
    n, nu = model.n_states, model.n_controls
    z = ca.SX.sym("z", n + nu + 3)
    x, u = z[:n], z[n:n + nu]
    prop = dynamics.Propulsion(z[n + nu], z[n + nu + 1], z[n + nu + 2])
    out = ca.vertcat(dynamics.rhs(0.0, x, u, (model, prop)), *_loss_rates(x, u, model, prop))
    # the flight quantities appear in both the motion and the budget: share them
    return ca.Function("ascent_rates", [z], [ca.cse(out)])


_cached_rates = functools.lru_cache(maxsize=32)(_build_rates)


def _rates_function(model):
    try:
        return _cached_rates(model)
    except TypeError:  # a model holding unhashable data (e.g. numpy tables)
        return _build_rates(model)


class _Rates:
    """dx/dt of the flight states and the budget, evaluated through a CasADi buffer.

    The derivative is :func:`ascentplan.dynamics.rhs` itself (and the budget rates),
    turned into one CasADi function per model; a buffered call, controls included,
    costs about 4 us against about 80 us for the same formulas evaluated with numpy
    scalars, which makes a replay of a 200-node schedule take about 0.15 s.
    """

    def __init__(self, model):
        self.n, self.nu = model.n_states, model.n_controls
        self.function = _rates_function(model)
        self._z = np.zeros(self.n + self.nu + 3)
        self._out = np.zeros(self.n + len(LOSS_NAMES))
        self._buffer, self._trigger = self.function.buffer()
        self._buffer.set_arg(0, memoryview(self._z))
        self._buffer.set_res(0, memoryview(self._out))

    def bind(self, prop, rule):
        """The right-hand side ``fun(t, y)`` of one segment for solve_ivp."""
        n, nu, z, out, trigger = self.n, self.nu, self._z, self._out, self._trigger
        p = (float(prop.thrust_vacuum), float(prop.exhaust_speed), float(prop.exit_area))

        def fun(t, y):
            z[:n] = y[:n]
            z[n:n + nu] = rule(t, y)
            z[n + nu:] = p
            trigger()
            return out.copy()

        return fun


# --------------------------------------------------------------------------------------
# control rules: u(t, x), vectorised over a trailing axis of samples


class _Rule:
    """Throttle(t) and, planar, pitch(t, x); returns a list of controls."""

    __slots__ = ("throttle", "pitch")

    def __init__(self, throttle: Callable, pitch: Callable | None):
        self.throttle = throttle
        self.pitch = pitch

    def __call__(self, t, x):
        if self.pitch is None:
            return [self.throttle(t)]
        return [self.throttle(t), self.pitch(t, x)]

    def sample(self, t, x) -> np.ndarray:
        """Controls at sample times ``t`` (N,) and states ``x`` (n, N) as an (n_u, N) array."""
        return np.vstack(np.broadcast_arrays(*[np.asarray(c, float) for c in self(t, x)]))


class _Constant:
    """A constant control, for any t."""

    __slots__ = ("value",)

    def __init__(self, value):
        self.value = float(value)

    def __call__(self, t, x=None):
        return self.value + 0.0 * np.asarray(t, dtype=float)


class _Interp:
    """Linear interpolation on node times measured from ``offset``, held outside them."""

    __slots__ = ("offset", "times", "values")

    def __init__(self, offset, times, values):
        self.offset, self.times, self.values = float(offset), times, values

    def __call__(self, t, x=None):
        return np.interp(t - self.offset, self.times, self.values)


class _AirPath:
    """Pitch along the air-relative velocity: zero angle of attack."""

    __slots__ = ("model",)

    def __init__(self, model):
        self.model = model

    def __call__(self, t, x):
        return self.model.kind.air_pitch(x, self.model)


class _Law:
    """Which rule flies each part of each phase, and where phases end.

    ``throttle_source`` / ``pitch_source`` are ``"phases"`` (a :class:`PhaseSchedule`),
    ``"time"`` (a :class:`~ascentplan.problem.TimeSchedule`) or ``"default"``.
    """

    def __init__(self, problem, plan, schedule):
        self.problem = problem
        self.plan = plan
        self.model = dynamics.flight_model(problem)
        # steered kinds fly a pitch schedule or the default gravity turn
        self.planar = self.model.kind.has_control("pitch")
        self.omega = self.model.rotation_rate
        self.schedule = schedule
        if isinstance(schedule, PhaseSchedule):
            self.throttle_source = self.pitch_source = "phases"
        elif isinstance(schedule, TimeSchedule):
            self.throttle_source = "time"
            self.pitch_source = "time" if (self.planar and schedule.pitch is not None) \
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
        if phase.kind in ("rise", "coast"):
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
        if self.planar and self.pitch_source == "default":
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
        if not self.planar:
            return _Rule(throttle, None)
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
        return _Rule(throttle, pitch)


def _check_schedule(problem, plan, schedule):
    if schedule is None:
        return
    if isinstance(schedule, TimeSchedule):
        time = np.asarray(schedule.time, dtype=float)
        throttle = np.asarray(schedule.throttle, dtype=float)
        if time.ndim != 1 or time.size == 0 or np.any(np.diff(time) <= 0):
            raise ValueError("schedule.time: must be a non-empty, strictly increasing list [s]")
        if throttle.shape != time.shape or np.any(throttle < 0) or not np.all(
                np.isfinite(throttle)):
            raise ValueError(f"schedule.throttle: expected {time.size} finite values >= 0")
        if schedule.pitch is not None and np.asarray(schedule.pitch).shape != time.shape:
            raise ValueError(f"schedule.pitch: expected {time.size} values [rad]")
        return
    if not isinstance(schedule, PhaseSchedule):
        raise ValueError(f"schedule: expected None, a TimeSchedule or a PhaseSchedule, "
                         f"got {type(schedule).__name__}")
    if len(schedule.phases) != len(plan):
        raise ValueError(f"schedule: has {len(schedule.phases)} phases, the phase plan has "
                         f"{len(plan)} ({', '.join(p.kind for p in plan)})")
    for k, (pc, phase) in enumerate(zip(schedule.phases, plan)):
        if pc.kind is not None and pc.kind != phase.kind:
            raise ValueError(f"schedule phase {k}: kind {pc.kind!r}, the plan has "
                             f"{phase.kind!r}")
        if pc.stage is not None and pc.stage != phase.stage:
            raise ValueError(f"schedule phase {k}: stage {pc.stage}, the plan has "
                             f"{phase.stage}")
        if (dynamics.dynamics_kind(problem.dynamics).has_control("pitch")
                and phase.kind == "burn" and pc.pitch is None):
            raise ValueError(f"schedule phase {k}: a {problem.dynamics} burn needs a pitch at "
                             f"each node")


# --------------------------------------------------------------------------------------
# the trajectory


@dataclass
class Trajectory:
    """A flown ascent: samples, events, the loss budget and dense solutions.

    Attributes
    ----------
    dynamics : str
        Name of the dynamics kind (a key of :data:`ascentplan.models.dynamics.DYNAMICS`);
        :attr:`kind` is the kind itself.
    time : numpy.ndarray, shape (N,)
        Sample times from liftoff [s]; within a phase strictly increasing, and the time
        of a phase boundary appears once in each of the two phases (so the mass drop at
        staging shows as two samples at one time).
    state : numpy.ndarray, shape (n, N)
        Flight states, see ``state_names``.
    controls : numpy.ndarray, shape (n_u, N)
        Throttle and, planar, pitch [rad] as flown.
    phase : numpy.ndarray of int, shape (N,)
        Index of the phase of each sample.
    phase_kinds, phase_stages : tuple
        Kind (``"rise"``, ``"burn"``, ``"coast"``) and stage index of each phase flown;
        a final coast to apogee added by :func:`simulate` comes last.
    phase_bounds : list of (float, float)
        Start and end time of each phase [s].
    quantities : dict of numpy.ndarray
        :func:`ascentplan.dynamics.flight_quantities` at the samples (``altitude``,
        ``speed``, ``flight_path_angle``, ``dynamic_pressure``, ``mach``,
        ``axial_acceleration`` [g0], ``angle_of_attack``, ``q_alpha``, ``thrust``,
        ``drag``, ...), plus the running totals of the loss budget
        (:data:`LOSS_QUANTITIES`) [m s^-1].
    events : list of dict
        ``kind`` (``liftoff``, ``burnout``, ``flameout``, ``staging``, ``apogee``,
        ``impact``), ``time`` [s], ``phase``, ``stage``, ``altitude`` [m], ``speed``
        [m s^-1], ``flight_path_angle`` [rad], ``mass`` [kg], and for some kinds
        ``propellant_remaining`` [kg], ``scheduled_end`` [s], ``dropped_mass`` [kg].
    losses : dict
        The velocity budget to burnout (end of the last powered phase) [m s^-1]:
        ``ideal``, ``achieved``, ``gravity``, ``drag``, ``steering``,
        ``back_pressure``; see :func:`simulate`.
    status : str
        ``"ok"``, ``"impact"`` or ``"failed"``; ``message`` says why.
    solutions : list of scipy.integrate.OdeSolution or None
        Dense solution of each phase over [start, end]: the flight states followed by
        the budget terms; None for a phase of zero length.
    """

    dynamics: str
    time: np.ndarray
    state: np.ndarray
    controls: np.ndarray
    phase: np.ndarray
    phase_kinds: tuple
    phase_stages: tuple
    phase_bounds: list
    quantities: dict
    events: list
    losses: dict
    status: str
    message: str
    solutions: list
    state_names: tuple = ()
    control_names: tuple = ()
    _model: Any = field(default=None, repr=False)
    _props: list = field(default_factory=list, repr=False)
    _rules: list = field(default_factory=list, repr=False)
    _fixed: list = field(default_factory=list, repr=False)

    @property
    def kind(self) -> dynamics.DynamicsKind:
        """The :class:`~ascentplan.models.dynamics.DynamicsKind` flown."""
        return dynamics.dynamics_kind(self.dynamics)

    @property
    def ok(self) -> bool:
        return self.status == "ok"

    def _burnout_index(self) -> int:
        powered = [k for k, kind in enumerate(self.phase_kinds) if kind in ("rise", "burn")]
        last = max(powered) if powered else 0
        idx = np.nonzero(self.phase <= last)[0]
        return int(idx[-1]) if idx.size else len(self.time) - 1

    def burnout_state(self) -> np.ndarray:
        """Flight state at the end of the last powered phase flown."""
        return self.state[:, self._burnout_index()].copy()

    def burnout_time(self) -> float:
        """Time [s] of the end of the last powered phase flown."""
        return float(self.time[self._burnout_index()])

    def state_at(self, t: float, phase: int | None = None) -> np.ndarray:
        """Flight state at time ``t`` [s] from the dense solution.

        At a phase boundary the later phase is taken unless ``phase`` says otherwise.
        """
        k = self._phase_of(t) if phase is None else int(phase)
        return self._augmented_at(k, t)[:len(self.state_names)]

    def _phase_of(self, t):
        for k in range(len(self.phase_bounds) - 1, -1, -1):
            if self.phase_bounds[k][0] <= t:
                return k
        return 0

    def _augmented_at(self, k, t):
        sol = self.solutions[k]
        if sol is None:
            return self._fixed[k].copy()
        t0, t1 = self.phase_bounds[k]
        return sol(min(max(t, t0), t1))

    def _rule_at(self, k, t):
        starts = [s for s, _ in self._rules[k]]
        j = max(int(np.searchsorted(starts, t, side="right")) - 1, 0)
        return self._rules[k][j][1]

    def quantities_at(self, t: float, phase: int | None = None) -> dict:
        """Flight quantities (as in :attr:`quantities`) at time ``t`` [s], as floats.

        Evaluated on the dense solution with the controls as flown; at a phase boundary
        the later phase is taken unless ``phase`` says otherwise.
        """
        k = self._phase_of(t) if phase is None else int(phase)
        y = self._augmented_at(k, t)
        n = len(self.state_names)
        x = y[:n]
        u = np.asarray(self._rule_at(k, t)(t, x), dtype=float)
        q = {name: float(v) for name, v in
             dynamics.flight_quantities(x, u, self._model, self._props[k]).items()}
        for i, name in enumerate(LOSS_NAMES):
            q[LOSS_QUANTITIES[name]] = float(y[n + i])
        return q

    def peak(self, name: str, phases=None) -> tuple[float, float, int]:
        """Extreme of a quantity, refined between samples on the dense solution.

        The largest sample is refined by a bounded scalar maximisation between its two
        neighbours in the same phase.

        Parameters
        ----------
        name : str
            A key of :attr:`quantities` for its maximum (``dynamic_pressure``,
            ``axial_acceleration``, ...; ``q_alpha`` and ``angle_of_attack`` by absolute
            value), or ``"min_altitude"`` for the lowest altitude.
        phases : iterable of int, optional
            Only these phases are searched; default all.

        Returns
        -------
        value, time, index : float, float [s], int
            The extreme, its time, and the index of the largest sample.
        """
        minimum = name == "min_altitude"
        key = "altitude" if minimum else name
        if key not in self.quantities:
            raise ValueError(f"peak: unknown quantity {name!r} for a {self.dynamics} "
                             f"trajectory; valid: min_altitude, "
                             f"{', '.join(sorted(self.quantities))}")
        use_abs = key in ("q_alpha", "angle_of_attack")
        values = np.asarray(self.quantities[key], dtype=float)
        if use_abs:
            values = np.abs(values)
        sign = -1.0 if minimum else 1.0
        searched = np.isfinite(values)
        if phases is not None:
            searched &= np.isin(self.phase, list(phases))
        if not np.any(searched):
            raise ValueError(f"peak: no samples of {name!r} in phases {phases}")
        i = int(np.argmax(np.where(searched, sign * values, -np.inf)))
        best_value, best_time = float(values[i]), float(self.time[i])
        k = int(self.phase[i])
        if self.solutions[k] is None:
            return best_value, best_time, i
        lo = self.time[i - 1] if i > 0 and self.phase[i - 1] == k else self.time[i]
        hi = self.time[i + 1] if i + 1 < len(self.time) and self.phase[i + 1] == k \
            else self.time[i]
        if hi <= lo:
            return best_value, best_time, i

        def objective(t):
            v = self.quantities_at(t, phase=k)[key]
            return -sign * (abs(v) if use_abs else v)

        res = minimize_scalar(objective, bounds=(float(lo), float(hi)), method="bounded",
                              options={"xatol": 1e-9 * max(1.0, float(hi))})
        if np.isfinite(res.fun) and -res.fun > sign * best_value:
            best_value, best_time = sign * float(-res.fun), float(res.x)
        return best_value, best_time, i


# --------------------------------------------------------------------------------------
# the simulator


def _default_atol(problem, rtol):
    """Absolute tolerances: rtol times a magnitude of each state.

    Position 1e4 m, range angle 1e4 m / R, speeds and budget terms 10 m/s, mass ten
    times the liftoff mass: at rtol = 1e-10 that is 1e-6 m, 1e-9 m/s and 1e-9 of the
    liftoff mass.
    """
    m0 = problem.vehicle.liftoff_mass
    kind = dynamics.dynamics_kind(problem.dynamics)
    per_name = {"mass": 10.0 * m0, "range_angle": 1e4 / problem.planet.radius,
                "altitude": 1e4, "radius": 1e4}
    scales = [per_name.get(name, 10.0) for name in kind.state_names]
    return rtol * np.array(scales + [10.0] * len(LOSS_NAMES))


def _atol_vector(problem, rtol, atol, n):
    default = _default_atol(problem, rtol)
    if atol is None:
        return default
    a = np.asarray(atol, dtype=float)
    if a.ndim == 0:
        return np.full(default.shape, float(a))
    if a.shape == (n,):
        return np.concatenate([a, default[n:]])
    if a.shape == default.shape:
        return a
    raise ValueError(f"atol: expected a number or {n} values (one per state), got {a.shape}")


def _event_record(kind, t, k, stage, x, problem, **extra):
    h, speed, fpa = dynamics.altitude_speed_fpa(x, problem.dynamics, problem.planet)
    rec = dict(kind=kind, time=float(t), phase=int(k), stage=int(stage), altitude=float(h),
               speed=float(speed), flight_path_angle=float(fpa), mass=float(x[-1]))
    rec.update(extra)
    return rec


def _coast_cap(problem, x):
    """Cap on a coast to apogee [s]: two orbital periods of the osculating orbit, bounded."""
    mu = problem.planet.gravitational_parameter
    energy = dynamics.dynamics_kind(problem.dynamics).specific_energy(x, problem.planet)
    inverse_a = -2.0 * energy / mu
    if inverse_a > 0:
        period = 2.0 * np.pi * math.sqrt(inverse_a ** -3 / mu)
        return float(min(max(FLIGHT_CAP, 2.0 * period), _LONGEST_COAST))
    return FLIGHT_CAP


@dataclass
class _PhaseRun:
    t0: float
    t1: float
    y1: np.ndarray
    ended_by: str  # end | depletion | apogee | impact | cap | failed
    message: str = ""
    ts: list = field(default_factory=list)
    interpolants: list = field(default_factory=list)
    steps: list = field(default_factory=list)
    rules: list = field(default_factory=list)
    apogees: list = field(default_factory=list)  # (time, state) of apogees passed
    flameout_time: float | None = None  # a timed burn that ran dry before its end

    def solution(self):
        if not self.interpolants:
            return None
        return OdeSolution(np.asarray(self.ts), self.interpolants)


def _fly_phase(problem, law, rates, k, phase, t0, y0, rtol, atol, max_step, exhausted):
    kind = dynamics.dynamics_kind(problem.dynamics)
    n = rates.n
    stage = problem.vehicle.stages[phase.stage]
    prop = dynamics.propulsion(stage, phase.powered)
    t_sched = law.phase_end(k, phase, t0)
    run = _PhaseRun(t0=t0, t1=t0, y1=y0.copy(), ended_by="end")
    run.rules.append((t0, law.rule(k, phase, t0, law.modes(k, phase, t0)[0][0])))
    if phase.powered and phase.stage in exhausted or (t_sched is not None and t_sched <= t0):
        return run, prop, t_sched
    if phase.ends_at_apogee and kind.radial_speed(y0) <= 0.0:
        # already at or past the apogee: the coast has zero length
        run.ended_by = "apogee"
        return run, prop, t_sched
    open_ended = t_sched is None
    if open_ended:
        if phase.powered:
            cap = max(FLIGHT_CAP, 10.0 * stage.full_throttle_burn_time)
        else:
            cap = _coast_cap(problem, y0[:n])
        t_end = t0 + cap
    else:
        t_end = t_sched

    planet = problem.planet
    h_impact = problem.launch.altitude - IMPACT_MARGIN
    def impact(t, y):
        return kind.altitude(y, planet) - h_impact

    impact.terminal, impact.direction = True, -1
    base = [("impact", impact)]
    if phase.powered:
        m_burnout = problem.vehicle.burnout_mass(phase.stage)

        def depletion(t, y):
            return kind.mass(y) - m_burnout

        depletion.terminal, depletion.direction = True, -1
        base.append(("depletion", depletion))
    if not phase.powered:
        def apogee(t, y):
            return kind.radial_speed(y)

        # a coast that does not end at apogee may still pass one: record it
        apogee.terminal, apogee.direction = phase.ends_at_apogee, -1
        base.append(("apogee" if phase.ends_at_apogee else "apogee_pass", apogee))

    breaks = np.asarray(law.breaks(k, phase, t0), dtype=float)
    options = dict(method="DOP853", rtol=rtol, atol=atol, dense_output=True)
    if max_step is not None:
        options["max_step"] = max_step
    run.rules = []
    t, y, step = t0, y0.copy(), None
    for mode, mode_end, switch in law.modes(k, phase, t0):
        seg_end = t_end if mode_end is None else min(mode_end, t_end)
        rule = law.rule(k, phase, t0, mode)
        run.rules.append((t, rule))
        events = list(base)
        if switch is not None and switch(t, y) > 0:
            events.append(("switch", switch))
        fun = rates.bind(prop, rule)
        cuts = [b for b in breaks if t < b < seg_end] + [seg_end]
        switched = False
        i_cut = 0
        while i_cut < len(cuts):
            tb = cuts[i_cut]
            if tb <= t:
                i_cut += 1
                continue
            kw = dict(options)
            if step is not None:
                kw["first_step"] = min(step, tb - t)
            sol = solve_ivp(fun, (t, tb), y, events=[e for _, e in events], **kw)
            if sol.status == -1:
                run.t1, run.y1, run.ended_by = t, y, "failed"
                run.message = f"integration failed in phase {k} at t = {t:.6g} s: {sol.message}"
                return run, prop, t_sched
            _append_segment(run, sol)
            for (label, _), te, ye in zip(events, sol.t_events, sol.y_events):
                if label == "apogee_pass":
                    run.apogees.extend((float(ti), yi) for ti, yi in zip(te, ye))
            if sol.t.size > 1:
                dt = np.diff(sol.t[-3:])
                step = float(dt.max())
            t, y = float(sol.t[-1]), sol.y[:, -1].copy()
            run.t1, run.y1 = t, y
            if sol.status == 1:
                name = _first_event(sol, events)
                if name == "switch":
                    switched = True
                    break
                if name == "depletion" and not open_ended and (
                        t_end - t > _FLAMEOUT_FRACTION * max(1.0, t_end - t0)):
                    # a timed phase that runs dry: the engine stops and the vehicle coasts
                    # until the scheduled end of the phase (staging is commanded by time)
                    run.flameout_time = t
                    rule = _Rule(_Constant(0.0), rule.pitch)
                    run.rules.append((t, rule))
                    base = [e for e in base if e[0] != "depletion"]
                    events = [e for e in events if e[0] != "depletion"]
                    fun = rates.bind(prop, rule)
                    continue
                run.ended_by = name
                return run, prop, t_sched
            i_cut += 1
        if switched:
            continue
        if not switched and t >= t_end:
            break
    if open_ended:
        run.ended_by = "cap"
        run.message = (f"phase {k} ({phase.kind}) reached its cap of {t_end - t0:.0f} s "
                       f"without {'burnout' if phase.powered else 'apogee'}")
    return run, prop, t_sched


def _first_event(sol, events):
    best, name = np.inf, None
    for (label, _), te in zip(events, sol.t_events):
        if label != "apogee_pass" and te.size and te[0] < best:
            best, name = te[0], label
    return name


def _append_segment(run, sol):
    dense = sol.sol
    if dense is not None:
        for a, b, interp in zip(dense.ts[:-1], dense.ts[1:], dense.interpolants):
            last = run.ts[-1] if run.ts else None
            if last is None:
                run.ts.append(float(a))
            if b > run.ts[-1]:
                run.ts.append(float(b))
                run.interpolants.append(interp)
    run.steps.append(np.asarray(sol.t, dtype=float))


def _sample_times(run):
    """Solver steps, a uniform grid and the phase ends, without near-duplicates."""
    if run.t1 <= run.t0:
        return np.array([run.t0])
    steps = np.unique(np.concatenate(run.steps + [np.array([run.t0, run.t1])]))
    steps = steps[(steps >= run.t0) & (steps <= run.t1)]
    grid = np.linspace(run.t0, run.t1, SAMPLES_PER_PHASE)
    j = np.searchsorted(steps, grid)
    left = steps[np.clip(j - 1, 0, steps.size - 1)]
    right = steps[np.clip(j, 0, steps.size - 1)]
    gap = np.minimum(np.abs(grid - left), np.abs(grid - right))
    return np.union1d(steps, grid[gap > 1e-9 * max(1.0, abs(run.t1))])


def simulate(problem, schedule=None, *, coast_to_apogee: bool = True, rtol: float = 1e-10,
             atol=None, max_step: float | None = None) -> Trajectory:
    """Fly an ascent phase by phase under a control schedule.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    schedule : PhaseSchedule, TimeSchedule or None
        * :class:`PhaseSchedule`: one entry per phase of
          :func:`~ascentplan.problem.phase_plan`, controls linear between the nodes
          (the optimiser's representation, replayed exactly); phase durations from it,
          except that a phase that ends at apogee ends there; a burn whose propellant
          runs out before its scheduled end records a ``flameout`` and coasts, engine
          off, to that end.
        * :class:`~ascentplan.problem.TimeSchedule`: controls against time from liftoff,
          linear between the given times and held outside them; each stage burns until
          its propellant is exhausted; pitch None means the default steering.
        * None: full throttle (each stage's ``throttle_max``) and the default steering:
          pitch 90 deg during the vertical rise, then 90 deg - ``launch.pitch_over`` for
          a kick of :data:`KICK_DURATION` s (ended earlier when the air-relative flight
          path has fallen to that angle), then a gravity turn: pitch along the
          air-relative velocity (zero angle of attack).
        In rise phases the pitch is 90 deg; in coasts the throttle is 0 and the pitch
        is taken along the air-relative velocity.
    coast_to_apogee : bool
        When the plan has no phase ending at apogee, coast after the last burnout until
        the radial (vertical) speed falls through zero, if it is still climbing.
    rtol : float
        Relative tolerance of ``solve_ivp`` (DOP853, an explicit Runge-Kutta method of
        order 8).
    atol : float or array or None
        Absolute tolerance: one number, or one per flight state; default
        ``rtol`` times 1e4 m on position, 10 m/s on speeds and 10 liftoff masses on
        mass (1e-6 m, 1e-9 m/s and 1e-9 m0 at the default rtol).
    max_step : float or None
        Largest solver step [s].

    Returns
    -------
    Trajectory
        ``status`` is ``"ok"``, ``"impact"`` (altitude fell more than
        :data:`IMPACT_MARGIN` below the launch altitude; ends the flight) or
        ``"failed"`` (the solver failed, or a burn or a coast to apogee reached its
        cap of at least :data:`FLIGHT_CAP` s).

    Notes
    -----
    The integration restarts at every node of the control schedule, so the control is
    smooth (linear) within each solver call and the difference from a collocation
    solution is integration error only. At staging the stack mass drops to
    ``vehicle.mass_above(i)``: the spent stage's dry mass and any unburnt propellant
    leave; the other states are continuous.

    Velocity-loss budget. With v the inertial velocity, v_hat = v/|v|, gamma the
    inertial flight-path angle, a the angle between the thrust axis and v, F the
    net thrust (eta F_vac - p A_exit) and D the drag vector, the speed obeys exactly

        d|v|/dt = eta F_vac/m - p A_exit/m - F (1 - cos a)/m + (D . v_hat)/m - g sin(gamma)

    so integrating each term beside the flight states (same solver calls, same
    accuracy) gives

        ideal = achieved + gravity + drag + steering + back_pressure

    with ideal = int eta F_vac/m dt (= sum c ln(m_ignition/m_burnout) when every stage
    burns out; Tsiolkovsky), gravity = int g sin(gamma) dt, drag = int -(D . v_hat)/m
    dt, steering = int F (1 - cos a)/m dt, back_pressure = int p A_exit/m dt and
    achieved the change of inertial speed (from omega R cos(latitude) on the pad of a
    rotating planet). Vertical model: v_hat = sign(v), gamma = +-90 deg. v_hat is
    formed with a softened norm so that it stays finite at zero speed. ``losses``
    holds the totals at burnout; the running totals are in ``quantities``.
    """
    plan = list(phase_plan(problem))
    _check_schedule(problem, plan, schedule)
    law = _Law(problem, plan, schedule)
    model = dynamics.flight_model(problem)
    kind = model.kind
    rates = _Rates(model)
    n = model.n_states
    atol_vec = _atol_vector(problem, rtol, atol, n)
    vehicle = problem.vehicle
    last_stage = len(vehicle.stages) - 1
    wants_final_coast = coast_to_apogee and not any(p.ends_at_apogee for p in plan)

    x0 = dynamics.initial_state(problem)
    y = np.concatenate([x0, np.zeros(len(LOSS_NAMES))])
    t = 0.0
    events = [_event_record("liftoff", 0.0, 0, 0, x0, problem)]
    runs, props, phases = [], [], []
    exhausted: set[int] = set()
    status, message = "ok", ""
    k = 0
    while True:
        if k < len(plan):
            phase = plan[k]
        elif k == len(plan) and wants_final_coast and kind.radial_speed(y) > 0.0:
            phase = Phase("coast", last_stage, ends_at_apogee=True)
        else:
            break
        run, prop, t_sched = _fly_phase(problem, law, rates, k, phase, t, y, rtol, atol_vec,
                                        max_step, exhausted)
        runs.append(run)
        props.append(prop)
        phases.append(phase)
        t, y = run.t1, run.y1.copy()
        x = y[:n]
        for t_apogee, y_apogee in run.apogees:
            events.append(_event_record("apogee", t_apogee, k, phase.stage, y_apogee[:n],
                                        problem))
        if run.ended_by == "impact":
            events.append(_event_record("impact", t, k, phase.stage, x, problem))
            status = "impact"
            message = (f"impact at t = {t:.3f} s in phase {k} ({phase.kind}): altitude "
                       f"{IMPACT_MARGIN:g} m below the launch altitude")
            break
        if run.ended_by in ("failed", "cap"):
            status, message = "failed", run.message
            break
        if run.ended_by == "apogee":
            events.append(_event_record("apogee", t, k, phase.stage, x, problem,
                                        scheduled_end=t_sched))
        if phase.powered:
            remaining = float(x[-1] - vehicle.burnout_mass(phase.stage))
            if run.flameout_time is not None:
                exhausted.add(phase.stage)
                events.append(_event_record(
                    "flameout", run.flameout_time, k, phase.stage,
                    run.solution()(run.flameout_time)[:n], problem, scheduled_end=t_sched,
                    propellant_remaining=0.0))
            if run.ended_by == "depletion":
                exhausted.add(phase.stage)
                early = (t_sched is not None and t_sched - t > _FLAMEOUT_FRACTION
                         * max(1.0, t_sched - run.t0))
                if early or phase.kind == "rise":
                    events.append(_event_record("flameout", t, k, phase.stage, x, problem,
                                                scheduled_end=t_sched,
                                                propellant_remaining=remaining))
                elif phase.kind == "burn":
                    events.append(_event_record("burnout", t, k, phase.stage, x, problem,
                                                propellant_remaining=remaining))
            elif phase.kind == "burn" and not (phase.stage in exhausted and run.t1 == run.t0):
                # (a burn of zero length after its stage flamed out in the rise is skipped)
                events.append(_event_record("burnout", t, k, phase.stage, x, problem,
                                            propellant_remaining=remaining))
            if phase.kind == "burn":
                exhausted.add(phase.stage)
                if phase.stage < last_stage:
                    dropped = float(x[-1] - vehicle.mass_above(phase.stage))
                    y[n - 1] = vehicle.mass_above(phase.stage)
                    events.append(_event_record("staging", t, k, phase.stage, y[:n], problem,
                                                dropped_mass=dropped))
        k += 1

    return _assemble(problem, model, runs, props, phases, events, status, message)


def _assemble(problem, model, runs, props, phases, events, status, message):
    n = model.n_states
    times, states, controls, phase_idx, quantities = [], [], [], [], []
    solutions = []
    for k, (run, prop) in enumerate(zip(runs, props)):
        sol = run.solution()
        solutions.append(sol)
        tk = _sample_times(run) if sol is not None else np.array([run.t0])
        yk = sol(tk) if sol is not None else run.y1[:, None]
        if sol is not None:
            # the exact end state (an event location) rather than its interpolant
            yk[:, -1] = run.y1
        xk = yk[:n]
        starts = np.array([s for s, _ in run.rules])
        which = np.clip(np.searchsorted(starts, tk, side="right") - 1, 0, len(starts) - 1)
        uk = np.empty((model.n_controls, tk.size))
        for j in np.unique(which):
            mask = which == j
            uk[:, mask] = run.rules[j][1].sample(tk[mask], xk[:, mask])
        q = dynamics.flight_quantities(xk, uk, model, prop)
        q = {name: np.broadcast_to(np.asarray(v, dtype=float), tk.shape).copy()
             for name, v in q.items()}
        for i, name in enumerate(LOSS_NAMES):
            q[LOSS_QUANTITIES[name]] = yk[n + i].copy()
        times.append(tk)
        states.append(xk)
        controls.append(uk)
        phase_idx.append(np.full(tk.size, k, dtype=int))
        quantities.append(q)
    keys = [key for key in quantities[0] if all(key in q for q in quantities)]
    traj = Trajectory(
        dynamics=model.kind.name,
        time=np.concatenate(times),
        state=np.concatenate(states, axis=1),
        controls=np.concatenate(controls, axis=1),
        phase=np.concatenate(phase_idx),
        phase_kinds=tuple(p.kind for p in phases),
        phase_stages=tuple(p.stage for p in phases),
        phase_bounds=[(run.t0, run.t1) for run in runs],
        quantities={key: np.concatenate([q[key] for q in quantities]) for key in keys},
        events=events,
        losses={},
        status=status,
        message=message or ("flight completed" if status == "ok" else ""),
        solutions=solutions,
        state_names=model.kind.state_names,
        control_names=model.kind.control_names,
        _model=model,
        _props=props,
        _rules=[run.rules for run in runs],
        _fixed=[run.y1.copy() for run in runs],
    )
    traj.losses = _budget(traj)
    return traj


def _inertial_speed(kind, x):
    return abs(float(dynamics.dynamics_kind(kind).speed(x)))


def _budget(traj):
    i = traj._burnout_index()
    out = {name: float(traj.quantities[LOSS_QUANTITIES[name]][i]) for name in LOSS_NAMES}
    out["achieved"] = (_inertial_speed(traj.dynamics, traj.state[:, i])
                       - _inertial_speed(traj.dynamics, traj.state[:, 0]))
    return {key: out[key] for key in ("ideal", "achieved", "gravity", "drag", "steering",
                                      "back_pressure")}


# --------------------------------------------------------------------------------------
# command-line verb


def simulate_command(problem, out=None, schedule=None) -> int:
    """Fly a problem, write ``trajectory.csv`` and ``summary.json``, print a summary.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    out : str or path-like or None
        Results folder; default ``results/<problem name>/``.
    schedule : str or path-like or None
        A schedule CSV (see :func:`ascentplan.outputs.read_schedule_csv`); without it
        ``problem.schedule`` or the default schedule is flown.

    Returns
    -------
    int
        0 when the flight ends normally, 1 on impact or failure, 2 on a bad schedule
        file.
    """
    from ascentplan.output import files as outputs

    if schedule is not None:
        try:
            flown = outputs.read_schedule_csv(schedule)
            _check_schedule(problem, list(phase_plan(problem)), flown)
        except (OSError, ValueError) as exc:
            print(f"error: {exc}", file=sys.stderr)
            return 2
    else:
        flown = problem.schedule
    try:
        traj = simulate(problem, flown)
    except ValueError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    folder = os.path.join("results", problem.name) if out is None else os.fspath(out)
    os.makedirs(folder, exist_ok=True)
    csv_path = os.path.join(folder, "trajectory.csv")
    json_path = os.path.join(folder, "summary.json")
    outputs.write_trajectory_csv(traj, csv_path)
    summary = outputs.simulation_summary(problem, traj)
    outputs.write_json(summary, json_path)
    print(outputs.format_summary(summary))
    print(f"wrote {csv_path}")
    print(f"wrote {json_path}")
    if traj.status != "ok":
        print(f"simulation {traj.status}: {traj.message}", file=sys.stderr)
    print(CAUTION)
    return 0 if traj.status == "ok" else 1
