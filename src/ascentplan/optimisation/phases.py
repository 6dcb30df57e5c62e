"""Pieces of one phase of the collocation NLP: its mesh, bounds, path limits and model.

Everything here is a pure function of the problem and the phase; the NLP
(:class:`ascentplan.optimisation.nlp.AscentNLP`) assembles the pieces.
"""

from __future__ import annotations

import functools

import casadi as ca
import numpy as np

from ascentplan.models import dynamics
from ascentplan.problem.limits import LIMITS, LimitSpec
from ascentplan.problem.model import Phase, Problem

#: bounds on a free phase duration, in units of its duration scale
_FREE_DURATION = (1e-3, 50.0)

#: for each quantity that sets a variable scale, the states that carry it, most telling
#: first; a kind's first state in this list gives the quantity its scale
_CARRIERS = {
    "altitude": ("altitude", "radius", "position_x"),
    "speed": ("horizontal_speed", "vertical_speed", "velocity_x"),
    "radial_speed": ("radial_speed", "vertical_speed", "velocity_x"),
    "mass": ("mass",),
}


def nodes_for_phase(phase: Phase, nodes_per_phase: int) -> int:
    """Mesh nodes of a phase: short fixed segments get fewer."""
    if phase.kind == "rise":
        return max(5, nodes_per_phase // 4)
    if phase.kind == "coast" and not phase.ends_at_apogee and phase.duration_range is None:
        return max(5, nodes_per_phase // 4)
    return nodes_per_phase


def carrier_state(kind, quantity: str) -> int | None:
    """Index of the state of ``kind`` whose scale measures ``quantity``, or None.

    ``quantity`` is ``"altitude"``, ``"speed"``, ``"radial_speed"`` or ``"mass"``; e.g. the
    altitude of the planar kind is measured in the scale of its radius.
    """
    for name in _CARRIERS.get(quantity, ()):
        if name in kind.state_names:
            return kind.index(name)
    return None


def control_bounds(kind, phase: Phase, stage) -> tuple[list, list]:
    """Lower and upper bounds of each control of ``kind`` on ``phase`` (pitch [rad]).

    The throttle stays in the stage's range while powered and at zero in a coast; the
    pitch is vertical in the rise, within +-90 deg while powered and zero in a coast
    (where it has no effect).
    """
    if phase.powered:
        throttle = (stage.throttle_min, stage.throttle_max)
    else:
        throttle = (0.0, 0.0)
    if phase.kind == "rise":
        pitch = (0.5 * np.pi, 0.5 * np.pi)
    elif phase.powered:
        pitch = (-0.5 * np.pi, 0.5 * np.pi)
    else:
        pitch = (0.0, 0.0)
    # heading: free over two turns while powered (a southerly or retrograde azimuth needs
    # no wrap-around); held at zero in the rise, where the thrust is vertical whatever the
    # heading, and in a coast, where there is no thrust: no direction without an effect
    heading = (-2.0 * np.pi, 2.0 * np.pi) if phase.kind == "burn" else (0.0, 0.0)
    bounds = {"throttle": throttle, "pitch": pitch, "heading": heading}
    names = kind.control_names
    return [bounds[n][0] for n in names], [bounds[n][1] for n in names]


def duration_bounds(phase: Phase, duration_scale: float) -> tuple[float, float]:
    """Bounds of a phase's scaled duration: fixed when the phase's duration is given."""
    if phase.duration is not None:
        fixed = phase.duration / duration_scale
        return fixed, fixed
    if phase.duration_range is not None:
        return phase.duration_range[0] / duration_scale, phase.duration_range[1] / duration_scale
    return _FREE_DURATION


def limits_on(problem: Problem, kind, phase: Phase) -> list[LimitSpec]:
    """The path limits the NLP imposes on ``phase``, in the order of :data:`LIMITS`."""
    return [spec for spec in LIMITS.values()
            if getattr(problem.limits, spec.name) is not None
            and phase.kind in spec.phases and spec.applies_to(kind)]


def last_of_stage(phases: list[Phase], j: int) -> bool:
    """Whether phase ``j`` is the last powered phase of its stage."""
    return phases[j].ends_stage


def node_function(model, quantities) -> ca.Function:
    """SX Function (x_phys, u, engine) -> (xdot, [the flight quantities named]).

    Built once per model and list of quantities (phases of one NLP and NLPs of one model
    share it; a model holding unhashable data builds it each time).

    ``engine`` is [vacuum thrust [N], exhaust speed [m/s], nozzle exit area [m^2], drag
    scale [-], boosters' thrust [N], mass flow [kg/s] and exit area [m^2]]: NLP
    parameters (or expressions of them), so that their multipliers price
    them and a change of their values reuses the built NLP.

    Parameters
    ----------
    model : FlightModel
    quantities : sequence of str
        Keys of :func:`ascentplan.models.dynamics.flight_quantities`, one row each.
    """
    try:
        return _cached_node_function(model, tuple(quantities))
    except TypeError:  # a model holding unhashable data (e.g. numpy tables)
        return _build_node_function(model, tuple(quantities))


def _build_node_function(model, quantities: tuple) -> ca.Function:
    x = ca.SX.sym("x", model.n_states)
    u = ca.SX.sym("u", model.n_controls)
    engine = ca.SX.sym("prop", 7)
    prop = dynamics.Propulsion(engine[0], engine[1], engine[2], engine[3],
                               booster_thrust=engine[4], booster_mass_flow=engine[5],
                               booster_exit_area=engine[6])
    xdot = dynamics.rhs(0.0, x, u, (model, prop))
    fq = dynamics.flight_quantities(x, u, model, prop)
    Q = ca.vertcat(*[fq[name] for name in quantities])
    if Q.shape[0] == 0:
        # a Function output may not be empty
        Q = ca.SX(1, 1)
    # the state derivative and the quantities are written separately and share most of
    # their terms (kinematics, air data, engine): merging the common subexpressions
    # evaluates each once (885 against 518 instructions on the three-dimensional kind,
    # and 15,337 against 8,604 in a point's Hessian), with the same arithmetic
    n_x = xdot.shape[0]
    xdot, Q = ca.vertsplit(ca.cse(ca.vertcat(xdot, Q)), [0, n_x, n_x + Q.shape[0]])
    return ca.Function("node", [x, u, engine], [xdot, Q])


_cached_node_function = functools.lru_cache(maxsize=64)(_build_node_function)
