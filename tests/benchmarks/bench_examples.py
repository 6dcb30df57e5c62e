"""Cold solve-plus-verify wall time of each example problem, and where that time goes.

Run: ``python tests/benchmarks/bench_examples.py`` (full: every example, 3 repetitions)
or ``python tests/benchmarks/bench_examples.py --quick`` (two examples, 1 repetition).
Writes ``results/benchmarks/examples.json`` (``results/benchmarks/quick/`` for a quick
run) and regenerates the README there.

Each repetition runs two fresh interpreters:

* ``cold``: import, load the problem, ``clear_cache()``, ``solve(problem)``: the cost a
  command-line solve pays after the interpreter has started;
* ``parts``: the same steps timed one by one (first guess, NLP build, NLP solve, replay
  plus verification), then ``solve()`` again after ``clear_cache()`` (a rebuild in a
  process whose solver plugins are already loaded) and once more without clearing (the
  cached NLP re-solved, as a sweep does).
"""

from __future__ import annotations

import argparse
import sys
import time

from _common import emit_point, finish, load_average, machine_info, median, problem_path, run_point

EXAMPLES = ("sounding_rocket", "small_launcher", "medium_launcher", "goddard")
QUICK_EXAMPLES = ("small_launcher", "goddard")
GOAL_PROBLEM = "small_launcher"
GOAL_NODES = 40
GOAL_SECONDS = 1.0


def _peak_rss_mb() -> float:
    import resource

    # ru_maxrss is in kilobytes on Linux
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _cold_point(name: str) -> dict:
    t0 = time.perf_counter()
    from ascentplan.pipeline import OBJECTIVE_UNITS, clear_cache, solve
    from ascentplan.problem.loader import load_problem
    import_s = time.perf_counter() - t0

    t0 = time.perf_counter()
    problem = load_problem(problem_path(name))
    load_s = time.perf_counter() - t0
    clear_cache()
    t0, c0 = time.perf_counter(), time.process_time()
    result = solve(problem)
    cold_s, cold_cpu_s = time.perf_counter() - t0, time.process_time() - c0
    unit, divisor = OBJECTIVE_UNITS[problem.objective]
    return {
        "import_s": import_s, "load_s": load_s, "cold_solve_s": cold_s,
        "cold_solve_cpu_s": cold_cpu_s,
        "reported_wall_time_s": result.wall_time, "status": result.status,
        "iterations": result.iterations, "nodes": result.nodes,
        "mesh_refinements": result.mesh_refinements,
        "objective_name": problem.objective, "objective_unit": unit,
        "objective": result.solution.objective / divisor,
        "replayed_objective": result.verification.objective_replayed / divisor,
        "verified": bool(result.verification.passed), "peak_rss_mb": _peak_rss_mb(),
    }


def _parts_point(name: str) -> dict:
    t0 = time.perf_counter()
    # the replay and the mass update are the pipeline's own steps, timed here one by one
    from ascentplan.optimisation.nlp import AscentNLP
    from ascentplan.pipeline import _replay, _with_solution_masses, clear_cache, first_guess, solve
    from ascentplan.problem.loader import load_problem
    from ascentplan.replay.verify import verify
    import_s = time.perf_counter() - t0

    problem = load_problem(problem_path(name))
    nodes = problem.mesh.nodes_per_phase
    clear_cache()
    # solve() imports the simulator (and with it scipy.integrate) on first use; timed
    # apart so that the first guess is the guess alone
    already_imported = "ascentplan.replay.simulate" in sys.modules
    t0 = time.perf_counter()
    import ascentplan.replay.simulate  # noqa: F401
    deferred_import_s = 0.0 if already_imported else time.perf_counter() - t0
    t0 = time.perf_counter()
    guess, scales = first_guess(problem, nodes)
    guess_s = time.perf_counter() - t0
    nlp = AscentNLP(problem, scales, nodes_per_phase=nodes)
    solution = nlp.solve(problem, guess)
    ipopt = {k: v for k, v in nlp.solver.stats().items() if k.startswith("t_wall_")}
    t0 = time.perf_counter()
    solved = _with_solution_masses(problem, solution)
    _, trajectory = _replay(solved, solution)
    verification = verify(solved, solution, trajectory)
    replay_s = time.perf_counter() - t0

    clear_cache()
    t0 = time.perf_counter()
    solve(problem)
    rebuild_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    solve(problem)
    cached_s = time.perf_counter() - t0
    return {
        "import_s": import_s, "deferred_import_s": deferred_import_s,
        "first_guess_s": guess_s, "build_s": nlp.build_time,
        "nlp_solve_s": solution.solve_time, "replay_verify_s": replay_s,
        "sum_of_parts_s": (deferred_import_s + guess_s + nlp.build_time + solution.solve_time
                           + replay_s),
        "iterations_base_mesh": solution.iterations, "status_base_mesh": solution.status,
        "verified_base_mesh": bool(verification.passed),
        "variables": int(nlp.w.shape[0]), "constraints": int(nlp.g.shape[0]),
        "ipopt_wall_times_s": ipopt, "rebuild_solve_s": rebuild_s, "cached_solve_s": cached_s,
        "peak_rss_mb": _peak_rss_mb(),
    }


