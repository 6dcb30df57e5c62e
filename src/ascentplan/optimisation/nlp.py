"""The multi-phase collocation NLP of an ascent, built once per problem structure.

Per phase, one SX Function of the dynamics and path quantities is written from
:func:`ascentplan.models.dynamics.flight_quantities` and vectorised over the mesh with
``Function.map``; the NLP is an MX graph over those mapped SX functions (``symbolic="MX"``,
the default), so CasADi differentiates one point's function once and the build stays
small, or a fully inlined SX graph (``symbolic="SX"``: slower to build, faster to
evaluate; the benchmarks in tests/benchmarks/ measure both). Limits, masses and thrusts
are NLP parameters, so a re-solve with other values (a sweep point, a shadow-price check)
reuses the built solver.

Decision variables, all scaled to order one: optionally the payload mass and each stage's
propellant mass; per phase the states at the nodes (x = offset + scale * x_scaled), with
Hermite-Simpson the states at the interval midpoints (separated form), the controls at the
nodes (throttle, pitch [rad]) and the phase duration (duration = duration_scale *
t_scaled). Controls are piecewise linear between nodes. Variables, parameters and
constraint rows are placed by name (:mod:`ascentplan.optimisation.layout`).
"""

from __future__ import annotations

import time as _time
from dataclasses import dataclass

import casadi as ca
import numpy as np

from ascentplan.models import dynamics
from ascentplan.optimisation.collocation import COLLOCATION_SCHEMES
from ascentplan.optimisation.control_rates import steering_rate_rows
from ascentplan.optimisation.elastic import OBJECTIVE_WEIGHT, HardRows, SoftRows
from ascentplan.optimisation.layout import ConstraintRows, ParameterLayout, VariableLayout
from ascentplan.optimisation.masses import (
    StackMasses,
    add_stack_masses,
    engine_inputs,
    unscaled_drag,
    vehicle_parameter_sizes,
    vehicle_parameter_values,
)
from ascentplan.optimisation.orbit_targets import add_orbit_targets
from ascentplan.optimisation.phases import (
    carrier_state,
    control_bounds,
    duration_bounds,
    last_of_stage,
    limits_on,
    node_function,
    nodes_for_phase,
)
from ascentplan.optimisation.point_derivatives import PointCalls, structured_derivatives
from ascentplan.optimisation.smoothing import control_smoothness
from ascentplan.optimisation.solution import Guess, NLPSolution
from ascentplan.optimisation.stack_rows import (
    add_event_rows,
    flux_after_fairing,
    mass_after,
    stack_guess,
)
from ascentplan.optimisation.structure import structure_key
from ascentplan.problem.model import Problem, phase_plan
from ascentplan.problem.objectives import OBJECTIVE_SPECS, Outcome

__all__ = ["ACCELERATE_MAX_VARIABLES", "EXPANSION_COST_ITERATIONS", "EXPANSION_SAVING_FRACTION",
           "ELASTIC_OPTIONS", "IPOPT_OPTIONS", "WARM_START_OPTIONS",
           "AscentNLP", "Guess", "NLPSolution", "control_smoothness", "nodes_for_phase",
           "structure_key"]

