"""Time, iterations and peak memory of the optimiser against nodes per phase, MX and SX graphs.

Run: ``python tests/benchmarks/bench_scaling.py`` (full: 50 to 1600 nodes per phase, the
Goddard problem and the two-stage example, both symbolic types) or
``python tests/benchmarks/bench_scaling.py --quick`` (20 and 40 nodes); ``--refit``
recomputes the fits, verdicts and plot from the stored points. Writes
``results/benchmarks/scaling.json`` and ``scaling.png`` (``results/benchmarks/quick/``
for a quick run) and regenerates the README there.

Every point runs twice, each time in a fresh interpreter: a timed pass (first guess,
NLP build, IPOPT solve, replay plus verification, and the peak resident set size from
``getrusage``, which sees CasADi's and IPOPT's C++ allocations) and a traced pass under
``tracemalloc`` (Python allocations only; kept apart because tracing slows the
Python-heavy first guess several times over).
"""

from __future__ import annotations

import argparse
import json
import sys
import time

import numpy as np
from _common import (
    QUICK_RESULTS,
    RESULTS,
    emit_point,
    finish,
    load_average,
    machine_info,
    problem_path,
    run_point,
    write_result,
)

PROBLEMS = ("goddard", "small_launcher")
SYMBOLIC = ("MX", "SX")
NODES = (50, 100, 200, 400, 800, 1600)
QUICK_NODES = (20, 40)
#: the exponent is fitted over the upper points, where fixed costs no longer dominate
FIT_FROM = 200
QUICK_FIT_FROM = 20
#: no larger SX point is tried once one SX build has taken longer than this [s]
SX_BUILD_LIMIT = 60.0
#: the traced pass repeats the whole point; above this timed total [s] it is left out to
#: keep the run within its time budget
TRACED_PASS_LIMIT = 60.0
GOAL_EXPONENT = 1.2


def _rss_mb() -> float:
    import resource

    # ru_maxrss is in kilobytes on Linux
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _timed_point(name: str, symbolic: str, nodes: int) -> dict:
    from dataclasses import replace

    from ascentplan.optimisation.nlp import AscentNLP

    # the replay and the mass update are the pipeline's own steps, timed here one by one
    from ascentplan.pipeline import _replay, _with_solution_masses, first_guess
    from ascentplan.problem.loader import load_problem
    from ascentplan.replay.verify import verify

    problem = load_problem(problem_path(name))
    problem = replace(problem, mesh=replace(problem.mesh, nodes_per_phase=nodes,
                                            max_refinements=0))
    c0 = time.process_time()
    t0 = time.perf_counter()
    guess, scales = first_guess(problem, nodes)
    guess_s = time.perf_counter() - t0
    nlp = AscentNLP(problem, scales, nodes_per_phase=nodes, symbolic=symbolic)
    rss_after_build = _rss_mb()
    solution = nlp.solve(problem, guess)
    ipopt = {k: v for k, v in nlp.solver.stats().items() if k.startswith("t_wall_")}
    t0 = time.perf_counter()
    solved = _with_solution_masses(problem, solution)
    _, trajectory = _replay(solved, solution)
    verification = verify(solved, solution, trajectory)
    replay_s = time.perf_counter() - t0
    cpu_s = time.process_time() - c0
    return {
        "first_guess_s": guess_s, "build_s": nlp.build_time, "nlp_solve_s": solution.solve_time,
        "replay_verify_s": replay_s,
        "total_s": guess_s + nlp.build_time + solution.solve_time + replay_s,
        "total_cpu_s": cpu_s, "iterations": solution.iterations, "status": solution.status,
        "return_status": solution.return_status, "objective_si": solution.objective,
        "verified": bool(verification.passed),
        "burnout_speed_difference_m_s": verification.burnout_speed_difference_m_s,
        "variables": int(nlp.w.shape[0]), "constraints": int(nlp.g.shape[0]),
        "ipopt_wall_times_s": ipopt, "peak_rss_after_build_mb": rss_after_build,
        "peak_rss_mb": _rss_mb(),
    }


def _traced_point(name: str, symbolic: str, nodes: int) -> dict:
    import tracemalloc
    from dataclasses import replace

    from ascentplan.optimisation.nlp import AscentNLP
    from ascentplan.pipeline import first_guess
    from ascentplan.problem.loader import load_problem

    problem = load_problem(problem_path(name))
    problem = replace(problem, mesh=replace(problem.mesh, nodes_per_phase=nodes,
                                            max_refinements=0))
    tracemalloc.start()
    guess, scales = first_guess(problem, nodes)
    nlp = AscentNLP(problem, scales, nodes_per_phase=nodes, symbolic=symbolic)
    nlp.solve(problem, guess)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return {"traced_python_peak_mb": peak / 2**20, "traced_pass_peak_rss_mb": _rss_mb()}


