"""Elementary functions that work alike on floats, numpy arrays and CasADi symbols.

Every physical model in ascentplan is written once with these functions, so the same
formula runs inside the NLP (CasADi SX/MX) and in the forward integration and reports
(numpy). Dispatch is on the argument types: any CasADi operand selects CasADi.
"""

from __future__ import annotations

import casadi as ca
import numpy as np

_CASADI_TYPES = (ca.SX, ca.MX, ca.DM)


def is_symbolic(*args) -> bool:
    """True when any argument is a CasADi SX, MX or DM value."""
    return any(isinstance(a, _CASADI_TYPES) for a in args)


def _unary(np_fn, ca_fn):
    def fn(x):
        return ca_fn(x) if is_symbolic(x) else np_fn(x)

    fn.__name__ = np_fn.__name__
    return fn


exp = _unary(np.exp, ca.exp)
log = _unary(np.log, ca.log)
sqrt = _unary(np.sqrt, ca.sqrt)
sin = _unary(np.sin, ca.sin)
cos = _unary(np.cos, ca.cos)
tan = _unary(np.tan, ca.tan)
tanh = _unary(np.tanh, ca.tanh)
arctan = _unary(np.arctan, ca.atan)
log1p = _unary(np.log1p, ca.log1p)


def atan2(y, x):
    """Four-quadrant arctangent; note atan2(0, 0) has a NaN gradient in CasADi."""
    return ca.atan2(y, x) if is_symbolic(y, x) else np.arctan2(y, x)


def fmax(a, b):
    return ca.fmax(a, b) if is_symbolic(a, b) else np.maximum(a, b)


def fmin(a, b):
    return ca.fmin(a, b) if is_symbolic(a, b) else np.minimum(a, b)


def clip(x, lo, hi):
    return fmin(fmax(x, lo), hi)


def where(cond, a, b):
    """Elementwise choice; both branches are evaluated (keep both finite)."""
    if is_symbolic(cond, a, b):
        return ca.if_else(cond, a, b)
    return np.where(cond, a, b)


def sigmoid(x):
    """Logistic function 1/(1+exp(-x)), evaluated without overflow."""
    if is_symbolic(x):
        return 0.5 * (1.0 + ca.tanh(0.5 * x))
    return 0.5 * (1.0 + np.tanh(0.5 * np.asarray(x, dtype=float)))


def softplus(x):
    """log(1+exp(x)) without overflow: a smooth max(x, 0)."""
    if is_symbolic(x):
        return ca.fmax(x, 0) + ca.log1p(ca.exp(-ca.fabs(x)))
    x = np.asarray(x, dtype=float)
    return np.maximum(x, 0.0) + np.log1p(np.exp(-np.abs(x)))


def smooth_norm(*components, eps: float = 1e-6):
    """sqrt(sum c^2 + eps^2): a norm whose gradient stays finite at zero."""
    total = eps * eps
    for c in components:
        total = total + c * c
    return sqrt(total)


def monotone_cubic_slopes(knots, values, ends: str = "secant"):
    """Knot slopes of a shape-preserving piecewise cubic Hermite interpolant (numpy only).

    Interior slopes are the weighted harmonic means of the neighbouring secants of
    F. N. Fritsch and J. Butland, "A method for constructing local monotone piecewise
    cubic interpolants", SIAM J. Sci. Stat. Comput. 5(2), 1984 (the rule of SciPy's
    ``PchipInterpolator``), zero where the data have a local extremum. With these
    slopes the interpolant never leaves the range of the two data at the ends of an
    interval (Fritsch and Carlson, SIAM J. Numer. Anal. 17(2), 1980).

    Parameters
    ----------
    knots : array_like
        Strictly increasing abscissae, at least 2.
    values : array_like
        Ordinates, same length.
    ends : {"secant", "zero"}
        Slope at the first and last knot: the secant of the end interval (the slope of
        a linear continuation outside the data), or zero (for a constant continuation,
        which then joins with a continuous slope).

    Returns
    -------
    numpy.ndarray
        Slope at each knot [unit of values per unit of knots].
    """
    x = np.asarray(knots, dtype=float)
    y = np.asarray(values, dtype=float)
    if x.ndim != 1 or x.shape != y.shape or x.size < 2:
        raise ValueError(f"knots and values must be 1-D of equal length >= 2, "
                         f"got shapes {x.shape} and {y.shape}")
    h = np.diff(x)
    if np.any(h <= 0.0):
        raise ValueError(f"knots must be strictly increasing, got {x.tolist()}")
    secant = np.diff(y) / h
    slopes = np.zeros_like(x)
    if x.size > 2:
        left, right = secant[:-1], secant[1:]
        weight_left = 2.0 * h[1:] + h[:-1]
        weight_right = h[1:] + 2.0 * h[:-1]
        same_sign = left * right > 0.0
        with np.errstate(divide="ignore", invalid="ignore"):
            mean = (weight_left + weight_right) / (weight_left / left + weight_right / right)
        slopes[1:-1] = np.where(same_sign, mean, 0.0)
    if ends == "secant":
        slopes[0], slopes[-1] = secant[0], secant[-1]
    elif ends != "zero":
        raise ValueError(f"ends must be 'secant' or 'zero', got {ends!r}")
    return slopes


def cubic_hermite(x, knots, values, slopes, extrapolation: str = "constant"):
    """Piecewise cubic Hermite interpolant, the same expression on every backend.

    Written without branches as a telescoping sum over intervals of the local cubic at
    the clamped local coordinate t_i = clip((x - x_i)/h_i, 0, 1): every interval left
    of x contributes its full rise, every interval right of x nothing. The result is
    continuous with a continuous first derivative (second derivative jumps at knots),
    works on floats, numpy arrays of any shape and CasADi symbols, and costs about a
    dozen operations per interval.

    Parameters
    ----------
    x : float, numpy.ndarray or casadi.SX/MX
        Where to evaluate.
    knots, values, slopes : sequence of float
        Strictly increasing knots, ordinates and slopes there (e.g. from
        :func:`monotone_cubic_slopes`).
    extrapolation : {"constant", "linear"}
        Outside the knots hold the end values, or continue along the end slopes.

    Returns
    -------
    Same type as ``x``
        Interpolated value.
    """
    if extrapolation not in ("constant", "linear"):
        raise ValueError(f"extrapolation must be 'constant' or 'linear', got {extrapolation!r}")
    xs = [float(v) for v in knots]
    ys = [float(v) for v in values]
    ds = [float(v) for v in slopes]
    if not is_symbolic(x):
        x = np.asarray(x, dtype=float)
    result = 0.0 * x + ys[0]
    for i in range(len(xs) - 1):
        width = xs[i + 1] - xs[i]
        rise = ys[i + 1] - ys[i]
        c1 = width * ds[i]
        c2 = 3.0 * rise - width * (2.0 * ds[i] + ds[i + 1])
        c3 = width * (ds[i] + ds[i + 1]) - 2.0 * rise
        t = clip((x - xs[i]) * (1.0 / width), 0.0, 1.0)
        result = result + t * (c1 + t * (c2 + t * c3))
    if extrapolation == "linear":
        result = (result + ds[0] * fmin(x - xs[0], 0.0)
                  + ds[-1] * fmax(x - xs[-1], 0.0))
    return result