#: IPOPT options: MUMPS (shipped with CasADi), exact Hessian, and the adaptive barrier
#: update, which on the scaled examples took 20-35 % fewer iterations than the monotone
#: default at an equal or slightly better optimum (measured on the examples; Goddard
#: alone takes 20 against 17). MUMPS orders the KKT matrix by approximate minimum degree
#: with quasi-dense rows detected (QAMD, pivot order 6), which its automatic choice also
#: takes on the examples' sizes; on larger meshes the automatic choice took twice the
#: time per factorisation (three-dimensional example, 80 and 160 nodes per phase, measured)
IPOPT_OPTIONS = {
    "ipopt.linear_solver": "mumps",
    "ipopt.mumps_pivot_order": 6,
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

#: IPOPT options of the elastic form (see :mod:`ascentplan.optimisation.elastic`): it
#: only explains a failure, so it is bounded in iterations and time
ELASTIC_OPTIONS = {
    "ipopt.max_iter": 200,
    "ipopt.max_wall_time": 30.0,
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
#: the derivative expansion's one-off cost in IPOPT iterations of the unexpanded (MX)
#: solver, and the fraction of each later iteration's time it saves (measured on the
#: examples with the point-by-point derivatives: 24-49 iterations, 0-18 %; see
#: :meth:`AscentNLP.expansion_pays`)
EXPANSION_COST_ITERATIONS = 50.0
EXPANSION_SAVING_FRACTION = 0.15


@dataclass(frozen=True)
class _PhaseSymbols:
    """A phase's decision variables (scaled) and its physical states at the nodes."""

    states: object  # (n_x, N), scaled
    controls: object  # (n_u, N)
    duration: object  # scaled duration, 1 x 1
    physical: object  # (n_x, N) [SI]


class AscentNLP:
    """The collocation NLP of one problem structure.

    Build with ``AscentNLP(problem, guess_scales)``; solve with :meth:`solve` for any
    problem of the same :func:`structure_key` (other limit values or masses).

    Parameters
    ----------
    problem : Problem
    scales : dict
        ``x_offset``, ``x_scale`` (per state), ``durations`` (per phase) [s] and ``mass``
        [kg], see :func:`ascentplan.optimisation.guess.scales_for`.
    nodes_per_phase : int, optional
        Overrides ``problem.mesh.nodes_per_phase``.
    symbolic : str
        ``"MX"`` or ``"SX"``, the CasADi graph of the NLP.
    elastic : bool
        Build the elastic form instead: every target and path limit may be missed at an
        L1 cost (:mod:`ascentplan.optimisation.elastic`), which tells which must give
        when the NLP itself is infeasible.
    """

    def __init__(self, problem: Problem, scales: dict, nodes_per_phase: int | None = None,
                 symbolic: str = "MX", elastic: bool = False):
        t0 = _time.perf_counter()
        if symbolic not in ("MX", "SX"):
            raise ValueError(f"symbolic: must be 'MX' or 'SX', got {symbolic!r}")
        self.problem = problem
        self.model = dynamics.flight_model(unscaled_drag(problem))
        self.kind = self.model.kind
        self.scheme = COLLOCATION_SCHEMES[problem.mesh.scheme]()
        self.phases = phase_plan(problem)
        npp = nodes_per_phase or problem.mesh.nodes_per_phase
        self.nodes = [nodes_for_phase(ph, npp) for ph in self.phases]
        self.limit_names = problem.limits.active_names()
        self.n_x = self.model.n_states
        self.n_u = self.model.n_controls
        self.n_stages = len(problem.vehicle.stages)
        self.split = problem.mass_split is not None
        self.x_offset = np.array(scales["x_offset"], dtype=float)
        self.x_scale = np.array(scales["x_scale"], dtype=float)
        self.duration_scale = np.array(scales["durations"], dtype=float)
        self.mass_scale = float(scales["mass"])
        self._sym = ca.MX if symbolic == "MX" else ca.SX
        self.elastic = elastic
        self._build()
        self.build_time = _time.perf_counter() - t0

    # ------------------------------------------------------------------ building
    def _build(self):
        sizes = [(name, 1) for name in self.limit_names] + vehicle_parameter_sizes(self.problem)
        self.parameters = ParameterLayout(self._sym, sizes)
        self.variables = VariableLayout(self._sym)
        self.rows = ConstraintRows()
        self.conditions = (SoftRows(self.rows, self.variables) if self.elastic
                           else HardRows(self.rows))
        self.points = PointCalls()
        masses = add_stack_masses(self.problem, self.variables, self.parameters,
                                  self.mass_scale)
        self.phase_vars: list[_PhaseSymbols] = []
        for j in range(len(self.phases)):
            self._add_phase(j, masses)
        split = self.problem.mass_split
        if split is not None and split.hold == "liftoff_mass":
            self.rows.add("liftoff_mass_held", (masses.ignition[0] - self.parameters.scalar(
                "liftoff_mass")) / self.mass_scale, 0.0, 0.0)
        self.last_powered = max(j for j, ph in enumerate(self.phases) if ph.powered)
        burnout = self._physical_end(self.last_powered)
        self._add_targets(burnout)
        self._set_objective(burnout, masses)
        self._finish(masses)

    def _scale_of(self, quantity: str) -> float | None:
        """Variable scale of ``quantity`` (a key of the carrier-state table), or None."""
        if quantity == "mass":
            return self.mass_scale
        k = carrier_state(self.kind, quantity)
        return None if k is None else float(self.x_scale[k])

    def quantity_scale(self, quantity: str) -> float | None:
        """Variable scale [SI] that the rows of ``quantity`` are divided by, or None."""
        return self._scale_of(quantity)

    def _physical_end(self, j: int):
        """Physical state at the last node of phase ``j``."""
        X = self.phase_vars[j].states
        return self.x_offset + self.x_scale * X[:, -1]

    def _add_phase(self, j: int, masses: StackMasses) -> None:
        """Variables and constraint rows of phase ``j``, in the order IPOPT meets them."""
        ph = self.phases[j]
        stage = self.problem.vehicle.stages[ph.stage]
        N = self.nodes[j]
        X = self.variables.add(f"x{j}", (self.n_x, N))
        Xc = None
        if self.scheme.uses_midpoint:
            # separated Hermite-Simpson: midpoint states are variables, so every model
            # evaluation depends on one point's variables only (a sparse, cheap Hessian)
            Xc = self.variables.add(f"xc{j}", (self.n_x, N - 1))
        U = self.variables.add(f"u{j}", (self.n_u, N), *control_bounds(self.kind, ph, stage))
        T_s = self.variables.add(f"t{j}", (1, 1), *duration_bounds(ph, self.duration_scale[j]))
        physical = self.x_offset[:, None] + self.x_scale[:, None] * X
        self.phase_vars.append(_PhaseSymbols(X, U, T_s, physical))
        h = T_s * self.duration_scale[j] * (1.0 / (N - 1))  # interval length [s]
        specs = limits_on(self.problem, self.kind, ph)
        flux = flux_after_fairing(self.problem, self.phases, j)
        Q = self._collocate(j, stage, Xc, h, masses,
                            [s.quantity for s in specs] + (["heat_flux"] if flux else []))
        self._add_path_limits(j, specs, Q)
        self._add_throttle_rate(j, stage, U, h)
        self._link(j, masses)
        self._add_phase_end(j, masses)
        add_event_rows(self, j, masses, Q[len(specs), :] if flux else None)

    def _collocate(self, j: int, stage, Xc, h, masses: StackMasses, quantities):
        """Collocation rows of phase ``j``; returns the path quantities at every point.

        The quantities (one row each, in the order of ``quantities``) are at the nodes,
        then, with a midpoint scheme, at the interval midpoints.
        """
        ph, N = self.phases[j], self.nodes[j]
        sym = self.phase_vars[j]
        X, U = sym.states, sym.controls
        off, sc = self.x_offset[:, None], self.x_scale[:, None]
        engine = engine_inputs(self.problem, self.parameters, masses, ph)
        point = node_function(self.model, quantities)
        F_nodes, Q_nodes = self.points.call(point, N, sym.physical, U, engine)
        Fs = F_nodes / sc  # scaled state derivative per physical second
        Xk, Xk1 = X[:, :-1], X[:, 1:]
        Fk, Fk1 = Fs[:, :-1], Fs[:, 1:]
        Fc, Q = None, Q_nodes
        if self.scheme.uses_midpoint:
            self.rows.add(f"midpoints{j}",
                          Xc - self.scheme.midpoint_state(Xk, Xk1, Fk, Fk1, h), 0.0, 0.0)
            Uc = 0.5 * (U[:, :-1] + U[:, 1:])
            F_mid, Q_mid = self.points.call(point, N - 1, off + sc * Xc, Uc, engine)
            Fc = F_mid / sc
            Q = ca.horzcat(Q_nodes, Q_mid)
        self.rows.add(f"defects{j}", self.scheme.defect(Xk, Xk1, Fk, Fk1, Fc, h), 0.0, 0.0)
        return Q

    def _add_path_limits(self, j: int, specs, Q) -> None:
        """Rows of the path limits ``specs`` on phase ``j``; row k of ``Q`` is the
        quantity of ``specs[k]`` at every collocation point."""
        for row, spec in enumerate(specs):
            # not at liftoff where a limit says so: the pad state is fixed, and a
            # constraint there is degenerate
            values = Q[row, 1:] if j == 0 and not spec.at_liftoff else Q[row, :]
            expr, lower, upper = spec.scaled_constraint(
                values, self._held_bound(spec), self._scale_of(spec.quantity))
            self.conditions.limit(spec.name, j, expr, lower, upper)

    def _held_bound(self, spec):
        """The bound the NLP holds for ``spec``: ``mesh.limit_margin`` inside the bound.

        The quantity between nodes can pass its value at the nodes (by up to 0.48 % on
        the examples at 40 nodes per phase, measured), so the nodes are held inside it
        (default 0.75 %) and the flown peak stays within the bound as written. The margin is
        applied to the parameter symbol, so the multiplier of the parameter is still
        d(objective)/d(bound as written) and the shadow prices need no correction.
        """
        bound = self.parameters.scalar(spec.name)
        margin = self.problem.mesh.limit_margin
        if margin == 0.0:
            return bound
        if spec.sense == "min":
            return bound + margin * ca.fmax(ca.fabs(bound), spec.excess_floor)
        return bound * (1.0 - margin)

    def _add_throttle_rate(self, j: int, stage, U, h) -> None:
        """The stage's throttle-rate limit on a powered phase, linear in the variables, and
        its steering-rate limit on a burn (the vertical rise holds the pitch fixed)."""
        rate = stage.max_throttle_rate
        if rate is not None and self.phases[j].powered:
            k = self.kind.control_index("throttle")
            du = U[k, 1:] - U[k, :-1]
            self.rows.add(f"throttle_rate{j}", du - rate * h, -np.inf, 0.0)
            self.rows.add(f"throttle_rate{j}", du + rate * h, 0.0, np.inf)
        turning = stage.max_steering_rate
        if turning is not None and self.kind.steered and self.phases[j].kind == "burn":
            self.rows.add(f"steering_rate{j}", *steering_rate_rows(self.kind, U, h, turning))

    def _link(self, j: int, masses: StackMasses) -> None:
        """Phase ``j`` starts where the previous ended, or at the pad with the liftoff mass.

        At staging the mass drops by everything of the spent stage.
        """
        m = self.kind.index("mass")
        others = [i for i in range(self.n_x) if i != m]
        sym = self.phase_vars[j]
        start_mass = sym.physical[m, 0]
        if j == 0:
            pad = (dynamics.initial_state(self.problem) - self.x_offset) / self.x_scale
            self.variables.fix("x0", others, 0, pad[others])
            self.rows.add("liftoff_mass", (start_mass - masses.ignition[0]) / self.mass_scale,
                          0.0, 0.0)
            return
        X_prev = self.phase_vars[j - 1].states
        self.rows.add(f"link{j}", sym.states[others, 0] - X_prev[others, -1], 0.0, 0.0)
        end_mass = mass_after(self, j - 1, masses,
                              self.x_offset[m] + self.x_scale[m] * X_prev[m, -1])
        self.rows.add(f"link{j}_mass", (start_mass - end_mass) / self.mass_scale, 0.0, 0.0)

    def _add_phase_end(self, j: int, masses: StackMasses) -> None:
        """A stage burns at most down to its reserve, and exactly so when it may not shut
        down early; a coast to apogee ends climbing at zero."""
        ph = self.phases[j]
        sym = self.phase_vars[j]
        if last_of_stage(self.phases, j):
            m = self.kind.index("mass")
            early = self.problem.vehicle.stages[ph.stage].may_shut_down_early
            self.rows.add(f"burnout_mass{ph.stage}",
                          (sym.physical[m, -1] - masses.planned_burnout[ph.stage])
                          / self.mass_scale, 0.0, np.inf if early else 0.0)
        if ph.ends_at_apogee:
            k = carrier_state(self.kind, "radial_speed")
            zero = (0.0 - self.x_offset[k]) / self.x_scale[k]
            self.rows.add("apogee", sym.states[k, -1] - zero, 0.0, 0.0)

    def _add_targets(self, xb) -> None:
        """Terminal conditions at burnout, each scaled by its variable scale."""
        t = self.problem.target
        planet = self.problem.planet
        kind = self.kind
        add = self.conditions.target
        altitude_scale, speed_scale = self._scale_of("altitude"), self._scale_of("speed")
        if t.circular_orbit_altitude is not None:
            add_orbit_targets(self, xb)
            rt = planet.radius + t.circular_orbit_altitude
            v_circular = np.sqrt(planet.gravitational_parameter / rt)
            add("target_altitude", (kind.radius(xb, planet) - rt) / altitude_scale)
            add("target_flight_path_angle",
                kind.radial_speed(xb) / self._scale_of("radial_speed"))
            add("target_speed", (kind.horizontal_speed(xb) - v_circular) / speed_scale)
            return
        if t.altitude is not None:
            add("target_altitude", (kind.altitude(xb, planet) - t.altitude) / altitude_scale)
        if t.speed is not None:
            add("target_speed", (kind.speed(xb) - t.speed) / speed_scale)
        if t.flight_path_angle is not None:
            gam = t.flight_path_angle
            # v_r cos(gamma) - v_h sin(gamma): zero at the angle, and smooth where
            # an atan2 of the speeds would not be
            add("target_flight_path_angle",
                (kind.radial_speed(xb) * np.cos(gam) - kind.horizontal_speed(xb) * np.sin(gam))
                / speed_scale)
        add_orbit_targets(self, xb)

    def _set_objective(self, xb, masses: StackMasses) -> None:
        """The objective of the problem's :data:`OBJECTIVE_SPECS` entry, scaled to order one."""
        spec = OBJECTIVE_SPECS[self.problem.objective]
        planet = self.problem.planet
        m = self.kind.index("mass")
        used = 0
        for j, ph in enumerate(self.phases):
            if ph.powered:
                X = self.phase_vars[j].states
                used = used + self.x_scale[m] * (X[m, 0] - X[m, -1])
        apogee = None
        if self.phases[-1].ends_at_apogee:
            apogee = self.kind.altitude(self._physical_end(len(self.phases) - 1), planet)
        outcome = Outcome(kind=self.kind, planet=planet, burnout_state=xb,
                          apogee_altitude=apogee, payload_mass=masses.payload,
                          propellant_used=used, liftoff_mass=masses.ignition[0])
        self.objective_expr = spec.value(outcome)
        self.objective_scale = self._scale_of(spec.scale)
        self.objective_sense = spec.sense  # +1 maximise, -1 minimise
        # IPOPT minimises f
        self.f = -spec.sense * self.objective_expr / self.objective_scale
        # the smoothness penalty is a fraction mesh.control_smoothing of the scaled
        # objective per unit of control_smoothness: chatter between nodes costs little
        # objective to remove, a genuine switch of the optimum costs the penalty weight
        self.smoothing_weight = float(getattr(self.problem.mesh, "control_smoothing", 0.0))
        if self.smoothing_weight > 0.0:
            self.f = self.f + self.smoothing_weight * control_smoothness(
                self.problem, [sym.controls for sym in self.phase_vars])
        if self.elastic:
            # meet as much as can be met first; the objective only picks among the rest
            self.f = self.conditions.penalty + OBJECTIVE_WEIGHT * self.f

    def smoothing_penalty(self, controls) -> float:
        """The smoothness penalty of node ``controls`` in the objective's SI unit (>= 0):
        weight x :func:`control_smoothness` x the objective's scale."""
        if self.smoothing_weight == 0.0:
            return 0.0
        return (self.smoothing_weight * control_smoothness(self.problem, controls)
                * self.objective_scale)

    def _finish(self, masses: StackMasses) -> None:
        """The vectors and bounds handed to IPOPT, the solver, and the helper functions."""
        self.w = self.variables.vector
        self.lbw = self.variables.lower
        self.ubw = self.variables.upper
        self.g = self.rows.vector
        self.lbg = self.rows.lower
        self.ubg = self.rows.upper
        self.P = self.parameters.symbol
        self.n_params = self.parameters.size
        self._limit_rows = {name: self.rows.indices(name) for name in self.limit_names}
        self._nlp = {"x": self.w, "p": self.P, "f": self.f, "g": self.g}
        self.conditions.finish(self.w, self.P)
        self._options = {**IPOPT_OPTIONS, **ELASTIC_OPTIONS} if self.elastic else IPOPT_OPTIONS
        # the Hessian and the constraint Jacobian assembled point by point, when the NLP
        # has that structure (point_derivatives)
        self._derivative_options = structured_derivatives(
            self.points, self.w, self.P, self.f, self.g) or {}
        self.solver = ca.nlpsol("ascent", "ipopt", self._nlp,
                                {**self._options, **self._derivative_options})
        self.warm_solver = None
        self.accelerated = False
        self.accelerate_time = 0.0
        # solves and IPOPT iterations so far: what the derivative expansion is weighed on
        self.solves_done = 0
        self.iterations_done = 0
        self.mass_function = ca.Function(
            "masses", [self.w, self.P],
            [masses.payload, ca.vertcat(*masses.propellant), ca.vertcat(*masses.dry),
             ca.vertcat(*masses.booster_propellant), ca.vertcat(*masses.booster_setting)])
        self.g_function = ca.Function("g", [self.w, self.P], [self.g])

    def accelerate(self, max_variables: int = ACCELERATE_MAX_VARIABLES) -> bool:
        """Swap in SX-expanded Hessian and Jacobian functions for repeated solves.

        Expanding the point-by-point Hessian and Jacobian (:mod:`point_derivatives`) to
        SX saves 0-18 % of each later IPOPT iteration, for a one-off cost of 24-49
        iterations (measured on the examples; expanding the MX graph's own derivatives
        saved 40-73 %). The expansion pays only over
        enough further solves of one structure; :meth:`expansion_pays` decides, and the
        NLP cache calls this when it does. Skipped
        above ``max_variables`` decision variables, where the expanded graph grows large
        in memory. Returns True when the accelerated solver is in use.
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
                                {**self._options, **self._derivative_options})
        self.warm_solver = None
        self.accelerated = True
        self.accelerate_time = _time.perf_counter() - t0
        return True

    def expansion_pays(self, expected_solves: float | None = None) -> bool:
        """Whether :meth:`accelerate` would repay its cost over the solves to come.

        Counted in IPOPT iterations, so that it holds on any machine: the expansion costs
        about :data:`EXPANSION_COST_ITERATIONS` unexpanded iterations and saves
        :data:`EXPANSION_SAVING_FRACTION` of each later one, so it pays when over about 330
        iterations are to come: ``expected_solves`` (what a caller knows, e.g. the points
        a study worker has left) times this NLP's mean iterations per solve. Without it,
        as many more solves are expected as were made: the break-even rule of renting
        against buying (Karlin et al., Algorithmica 11, 1994), never worse than about
        twice the better choice in hindsight. Measurements: DEVELOPERS.md, numerical notes.
        """
        if self.accelerated or self.solves_done == 0:
            return False
        if expected_solves is None:
            expected_solves = self.solves_done
        to_come = expected_solves * self.iterations_done / self.solves_done
        return to_come * EXPANSION_SAVING_FRACTION >= EXPANSION_COST_ITERATIONS

    # --------------------------------------------------------------- numerics
    def parameter_vector(self, problem: Problem) -> np.ndarray:
        """NLP parameters (limit bounds, vehicle data) for a problem of this structure."""
        values = {name: float(getattr(problem.limits, name)) for name in self.limit_names}
        values.update(vehicle_parameter_values(problem, self.split))
        return self.parameters.vector(values)

    def pack_guess(self, guess: Guess) -> np.ndarray:
        """Decision vector from a guess in physical units."""
        values = {}
        if "payload" in self.variables:
            values["payload"] = guess.payload_mass / self.mass_scale
        if "split_scale" in self.variables:
            values["split_scale"] = 1.0
        if "propellant" in self.variables:
            values["propellant"] = np.asarray(guess.propellant, float) / self.mass_scale
        values.update(stack_guess(self.problem, guess, self.variables, self.mass_scale))
        self.conditions.fill(values)
        for j in range(len(self.phases)):
            X = (np.asarray(guess.states[j]) - self.x_offset[:, None]) / self.x_scale[:, None]
            values[f"x{j}"] = X
            if f"xc{j}" in self.variables:
                values[f"xc{j}"] = 0.5 * (X[:, :-1] + X[:, 1:])
            values[f"u{j}"] = guess.controls[j]
            values[f"t{j}"] = guess.durations[j] / self.duration_scale[j]
        return np.clip(self.variables.pack(values), self.lbw, self.ubw)

    def unpack(self, w: np.ndarray):
        """Physical durations, states and controls per phase from a decision vector."""
        durations, states, controls = [], [], []
        # IPOPT may relax bounds by ~1e-8; the schedule handed on stays within them
        w = np.clip(w, self.lbw, self.ubw)
        for j in range(len(self.phases)):
            X = self.variables.block(w, f"x{j}")
            durations.append(float(self.variables.block(w, f"t{j}")[0, 0]
                                   * self.duration_scale[j]))
            states.append(self.x_offset[:, None] + self.x_scale[:, None] * X)
            controls.append(self.variables.block(w, f"u{j}").copy())
        return durations, states, controls

    def _solver_for(self, guess: Guess, warm: bool, n_w: int):
        """The solver to run and its multiplier arguments: warm when asked and possible."""
        m = guess.multipliers
        if not (warm and m is not None and m["lam_x"].size == n_w
                and m["lam_g"].size == self.lbg.size):
            return self.solver, {}
        if self.warm_solver is None:
            self.warm_solver = ca.nlpsol("ascent_warm", "ipopt", self._nlp,
                                         {**self._options, **WARM_START_OPTIONS,
                                          **self._derivative_options})
        return self.warm_solver, {"lam_x0": m["lam_x"], "lam_g0": m["lam_g"]}

    def solve(self, problem: Problem, guess: Guess, warm: bool = False) -> NLPSolution:
        """Solve for ``problem`` (same structure) from ``guess``; never raises on failure."""
        pvec = self.parameter_vector(problem)
        w0 = self.conditions.seed(self.pack_guess(guess), pvec)
        solver, multipliers = self._solver_for(guess, warm, w0.size)
        t0 = _time.perf_counter()
        sol = solver(x0=w0, p=pvec, lbx=self.lbw, ubx=self.ubw, lbg=self.lbg, ubg=self.ubg,
                     **multipliers)
        elapsed = _time.perf_counter() - t0
        stats = solver.stats()
        self.solves_done += 1
        self.iterations_done += max(0, int(stats.get("iter_count", 0)))
        w, lam_p, lam_g, lam_x = (np.array(sol[k]).ravel()
                                  for k in ("x", "lam_p", "lam_g", "lam_x"))
        durations, states, controls = self.unpack(w)
        starts = np.concatenate([[0.0], np.cumsum(durations)[:-1]])
        times = [t + d * np.linspace(0.0, 1.0, n)
                 for t, d, n in zip(starts, durations, self.nodes)]
        payload, prop, dry, boosters, settings = (np.array(v).ravel()
                                                  for v in self.mass_function(w, pvec))
        # envelope theorem: lam_p = -d f*/d p; objective J = -sense * scale * f
        to_objective = self.objective_sense * self.objective_scale
        shadow = {name: float(to_objective * lam_p[i])
                  for i, name in enumerate(self.limit_names)}
        gval = np.array(self.g_function(w, pvec)).ravel()
        viol = float(np.max(np.concatenate([[0.0], self.lbg - gval, gval - self.ubg])))
        ret = stats.get("return_status", "unknown")
        success = bool(stats.get("success", False))
        penalty = self.smoothing_penalty(controls)
        # the objective as named, without the smoothness penalty IPOPT minimised with it
        objective = -self.objective_sense * float(sol["f"]) * self.objective_scale
        if not self.elastic:
            objective += self.objective_sense * penalty
        return NLPSolution(
            status=NLPSolution.status_of(ret, success, viol), return_status=ret,
            success=success, iterations=int(stats.get("iter_count", -1)), solve_time=elapsed,
            objective=float(objective), smoothing_penalty=float(penalty),
            durations=durations, times=times, states=states, controls=controls,
            payload_mass=float(payload[0]), propellant=list(prop), dry=list(dry),
            booster_propellant=list(boosters), booster_setting=list(settings),
            shadow_prices=shadow, constraint_violation=viol,
            sensitivities={k: to_objective * v for k, v in self.parameters.split(lam_p).items()},
            multipliers={"lam_x": lam_x, "lam_g": lam_g, "lam_p": lam_p},
            binding=NLPSolution.binding_of(self._limit_rows, gval, self.lbg, self.ubg, lam_g,
                                           success),
            slacks=self.conditions.read(w, pvec))
