"""Derivatives of the collocation NLP assembled from one collocation point at a time.

Every model evaluation of the NLP is a mapped call of a small SX point function
(:func:`ascentplan.optimisation.phases.node_function`) on inputs A(w) that are, in
practice, affine in the decision vector w (physical states, node and midpoint
controls). Write the NLP's Lagrangian as

    L(w) = L_hat(w, Z),   Z = P(A(w)),

where L_hat is the rest of the graph with the point outputs Z as free symbols (linear
in Z: the defects are h * f and the path limits value / bound). With
mu = dL_hat/dZ, J_P the Jacobian of one point's outputs and M the weighted Hessian
sum_j mu_j d2P_j of one point, the chain rule gives exactly

    dL/dw   = L_hat_w + L_hat_Z J_P A_w,
    d2L/dw2 = L_hat_ww + (mu_w^T J_P A_w + its transpose) + A_w^T blockdiag(M) A_w

(for inputs affine in w; an NLP with other inputs keeps CasADi's own derivatives).

Differentiating the MX graph as a whole instead seeds every point with every colour of
the Hessian's colouring (tens of directions where one point has ten variables), which
made the Hessian most of a solve (measured: 82 ms against 15 ms per evaluation on the
three-dimensional transfer-orbit example at 40 nodes per phase). Here each point's
Jacobian and weighted Hessian are SX functions of its own few variables, mapped over
the points, and the pieces are placed by sparse products. The result is the same
matrix as CasADi's own (``tests/test_point_derivatives.py`` compares them).
"""

from __future__ import annotations

from dataclasses import dataclass

import casadi as ca


@dataclass(frozen=True)
class PointCall:
    """One mapped call of a point function: its inputs and outputs in the NLP graph."""

    function: ca.Function
    n: int
    inputs: tuple
    outputs: tuple


class PointCalls:
    """The mapped point-function calls of one NLP build, in the order they were made."""

    def __init__(self):
        self.calls: list[PointCall] = []

    def call(self, function: ca.Function, n: int, *inputs):
        """``function.map(n)(*inputs)``, recorded."""
        outputs = function.map(n)(*inputs)
        if not isinstance(outputs, (list, tuple)):
            outputs = [outputs]
        self.calls.append(PointCall(function, n, tuple(inputs), tuple(outputs)))
        return outputs


def _broadcast(expr, n: int):
    """``expr`` with ``n`` columns (a single column is repeated, as ``map`` does)."""
    return ca.repmat(expr, 1, n) if expr.shape[1] == 1 and n > 1 else expr


@dataclass(frozen=True)
class _PointDerivatives:
    """One point function's SX Jacobian and weighted Hessian in its moving inputs."""

    function: ca.Function  # kept, so that the cache key's id stays its own
    n_out: int
    n_z: int
    jac: ca.Function
    hess: ca.Function
    jac_block: ca.Sparsity
    hess_block: ca.Sparsity


#: derivatives by (id of the point function, which inputs move); the point functions are
#: themselves built once per model (optimisation.phases.node_function), so the phases of
#: one NLP, and NLPs of one model, share these
_DERIVATIVES: dict = {}
_DERIVATIVES_KEPT = 64


def _point_derivatives(fn: ca.Function, moving: tuple) -> _PointDerivatives:
    key = (id(fn), moving)
    found = _DERIVATIVES.get(key)
    if found is not None and found.function is fn:
        return found
    syms = [ca.SX.sym(f"a{i}", fn.size1_in(i), fn.size2_in(i)) for i in range(fn.n_in())]
    outs = fn(*syms)
    outs = outs if isinstance(outs, (list, tuple)) else [outs]
    y = ca.vertcat(*[ca.vec(o) for o in outs])
    z = ca.vertcat(*[ca.vec(s) for s, mv in zip(syms, moving) if mv])
    fixed = [s for s, mv in zip(syms, moving) if not mv]
    mu = ca.SX.sym("mu", y.shape[0])
    jac = ca.jacobian(y, z)
    hess = ca.hessian(ca.dot(mu, y), z)[0]
    out = _PointDerivatives(fn, y.shape[0], z.shape[0],
                            ca.Function("point_jac", [z, *fixed], [jac]),
                            ca.Function("point_hess", [z, *fixed, mu], [hess]),
                            jac.sparsity(), hess.sparsity())
    if len(_DERIVATIVES) >= _DERIVATIVES_KEPT:
        _DERIVATIVES.pop(next(iter(_DERIVATIVES)))
    _DERIVATIVES[key] = out
    return out


class _Lifted:
    """One call's point function split into the inputs that depend on w (``moving``)
    and those that do not, with its SX Jacobian and weighted-Hessian functions."""

    def __init__(self, call: PointCall, w):
        self.call = call
        self.moving = [ca.depends_on(a, w) for a in call.inputs]
        point = _point_derivatives(call.function, tuple(self.moving))
        self.n_out, self.n_z = point.n_out, point.n_z
        self.jac = point.jac.map(call.n)
        self.hess = point.hess.map(call.n)
        self.jac_block = point.jac_block
        self.hess_block = point.hess_block

    def stacked_moving(self):
        """The moving inputs, one column per point (n_z x n)."""
        parts = [_broadcast(a, self.call.n)
                 for a, mv in zip(self.call.inputs, self.moving) if mv]
        return ca.vertcat(*parts)

    def fixed_inputs(self) -> list:
        return [a for a, mv in zip(self.call.inputs, self.moving) if not mv]

    def block_diagonal(self, mapped, block: ca.Sparsity):
        """The mapped (rows x n cols) output as a block-diagonal matrix: the nonzeros of a
        horizontal concatenation of equal blocks are in the order of its block diagonal."""
        return ca.sparsity_cast(mapped, ca.diagcat(*([block] * self.call.n)))