def _point(argv) -> int:
    mode, name, symbolic, nodes = argv
    run = _timed_point if mode == "timed" else _traced_point
    emit_point(run(name, symbolic, int(nodes)))
    return 0


def _fit(points: list[dict], key: str) -> float:
    """Slope of log(value) on log(nodes) by least squares."""
    n = np.log([p["nodes"] for p in points])
    y = np.log([max(float(p[key]), 1e-12) for p in points])
    return float(np.polyfit(n, y, 1)[0])


def _analyse(points: list[dict], fit_from: int) -> tuple[list, list]:
    """Growth exponents over the upper points of each series, and the goal verdicts."""
    for p in points:
        if "error" not in p:
            p["nlp_solve_per_iteration_s"] = p["nlp_solve_s"] / max(p["iterations"], 1)
    fits, goals = [], []
    for name in PROBLEMS:
        for symbolic in SYMBOLIC:
            upper = [p for p in points if p["problem"] == name and p["symbolic"] == symbolic
                     and "error" not in p and p["nodes"] >= fit_from]
            if len(upper) < 2:
                continue
            fit = {"problem": name, "symbolic": symbolic, "nodes": [p["nodes"] for p in upper],
                   "total_exponent": _fit(upper, "total_s"),
                   "build_exponent": _fit(upper, "build_s"),
                   "solve_exponent": _fit(upper, "nlp_solve_s"),
                   "iterations_exponent": _fit(upper, "iterations"),
                   "solve_per_iteration_exponent": _fit(upper, "nlp_solve_per_iteration_s")}
            fits.append(fit)
            met = fit["total_exponent"] <= GOAL_EXPONENT
            goals.append({
                "goal": f"{name}, {symbolic}: total time grows no faster than "
                        f"nodes^{GOAL_EXPONENT:g}",
                "met": bool(met),
                "evidence": (f"fitted exponent {fit['total_exponent']:.2f} over "
                             f"{fit['nodes'][0]}-{fit['nodes'][-1]} nodes per phase "
                             f"({len(upper)} points; build {fit['build_exponent']:.2f}, IPOPT "
                             f"solve {fit['solve_exponent']:.2f}, iterations "
                             f"{fit['iterations_exponent']:.2f}, IPOPT time per iteration "
                             f"{fit['solve_per_iteration_exponent']:.2f})."),
            })
    return fits, goals


