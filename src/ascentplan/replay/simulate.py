"""Forward simulation of an ascent under a control schedule, with its velocity-loss budget.

The flight is integrated phase by phase (:mod:`ascentplan.replay.phases`) under the
control law of the schedule (:mod:`ascentplan.replay.schedule`); this module strings the
phases together (staging, events) and assembles the :class:`Trajectory`
(:mod:`ascentplan.replay.trajectory`), loss budget included
(:mod:`ascentplan.replay.budget`).
"""

from __future__ import annotations

import numpy as np

from ascentplan.models import dynamics
from ascentplan.problem.model import Phase, phase_plan
from ascentplan.problem.plan import aboard_beyond_core
from ascentplan.replay.budget import LOSS_NAMES, LOSS_QUANTITIES, burnout_budget
from ascentplan.replay.phases import (
    FLIGHT_CAP,
    IMPACT_MARGIN,
    SAMPLES_PER_PHASE,
    fly_phase,
    runs_dry_early,
)
from ascentplan.replay.rates import Rates
from ascentplan.replay.schedule import (
    KICK_DURATION,
    ControlLaw,
    PhaseControls,
    PhaseSchedule,
    check_schedule,
)
from ascentplan.replay.trajectory import Trajectory

__all__ = ["FLIGHT_CAP", "IMPACT_MARGIN", "KICK_DURATION", "LOSS_NAMES", "LOSS_QUANTITIES",
           "SAMPLES_PER_PHASE", "PhaseControls", "PhaseSchedule", "Trajectory", "simulate"]


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
    check_schedule(problem, plan, schedule)
    law = ControlLaw(problem, plan, schedule)
    model = dynamics.flight_model(problem)
    kind = model.kind
    rates = Rates(model)
    options = dict(method="DOP853", rtol=rtol, dense_output=True,
                   atol=_atol_vector(problem, rtol, atol, model.n_states))
    if max_step is not None:
        options["max_step"] = max_step
    last_stage = len(problem.vehicle.stages) - 1
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
        run, prop, t_sched = fly_phase(problem, law, rates, k, phase, t, y, options, exhausted)
        runs.append(run)
        props.append(prop)
        phases.append(phase)
        t = run.t1
        status, message, y = _close_phase(problem, plan, k, phase, run, t_sched, exhausted,
                                          events)
        if status != "ok":
            break
        k += 1

    return _assemble(problem, model, runs, props, phases, events, status, message)


def _close_phase(problem, plan, k, phase, run, t_sched, exhausted, events):
    """Record the events that end phase ``k``; stage when a burn ends.

    Returns the status of the flight after the phase (``"ok"``, ``"impact"``,
    ``"failed"``), its message, and the augmented state the next phase starts from.
    Adds to ``events`` and ``exhausted``.
    """
    kind = dynamics.dynamics_kind(problem.dynamics)
    t, y = run.t1, run.y1.copy()
    x = y[:kind.n_states]
    for t_apogee, y_apogee in run.apogees:
        events.append(_event_record("apogee", t_apogee, k, phase.stage,
                                    y_apogee[:kind.n_states], problem))
    if run.ended_by == "impact":
        events.append(_event_record("impact", t, k, phase.stage, x, problem))
        return "impact", (f"impact at t = {t:.3f} s in phase {k} ({phase.kind}): altitude "
                          f"{IMPACT_MARGIN:g} m below the launch altitude"), y
    if run.ended_by in ("failed", "cap"):
        return "failed", run.message, y
    if run.ended_by == "apogee":
        events.append(_event_record("apogee", t, k, phase.stage, x, problem,
                                    scheduled_end=t_sched))
    if phase.powered:
        _close_powered(problem, k, phase, run, t_sched, exhausted, events, y,
                       plan if k < len(plan) else None)
    elif phase.duration_range is not None and k + 1 < len(plan):
        events.append(_event_record("restart", t, k + 1, phase.stage, x, problem,
                                    burn=plan[k + 1].burn))
    return "ok", "", y


