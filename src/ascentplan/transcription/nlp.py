"""The multi-phase collocation NLP of an ascent, built once per problem structure.

Per phase, one SX Function of the dynamics and path quantities is written from
:func:`ascentplan.dynamics.flight_quantities` and vectorised over the mesh with
``Function.map``; the NLP is an MX graph over those mapped SX functions (``symbolic="MX"``,
the default), so CasADi differentiates one point's function once and the build stays
small, or a fully inlined SX graph (``symbolic="SX"``: slower to build, faster to
evaluate; the benchmarks in tests/benchmarks/ measure both). Limits, masses and thrusts
are NLP parameters, so a re-solve with other values (a sweep point, a shadow-price check)
reuses the built solver.

Decision variables, all scaled to order one: per phase the states at the nodes
(x = offset + scale * x_scaled), with Hermite-Simpson the states at the interval
midpoints (separated form), the controls at the nodes (throttle, pitch [rad]) and the
phase duration (duration = duration_scale * t_scaled); optionally the payload mass and
each stage's propellant mass. Controls are piecewise linear between nodes.
"""

from __future__ import annotations

import time as _time
from dataclasses import dataclass, field

import casadi as ca
import numpy as np

from ascentplan.models import dynamics
from ascentplan.constants import G0
from ascentplan.problem.model import Phase, Problem, phase_plan
from ascentplan.transcription.collocation import COLLOCATION_SCHEMES

_LIMIT_ORDER = ("max_dynamic_pressure", "max_axial_acceleration", "max_q_alpha", "min_altitude")

#: IPOPT options: MUMPS (shipped with CasADi), exact Hessian, and the adaptive barrier
#: update, which on the scaled examples took 20-35 % fewer iterations than the monotone
#: default at an equal or slightly better optimum (measured on the examples; Goddard
#: alone takes 20 against 17)
IPOPT_OPTIONS = {
    "ipopt.linear_solver": "mumps",
    "ipopt.mu_strategy": "adaptive",
    "ipopt.tol": 1e-8,
    "ipopt.acceptable_tol": 1e-6,
    "ipopt.acceptable_iter": 10,
    "ipopt.max_iter": 500,
    "ipopt.max_wall_time": 300.0,
    "ipopt.print_level": 0,
    "ipopt.sb": "yes",
    "print_time": False,
    "record_time": True,
}

#: IPOPT options added for a warm start: without warm_start_init_point IPOPT ignores the
#: multipliers, and the gain comes mostly from a small mu_init and small bound pushes
WARM_START_OPTIONS = {
    "ipopt.warm_start_init_point": "yes",
    "ipopt.warm_start_bound_push": 1e-6,
    "ipopt.warm_start_mult_bound_push": 1e-6,
    "ipopt.mu_init": 1e-5,
}


#: largest NLP (decision variables) whose derivatives :meth:`AscentNLP.accelerate` expands
ACCELERATE_MAX_VARIABLES = 6000


def structural_ratio(stage) -> float:
    """dry / (dry + propellant) of a stage: as given, else as its masses are written."""
    if stage.structural_ratio is not None:
        return float(stage.structural_ratio)
    return stage.dry_mass / (stage.dry_mass + stage.propellant_mass)


