"""The velocity-loss budget: its terms, their rates beside the flight states, the totals.

With v the inertial velocity, v_hat = v/|v|, gamma the inertial flight-path angle, a
the angle between the thrust axis and v, F the net thrust (eta F_vac - p A_exit) and D
the drag vector, the speed obeys exactly

    d|v|/dt = eta F_vac/m - p A_exit/m - F (1 - cos a)/m + (D . v_hat)/m - g sin(gamma)

so each term integrated beside the flight states (same solver calls, same accuracy)
gives, at burnout,

    ideal velocity increment = achieved increment + gravity loss + drag loss
                               + steering loss + back-pressure loss
    burnout speed = pad rotation speed + achieved increment

The ideal velocity increment is the rocket-equation sum of c ln(m_ignition/m_burnout)
over the burns flown; the achieved increment is the change of inertial speed from
liftoff; the pad rotation speed is the inertial speed at liftoff, the pad moving with
the planet (omega (R + h) cos(latitude) in planar flight, 0 in vertical flight, whose
model does not rotate). See :func:`ascentplan.replay.simulate.simulate`.
"""

from __future__ import annotations

from ascentplan import _math as m_
from ascentplan.models import dynamics

#: names of the velocity-loss budget terms integrated beside the flight states, in order
LOSS_NAMES = ("ideal", "gravity", "drag", "steering", "back_pressure")
#: the name under which each budget term's running total appears in ``quantities``
LOSS_QUANTITIES = {
    "ideal": "ideal_velocity_increment",
    "gravity": "gravity_loss",
    "drag": "drag_loss",
    "steering": "steering_loss",
    "back_pressure": "back_pressure_loss",
}
#: order of the budget to burnout as reported (``Trajectory.losses``): the ideal velocity
#: increment, the achieved increment, the four losses, and the pad rotation speed
BUDGET_KEYS = ("ideal", "achieved", "gravity", "drag", "steering", "back_pressure",
               "pad_rotation_speed")
#: words for each budget key, as printed
BUDGET_TERMS = {"ideal": "ideal velocity increment", "achieved": "achieved increment",
                "gravity": "gravity loss", "drag": "drag loss",
                "steering": "steering loss", "back_pressure": "back-pressure loss",
                "pad_rotation_speed": "pad rotation speed"}
#: softening of |v| in the direction of the inertial velocity [m s^-1]; the identity of
#: the budget holds for any value, it only keeps v/|v| finite at zero speed
_SPEED_EPS = 1e-6


def loss_rates(x, u, model, prop) -> list:
    """Rates of the budget terms [m s^-2], in the order of :data:`LOSS_NAMES`.

    Parameters
    ----------
    x, u : sequence or CasADi symbol
        Flight state and controls of ``model.kind``.
    model : ascentplan.models.dynamics.FlightModel
    prop : ascentplan.models.dynamics.Propulsion
    """
    f = dynamics.flight_quantities(x, u, model, prop)
    mass = model.kind.mass(x)
    speed = m_.smooth_norm(f["radial_speed"], f["horizontal_speed"], eps=_SPEED_EPS)
    sin_gamma = f["radial_speed"] / speed
    return [
        f["gross_thrust"] / mass,
        # a kind that resolves its gravity field along the velocity says so (out of a
        # plane, with J2); otherwise the central field's radial part
        f["gravity_along_velocity"] if "gravity_along_velocity" in f else f["gravity"] * sin_gamma,
        f["drag_along_velocity"] / mass,
        f["thrust"] / mass - f["thrust_along_velocity"] / mass,
        # nozzle back-pressure: what the ambient pressure takes from the vacuum thrust
        (f["gross_thrust"] - f["thrust"]) / mass,
    ]


def burnout_budget(trajectory) -> dict:
    """The velocity budget to burnout (end of the last powered phase) [m s^-1].

    Parameters
    ----------
    trajectory : ascentplan.replay.trajectory.Trajectory
        A flight whose ``quantities`` hold the running totals (:data:`LOSS_QUANTITIES`).

    Returns
    -------
    dict
        :data:`BUDGET_KEYS`: the integrated terms at burnout, ``achieved`` (the change
        of inertial speed from liftoff) and ``pad_rotation_speed`` (the inertial speed
        at liftoff), so that the burnout speed is their sum.
    """
    i = trajectory.burnout_index()
    out = {name: float(trajectory.quantities[LOSS_QUANTITIES[name]][i]) for name in LOSS_NAMES}
    kind, state = trajectory.kind, trajectory.state
    # the vertical kind's speed is signed (climbing or falling): the budget counts |v|
    out["pad_rotation_speed"] = abs(float(kind.speed(state[:, 0])))
    out["achieved"] = abs(float(kind.speed(state[:, i]))) - out["pad_rotation_speed"]
    return {key: out[key] for key in BUDGET_KEYS}
