"""Flying one phase of the plan: solver calls between control breaks, and its end events.

A phase ends at its scheduled time, or on an event: depletion of the stage's
propellant, apogee, impact, or a cap on its length. The integration restarts at every
control break and mode switch, so the controls are smooth within each solver call.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.integrate import OdeSolution, solve_ivp

from ascentplan.models import dynamics
from ascentplan.problem.plan import aboard_beyond_core

#: uniform samples per phase added to the solver steps
SAMPLES_PER_PHASE = 400
#: shortest cap on a coast to apogee and on a burn that ends on depletion [s]
FLIGHT_CAP = 3.0 * 3600.0
#: longest cap on a coast to apogee, whatever the orbit [s]
_LONGEST_COAST = 30.0 * 86400.0
#: a depletion this much of the scheduled burn (or 1 s) before its end is a flame-out
FLAMEOUT_FRACTION = 1e-6
#: ... and at least this long before it [s]: the time tolerance of a phase end in
#: verification, below which a depletion is the burnout itself, met a rounding early
FLAMEOUT_MARGIN = 1e-3


def runs_dry_early(t_end: float, t: float, t_start: float) -> bool:
    """Whether a depletion at ``t`` [s] is a flame-out before a burn scheduled from
    ``t_start`` to ``t_end`` [s]: earlier than :data:`FLAMEOUT_FRACTION` of the burn (or 1 s)
    and than :data:`FLAMEOUT_MARGIN`."""
    return t_end - t > max(FLAMEOUT_MARGIN, FLAMEOUT_FRACTION * max(1.0, t_end - t_start))
#: impact is declared this far below the launch altitude [m]
IMPACT_MARGIN = 1.0


@dataclass
class PhaseRun:
    """What flying one phase gave: its end, why it ended and the dense pieces.

    Attributes
    ----------
    t0, t1 : float
        Start and end of the phase [s].
    y1 : numpy.ndarray
        Flight states and budget terms at the end.
    ended_by : str
        ``end`` (scheduled end), ``depletion``, ``apogee``, ``impact``, ``cap`` or
        ``failed``; ``message`` says why for the last two.
    ts, interpolants : list
        Breakpoints and local interpolants of the dense solution.
    steps : list of numpy.ndarray
        Solver steps of each call [s].
    rules : list of (float, rule)
        The control rule flown from each start time [s] on.
    apogees : list of (float, numpy.ndarray)
        Apogees passed without ending the phase: time [s] and augmented state.
    flameout_time : float or None
        When a timed burn ran dry before its end [s].
    """

    t0: float
    t1: float
    y1: np.ndarray
    ended_by: str
    message: str = ""
    ts: list = field(default_factory=list)
    interpolants: list = field(default_factory=list)
    steps: list = field(default_factory=list)
    rules: list = field(default_factory=list)
    apogees: list = field(default_factory=list)
    flameout_time: float | None = None

    def solution(self):
        """The dense solution over [t0, t1], or None for a phase of zero length."""
        if not self.interpolants:
            return None
        return OdeSolution(np.asarray(self.ts), self.interpolants)

    def append(self, sol) -> None:
        """Add one solver call's dense pieces and steps."""
        dense = sol.sol
        if dense is not None:
            for a, b, interp in zip(dense.ts[:-1], dense.ts[1:], dense.interpolants):
                if not self.ts:
                    self.ts.append(float(a))
                if b > self.ts[-1]:
                    self.ts.append(float(b))
                    self.interpolants.append(interp)
        self.steps.append(np.asarray(sol.t, dtype=float))

    def sample_times(self) -> np.ndarray:
        """Solver steps, a uniform grid and the phase ends, without near-duplicates [s]."""
        if self.t1 <= self.t0:
            return np.array([self.t0])
        steps = np.unique(np.concatenate(self.steps + [np.array([self.t0, self.t1])]))
        steps = steps[(steps >= self.t0) & (steps <= self.t1)]
        grid = np.linspace(self.t0, self.t1, SAMPLES_PER_PHASE)
        j = np.searchsorted(steps, grid)
        left = steps[np.clip(j - 1, 0, steps.size - 1)]
        right = steps[np.clip(j, 0, steps.size - 1)]
        gap = np.minimum(np.abs(grid - left), np.abs(grid - right))
        return np.union1d(steps, grid[gap > 1e-9 * max(1.0, abs(self.t1))])


def _coast_cap(problem, x) -> float:
    """Cap on a coast to apogee [s]: two orbital periods of the osculating orbit, bounded."""
    mu = problem.planet.gravitational_parameter
    energy = dynamics.dynamics_kind(problem.dynamics).specific_energy(x, problem.planet)
    inverse_a = -2.0 * energy / mu
    if inverse_a > 0:
        period = 2.0 * np.pi * math.sqrt(inverse_a ** -3 / mu)
        return float(min(max(FLIGHT_CAP, 2.0 * period), _LONGEST_COAST))
    return FLIGHT_CAP


