"""The optimiser against published optimal-control results: linear-tangent steering and
the convergence order of the collocation schemes."""

from __future__ import annotations

import numpy as np
import pytest
from cases import flat_vacuum_problem

from ascentplan.optimisation.collocation import COLLOCATION_SCHEMES
from ascentplan.pipeline import solve


def test_scheme_tableaux():
    # quadrature weights sum to one; Simpson's rule integrates cubics exactly (common practice)
    for cls in COLLOCATION_SCHEMES.values():
        assert sum(cls.weights) == pytest.approx(1.0, abs=1e-15)
    hs = COLLOCATION_SCHEMES["hermite_simpson"]()
    f = lambda t: 3 * t**3 - t**2 + 2 * t + 1  # noqa: E731
    F = lambda t: 0.75 * t**4 - t**3 / 3 + t**2 + t  # noqa: E731
    h = 0.7
    d = hs.defect(F(0.0), F(h), f(0.0), f(h), f(h / 2), h)
    assert abs(d) < 1e-14
    # the Hermite-cubic midpoint interpolates a cubic exactly (common practice)
    cubic = lambda t: t**3 - 2 * t + 1  # noqa: E731
    dcubic = lambda t: 3 * t**2 - 2  # noqa: E731
    xc = hs.midpoint_state(cubic(0.0), cubic(h), dcubic(0.0), dcubic(h), h)
    assert xc == pytest.approx(cubic(h / 2), abs=1e-14)


def test_linear_tangent_steering():
    # Bryson and Ho, Applied Optimal Control (1975), maximum final horizontal speed at a
    # given altitude with zero vertical speed over a flat planet with constant gravity and
    # no atmosphere: tan(pitch) = a - b t (from memory: section 2.7).
    result = solve(flat_vacuum_problem(nodes=40))
    assert result.status == "optimal", result.message
    t = result.solution.times[0]
    tan_pitch = np.tan(result.solution.controls[0][1])
    slope, intercept = np.polyfit(t, tan_pitch, 1)
    residual = tan_pitch - (slope * t + intercept)
    assert slope < 0
    # the flat limit R = 1e9 m leaves a curvature effect of order h/R, far below 1e-3
    assert np.max(np.abs(residual)) / np.ptp(tan_pitch) < 1e-3


def _objective(scheme, nodes):
    return solve(flat_vacuum_problem(scheme=scheme, nodes=nodes)).solution.objective


def test_convergence_order():
    # Hermite-Simpson converges at order 4 in the states, trapezoidal at order 2
    # (Betts 2010, sec. 4.6; Kelly 2017); observed objective-error order per mesh halving.
    reference = _objective("hermite_simpson", 321)
    orders = {}
    for scheme in ("trapezoidal", "hermite_simpson"):
        errors = [abs(_objective(scheme, n) - reference) for n in (11, 21, 41)]
        orders[scheme] = [np.log2(errors[i] / errors[i + 1]) for i in range(2)]
    assert all(1.6 < p < 2.6 for p in orders["trapezoidal"]), orders
    assert all(p > 3.4 for p in orders["hermite_simpson"]), orders
    assert min(orders["hermite_simpson"]) > max(orders["trapezoidal"]) + 1.0
