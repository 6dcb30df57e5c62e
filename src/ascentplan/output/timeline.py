"""The timeline of a solve: every event of the flight in time order, with the replay's
time, altitude, speed and mass and the optimiser's time of the same phase boundary.

The replay records the events it flies through (:mod:`ascentplan.replay.simulate`:
booster burnouts and ignitions, the fairing jettison, cut-offs and restarts, burnouts,
staging, flame-outs, apogee, impact); the timeline adds what it does not record as an
event: the ignition of each stage after the first (with the booster groups that ignite
with it) and the start of each coast with its duration. The replay's times are the
verified ones; ``optimiser_time_s`` beside each is the solution's phase boundary.
"""

from __future__ import annotations

import math

from ascentplan.models.dynamics import altitude_speed_fpa, dynamics_kind
from ascentplan.problem.model import phase_plan
from ascentplan.replay.phase_checks import TIME_TOLERANCE_S

__all__ = ["TIMELINE_KINDS", "event_label", "stack_summary", "timeline"]

#: the kinds of a timeline entry, in words (a label adds the element and figures)
TIMELINE_KINDS = {
    "liftoff": "liftoff", "ignition": "stage ignition", "booster_ignition": "booster ignition",
    "booster_burnout": "booster burnout and jettison", "fairing_jettison": "fairing jettison",
    "cutoff": "cut-off", "coast": "coast", "restart": "restart", "flameout": "flame-out",
    "burnout": "stage burnout", "staging": "staging", "apogee": "apogee", "impact": "impact",
}

#: replay events that end their phase: their optimiser time is the phase's end
_AT_PHASE_END = ("booster_burnout", "booster_ignition", "fairing_jettison", "cutoff",
                 "burnout", "staging")


def _tonnes(kg) -> str:
    return f"{kg / 1000.0:.2f} t"


def _groups_text(groups: list[dict]) -> str:
    return ", ".join(f"{g['count']} x {g['name']}" for g in groups)


def event_label(entry: dict) -> str:
    """A short label of a timeline entry, e.g. ``"side burnout, 3.00 t dropped"``."""
    kind, stage = entry["kind"], entry.get("stage_name") or ""
    groups = entry.get("groups") or []
    with_groups = f" with {_groups_text(groups)}" if groups else ""
    if kind == "liftoff":
        return f"liftoff: {stage} ignites{with_groups}"
    if kind == "ignition":
        return f"{stage} ignites{with_groups}"
    if kind == "booster_ignition":
        return f"{entry['group']} ignite"
    if kind == "booster_burnout":
        return f"{entry['group']} burnout, {_tonnes(entry['dropped_mass_kg'])} dropped"
    if kind == "fairing_jettison":
        return f"fairing jettison, {_tonnes(entry['dropped_mass_kg'])}"
    if kind == "cutoff":
        return f"{stage} cut-off {entry['burn'] + 1}"
    if kind == "restart":
        return f"{stage} restart {entry['burn']}"
    if kind == "coast":
        return f"coast {entry['duration_s']:.1f} s ({entry['coast']})"
    if kind in ("burnout", "flameout"):
        return f"{stage} {'burnout' if kind == 'burnout' else 'flame-out'}"
    if kind == "staging":
        return f"{stage} dropped, {_tonnes(entry['dropped_mass_kg'])}"
    return TIMELINE_KINDS.get(kind, kind.replace("_", " "))