#: under the default schedule, the propellant kept for a stage's later burns, as a
#: fraction of its load, shared equally between them [-]
RESTART_SHARE = 0.2
#: under the default schedule, the shortest burn before a heat-flux fairing jettison [s]
_JETTISON_AFTER = 5.0


def _gated(fun, t_open):
    """``fun`` that cannot cross zero before ``t_open`` [s] (it reads +1 until then)."""
    def gated(t, y):
        return fun(t, y) if t >= t_open else 1.0
    return gated


def _end_events(problem, plan, k, t0, timed) -> list:
    """The events that may end (or mark) phase ``k``: (label, event function) pairs.

    A timed phase ends at its scheduled time; an untimed one (the default schedule) may
    end on a cut-off before a restart, a fairing jettison on the heat flux, or the apogee
    of a coast between burns (not before its shortest duration).
    """
    phase = plan[k]
    kind = dynamics.dynamics_kind(problem.dynamics)
    planet = problem.planet
    h_impact = problem.launch.lowest_altitude - IMPACT_MARGIN

    def impact(t, y):
        return kind.altitude(y, planet) - h_impact

    impact.terminal, impact.direction = True, -1
    events = [("impact", impact)]
    if phase.powered:
        stage = problem.vehicle.stages[phase.stage]
        m_burnout = (problem.vehicle.burnout_mass(phase.stage)
                     + aboard_beyond_core(problem, plan, k))

        def depletion(t, y):
            return kind.mass(y) - m_burnout

        depletion.terminal, depletion.direction = True, -1
        events.append(("depletion", depletion))
        if not timed and phase.kind == "burn" and phase.burn < stage.restarts:
            kept = RESTART_SHARE * stage.propellant_mass * (stage.restarts - phase.burn) \
                / stage.restarts

            def cutoff(t, y):
                return kind.mass(y) - m_burnout - kept

            cutoff.terminal, cutoff.direction = True, -1
            events.append(("cutoff", cutoff))
        if not timed and phase.drops_fairing:
            bound = problem.vehicle.fairing.heat_flux_bound
            model = dynamics.flight_model(problem)

            def flux(t, y):
                f = dynamics.flight_quantities(y[:kind.n_states], [1.0, 0.0, 0.0][
                    :len(kind.control_names)], model, dynamics.Propulsion(0.0, 1.0))
                return 0.5 * f["density"] * f["relative_speed"] ** 3 - bound

            jettison = _gated(flux, t0 + _JETTISON_AFTER)
            jettison.terminal, jettison.direction = True, -1
            events.append(("jettison", jettison))
    else:
        def radial(t, y):
            return kind.radial_speed(y)

        apogee = radial
        ends = phase.ends_at_apogee or (phase.duration_range is not None and not timed)
        if phase.duration_range is not None and not timed:
            apogee = _gated(radial, t0 + phase.duration_range[0])
        # a coast that does not end at apogee may still pass one: record it
        apogee.terminal, apogee.direction = ends, -1
        events.append(("apogee" if ends else "apogee_pass", apogee))
    return events


def _first_event(sol, events):
    best, name = np.inf, None
    for (label, _), te in zip(events, sol.t_events):
        if label != "apogee_pass" and te.size and te[0] < best:
            best, name = te[0], label
    return name