def structured_derivatives(calls: PointCalls, w, p, f, g) -> dict | None:
    """``hess_lag`` and ``jac_g`` Functions for ``nlpsol`` assembled point by point, or
    None when the NLP is not of the structure they assume (a Lagrangian linear in the
    point outputs, point inputs affine in the variables).

    ``w``, ``p``: the NLP's variable and parameter symbols (MX); ``f``, ``g``: its
    objective and constraints. The Functions have the signatures of the ones ``nlpsol``
    generates: ``(x, p, lam_f, lam_g) -> triu(Hessian)`` and ``(x, p) -> (g, jac_g)``.
    """
    if not calls.calls or not isinstance(w, ca.MX):
        return None
    lifted = [_Lifted(c, w) for c in calls.calls]
    # the point outputs as free symbols, one (n_out x n) block per call
    z_syms, originals, replacements = [], [], []
    for lf in lifted:
        c = lf.call
        zc = ca.MX.sym("Z", lf.n_out, c.n)
        z_syms.append(zc)
        row = 0
        for out in c.outputs:
            rows = out.shape[0]
            originals.append(out)
            replacements.append(zc[row:row + rows, :])
            row += rows
    f_hat, g_hat = ca.graph_substitute([f, g], originals, replacements)
    Z = ca.vertcat(*[ca.vec(z) for z in z_syms])
    # every call's outputs must have been found in the graph
    graph = ca.vertcat(f_hat, g_hat)
    if not all(ca.depends_on(graph, zc) for zc in z_syms):
        return None
    lam_f = ca.MX.sym("lam_f")
    lam_g = ca.MX.sym("lam_g", g.shape[0])
    L_hat = lam_f * f_hat + ca.dot(lam_g, g_hat)
    mu = ca.gradient(L_hat, Z)
    if ca.depends_on(mu, Z):
        return None

    # the Jacobian of the point outputs with respect to w: blockdiag(J_P) A_w
    A = ca.vertcat(*[ca.vec(lf.stacked_moving()) for lf in lifted])
    A_w = ca.jacobian(A, w)
    if ca.depends_on(A_w, w):
        # inputs curved in w would add sum_i (J_P^T mu)_i d2A_i; none of the NLP's are
        return None
    if not ca.depends_on(A_w, p):
        A_w = ca.DM(ca.Function("A_w", [p], [A_w])(0))
    jp_blocks, hess_blocks = [], []
    offset = 0
    for lf in lifted:
        size = lf.n_out * lf.call.n
        mu_c = ca.reshape(mu[offset:offset + size], lf.n_out, lf.call.n)
        offset += size
        moving, fixed = lf.stacked_moving(), lf.fixed_inputs()
        jp_blocks.append(lf.block_diagonal(lf.jac(moving, *fixed), lf.jac_block))
        hess_blocks.append(lf.block_diagonal(lf.hess(moving, *fixed, mu_c), lf.hess_block))
    J_P = ca.diagcat(*jp_blocks)
    M = ca.diagcat(*hess_blocks)
    Z_w = ca.mtimes(J_P, A_w)

    # Jacobian of the constraints
    jac = ca.jacobian(g_hat, w) + ca.mtimes(ca.jacobian(g_hat, Z), Z_w)
    # Hessian of the Lagrangian
    mu_w = ca.jacobian(mu, w)
    cross = ca.mtimes(mu_w.T, Z_w)
    H = ca.hessian(L_hat, w)[0] + cross + cross.T + ca.mtimes([A_w.T, M, A_w])
    # the point outputs at w, as the NLP computes them
    Z_value = ca.vertcat(*[ca.vec(ca.vertcat(*lf.call.outputs)) for lf in lifted])
    inner_h = ca.Function("hess_inner", [w, p, lam_f, lam_g, Z], [ca.triu(H)])
    inner_j = ca.Function("jac_inner", [w, p, Z], [g_hat, jac])
    lf_, lg_ = ca.MX.sym("lam_f"), ca.MX.sym("lam_g", g.shape[0])
    hess_lag = ca.Function("nlp_hess_l", [w, p, lf_, lg_],
                           [inner_h(w, p, lf_, lg_, Z_value)],
                           ["x", "p", "lam_f", "lam_g"], ["triu_hess_gamma_x_x"])
    g_out, j_out = inner_j(w, p, Z_value)
    jac_g = ca.Function("nlp_jac_g", [w, p], [g_out, j_out], ["x", "p"], ["g", "jac_g_x"])
    return {"hess_lag": hess_lag, "jac_g": jac_g}
