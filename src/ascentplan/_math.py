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