class _Integration:
    """The solver calls of one phase: state carried from call to call, and its events.

    Parameters
    ----------
    run : PhaseRun
        Filled in as the phase is flown.
    k : int
        Index of the phase (for messages).
    rates : ascentplan.replay.rates.Rates
    prop : ascentplan.models.dynamics.Propulsion
    events : list of (str, callable)
        From :func:`_end_events`.
    options : dict
        ``solve_ivp`` options.
    t_end : float
        Scheduled end or cap [s]; ``timed`` says which.
    """

    def __init__(self, run, k, rates, prop, events, options, t_end, timed):
        self.run, self.k, self.rates, self.prop = run, k, rates, prop
        self.events, self.options = events, options
        self.t_end, self.timed = t_end, timed
        self.t, self.y, self.step = run.t0, run.y1.copy(), None

    def fly(self, rule, switch, seg_end, breaks) -> str:
        """Fly ``rule`` up to ``seg_end`` [s], restarting at each break.

        Returns ``"switch"`` (the mode's switch event fired), ``"end"`` (``seg_end``
        reached) or ``"stop"`` (the phase ended: ``run.ended_by`` says why).
        """
        run = self.run
        run.rules.append((self.t, rule))
        events = list(self.events)
        if switch is not None and switch(self.t, self.y) > 0:
            events.append(("switch", switch))
        fun = self.rates.bind(self.prop, rule)
        cuts = [b for b in breaks if self.t < b < seg_end] + [seg_end]
        i_cut = 0
        while i_cut < len(cuts):
            tb = cuts[i_cut]
            if tb <= self.t:
                i_cut += 1
                continue
            sol = self._call(fun, tb, events)
            if sol is None:
                return "stop"
            if sol.status == 1:
                name = _first_event(sol, events)
                if name == "switch":
                    return "switch"
                if name == "depletion" and self._runs_dry_early():
                    # a timed phase that runs dry: the engine stops and the vehicle coasts
                    # until the scheduled end of the phase (staging is commanded by time)
                    run.flameout_time = self.t
                    rule = rule.engine_off()
                    run.rules.append((self.t, rule))
                    self.events = [e for e in self.events if e[0] != "depletion"]
                    events = [e for e in events if e[0] != "depletion"]
                    fun = self.rates.bind(self.prop, rule)
                    continue
                run.ended_by = name
                return "stop"
            i_cut += 1
        return "end"

    def _call(self, fun, tb, events):
        """One solve_ivp call from the current time to ``tb`` [s]; None if it failed."""
        run = self.run
        kw = dict(self.options)
        if self.step is not None:
            kw["first_step"] = min(self.step, tb - self.t)
        sol = solve_ivp(fun, (self.t, tb), self.y, events=[e for _, e in events], **kw)
        if sol.status == -1:
            run.t1, run.y1, run.ended_by = self.t, self.y, "failed"
            run.message = (f"integration failed in phase {self.k} at t = {self.t:.6g} s: "
                           f"{sol.message}")
            return None
        run.append(sol)
        for (label, _), te, ye in zip(events, sol.t_events, sol.y_events):
            if label == "apogee_pass":
                run.apogees.extend((float(ti), yi) for ti, yi in zip(te, ye))
        if sol.t.size > 1:
            # the next call starts with the step size the solver last settled on
            self.step = float(np.diff(sol.t[-3:]).max())
        self.t, self.y = float(sol.t[-1]), sol.y[:, -1].copy()
        run.t1, run.y1 = self.t, self.y
        return sol

    def _runs_dry_early(self) -> bool:
        """Whether a depletion now is a flame-out before the scheduled end."""
        return self.timed and runs_dry_early(self.t_end, self.t, self.run.t0)


def fly_phase(problem, law, rates, k, phase, t0, y0, options, exhausted, plan=None):
    """Fly phase ``k`` of the plan from time ``t0`` [s] and augmented state ``y0``.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    law : ascentplan.replay.schedule.ControlLaw
    rates : ascentplan.replay.rates.Rates
    k : int
    phase : ascentplan.problem.model.Phase
    t0 : float
    y0 : numpy.ndarray
        Flight states followed by the budget terms.
    options : dict
        ``solve_ivp`` options (method, tolerances, dense output, largest step).
    exhausted : set of int
        Stages whose propellant is spent; a powered phase of one has zero length.

    Returns
    -------
    run : PhaseRun
    prop : ascentplan.models.dynamics.Propulsion
    t_sched : float or None
        Scheduled end of the phase [s], None when it ends on an event.
    """
    kind = dynamics.dynamics_kind(problem.dynamics)
    plan = list(plan) if plan is not None else list(law.plan)
    if k >= len(plan):
        plan.append(phase)
    stage = problem.vehicle.stages[phase.stage]
    prop = dynamics.phase_propulsion(problem.vehicle, phase)
    t_sched = law.phase_end(k, phase, t0)
    run = PhaseRun(t0=t0, t1=t0, y1=y0.copy(), ended_by="end")
    run.rules.append((t0, law.rule(k, phase, t0, law.modes(k, phase, t0)[0][0])))
    if phase.powered and phase.stage in exhausted or (t_sched is not None and t_sched <= t0):
        return run, prop, t_sched
    if phase.ends_at_apogee and kind.radial_speed(y0) <= 0.0:
        # already at or past the apogee: the coast has zero length
        run.ended_by = "apogee"
        return run, prop, t_sched
    timed = t_sched is not None
    events = _end_events(problem, plan, k, t0, timed)
    if timed:
        t_end = t_sched
    elif phase.powered:
        t_end = t0 + max(FLIGHT_CAP, 10.0 * stage.full_throttle_burn_time)
    elif phase.duration_range is not None:
        t_end = t0 + phase.duration_range[1]
        timed = True
    else:
        t_end = t0 + _coast_cap(problem, y0[:kind.n_states])
    flight = _Integration(run, k, rates, prop, events, options, t_end, timed)
    breaks = np.asarray(law.breaks(k, phase, t0), dtype=float)
    run.rules = []
    for mode, mode_end, switch in law.modes(k, phase, t0):
        seg_end = t_end if mode_end is None else min(mode_end, t_end)
        outcome = flight.fly(law.rule(k, phase, t0, mode), switch, seg_end, breaks)
        if outcome == "stop":
            return run, prop, t_sched
        if outcome == "end" and flight.t >= t_end:
            break
    if not timed:
        run.ended_by = "cap"
        run.message = (f"phase {k} ({phase.kind}) reached its cap of {t_end - t0:.0f} s "
                       f"without {'burnout' if phase.powered else 'apogee'}")
    return run, prop, t_sched
