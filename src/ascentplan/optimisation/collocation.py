"""Collocation schemes: the defect equations that tie states at neighbouring mesh nodes.

A scheme is data on a small base class, in the manner of Runge-Kutta tableaux: the
quadrature weights of the node, midpoint and next-node derivatives, and whether an
interval midpoint (with its interpolated state) exists.

Contract of a :class:`CollocationScheme` subclass
---------------------------------------------
* ``weights`` = (w_k, w_c, w_k1) with sum 1: the state increment over an interval of
  length h is h (w_k f_k + w_c f_c + w_k1 f_k1).
* ``uses_midpoint``: when True, the state at the interval midpoint is the Hermite cubic
  x_c = (x_k + x_k1)/2 + h/8 (f_k - f_k1) and f_c = f(x_c, u_c) with the control
  u_c = (u_k + u_k1)/2, i.e. the control is piecewise LINEAR in time, exactly what the
  forward replay interpolates (a free midpoint control would let the optimiser exploit
  the discretisation). Path limits are then also enforced at the midpoints.
* ``order``: the order of the state error for smooth solutions, checked by a
  convergence test.

References: C. R. Hargraves, S. W. Paris, JGCD 10(4) 338-342, 1987,
doi:10.2514/3.20223 (Hermite-Simpson); J. T. Betts, Practical Methods for Optimal Control
and Estimation Using Nonlinear Programming, 2nd ed., SIAM 2010, sec. 4.6;
M. Kelly, SIAM Review 59(4) 849-904, 2017.
"""

from __future__ import annotations


class CollocationScheme:
    """Base class of a collocation scheme (see the module docstring for the contract)."""

    name: str = ""
    weights: tuple[float, float, float] = (0.5, 0.0, 0.5)
    uses_midpoint: bool = False
    order: int = 2

    def midpoint_state(self, x_k, x_k1, f_k, f_k1, h):
        """Hermite-cubic state at the interval midpoint (scaled units)."""
        return 0.5 * (x_k + x_k1) + (h / 8.0) * (f_k - f_k1)

    def defect(self, x_k, x_k1, f_k, f_k1, f_c, h):
        """Residual x_k1 - x_k - h (w_k f_k + w_c f_c + w_k1 f_k1); zero when satisfied."""
        w_k, w_c, w_k1 = self.weights
        increment = w_k * f_k + w_k1 * f_k1
        if self.uses_midpoint:
            increment = increment + w_c * f_c
        return x_k1 - x_k - h * increment


class HermiteSimpson(CollocationScheme):
    """Hermite-Simpson collocation: Simpson quadrature, order 4 in the states.

    The optimiser uses the separated form: the midpoint states are NLP variables tied to
    :meth:`midpoint_state` by an equality, so each model evaluation depends on one point.
    """

    name = "hermite_simpson"
    weights = (1.0 / 6.0, 4.0 / 6.0, 1.0 / 6.0)
    uses_midpoint = True
    order = 4


class Trapezoidal(CollocationScheme):
    """Trapezoidal collocation: trapezoidal-rule quadrature, order 2."""

    name = "trapezoidal"
    weights = (0.5, 0.0, 0.5)
    uses_midpoint = False
    order = 2


#: collocation schemes by the name used in problem files
COLLOCATION_SCHEMES = {cls.name: cls for cls in (HermiteSimpson, Trapezoidal)}
