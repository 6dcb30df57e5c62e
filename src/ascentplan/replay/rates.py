"""The equations integrated by the replay: flight states plus the velocity-loss budget."""

from __future__ import annotations

import functools

import casadi as ca
import numpy as np

from ascentplan.models import dynamics
from ascentplan.replay.budget import LOSS_NAMES, loss_rates

#: engine numbers of a phase in the rates' argument: thrust, exhaust speed, exit area,
#: and the boosters' thrust, mass flow and exit area
_N_ENGINE = 6


def _build_rates(model):
    n, nu = model.n_states, model.n_controls
    z = ca.SX.sym("z", n + nu + _N_ENGINE)
    x, u, e = z[:n], z[n:n + nu], z[n + nu:]
    prop = dynamics.Propulsion(e[0], e[1], e[2], booster_thrust=e[3], booster_mass_flow=e[4],
                               booster_exit_area=e[5])
    out = ca.vertcat(dynamics.rhs(0.0, x, u, (model, prop)), *loss_rates(x, u, model, prop))
    # the flight quantities appear in both the motion and the budget: share them
    return ca.Function("ascent_rates", [z], [ca.cse(out)])


_cached_rates = functools.lru_cache(maxsize=32)(_build_rates)


def _rates_function(model):
    try:
        return _cached_rates(model)
    except TypeError:  # a model holding unhashable data (e.g. numpy tables)
        return _build_rates(model)


class Rates:
    """dx/dt of the flight states and the budget, evaluated through a CasADi buffer.

    The derivative is :func:`ascentplan.models.dynamics.rhs` itself (and the budget
    rates, :func:`ascentplan.replay.budget.loss_rates`), turned into one CasADi function
    per model; a buffered call, controls included, costs about 4 us against about 80 us
    for the same formulas evaluated with numpy scalars, which makes a replay of a
    200-node schedule take about 0.15 s.

    Parameters
    ----------
    model : ascentplan.models.dynamics.FlightModel
    """

    def __init__(self, model):
        self.n, self.nu = model.n_states, model.n_controls
        self.function = _rates_function(model)
        self._z = np.zeros(self.n + self.nu + _N_ENGINE)
        self._out = np.zeros(self.n + len(LOSS_NAMES))
        self._buffer, self._trigger = self.function.buffer()
        self._buffer.set_arg(0, memoryview(self._z))
        self._buffer.set_res(0, memoryview(self._out))

    def bind(self, prop, rule):
        """The right-hand side ``fun(t, y)`` of one segment for solve_ivp.

        Parameters
        ----------
        prop : ascentplan.models.dynamics.Propulsion
            Engine data of the phase (numbers).
        rule : callable
            The controls ``rule(t, x)`` flown over the segment.
        """
        n, nu, z, out, trigger = self.n, self.nu, self._z, self._out, self._trigger
        p = (float(prop.thrust_vacuum), float(prop.exhaust_speed), float(prop.exit_area),
             float(prop.booster_thrust), float(prop.booster_mass_flow),
             float(prop.booster_exit_area))

        def fun(t, y):
            z[:n] = y[:n]
            z[n:n + nu] = rule(t, y)
            z[n + nu:] = p
            trigger()
            return out.copy()

        return fun
