"""Rate limits on the controls between neighbouring mesh nodes, as NLP rows.

Controls are linear between nodes (the replay flies exactly that), so a limit imposed on
every pair of neighbouring nodes holds at every instant of the replayed schedule.
"""

from __future__ import annotations

import casadi as ca


def steering_rate_rows(kind, U, h, rate: float):
    """Rows keeping the thrust direction's turning rate at or below ``rate`` [rad s^-1].

    The angle between the thrust directions of two neighbouring nodes, both given by their
    pitch theta from the local horizontal and (in three dimensions) heading psi, follows
    from the spherical law of cosines,

        cos(angle) = sin(theta_1) sin(theta_2) + cos(theta_1) cos(theta_2) cos(psi_2 - psi_1),

    and must be at least cos(rate h) over an interval of length ``h`` [s]; the turning of
    the local horizon frame itself over one interval is not counted (the rate is that of
    the attitude a guidance engineer commands, measured in that frame). Unlike a limit on
    each angle alone, this does not overstate the heading's rate near vertical flight.

    Returns ``(expression, lower, upper)``: ``(cos(angle) - cos(rate h)) /
    (1 - cos(rate h)) >= 0``, divided so that the rows are of order one whatever the rate.
    """
    pitch = U[kind.control_index("pitch"), :]
    first, second = pitch[:, :-1], pitch[:, 1:]
    cos_angle = ca.sin(first) * ca.sin(second) + ca.cos(first) * ca.cos(second) * (
        ca.cos(_heading_change(kind, U)) if kind.has_control("heading") else 1.0)
    allowed = ca.cos(ca.fmin(rate * h, 3.0))  # a turn of at most about 172 deg per interval
    return (cos_angle - allowed) / (1.0 - allowed + 1e-12), 0.0, ca.inf


def _heading_change(kind, U):
    heading = U[kind.control_index("heading"), :]
    return heading[:, 1:] - heading[:, :-1]