class _Builder:
    """Turns the replay's events and the phase plan into timeline entries."""

    def __init__(self, result):
        self.problem = result.solved_problem
        self.solution = result.solution
        self.traj = result.trajectory
        self.plan = phase_plan(self.problem)
        self.kind = dynamics_kind(self.problem.dynamics)
        self.entries: list[dict] = []

    def optimiser_bound(self, j: int, end: bool) -> float | None:
        times = getattr(self.solution, "times", None) or []
        if not 0 <= j < len(times) or len(times[j]) == 0:
            return None
        return float(times[j][-1] if end else times[j][0])

    def add(self, kind: str, time: float, phase: int, stage: int, where: dict,
            optimiser_time: float | None, **extra) -> None:
        stages = self.problem.vehicle.stages
        entry = {"kind": kind, "label": "", "time_s": float(time),
                 "optimiser_time_s": optimiser_time, "phase": int(phase), "stage": int(stage),
                 "stage_name": stages[stage].name if 0 <= stage < len(stages) else None,
                 "altitude_m": where["altitude"], "speed_m_s": where["speed"],
                 "flight_path_angle_deg": math.degrees(where["flight_path_angle"]),
                 "mass_kg": where["mass"], **extra}
        entry["label"] = event_label(entry)
        self.entries.append(entry)

    def state_at_start(self, k: int) -> dict:
        """The replay's flight at the start of phase ``k`` (after any mass dropped)."""
        t0 = float(self.traj.phase_bounds[k][0])
        x = self.traj.state_at(t0, phase=k)
        h, v, fpa = altitude_speed_fpa(x, self.kind, self.problem.planet)
        return {"time": t0, "altitude": float(h), "speed": float(v),
                "flight_path_angle": float(fpa), "mass": float(self.kind.mass(x))}

    def groups_with_core(self, stage: int) -> list[dict]:
        return [{"name": g.name, "count": int(g.count)}
                for g in self.problem.vehicle.groups_of(stage) if g.ignition is None]

    def phase_start(self, k: int) -> None:
        """Entries that open phase ``k``: a stage's ignition, or a coast."""
        ph = self.plan[k]
        previous = self.plan[k - 1] if k > 0 else None
        if ph.powered and k > 0 and (previous.stage != ph.stage or not previous.powered) \
                and ph.burn == 0:
            at = self.state_at_start(k)
            self.add("ignition", at["time"], k, ph.stage, at, self.optimiser_bound(k, False),
                     groups=self.groups_with_core(ph.stage))
        elif ph.kind == "coast":
            at = self.state_at_start(k)
            t0, t1 = self.traj.phase_bounds[k]
            opt0, opt1 = self.optimiser_bound(k, False), self.optimiser_bound(k, True)
            what = ("to apogee" if ph.ends_at_apogee else "between burns"
                    if ph.duration_range is not None else "after staging")
            self.add("coast", at["time"], k, ph.stage, at, opt0, coast=what,
                     duration_s=float(t1 - t0), end_s=float(t1),
                     optimiser_duration_s=None if opt0 is None else opt1 - opt0)

    def replay_event(self, ev: dict) -> None:
        kind, k = ev["kind"], int(ev["phase"])
        if kind == "liftoff":
            self.add("liftoff", ev["time"], 0, 0, ev, 0.0, groups=self.groups_with_core(0))
            if getattr(self.problem.launch, "in_circular_orbit", False):
                # a flight that starts in orbit (an upper stage from a parking orbit)
                self.entries[-1]["label"] = self.entries[-1]["label"].replace(
                    "liftoff:", "start in orbit:", 1)
            return
        if kind == "flameout" and self._is_burnout_too(ev):
            # ran dry at its scheduled end within the verification's time tolerance (the
            # integrator finding the tank empty microseconds early): that is the burnout
            return
        extra = {}
        if kind in ("booster_burnout", "booster_ignition"):
            extra["group"] = ev.get("group")
        if "dropped_mass" in ev:
            extra["dropped_mass_kg"] = float(ev["dropped_mass"])
        if "propellant_remaining" in ev:
            extra["propellant_remaining_kg"] = float(ev["propellant_remaining"])
        if kind in ("cutoff", "restart"):
            extra["burn"] = int(ev.get("burn", 0))
        if kind in _AT_PHASE_END:
            optimiser = self.optimiser_bound(k, True)
        elif kind == "restart":
            optimiser = self.optimiser_bound(k, False)
        elif kind == "apogee" and k < len(self.plan) and self.plan[k].ends_at_apogee:
            optimiser = self.optimiser_bound(k, True)
        else:
            optimiser = None
        self.add(kind, ev["time"], k, int(ev["stage"]), ev, optimiser, **extra)

    def _is_burnout_too(self, ev: dict) -> bool:
        return any(other["kind"] == "burnout" and other["phase"] == ev["phase"]
                   and 0.0 <= other["time"] - ev["time"] <= TIME_TOLERANCE_S
                   for other in self.traj.events)


def timeline(result) -> list[dict]:
    """The ``timeline`` block of summary.json: the flight's events in time order.

    Parameters
    ----------
    result : ascentplan.pipeline.Result
        Its replay (``trajectory``: events, phase bounds and dense states), its
        ``solution`` (node times of every phase) and ``solved_problem`` (the plan).

    Returns
    -------
    list of dict
        Each entry: ``kind`` (a key of :data:`TIMELINE_KINDS`), ``label`` (short words),
        ``time_s`` (the replay's), ``optimiser_time_s`` (the solution's phase boundary
        at which the event falls; None for an event inside a phase: a flame-out, an
        apogee during a coast, an impact), ``phase``, ``stage``, ``stage_name``,
        ``altitude_m``, ``speed_m_s``, ``flight_path_angle_deg``, ``mass_kg`` (the
        replay's, after any mass the event drops for an ignition, before it otherwise).
        By kind: ``groups`` (liftoff, ignition: the booster groups that ignite with
        the stage, each ``name`` and ``count``); ``group`` (booster ignition and
        burnout); ``dropped_mass_kg`` (booster burnout, fairing jettison, staging);
        ``propellant_remaining_kg`` (cut-off, burnout, flame-out: the stage's, beyond
        what leaves before it burns out); ``burn`` (cut-off: the burn that ends, from
        0; restart: the burn that starts); ``coast`` (``between burns``, ``after
        staging``, ``to apogee``), ``duration_s``, ``end_s`` and
        ``optimiser_duration_s`` (coast).
    """
    b = _Builder(result)
    traj = b.traj
    events = list(getattr(traj, "events", None) or [])
    flown = min(len(getattr(traj, "phase_bounds", None) or []), len(b.plan))
    started = set()
    for ev in events:
        # the entries that open a phase come before the replay's events of that phase
        # (a restart is recorded in the phase it starts, after the coast that precedes)
        for k in range(flown):
            if k not in started and (ev["phase"] > k or (ev["phase"] == k
                                                         and ev["kind"] != "liftoff")):
                started.add(k)
                b.phase_start(k)
        b.replay_event(ev)
    for k in range(flown):
        if k not in started:
            b.phase_start(k)
    return b.entries


def stack_summary(result) -> dict:
    """The ``timeline`` and ``mass_accounting`` blocks of summary.json
    (:func:`timeline`, :func:`ascentplan.output.mass_accounting.mass_accounting`)."""
    from ascentplan.output.mass_accounting import mass_accounting

    return {"timeline": timeline(result), "mass_accounting": mass_accounting(result)}