def _close_segment(problem, plan, k, phase, run, t_sched, exhausted, events, y):
    """The end of a powered phase that does not end its stage: booster groups burnt out
    and dropped (air-lit ones ignite), the fairing dropped, or a cut-off before a restart;
    a flame-out when the stage ran dry. Drops mass in ``y``."""
    kind = dynamics.dynamics_kind(problem.dynamics)
    n, m = kind.n_states, kind.index("mass")
    vehicle = problem.vehicle
    stage, t, x = phase.stage, run.t1, y[:n]
    if run.ended_by == "depletion" or run.flameout_time is not None:
        exhausted.add(stage)
        t_out = run.flameout_time if run.flameout_time is not None else t
        events.append(_event_record("flameout", t_out, k, stage, x, problem,
                                    scheduled_end=t_sched, propellant_remaining=0.0))
    for g in phase.burnouts:
        group = vehicle.boosters[g]
        dropped = group.count * group.dry_mass
        events.append(_event_record("booster_burnout", t, k, stage, y[:n], problem,
                                    group=group.name, dropped_mass=float(dropped)))
        y[m] -= dropped
        for later in vehicle.boosters:
            if later.ignition == group.name and later.stage == stage:
                events.append(_event_record("booster_ignition", t, k, stage, y[:n], problem,
                                            group=later.name))
    if phase.drops_fairing:
        events.append(_event_record("fairing_jettison", t, k, stage, y[:n], problem,
                                    dropped_mass=float(vehicle.fairing.mass)))
        y[m] -= vehicle.fairing.mass
    if phase.kind == "burn" and k + 1 < len(plan) and plan[k + 1].duration_range is not None:
        remaining = float(kind.mass(x) - vehicle.burnout_mass(stage)
                          - aboard_beyond_core(problem, plan, k))
        events.append(_event_record("cutoff", t, k, stage, x, problem, burn=phase.burn,
                                    propellant_remaining=remaining))


def _close_powered(problem, k, phase, run, t_sched, exhausted, events, y, plan=None):
    """Burnout or flame-out events of a powered phase, then staging (drops mass in ``y``)."""
    if plan is not None and not phase.ends_stage:
        _close_segment(problem, plan, k, phase, run, t_sched, exhausted, events, y)
        return
    kind = dynamics.dynamics_kind(problem.dynamics)
    n = kind.n_states
    vehicle = problem.vehicle
    stage, t, x = phase.stage, run.t1, y[:n]
    remaining = float(kind.mass(x) - vehicle.burnout_mass(stage))
    if run.flameout_time is not None:
        exhausted.add(stage)
        events.append(_event_record(
            "flameout", run.flameout_time, k, stage, run.solution()(run.flameout_time)[:n],
            problem, scheduled_end=t_sched, propellant_remaining=0.0))
    if run.ended_by == "depletion":
        exhausted.add(stage)
        early = t_sched is not None and runs_dry_early(t_sched, t, run.t0)
        if early or phase.kind == "rise":
            events.append(_event_record("flameout", t, k, stage, x, problem,
                                        scheduled_end=t_sched, propellant_remaining=remaining))
        elif phase.kind == "burn":
            events.append(_event_record("burnout", t, k, stage, x, problem,
                                        propellant_remaining=remaining))
    elif phase.kind == "burn" and not (stage in exhausted and run.t1 == run.t0):
        # (a burn of zero length after its stage flamed out in the rise is skipped)
        events.append(_event_record("burnout", t, k, stage, x, problem,
                                    propellant_remaining=remaining))
    if phase.kind == "burn":
        exhausted.add(stage)
        if stage < len(vehicle.stages) - 1:
            dropped = float(kind.mass(x) - vehicle.mass_above(stage))
            y[kind.index("mass")] = vehicle.mass_above(stage)
            events.append(_event_record("staging", t, k, stage, y[:n], problem,
                                        dropped_mass=dropped))


def _event_record(kind, t, k, stage, x, problem, **extra):
    flown = dynamics.dynamics_kind(problem.dynamics)
    h, speed, fpa = dynamics.altitude_speed_fpa(x, flown, problem.planet)
    rec = dict(kind=kind, time=float(t), phase=int(k), stage=int(stage), altitude=float(h),
               speed=float(speed), flight_path_angle=float(fpa), mass=float(flown.mass(x)))
    rec.update(extra)
    return rec


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


def _sample_phase(run, prop, model):
    """Times [s], states, controls and quantities of one phase at its samples."""
    n = model.n_states
    sol = run.solution()
    tk = run.sample_times() if sol is not None else np.array([run.t0])
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
    return tk, xk, uk, q


def _assemble(problem, model, runs, props, phases, events, status, message) -> Trajectory:
    """The :class:`Trajectory` of the phases flown, with its loss budget."""
    times, states, controls, phase_idx, quantities = [], [], [], [], []
    for k, (run, prop) in enumerate(zip(runs, props)):
        tk, xk, uk, q = _sample_phase(run, prop, model)
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
        solutions=[run.solution() for run in runs],
        state_names=model.kind.state_names,
        control_names=model.kind.control_names,
        _model=model,
        _props=props,
        _rules=[run.rules for run in runs],
        _fixed=[run.y1.copy() for run in runs],
    )
    traj.losses = burnout_budget(traj)
    return traj
