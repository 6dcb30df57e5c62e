"""Speed and verified burnout speed of ascentplan against a single-shooting SLSQP baseline.

Run: ``python tests/benchmarks/bench_baseline.py`` (full: 20 throttle segments, three
ascentplan solves) or ``python tests/benchmarks/bench_baseline.py --quick`` (6 segments,
looser integration, one ascentplan solve). Writes ``results/benchmarks/baseline.json``
(``results/benchmarks/quick/`` for a quick run) and regenerates the README there.

The problem is the sounding-rocket example flown for the largest burnout speed under its
dynamic-pressure limit alone (the axial-acceleration limit is left out so that the
baseline need only sample one path constraint). The baseline is the method an engineer
writes without a collocation tool: K piecewise-constant throttle values are the only
unknowns; each candidate is flown segment by segment with ``solve_ivp`` on the same
equations of motion (``ascentplan.dynamics.rhs``); every segment lasts T/K with the
burn time T chosen so that the propellant is used exactly,
sum(eta_k) mdot_max T / K = propellant; the dynamic pressure, sampled at a few times in
each segment, is kept under the bound by inequality constraints; SLSQP takes its
gradients by forward differences (its default). Both answers are then verified the same
way: flown again densely and at a tighter tolerance, reporting the burnout speed and the
peak dynamic pressure against the bound.
"""

from __future__ import annotations

import argparse
import sys
import time
from dataclasses import replace

import numpy as np
from _common import finish, load_average, machine_info, median, problem_path

SEGMENTS = 20
SAMPLES_PER_SEGMENT = 5
RTOL = 1e-10
QUICK_SEGMENTS = 6
QUICK_SAMPLES = 3
QUICK_RTOL = 1e-8
#: dense verification of the baseline's schedule
VERIFY_SAMPLES_PER_SEGMENT = 400
VERIFY_RTOL = 1e-12
INITIAL_THROTTLE = 0.7
GOAL_RATIO = 100.0


def q_limited_problem():
    """The sounding-rocket example, maximum burnout speed, dynamic-pressure limit only."""
    from ascentplan.problem.loader import load_problem
    from ascentplan.problem.model import Limits

    problem = load_problem(problem_path("sounding_rocket"))
    bound = problem.limits.max_dynamic_pressure
    return replace(problem, objective="max_burnout_speed",
                   limits=Limits(max_dynamic_pressure=bound))


class ShootingBaseline:
    """Single shooting with K piecewise-constant throttle values and SLSQP."""

    def __init__(self, problem, segments: int, samples_per_segment: int, rtol: float):
        from ascentplan.models import dynamics

        self.problem = problem
        self.segments = segments
        self.samples = samples_per_segment
        self.rtol = rtol
        self.stage = problem.vehicle.stages[0]
        self.model = dynamics.flight_model(problem)
        self.propulsion = dynamics.propulsion(self.stage)
        self.x0 = dynamics.initial_state(problem)
        self.bound = problem.limits.max_dynamic_pressure
        self.integrations = 0
        self._cache: dict = {}

    def burn_time(self, throttle) -> float:
        """T such that the propellant is used exactly: sum(eta) mdot_max T / K = m_p."""
        return (self.segments * self.stage.propellant_mass
                / (self.stage.max_mass_flow * float(np.sum(throttle))))

    def fly(self, throttle, samples: int, rtol: float):
        """Burnout state, and the sample times and dynamic pressures of one flight."""
        from scipy.integrate import solve_ivp

        from ascentplan.models import dynamics

        self.integrations += 1
        m0 = self.problem.vehicle.liftoff_mass
        atol = rtol * np.array([1e4, 10.0, 10.0 * m0])
        step = self.burn_time(throttle) / self.segments
        params = (self.model, self.propulsion)
        x = self.x0.copy()
        times, qs = [], []
        for k, eta in enumerate(throttle):
            u = np.array([eta])
            # one solver call per segment: the throttle jumps at segment ends
            sol = solve_ivp(lambda t, y, u=u: dynamics.rhs(t, y, u, params),
                            (k * step, (k + 1) * step), x, method="DOP853", rtol=rtol,
                            atol=atol, dense_output=True)
            ts = np.linspace(k * step, (k + 1) * step, samples)
            q = dynamics.flight_quantities(sol.sol(ts), u, self.model,
                                           self.propulsion)["dynamic_pressure"]
            times.append(ts)
            qs.append(q)
            x = sol.y[:, -1]
        return x, np.concatenate(times), np.concatenate(qs)

    def _flight(self, throttle):
        # SLSQP asks for the objective and the constraints at the same points
        key = np.asarray(throttle, float).tobytes()
        if key not in self._cache:
            if len(self._cache) > 4 * self.segments:
                self._cache.clear()
            self._cache[key] = self.fly(throttle, self.samples, self.rtol)
        return self._cache[key]

    def optimise(self) -> dict:
        from scipy.optimize import minimize

        def burnout_speed_km_s(throttle):
            return -self._flight(throttle)[0][1] / 1000.0

        def q_margin(throttle):
            return 1.0 - self._flight(throttle)[2] / self.bound

        start = time.perf_counter()
        res = minimize(burnout_speed_km_s, np.full(self.segments, INITIAL_THROTTLE),
                       method="SLSQP",
                       bounds=[(self.stage.throttle_min, self.stage.throttle_max)]
                       * self.segments,
                       constraints=[{"type": "ineq", "fun": q_margin}],
                       options={"maxiter": 200})
        wall = time.perf_counter() - start
        return {"result": res, "wall_time_s": wall}