def _plot(points, fits, path, goal_exponent):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    names = sorted({p["problem"] for p in points}, key=PROBLEMS.index)
    fig, axes = plt.subplots(1, len(names), figsize=(5.5 * len(names), 4.5), squeeze=False)
    for ax, name in zip(axes[0], names):
        for symbolic, colour in zip(SYMBOLIC, ("tab:blue", "tab:orange")):
            series = [p for p in points if p["problem"] == name and p["symbolic"] == symbolic
                      and "error" not in p]
            if not series:
                continue
            ns = np.array([p["nodes"] for p in series], float)
            ax.loglog(ns, [p["total_s"] for p in series], "o-", color=colour,
                      label=f"{symbolic}: total")
            ax.loglog(ns, [p["nlp_solve_s"] for p in series], "x:", color=colour, alpha=0.6,
                      label=f"{symbolic}: IPOPT solve")
            fit = next((f for f in fits if f["problem"] == name and f["symbolic"] == symbolic),
                       None)
            if fit:
                fn = np.array(fit["nodes"], float)
                ref = [p["total_s"] for p in series if p["nodes"] == fit["nodes"][0]][0]
                ax.loglog(fn, ref * (fn / fn[0]) ** fit["total_exponent"], "--", color=colour,
                          linewidth=2.5, alpha=0.5,
                          label=f"{symbolic}: fitted slope {fit['total_exponent']:.2f}")
                if symbolic == "MX":
                    ax.loglog(fn, 0.5 * ref * (fn / fn[0]) ** goal_exponent, color="grey",
                              linestyle=(0, (1, 2)), label=f"slope {goal_exponent:g} (goal bound)")
        ticks = sorted({p["nodes"] for p in points if p["problem"] == name})
        ax.set_xticks(ticks)
        ax.set_xticklabels([str(t) for t in ticks])
        ax.minorticks_off()
        ax.set_title(name)
        ax.set_xlabel("nodes per phase")
        ax.set_ylabel("wall time [s]")
        ax.grid(True, which="both", alpha=0.3)
        ax.legend(fontsize=8)
    fig.suptitle("guess + build + solve + replay against mesh size")
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def _refit(quick: bool) -> int:
    out_dir = QUICK_RESULTS if quick else RESULTS
    path = out_dir / "scaling.json"
    data = json.loads(path.read_text())
    data["fits"], data["goals"] = _analyse(data["points"], data["fit_from_nodes"])
    _plot(data["points"], data["fits"], out_dir / data["plot"], data["goal_exponent"])
    write_result("scaling", data, quick)
    print(f"refitted {path}")
    return 0


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="20 and 40 nodes only")
    parser.add_argument("--point", nargs=4, metavar=("MODE", "PROBLEM", "SYMBOLIC", "NODES"),
                        help=argparse.SUPPRESS)
    parser.add_argument("--refit", action="store_true",
                        help="recompute the exponents, verdicts and plot from the stored "
                             "points without measuring again")
    args = parser.parse_args(argv)
    if args.point:
        return _point(args.point)
    if args.refit:
        return _refit(args.quick)

    start = time.perf_counter()
    info = machine_info()
    node_list = QUICK_NODES if args.quick else NODES
    fit_from = QUICK_FIT_FROM if args.quick else FIT_FROM
    points, skipped = [], []
    for name in PROBLEMS:
        for symbolic in SYMBOLIC:
            too_slow_at = None
            for nodes in node_list:
                if too_slow_at is not None:
                    skipped.append({"problem": name, "symbolic": symbolic, "nodes": nodes,
                                    "reason": f"the SX build at {too_slow_at[0]} nodes took "
                                              f"{too_slow_at[1]:.0f} s (> "
                                              f"{SX_BUILD_LIMIT:.0f} s)"})
                    continue
                point = {"problem": name, "symbolic": symbolic, "nodes": nodes}
                timed = run_point(__file__, ["timed", name, symbolic, str(nodes)])
                point.update(timed)
                if "error" not in timed and timed["total_s"] <= TRACED_PASS_LIMIT:
                    point.update(run_point(__file__, ["traced", name, symbolic, str(nodes)]))
                elif "error" not in timed:
                    point["traced_pass"] = (f"skipped: the timed pass took "
                                            f"{timed['total_s']:.0f} s")
                points.append(point)
                if "error" in point:
                    print(f"{name} {symbolic} {nodes}: {point['error']}", flush=True)
                    continue
                print(f"{name} {symbolic} {nodes:5d}: total {point['total_s']:7.2f} s (guess "
                      f"{point['first_guess_s']:.2f}, build {point['build_s']:.2f}, solve "
                      f"{point['nlp_solve_s']:.2f}, replay {point['replay_verify_s']:.2f}), "
                      f"{point['iterations']} it, {point['status']}, RSS "
                      f"{point['peak_rss_mb']:.0f} MB, traced "
                      f"{point.get('traced_python_peak_mb', float('nan')):.1f} MB", flush=True)
                if symbolic == "SX" and point["build_s"] > SX_BUILD_LIMIT:
                    too_slow_at = (nodes, point["build_s"])

    fits, goals = _analyse(points, fit_from)
    out_dir = QUICK_RESULTS if args.quick else RESULTS
    out_dir.mkdir(parents=True, exist_ok=True)
    plot_name = "scaling.png"
    _plot(points, fits, out_dir / plot_name, GOAL_EXPONENT)
    data = {
        "benchmark": "scaling",
        "command": "python tests/benchmarks/bench_scaling.py" + (" --quick" if args.quick
                                                                  else ""),
        "method": ("One timed pass per point in a fresh interpreter: first guess, AscentNLP "
                   "build with the given symbolic type, IPOPT solve from the first guess, "
                   "replay plus verification, on the given nodes per phase with no mesh "
                   "refinement; 'total' is their sum. Peak RSS is getrusage ru_maxrss of "
                   "that process (interpreter, CasADi graphs, IPOPT and MUMPS included). "
                   "'Peak traced Python' is the tracemalloc peak of a second fresh process "
                   "doing guess, build and solve (left out where the timed pass took more than "
                   f"{TRACED_PASS_LIMIT:.0f} s). The Goddard problem has one phase; the "
                   "two-stage example has a vertical rise (a quarter of the nodes) and two "
                   "burns. Single measurements, no repetitions."),
        "machine": info, "nodes": list(node_list), "fit_from_nodes": fit_from,
        "sx_build_limit_s": SX_BUILD_LIMIT, "points": points, "skipped": skipped,
        "fits": fits, "goal_exponent": GOAL_EXPONENT, "goals": goals, "plot": plot_name,
        "run_time_s": time.perf_counter() - start, "load_average_end": load_average(),
    }
    return finish("scaling", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
