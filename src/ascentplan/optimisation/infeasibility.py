"""Why a problem is infeasible: the conditions that must give, and by how much.

When IPOPT finds no schedule that meets every condition, the elastic form of the NLP
(:mod:`ascentplan.optimisation.elastic`) is solved from the point where it stopped. Its
slacks say which targets and path limits must give for a schedule to exist: a target by
how far it is missed, a limit by the bound the flight would need. With the L1 penalty a
slack stays exactly zero while relaxing its condition would not pay for itself (the
penalty is exact: Fletcher, *Practical Methods of Optimization*, 1987, section 14.3), so a
limit whose slack is zero is not the cause.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ascentplan.models.dynamics import altitude_speed_fpa, dynamics_kind
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import Problem

#: a slack (order one, see the elastic module) above this is a condition that gives
_GIVES = 1e-4

#: per target row: words, unit, factor (value_user = value_SI / factor)
_TARGETS = {
    "target_altitude": ("target altitude", "km", 1000.0),
    "target_speed": ("target speed", "m/s", 1.0),
    "target_flight_path_angle": ("target flight-path angle", "deg", np.pi / 180.0),
}


@dataclass(frozen=True)
class Condition:
    """A target or a limit that must give, in user units.

    Attributes
    ----------
    name : str
        ``target_altitude``, ``target_speed``, ``target_flight_path_angle`` or a limit
        name of :data:`ascentplan.problem.limits.LIMITS`.
    kind : str
        ``"target"`` or ``"limit"``.
    label, unit : str
    value : float
        As written: the target, or the limit's bound [unit].
    required : float
        The nearest target value within reach, or the bound the flight needs [unit].
    stages : tuple of str
        Stages flying where a limit is passed.
    depleting : tuple of str
        Those of ``stages`` that may not shut down early.
    """

    name: str
    kind: str
    label: str
    unit: str
    value: float
    required: float
    stages: tuple = ()
    depleting: tuple = ()

    @property
    def relaxation(self) -> float:
        """How far the condition must give [unit] (>= 0)."""
        return abs(self.required - self.value)

    def summary(self) -> dict:
        return {"name": self.name, "kind": self.kind, "unit": self.unit,
                "value": float(self.value), "required": float(self.required),
                "relaxation": float(self.relaxation), "stages": list(self.stages),
                "stages_burning_to_depletion": list(self.depleting)}

    def text(self) -> str:
        u = self.unit
        if self.kind == "target":
            return (f"the {self.label} of {_written(self.value)} {u} is out of reach by about "
                    f"{_num(self.relaxation)} {u} (the nearest within reach is about "
                    f"{_num(self.required)} {u})")
        verb = "rise" if self.required > self.value else "drop"
        out = (f"{self.name} must {verb} to about {_num(self.required)} {u} "
               f"(from {_written(self.value)} {u})")
        if self.depleting:
            names = ", ".join(f"'{s}'" for s in self.depleting)
            out += (f": stage {names} may not shut down before depletion, and burning "
                    f"its propellant passes the limit")
        elif self.stages:
            out += " while stage " + ", ".join(f"'{s}'" for s in self.stages) + " burns"
        return out


@dataclass
class Infeasibility:
    """The elastic re-solve's verdict on an infeasible problem.

    Attributes
    ----------
    conditions : list of Condition
        Those that must give; empty when a schedule meeting all was found.
    converged : bool
        Whether the elastic solve converged (else the amounts are rough).
    return_status : str
        IPOPT's return status of the elastic solve.
    iterations : int
        IPOPT iterations of the elastic solve(s).
    has_targets : bool
        Whether the problem sets any terminal target.
    """

    conditions: list = field(default_factory=list)
    converged: bool = False
    return_status: str = ""
    iterations: int = 0
    has_targets: bool = True

    @property
    def limits_are_the_cause(self) -> bool:
        return any(c.kind == "limit" for c in self.conditions)

    def text(self) -> str:
        """The verdict in words, amounts in user units."""
        if not self.conditions:
            if self.converged:
                return ("yet the elastic re-solve found a schedule that meets every target "
                        "and limit: the failure is numerical; try more nodes per phase")
            return f"the diagnosis did not converge either (IPOPT: {self.return_status})"
        parts = [c.text() for c in self.conditions]
        targets = any(c.kind == "target" for c in self.conditions)
        if targets and not self.limits_are_the_cause:
            parts.append("the limits are not the cause")
        elif self.limits_are_the_cause and not targets and self.has_targets:
            parts.append("the targets are not the cause")
        text = "; ".join(parts)
        if not self.converged:
            text += f" (rough: the diagnosis did not converge, IPOPT: {self.return_status})"
        return text

    def summary(self) -> dict:
        """The ``infeasibility`` block of summary.json."""
        return {"converged": bool(self.converged), "return_status": self.return_status,
                "iterations": int(self.iterations),
                "limits_are_the_cause": bool(self.limits_are_the_cause),
                "conditions": [c.summary() for c in self.conditions],
                "text": self.text()}


def _num(value: float) -> str:
    """A value at the precision a diagnosis warrants: three significant figures."""
    return _written(float(f"{float(value):.3g}"))


def _written(value: float) -> str:
    """A value as a problem file would give it: no trailing zeros, thousands grouped."""
    v = float(value)
    return f"{v:,.0f}" if v == round(v) and abs(v) < 1e15 else f"{v:,.6g}"


def _target_values(problem: Problem, xb) -> dict:
    """Per target row: (as written, as reached at ``xb``), both SI."""
    t, planet = problem.target, problem.planet
    kind = dynamics_kind(problem.dynamics)
    h, v, fpa = altitude_speed_fpa(xb, problem.dynamics, planet)
    if t.circular_orbit_altitude is not None:
        rt = planet.radius + t.circular_orbit_altitude
        return {"target_altitude": (t.circular_orbit_altitude, float(h)),
                "target_speed": (np.sqrt(planet.gravitational_parameter / rt),
                                 float(kind.horizontal_speed(xb))),
                "target_flight_path_angle": (0.0, float(fpa))}
    return {"target_altitude": (t.altitude, float(h)), "target_speed": (t.speed, float(v)),
            "target_flight_path_angle": (t.flight_path_angle, float(fpa))}


def _limit_condition(problem: Problem, nlp, name: str, slack: float, phases) -> Condition:
    """The bound limit ``name`` needs, from its slack (a fraction of a maximum's bound, a
    minimum's variable scale)."""
    spec = LIMITS[name]
    bound = float(getattr(problem.limits, name))
    if spec.sense == "min":
        required = bound - slack * nlp.quantity_scale(spec.quantity)
    else:
        required = (1.0 + slack) * bound
    stages = problem.vehicle.stages
    flying = sorted({nlp.phases[j].stage for j in phases if nlp.phases[j].powered})
    return Condition(name=name, kind="limit", label=spec.label, unit=spec.unit,
                     value=spec.to_user(bound), required=spec.to_user(required),
                     stages=tuple(stages[i].name for i in flying),
                     depleting=tuple(stages[i].name for i in flying
                                     if not stages[i].may_shut_down_early))


def explain(problem: Problem, nlp, solution, iterations: int | None = None) -> Infeasibility:
    """The conditions that must give, from a solve of the elastic form.

    Parameters
    ----------
    problem : Problem
    nlp : AscentNLP
        The elastic form (built with ``elastic=True``).
    solution : NLPSolution
        Its solution; ``solution.slacks`` holds each condition's slack.
    iterations : int, optional
        IPOPT iterations spent on the diagnosis; default those of ``solution``.
    """
    xb = solution.states[nlp.last_powered][:, -1]
    targets = _target_values(problem, xb)
    conditions = []
    for name, entry in solution.slacks.items():
        slack = entry["slack"]
        if float(np.sum(slack)) <= _GIVES:
            continue
        if name in _TARGETS:
            label, unit, factor = _TARGETS[name]
            written, reached = targets[name]
            conditions.append(Condition(name=name, kind="target", label=label, unit=unit,
                                        value=written / factor, required=reached / factor))
        elif name in LIMITS:
            conditions.append(_limit_condition(problem, nlp, name, float(slack[0]),
                                               entry["phases"]))
        else:
            # an orbit condition (models.orbit.orbit_conditions): a residual of order one
            # with no single element behind it, so its miss is given as that residual
            conditions.append(Condition(name=name, kind="target",
                                        label=name.replace("_", " ") + " (scaled residual)",
                                        unit="-", value=0.0, required=float(np.sum(slack))))
    return Infeasibility(conditions=conditions, converged=solution.status == "optimal",
                         return_status=solution.return_status,
                         iterations=solution.iterations if iterations is None else iterations,
                         has_targets=not problem.target.is_empty())