def _point(argv) -> int:
    mode, name = argv
    emit_point(_cold_point(name) if mode == "cold" else _parts_point(name))
    return 0


def _summarise(name: str, runs: list[dict]) -> dict:
    keys = ("cold_solve_s", "cold_solve_cpu_s", "import_s", "deferred_import_s",
            "first_guess_s", "build_s",
            "nlp_solve_s", "replay_verify_s", "sum_of_parts_s", "rebuild_solve_s", "cached_solve_s",
            "peak_rss_mb")
    med = {}
    for k in keys:
        in_cold = k in ("cold_solve_s", "cold_solve_cpu_s", "import_s", "peak_rss_mb")
        source = "cold" if in_cold else "parts"
        med[k] = median([r[source].get(k) for r in runs if k in r[source]])
    first = runs[0]["cold"]
    return {
        "problem": name, "nodes": first["nodes"], "status": first["status"],
        "iterations": first["iterations"], "mesh_refinements": first["mesh_refinements"],
        "objective_name": first["objective_name"], "objective": first["objective"],
        "objective_unit": first["objective_unit"],
        "replayed_objective": first["replayed_objective"], "verified": first["verified"],
        "variables": runs[0]["parts"]["variables"],
        "constraints": runs[0]["parts"]["constraints"],
        "median": med, "repetitions": runs,
    }


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="two examples, one repetition")
    parser.add_argument("--repeats", type=int, default=None)
    parser.add_argument("--point", nargs=2, metavar=("MODE", "PROBLEM"), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.point:
        return _point(args.point)

    start = time.perf_counter()
    info = machine_info()
    repeats = args.repeats or (1 if args.quick else 3)
    names = QUICK_EXAMPLES if args.quick else EXAMPLES
    examples = []
    for name in names:
        runs = []
        for i in range(repeats):
            cold = run_point(__file__, ["cold", name])
            parts = run_point(__file__, ["parts", name])
            for label, r in (("cold", cold), ("parts", parts)):
                if "error" in r:
                    print(f"{name} {label}: {r['error']}", file=sys.stderr)
                    return 1
            runs.append({"cold": cold, "parts": parts})
            print(f"{name} run {i + 1}/{repeats}: cold solve() {cold['cold_solve_s']:.3f} s "
                  f"({cold['status']}, {cold['iterations']} it); guess "
                  f"{parts['first_guess_s']:.3f}, build {parts['build_s']:.3f}, solve "
                  f"{parts['nlp_solve_s']:.3f}, replay {parts['replay_verify_s']:.3f} s; "
                  f"rebuild solve() {parts['rebuild_solve_s']:.3f} s, cached "
                  f"{parts['cached_solve_s']:.3f} s", flush=True)
        examples.append(_summarise(name, runs))

    goals = []
    goal = next((e for e in examples if e["problem"] == GOAL_PROBLEM), None)
    if goal is not None:
        m = goal["median"]
        met = (goal["nodes"] == GOAL_NODES and goal["status"] == "optimal"
               and m["cold_solve_s"] < GOAL_SECONDS)
        goals.append({
            "goal": f"the two-stage example ({GOAL_PROBLEM}) at {GOAL_NODES} nodes per phase "
                    f"built, solved and verified in under {GOAL_SECONDS:g} s",
            "met": bool(met),
            "evidence": (
                f"Median cold solve() {m['cold_solve_s']:.3f} s wall, "
                f"{m['cold_solve_cpu_s']:.3f} s CPU, in a fresh process (after "
                f"{m['import_s']:.3f} s of imports, not counted), status {goal['status']}, "
                f"{goal['nodes']} nodes per phase, {goal['mesh_refinements']} refinement(s). "
                f"Breakdown: deferred import of the simulator {m['deferred_import_s']:.3f} s, "
                f"first guess {m['first_guess_s']:.3f} s, NLP build "
                f"{m['build_s']:.3f} s, IPOPT solve {m['nlp_solve_s']:.3f} s, replay and "
                f"verification {m['replay_verify_s']:.3f} s. A rebuild in a warm process takes "
                f"{m['rebuild_solve_s']:.3f} s; a re-solve of the cached NLP "
                f"{m['cached_solve_s']:.3f} s."),
        })
    data = {
        "benchmark": "examples",
        "command": "python tests/benchmarks/bench_examples.py" + (" --quick" if args.quick
                                                                   else ""),
        "method": (f"{repeats} repetition(s) per example, each in two fresh interpreters. "
                   "'cold solve()' is `clear_cache(); solve(problem)` timed in a fresh "
                   "process after the imports; the parts are timed in a second fresh process "
                   "on the problem's own mesh (the simulator module that solve() imports on "
                   "first use, first guess, AscentNLP build with the default symbolic type, "
                   "IPOPT solve, replay plus verification), so their sum "
                   "leaves out refinements; 'rebuild solve()' is solve() after clear_cache() "
                   "in that warm process; 'cached re-solve' reuses the built NLP."),
        "machine": info, "repeats": repeats, "examples": examples, "goals": goals,
        "run_time_s": time.perf_counter() - start, "load_average_end": load_average(),
    }
    return finish("examples", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