def _ascentplan_runs(problem, count: int) -> list[dict]:
    from ascentplan.pipeline import clear_cache, solve

    runs = []
    for _ in range(count):
        clear_cache()
        start = time.perf_counter()
        result = solve(problem)
        wall = time.perf_counter() - start
        peak = next(c for c in result.verification.limits if c.name == "max_dynamic_pressure")
        summary = result.summary()
        runs.append({"wall_time_s": wall, "status": result.status,
                     "iterations": result.iterations, "nodes": result.nodes,
                     "objective_m_s": result.solution.objective,
                     "verified_objective_m_s": result.verification.objective_replayed,
                     "verified": bool(result.verification.passed),
                     "verified_peak_q_pa": float(peak.peak),
                     "shadow_price_m_s_per_kpa": next(
                         (lim["shadow_price"] for lim in summary["limits"]
                          if lim["name"] == "max_dynamic_pressure"), None)})
    return runs


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true",
                        help="6 segments, rtol 1e-8, one ascentplan solve")
    args = parser.parse_args(argv)
    start = time.perf_counter()
    info = machine_info()
    segments = QUICK_SEGMENTS if args.quick else SEGMENTS
    samples = QUICK_SAMPLES if args.quick else SAMPLES_PER_SEGMENT
    rtol = QUICK_RTOL if args.quick else RTOL

    from ascentplan.replay.simulate import simulate

    problem = q_limited_problem()
    bound = problem.limits.max_dynamic_pressure
    # ascentplan first, so that its first solve pays every one-time cost of the process
    ap_runs = _ascentplan_runs(problem, 1 if args.quick else 3)
    ap_times = [r["wall_time_s"] for r in ap_runs]
    ap = ap_runs[0]
    print(f"ascentplan solve(): {', '.join(f'{t:.3f}' for t in ap_times)} s; "
          f"{ap['status']}, burnout speed {ap['verified_objective_m_s']:.3f} m/s verified",
          flush=True)

    full_throttle = simulate(problem, None, coast_to_apogee=False)
    full_throttle_peak_q = float(np.max(full_throttle.quantities["dynamic_pressure"]))
    print(f"q bound {bound / 1e3:.1f} kPa; full throttle would reach "
          f"{full_throttle_peak_q / 1e3:.1f} kPa", flush=True)

    baseline = ShootingBaseline(problem, segments, samples, rtol)
    out = baseline.optimise()
    res = out["result"]
    flights = baseline.integrations
    x_end, _, _ = baseline.fly(res.x, samples, rtol)
    xv, tv, qv = baseline.fly(res.x, VERIFY_SAMPLES_PER_SEGMENT, VERIFY_RTOL)
    base_peak = float(np.max(qv))
    print(f"baseline SLSQP: {out['wall_time_s']:.1f} s, {res.nit} iterations, {flights} "
          f"integrations, success {res.success} ({res.message}); burnout speed "
          f"{xv[1]:.3f} m/s verified, peak q {base_peak / 1e3:.3f} kPa", flush=True)

    ap_peak = median([r["verified_peak_q_pa"] for r in ap_runs])
    methods = [
        {"method": f"ascentplan solve() (collocation, {ap['nodes']} nodes)",
         "wall_time_s": median(ap_times), "wall_times_s": ap_times,
         "iterations": ap["iterations"], "integrations": None,
         "status": ap["status"], "objective_m_s": ap["objective_m_s"],
         "verified_objective_m_s": ap["verified_objective_m_s"],
         "verified_peak_q_kpa": ap_peak / 1e3, "q_bound_kpa": bound / 1e3,
         "q_excess_percent": 100.0 * (ap_peak - bound) / bound,
         "shadow_price_m_s_per_kpa": ap["shadow_price_m_s_per_kpa"], "runs": ap_runs},
        {"method": f"single shooting, SLSQP, {segments} constant segments",
         "wall_time_s": out["wall_time_s"], "iterations": int(res.nit),
         "integrations": flights, "function_evaluations": int(res.nfev),
         "status": "success" if res.success else f"failed: {res.message}",
         "message": str(res.message), "objective_m_s": float(x_end[1]),
         "verified_objective_m_s": float(xv[1]), "verified_peak_q_kpa": base_peak / 1e3,
         "verified_peak_q_time_s": float(tv[int(np.argmax(qv))]),
         "q_bound_kpa": bound / 1e3, "q_excess_percent": 100.0 * (base_peak - bound) / bound,
         "burn_time_s": baseline.burn_time(res.x), "throttle": [float(v) for v in res.x],
         "seconds_per_integration": out["wall_time_s"] / max(flights, 1)},
    ]
    ratio_median = out["wall_time_s"] / median(ap_times)
    ratio_slowest = out["wall_time_s"] / max(ap_times)
    difference = ap["verified_objective_m_s"] - float(xv[1])
    speed_tolerance = problem.mesh.speed_tolerance
    limit_tolerance = 100.0 * problem.mesh.limit_tolerance_fraction
    faster = ratio_slowest >= GOAL_RATIO
    not_worse = difference >= -speed_tolerance
    ap_feasible = methods[0]["q_excess_percent"] <= limit_tolerance
    goals = [{
        "goal": f"ascentplan at least {GOAL_RATIO:g}x faster at an equal or better verified "
                "objective",
        "met": bool(faster and not_worse and ap_feasible and res.success),
        "evidence": (
            f"baseline {out['wall_time_s']:.1f} s against ascentplan {median(ap_times):.3f} s "
            f"(median; slowest {max(ap_times):.3f} s): {ratio_median:.0f}x "
            f"({ratio_slowest:.0f}x against the slowest). Verified burnout speed "
            f"{ap['verified_objective_m_s']:.3f} m/s against {float(xv[1]):.3f} m/s "
            f"({difference:+.3f} m/s; 'equal' means within the {speed_tolerance:g} m/s "
            f"verification tolerance). Peak q {ap_peak / 1e3:.3f} and {base_peak / 1e3:.3f} "
            f"kPa against {bound / 1e3:g} kPa (the product accepts up to {limit_tolerance:g} "
            f"% over); full throttle would reach {full_throttle_peak_q / 1e3:.1f} kPa, so the "
            f"limit is active."),
    }]
    data = {
        "benchmark": "baseline",
        "command": "python tests/benchmarks/bench_baseline.py" + (" --quick" if args.quick
                                                                   else ""),
        "method": (f"Sounding-rocket example, objective max_burnout_speed, only its "
                   f"{bound / 1e3:g} kPa dynamic-pressure limit (full throttle would reach "
                   f"{full_throttle_peak_q / 1e3:.1f} kPa). ascentplan: solve() after "
                   f"clear_cache(), {len(ap_times)} time(s) in this process, median shown; "
                   f"verified by its own replay. Baseline: SLSQP over {segments} "
                   f"piecewise-constant throttles from {INITIAL_THROTTLE:g}, burn time set by "
                   f"the propellant, DOP853 at rtol {rtol:g} per segment, q sampled at "
                   f"{samples} times per segment, forward-difference gradients (SLSQP "
                   f"default step), flights memoised so the objective and constraints share "
                   f"them; verified by flying its schedule again at rtol {VERIFY_RTOL:g} "
                   f"with {VERIFY_SAMPLES_PER_SEGMENT} q samples per segment."),
        "machine": info, "problem": problem.name, "q_bound_pa": bound,
        "full_throttle_peak_q_pa": full_throttle_peak_q, "methods": methods,
        "ratio": {"median": ratio_median, "slowest": ratio_slowest,
                  "objective_difference_m_s": difference},
        "goals": goals, "run_time_s": time.perf_counter() - start,
        "load_average_end": load_average(),
    }
    return finish("baseline", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
