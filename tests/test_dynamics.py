"""The equations of motion give the same numbers on numpy values and on CasADi symbols.

One definition of ``rhs`` serves the NLP (CasADi) and the replay (numpy); this checks
that both evaluations agree for random states of every dynamics kind in the registry,
with every atmosphere and drag model that changes the arithmetic path (common practice:
a model written once must evaluate identically on both backends).
"""

from __future__ import annotations

import casadi as ca
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ascentplan.constants import PLANETS
from ascentplan.models import dynamics
from ascentplan.models.aero import MachTableDrag, SphereDrag
from ascentplan.models.atmosphere import ExponentialAtmosphere, StandardAtmosphere1976
from ascentplan.models.gravity import InverseSquareGravity
from ascentplan.problem.model import Aerodynamics, Planet

EARTH = Planet("earth", **PLANETS["earth"])
ENVIRONMENTS = {
    "us1976-mach-table": (StandardAtmosphere1976(),
                          Aerodynamics(3.0, MachTableDrag((0.0, 0.8, 1.0, 1.2, 2.0, 4.0),
                                                          (0.30, 0.32, 0.50, 0.48, 0.38, 0.30)))),
    "exponential-sphere": (ExponentialAtmosphere(scale_height=7200.0),
                           Aerodynamics(0.8, SphereDrag(), reference_length=1.0)),
}


def _model(kind, environment) -> dynamics.FlightModel:
    atmosphere, aero = ENVIRONMENTS[environment]
    return dynamics.FlightModel(kind, EARTH, atmosphere,
                                InverseSquareGravity(EARTH.gravitational_parameter), aero,
                                EARTH.rotation_rate * np.cos(0.5))


def _random_state(kind, draw_unit) -> np.ndarray:
    """A plausible ascent state of ``kind`` from numbers in [0, 1): altitude 0-300 km,
    speeds up to 8 km/s either sign, mass 1-100 t, angles within a turn; Cartesian
    positions at 0-300 km altitude in any direction, velocity components up to 8 km/s."""
    if "position_x" in kind.state_names:
        lat, lon = np.arcsin(2 * draw_unit() - 1), 2 * np.pi * draw_unit()
        r = (EARTH.radius + 3e5 * draw_unit()) * np.array(
            [np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)])
        v = [-8e3 + 16e3 * draw_unit() for _ in range(3)]
        return np.concatenate([r, v, [1e3 + 99e3 * draw_unit()]])
    ranges = {
        "altitude": (0.0, 3e5), "radius": (EARTH.radius, EARTH.radius + 3e5),
        "vertical_speed": (-3e3, 3e3), "radial_speed": (-3e3, 3e3),
        "horizontal_speed": (-1e3, 8e3), "range_angle": (-0.5, 0.5), "mass": (1e3, 1e5),
    }
    values = []
    for name in kind.state_names:
        lo, hi = ranges[name]
        values.append(lo + (hi - lo) * draw_unit())
    return np.array(values)


def _random_control(kind, draw_unit) -> np.ndarray:
    ranges = {"throttle": (0.0, 1.0), "pitch": (-0.5 * np.pi, 0.5 * np.pi),
              "heading": (-np.pi, 2.0 * np.pi)}
    return np.array([ranges[n][0] + (ranges[n][1] - ranges[n][0]) * draw_unit()
                     for n in kind.control_names])


def _casadi_functions(kind, model, prop):
    x = ca.SX.sym("x", kind.n_states)
    u = ca.SX.sym("u", kind.n_controls)
    rhs = ca.Function("rhs", [x, u], [dynamics.rhs(0.0, x, u, (model, prop))])
    quantities = dynamics.flight_quantities(x, u, model, prop)
    names = sorted(k for k, v in quantities.items() if isinstance(v, ca.SX))
    fq = ca.Function("fq", [x, u], [ca.vertcat(*[quantities[n] for n in names])])
    return rhs, fq, names


@pytest.mark.parametrize("environment", sorted(ENVIRONMENTS))
@pytest.mark.parametrize("kind_name", sorted(dynamics.DYNAMICS))
@settings(max_examples=40, deadline=None)
@given(unit_numbers=st.lists(st.floats(0.0, 1.0, exclude_max=True), min_size=12, max_size=12))
def test_rhs_same_on_numpy_and_casadi(kind_name, environment, unit_numbers):
    kind = dynamics.DYNAMICS[kind_name]
    model = _model(kind, environment)
    prop = dynamics.Propulsion(thrust_vacuum=600e3, exhaust_speed=3000.0, exit_area=0.5)
    numbers = iter(unit_numbers)
    x = _random_state(kind, lambda: next(numbers))
    u = _random_control(kind, lambda: next(numbers))
    rhs_fn, fq_fn, names = _casadi_functions(kind, model, prop)

    expected = np.asarray(dynamics.rhs(0.0, x, u, (model, prop)), dtype=float)
    got = np.asarray(rhs_fn(x, u), dtype=float).ravel()
    assert expected.shape == (kind.n_states,)
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=1e-12)

    quantities = dynamics.flight_quantities(x, u, model, prop)
    got_q = np.asarray(fq_fn(x, u), dtype=float).ravel()
    for name, value in zip(names, got_q):
        np.testing.assert_allclose(value, float(quantities[name]), rtol=1e-12, atol=1e-12,
                                   err_msg=name)


@pytest.mark.parametrize("kind_name", sorted(dynamics.DYNAMICS))
def test_rhs_vectorised_over_points_matches_pointwise(kind_name):
    """The replay evaluates many points at once (a trailing axis); each column equals the
    single-point evaluation."""
    kind = dynamics.DYNAMICS[kind_name]
    model = _model(kind, "us1976-mach-table")
    prop = dynamics.Propulsion(600e3, 3000.0, 0.5)
    rng = np.random.default_rng(7)
    xs = np.stack([_random_state(kind, rng.random) for _ in range(9)], axis=1)
    us = np.stack([_random_control(kind, rng.random) for _ in range(9)], axis=1)
    together = np.asarray(dynamics.rhs(0.0, xs, us, (model, prop)))
    for k in range(xs.shape[1]):
        alone = np.asarray(dynamics.rhs(0.0, xs[:, k], us[:, k], (model, prop)))
        np.testing.assert_allclose(together[:, k], alone, rtol=1e-13, atol=1e-12)


def test_every_kind_names_mass_and_throttle():
    """The contract every caller relies on: states addressed by name, mass present,
    throttle the first control."""
    for kind in dynamics.DYNAMICS.values():
        assert "mass" in kind.state_names
        assert kind.control_names[0] == "throttle"
        assert len(set(kind.state_names)) == kind.n_states