def nodes_for_phase(phase: Phase, nodes_per_phase: int) -> int:
    """Mesh nodes of a phase: short fixed segments get fewer."""
    if phase.kind == "rise":
        return max(5, nodes_per_phase // 4)
    if phase.kind == "coast" and not phase.ends_at_apogee:
        return max(5, nodes_per_phase // 4)
    return nodes_per_phase


def structure_key(problem: Problem) -> tuple:
    """What fixes the NLP's structure: everything except limit values and masses."""
    stages = tuple(
        (s.exhaust_speed, s.nozzle_exit_area, s.throttle_min, s.throttle_max,
         s.max_throttle_rate, s.coast_after, s.structural_ratio, s.thrust_to_weight,
         s.propellant_min, s.propellant_max)
        for s in problem.vehicle.stages)
    return (problem.dynamics, problem.planet, problem.atmosphere, problem.gravity,
            problem.aerodynamics, problem.launch, stages, tuple(problem.limits.active_names()),
            problem.target, problem.objective, problem.mesh.scheme, problem.mesh.nodes_per_phase,
            None if problem.mass_split is None else (problem.mass_split.hold,
                                                     problem.mass_split.proportional))


@dataclass
class Guess:
    """A first guess on the mesh: per phase, node times [s] from the phase start, physical
    states (n, N) and controls (n_u, N); and masses."""

    durations: list
    states: list
    controls: list
    payload_mass: float
    propellant: list
    multipliers: dict | None = None


@dataclass
class NLPSolution:
    """The optimiser's answer on its own mesh (physical units)."""

    status: str
    return_status: str
    success: bool
    iterations: int
    solve_time: float
    objective: float
    durations: list
    times: list  # per phase, absolute node times [s]
    states: list
    controls: list
    payload_mass: float
    propellant: list
    dry: list
    shadow_prices: dict  # limit name -> d objective / d bound (SI objective per SI bound)
    constraint_violation: float
    multipliers: dict = field(default_factory=dict)
    binding: list = field(default_factory=list)


class AscentNLP:
    """The collocation NLP of one problem structure.

    Build with ``AscentNLP(problem, guess_scales)``; solve with :meth:`solve` for any
    problem of the same :func:`structure_key` (other limit values or masses).
    """

    def __init__(self, problem: Problem, scales: dict, nodes_per_phase: int | None = None,
                 symbolic: str = "MX"):
        t0 = _time.perf_counter()
        self.problem = problem
        self.kind = problem.dynamics
        self.model = dynamics.flight_model(problem)
        self.scheme = COLLOCATION_SCHEMES[problem.mesh.scheme]()
        self.phases = phase_plan(problem)
        npp = nodes_per_phase or problem.mesh.nodes_per_phase
        self.nodes = [nodes_for_phase(ph, npp) for ph in self.phases]
        self.limit_names = [n for n in _LIMIT_ORDER if getattr(problem.limits, n) is not None]
        self.n_x = self.model.n_states
        self.n_u = self.model.n_controls
        self.n_stages = len(problem.vehicle.stages)
        self._scales = scales
        if symbolic not in ("MX", "SX"):
            raise ValueError(f"symbolic: must be 'MX' or 'SX', got {symbolic!r}")
        self._sym = ca.MX if symbolic == "MX" else ca.SX
        self._build()
        self.build_time = _time.perf_counter() - t0

    # ------------------------------------------------------------------ layout
    def _build(self):
        p = self.problem
        stages = p.vehicle.stages
        nx, nu = self.n_x, self.n_u
        sc = self._scales
        self.x_offset = np.array(sc["x_offset"], dtype=float)
        self.x_scale = np.array(sc["x_scale"], dtype=float)
        self.duration_scale = np.array(sc["durations"], dtype=float)
        self.mass_scale = float(sc["mass"])

        w_parts, lbw, ubw = [], [], []
        self._index = {}

        def add(name, shape, lb, ub):
            sym = self._sym.sym(name, *shape)
            start = sum(int(np.prod(s.shape)) for s in w_parts)
            w_parts.append(sym)
            lbw.append(np.broadcast_to(np.asarray(lb, dtype=float).reshape(-1, 1) if np.ndim(lb) else lb,
                                       shape).flatten(order="F"))
            ubw.append(np.broadcast_to(np.asarray(ub, dtype=float).reshape(-1, 1) if np.ndim(ub) else ub,
                                       shape).flatten(order="F"))
            self._index[name] = (start, shape)
            return sym

        # parameters: limit bounds; payload; per stage propellant, dry mass (in a
        # stage-mass split: the structural ratio) and vacuum thrust; the held liftoff mass
        n_lim = len(self.limit_names)
        ns = self.n_stages
        P = self._sym.sym("p", n_lim + 1 + 3 * ns + 1)
        self.n_params = P.shape[0]
        lim_par = {name: P[i] for i, name in enumerate(self.limit_names)}
        payload_par = P[n_lim]
        prop_par = [P[n_lim + 1 + i] for i in range(ns)]
        dry_par = [P[n_lim + 1 + ns + i] for i in range(ns)]
        thrust_par = [P[n_lim + 1 + 2 * ns + i] for i in range(ns)]
        liftoff_par = P[n_lim + 1 + 3 * ns]

        # mass variables
        split = p.mass_split is not None
        self.split = split
        ms = self.mass_scale
        payload_free = p.objective == "max_payload"
        if payload_free:
            pay_s = add("payload", (1, 1), 0.0, 1.0)
            payload = pay_s * ms
        else:
            payload = payload_par
        if split and p.mass_split.proportional:
            # every stage scaled by one factor: the rocket-equation split's proportions kept
            scale_s = add("split_scale", (1, 1), 0.05, 20.0)
            propellant = [scale_s * prop_par[i] for i in range(ns)]
        elif split:
            lo, hi = [], []
            for st in stages:
                lo.append(st.propellant_min if st.propellant_min is not None
                          else 0.02 * st.propellant_mass)
                hi.append(st.propellant_max if st.propellant_max is not None
                          else 20.0 * st.propellant_mass)
            prop_s = add("propellant", (ns, 1), np.array(lo) / ms, np.array(hi) / ms)
            propellant = [prop_s[i] * ms for i in range(ns)]
        else:
            propellant = prop_par
        if split:
            # the dry mass follows the propellant at the stage's structural ratio
            dry = [dry_par[i] / (1.0 - dry_par[i]) * propellant[i] for i in range(ns)]
        else:
            dry = list(dry_par)
        mass_above = []
        for i in range(ns):
            mass_above.append(payload + sum(propellant[j] + dry[j] for j in range(i + 1, ns)))
        ignition = [mass_above[i] + propellant[i] + dry[i] for i in range(ns)]
        burnout = [mass_above[i] + dry[i] for i in range(ns)]
        thrust = []
        for i, st in enumerate(stages):
            if split and st.thrust_to_weight is not None:
                thrust.append(st.thrust_to_weight * G0 * ignition[i])
            else:
                thrust.append(thrust_par[i])
        self._mass_exprs = dict(payload=payload, propellant=propellant, dry=dry,
                                ignition=ignition, thrust=thrust)

        g, lbg, ubg = [], [], []
        self._g_index = {}

        def constrain(name, expr, lb, ub):
            start = sum(int(e.shape[0]) for e in g)
            expr = ca.vec(expr)
            g.append(expr)
            n = expr.shape[0]
            lbg.append(np.full(n, lb, dtype=float) if np.isscalar(lb) else np.asarray(lb, float))
            ubg.append(np.full(n, ub, dtype=float) if np.isscalar(ub) else np.asarray(ub, float))
            self._g_index.setdefault(name, []).append((start, n))

        xs_off = self.x_offset.reshape(-1, 1)
        xs_sc = self.x_scale.reshape(-1, 1)
        x0 = dynamics.initial_state(p)
        self.phase_vars = []
        prev_phase = None
        for j, ph in enumerate(self.phases):
            N = self.nodes[j]
            stage = stages[ph.stage]
            X = add(f"x{j}", (nx, N), -np.inf, np.inf)
            x_lb, x_ub = lbw[-1], ubw[-1]
            if self.scheme.uses_midpoint:
                # separated Hermite-Simpson: midpoint states are variables, so every model
                # evaluation depends on one point's variables only (a sparse, cheap Hessian)
                Xc = add(f"xc{j}", (nx, N - 1), -np.inf, np.inf)
            # controls: throttle range of the stage, pitch bounds
            if ph.powered:
                t_lo, t_hi = stage.throttle_min, stage.throttle_max
            else:
                t_lo = t_hi = 0.0
            u_lo = [t_lo]
            u_hi = [t_hi]
            if nu == 2:
                if ph.kind == "rise":
                    u_lo.append(0.5 * np.pi)
                    u_hi.append(0.5 * np.pi)
                elif ph.powered:
                    u_lo.append(-0.5 * np.pi)
                    u_hi.append(0.5 * np.pi)
                else:
                    u_lo.append(0.0)
                    u_hi.append(0.0)
            U = add(f"u{j}", (nu, N), np.array(u_lo), np.array(u_hi))
            if ph.duration is not None:
                d_lo = d_hi = ph.duration / self.duration_scale[j]
            else:
                d_lo, d_hi = 1e-3, 50.0
            T_s = add(f"t{j}", (1, 1), d_lo, d_hi)
            T = T_s * self.duration_scale[j]
            self.phase_vars.append((X, U, T_s))

            Xp = xs_off + xs_sc * X  # physical
            prop_vec = ca.vertcat(thrust[ph.stage] if ph.powered else 0.0,
                                  stage.exhaust_speed)
            lim = p.limits
            # only the path quantities this phase constrains are computed at its points
            rows = []
            if lim.max_dynamic_pressure is not None:
                rows.append("dynamic_pressure")
            if lim.max_axial_acceleration is not None and ph.powered:
                rows.append("axial_acceleration")
            if lim.max_q_alpha is not None and ph.kind == "burn":
                rows.append("q_alpha")
            if lim.min_altitude is not None:
                rows.append("altitude")
            row = {name: i for i, name in enumerate(rows)}
            node_fn = self._node_function(ph, stage, rows)
            F_nodes, Q_nodes = node_fn.map(N)(Xp, U, prop_vec)
            Fs = F_nodes / xs_sc  # scaled state derivative per physical second
            dtau = 1.0 / (N - 1)
            h = T * dtau
            Xk, Xk1 = X[:, :-1], X[:, 1:]
            Fk, Fk1 = Fs[:, :-1], Fs[:, 1:]
            if self.scheme.uses_midpoint:
                constrain(f"midpoints{j}", Xc - self.scheme.midpoint_state(Xk, Xk1, Fk, Fk1, h),
                          0.0, 0.0)
                Uc = 0.5 * (U[:, :-1] + U[:, 1:])
                F_mid, Q_mid = node_fn.map(N - 1)(xs_off + xs_sc * Xc, Uc, prop_vec)
                Fc = F_mid / xs_sc
                Q_all = ca.horzcat(Q_nodes, Q_mid)
            else:
                Fc = None
                Q_all = Q_nodes
            constrain(f"defects{j}", self.scheme.defect(Xk, Xk1, Fk, Fk1, Fc, h), 0.0, 0.0)

            # path limits, on the rows of Q this phase computes
            if "dynamic_pressure" in row:
                constrain("max_dynamic_pressure",
                          Q_all[row["dynamic_pressure"], :] / lim_par["max_dynamic_pressure"],
                          -np.inf, 1.0)
            if "axial_acceleration" in row:
                constrain("max_axial_acceleration",
                          Q_all[row["axial_acceleration"], :]
                          / lim_par["max_axial_acceleration"], -np.inf, 1.0)
            if "q_alpha" in row:
                constrain("max_q_alpha", Q_all[row["q_alpha"], :] / lim_par["max_q_alpha"],
                          -1.0, 1.0)
            if "altitude" in row:
                # not at liftoff: the pad state is fixed, a constraint there is degenerate
                k_alt = row["altitude"]
                altitudes = Q_all[k_alt, 1:] if j == 0 else Q_all[k_alt, :]
                constrain("min_altitude", (altitudes - lim_par["min_altitude"]) / xs_sc[0],
                          0.0, np.inf)

            # throttle-rate limit, linear in the variables
            rate = stage.max_throttle_rate
            if rate is not None and ph.powered:
                du = U[0, 1:] - U[0, :-1]
                constrain(f"throttle_rate{j}", du - rate * h, -np.inf, 0.0)
                constrain(f"throttle_rate{j}", du + rate * h, 0.0, np.inf)

            # linkage with the previous phase, or the liftoff state
            start_phys = Xp[:, 0]
            m_idx = nx - 1
            if prev_phase is None:
                fixed = (x0 - self.x_offset) / self.x_scale
                x_lb[: nx - 1] = fixed[: nx - 1]
                x_ub[: nx - 1] = fixed[: nx - 1]
                constrain("liftoff_mass", (start_phys[m_idx] - ignition[0]) / ms, 0.0, 0.0)
            else:
                X_prev, _, _ = self.phase_vars[j - 1]
                constrain(f"link{j}", X[:m_idx, 0] - X_prev[:m_idx, -1], 0.0, 0.0)
                if prev_phase.kind == "burn" and prev_phase.stage < self.n_stages - 1:
                    # staging: everything of the spent stage is dropped
                    start_mass = mass_above[prev_phase.stage]
                else:
                    start_mass = xs_off[m_idx, 0] + xs_sc[m_idx, 0] * X_prev[m_idx, -1]
                constrain(f"link{j}_mass", (start_phys[m_idx] - start_mass) / ms, 0.0, 0.0)
            last_of_stage = ph.powered and (
                j + 1 >= len(self.phases) or self.phases[j + 1].kind != "burn"
                or self.phases[j + 1].stage != ph.stage)
            if last_of_stage:
                constrain(f"burnout_mass{ph.stage}", (Xp[m_idx, -1] - burnout[ph.stage]) / ms,
                          0.0, np.inf)
            if ph.ends_at_apogee:
                k = 1 if self.kind == "vertical" else 2
                constrain("apogee", X[k, -1] - (0.0 - xs_off[k, 0]) / xs_sc[k, 0], 0.0, 0.0)
            prev_phase = ph

        # mass-split closure
        if split and p.mass_split.hold == "liftoff_mass":
            constrain("liftoff_mass_held", (ignition[0] - liftoff_par) / ms, 0.0, 0.0)

        # burnout: end of the last powered phase
        last_powered = max(j for j, ph in enumerate(self.phases) if ph.powered)
        self.last_powered = last_powered
        Xb, _, _ = self.phase_vars[last_powered]
        xb = xs_off[:, 0] + xs_sc[:, 0] * Xb[:, -1]
        self._add_targets(xb, constrain)

        # objective, scaled to order one; sign: minimise f
        obj, obj_scale, sense = self._objective(xb, payload, propellant, ignition)
        self.objective_scale = obj_scale
        self.objective_sense = sense  # +1 maximise, -1 minimise
        f = -sense * obj / obj_scale

        self.w = ca.vertcat(*[ca.vec(v) for v in w_parts])
        self.lbw = np.concatenate(lbw)
        self.ubw = np.concatenate(ubw)
        self.g = ca.vertcat(*g)
        self.lbg = np.concatenate(lbg)
        self.ubg = np.concatenate(ubg)
        self.P = P
        self.f = f
        self.objective_expr = obj
        nlp = {"x": self.w, "p": P, "f": f, "g": self.g}
        self.solver = ca.nlpsol("ascent", "ipopt", nlp, IPOPT_OPTIONS)
        self.warm_solver = None
        self._derivative_options = {}
        self.accelerated = False
        self.accelerate_time = 0.0
        self._nlp = nlp
        self.mass_function = ca.Function(
            "masses", [self.w, P],
            [payload, ca.vertcat(*propellant), ca.vertcat(*dry)])
        self.g_function = ca.Function("g", [self.w, P], [self.g])

    def accelerate(self, max_variables: int = ACCELERATE_MAX_VARIABLES) -> bool:
        """Swap in SX-expanded Hessian and Jacobian functions for repeated solves.

        The MX graph builds in a fraction of a second but evaluates its Hessian several
        times slower than the same function expanded to SX (measured on the two-stage
        example: 18 ms against 4.8 ms per evaluation, for a one-off expansion of about
        1.2 s). The expansion pays after a few solves of one structure (sweeps, maps,
        shadow-price checks), so the pipeline calls this on the third solve. Skipped above
        ``max_variables`` decision variables, where the expanded graph grows large in
        memory. Returns True when the accelerated solver is in use.
        """
        if self.accelerated:
            return True
        if self.w.shape[0] > max_variables:
            return False
        t0 = _time.perf_counter()
        self._derivative_options = {
            "hess_lag": self.solver.get_function("nlp_hess_l").expand(),
            "jac_g": self.solver.get_function("nlp_jac_g").expand(),
        }
        self.solver = ca.nlpsol("ascent_expanded", "ipopt", self._nlp,
                                {**IPOPT_OPTIONS, **self._derivative_options})
        self.warm_solver = None
        self.accelerated = True
        self.accelerate_time = _time.perf_counter() - t0
        return True

    # ------------------------------------------------------------- model pieces
    def _node_function(self, ph: Phase, stage, rows=("dynamic_pressure", "axial_acceleration",
                                                     "q_alpha", "altitude")) -> ca.Function:
        """SX Function (x_phys, u, [thrust, c]) -> (xdot, [the flight quantities in rows])."""
        nx, nu = self.n_x, self.n_u
        x = ca.SX.sym("x", nx)
        u = ca.SX.sym("u", nu)
        pp = ca.SX.sym("prop", 2)
        exit_area = stage.nozzle_exit_area if ph.powered else 0.0
        prop = dynamics.Propulsion(pp[0], pp[1], exit_area)
        params = (self.model, prop)
        xdot = dynamics.rhs(0.0, x, u, params)
        fq = dynamics.flight_quantities(x, u, self.model, prop)
        Q = ca.vertcat(*[fq.get(name, ca.SX(0.0)) for name in rows])
        if Q.shape[0] == 0:
            Q = ca.SX(1, 1)
        return ca.Function("node", [x, u, pp], [xdot, Q])

    def _add_targets(self, xb, constrain):
        t = self.problem.target
        planet = self.problem.planet
        xs = self.x_scale
        if self.kind == "vertical":
            h, v = xb[0], xb[1]
            if t.altitude is not None:
                constrain("target_altitude", (h - t.altitude) / xs[0], 0.0, 0.0)
            if t.speed is not None:
                constrain("target_speed", (v - t.speed) / xs[1], 0.0, 0.0)
            return
        r, vr, vt = xb[0], xb[2], xb[3]
        if t.circular_orbit_altitude is not None:
            rt = planet.radius + t.circular_orbit_altitude
            constrain("target_altitude", (r - rt) / xs[0], 0.0, 0.0)
            constrain("target_flight_path_angle", vr / xs[2], 0.0, 0.0)
            constrain("target_speed", (vt - np.sqrt(planet.gravitational_parameter / rt)) / xs[3],
                      0.0, 0.0)
            return
        if t.altitude is not None:
            constrain("target_altitude", (r - planet.radius - t.altitude) / xs[0], 0.0, 0.0)
        if t.speed is not None:
            constrain("target_speed", (ca.sqrt(vr * vr + vt * vt) - t.speed) / xs[3], 0.0, 0.0)
        if t.flight_path_angle is not None:
            gam = t.flight_path_angle
            constrain("target_flight_path_angle",
                      (vr * np.cos(gam) - vt * np.sin(gam)) / xs[3], 0.0, 0.0)

    def _objective(self, xb, payload, propellant, ignition):
        name = self.problem.objective
        xs = self.x_scale
        if name == "max_burnout_speed":
            if self.kind == "vertical":
                return xb[1], xs[1], 1
            return ca.sqrt(xb[2] ** 2 + xb[3] ** 2), xs[3], 1
        if name == "max_burnout_altitude":
            h = xb[0] if self.kind == "vertical" else xb[0] - self.problem.planet.radius
            return h, xs[0], 1
        if name == "max_apogee":
            X, _, _ = self.phase_vars[-1]
            xe = self.x_offset[0] + xs[0] * X[0, -1]
            h = xe if self.kind == "vertical" else xe - self.problem.planet.radius
            return h, xs[0], 1
        if name == "max_payload":
            return payload, self.mass_scale, 1
        if name == "min_propellant":
            used = 0
            m_idx = self.n_x - 1
            for j, ph in enumerate(self.phases):
                if ph.powered:
                    X, _, _ = self.phase_vars[j]
                    used = used + xs[m_idx] * (X[m_idx, 0] - X[m_idx, -1])
            return used, self.mass_scale, -1
        if name == "min_liftoff_mass":
            return ignition[0], self.mass_scale, -1
        raise ValueError(f"objective: unknown name {name!r}")

    # --------------------------------------------------------------- numerics
    def parameter_vector(self, problem: Problem) -> np.ndarray:
        """NLP parameters (limit bounds, masses, thrusts) for a problem of this structure."""
        vals = [float(getattr(problem.limits, n)) for n in self.limit_names]
        veh = problem.vehicle
        vals.append(veh.payload_mass)
        vals += [s.propellant_mass for s in veh.stages]
        if self.split:
            vals += [structural_ratio(s) for s in veh.stages]
        else:
            vals += [s.dry_mass for s in veh.stages]
        vals += [s.thrust_vacuum for s in veh.stages]
        held = veh.liftoff_mass
        if problem.mass_split is not None and problem.mass_split.liftoff_mass is not None:
            held = problem.mass_split.liftoff_mass
        vals.append(held)
        return np.array(vals, dtype=float)

    def pack_guess(self, guess: Guess) -> np.ndarray:
        """Decision vector from a guess in physical units."""
        parts = []
        if "payload" in self._index:
            parts.append(np.array([guess.payload_mass / self.mass_scale]))
        if "split_scale" in self._index:
            parts.append(np.array([1.0]))
        if "propellant" in self._index:
            parts.append(np.asarray(guess.propellant, float) / self.mass_scale)
        for j in range(len(self.phases)):
            X = (np.asarray(guess.states[j]) - self.x_offset[:, None]) / self.x_scale[:, None]
            parts.append(X.flatten(order="F"))
            if f"xc{j}" in self._index:
                parts.append((0.5 * (X[:, :-1] + X[:, 1:])).flatten(order="F"))
            parts.append(np.asarray(guess.controls[j]).flatten(order="F"))
            parts.append(np.array([guess.durations[j] / self.duration_scale[j]]))
        w = np.concatenate(parts)
        return np.clip(w, self.lbw, self.ubw)

    def unpack(self, w: np.ndarray):
        """Physical durations, states and controls per phase from a decision vector."""
        durations, states, controls = [], [], []
        # IPOPT may relax bounds by ~1e-8; the schedule handed on stays within them
        w = np.clip(w, self.lbw, self.ubw)
        for j in range(len(self.phases)):
            sx, shx = self._index[f"x{j}"]
            X = w[sx:sx + shx[0] * shx[1]].reshape(shx, order="F")
            su, shu = self._index[f"u{j}"]
            U = w[su:su + shu[0] * shu[1]].reshape(shu, order="F")
            st, _ = self._index[f"t{j}"]
            durations.append(float(w[st] * self.duration_scale[j]))
            states.append(self.x_offset[:, None] + self.x_scale[:, None] * X)
            controls.append(U.copy())
        return durations, states, controls

    def solve(self, problem: Problem, guess: Guess, warm: bool = False) -> NLPSolution:
        """Solve for ``problem`` (same structure) from ``guess``; never raises on failure."""
        pvec = self.parameter_vector(problem)
        w0 = self.pack_guess(guess)
        args = dict(x0=w0, p=pvec, lbx=self.lbw, ubx=self.ubw, lbg=self.lbg, ubg=self.ubg)
        solver = self.solver
        if (warm and guess.multipliers is not None
                and guess.multipliers["lam_x"].size == w0.size
                and guess.multipliers["lam_g"].size == self.lbg.size):
            if self.warm_solver is None:
                self.warm_solver = ca.nlpsol("ascent_warm", "ipopt", self._nlp,
                                             {**IPOPT_OPTIONS, **WARM_START_OPTIONS,
                                              **self._derivative_options})
            solver = self.warm_solver
            args["lam_x0"] = guess.multipliers["lam_x"]
            args["lam_g0"] = guess.multipliers["lam_g"]
        t0 = _time.perf_counter()
        sol = solver(**args)
        elapsed = _time.perf_counter() - t0
        stats = solver.stats()
        w = np.array(sol["x"]).ravel()
        lam_p = np.array(sol["lam_p"]).ravel()
        lam_g = np.array(sol["lam_g"]).ravel()
        lam_x = np.array(sol["lam_x"]).ravel()
        durations, states, controls = self.unpack(w)
        times = []
        t_start = 0.0
        for j, d in enumerate(durations):
            tau = np.linspace(0.0, 1.0, self.nodes[j])
            times.append(t_start + d * tau)
            t_start += d
        payload, prop, dry = (np.array(v).ravel() for v in self.mass_function(w, pvec))
        objective = float(-self.objective_sense * float(sol["f"]) * self.objective_scale)
        # envelope theorem: lam_p = -d f*/d p; objective J = -sense * scale * f
        shadow = {}
        for i, name in enumerate(self.limit_names):
            shadow[name] = float(self.objective_sense * self.objective_scale * lam_p[i])
        gval = np.array(self.g_function(w, pvec)).ravel()
        viol = float(np.max(np.concatenate([[0.0], self.lbg - gval, gval - self.ubg])))
        ret = stats.get("return_status", "unknown")
        success = bool(stats.get("success", False))
        binding = []
        for name in self.limit_names:
            rows = self._g_index.get(name, [])
            if not rows:
                continue
            vals = np.concatenate([gval[s:s + n] for s, n in rows])
            ub = np.concatenate([self.ubg[s:s + n] for s, n in rows])
            lb = np.concatenate([self.lbg[s:s + n] for s, n in rows])
            lam = np.concatenate([lam_g[s:s + n] for s, n in rows])
            at_bound = (vals >= ub - 1e-4) | (vals <= lb + 1e-4)
            if success:
                # active: at its bound with a multiplier that prices it (scaled objective ~1)
                if np.any(at_bound & (np.abs(lam) > 1e-7)):
                    binding.append(name)
            elif np.any(at_bound | (vals > ub) | (vals < lb)):
                binding.append(name)
        if success:
            status = "optimal"
        elif ret in ("Infeasible_Problem_Detected", "Local_Infeasibility") or (
                ret == "Restoration_Failed" and viol > 1e-4):
            # IPOPT's own verdict; running out of iterations or time is a failure to
            # converge, whatever the constraint violation where it stopped
            status = "infeasible"
        else:
            status = "failed"
        return NLPSolution(
            status=status, return_status=ret, success=success,
            iterations=int(stats.get("iter_count", -1)), solve_time=elapsed,
            objective=objective, durations=durations, times=times, states=states,
            controls=controls, payload_mass=float(payload[0]), propellant=list(prop),
            dry=list(dry), shadow_prices=shadow, constraint_violation=viol,
            multipliers={"lam_x": lam_x, "lam_g": lam_g, "lam_p": lam_p}, binding=binding)
