"""What the exchange ratios add to a solve.

Run: ``python tests/benchmarks/bench_exchange.py`` (three examples, 5 repetitions) or
``python tests/benchmarks/bench_exchange.py --quick`` (one example, 2 repetitions). Writes
``results/benchmarks/exchange.json`` (``results/benchmarks/quick/`` for a quick run) and
regenerates the README there.

Each repetition is one fresh interpreter per example that, after one untimed solve (which
loads the solver plugins), times a cold solve (NLP cache cleared) in each mode, the order
alternating between repetitions:

* ``with``: ``solve(problem)`` as shipped (IPOPT's answer carries the parameter
  multipliers, ``calc_lam_p``), then ``result.exchange_ratios()``;
* ``without``: the same solve with the parameter multipliers switched off
  (``calc_lam_p`` False) and no exchange ratios computed.

The figure is the median over the pairs of (with / without - 1), wall clock and CPU: the
two solves of a pair run under the same load of a shared machine.
"""

from __future__ import annotations

import argparse
import sys
import time

from _common import emit_point, finish, load_average, machine_info, median, problem_path, run_point

EXAMPLES = ("small_launcher", "sounding_rocket", "medium_launcher")
QUICK_EXAMPLES = ("small_launcher",)
GOAL_FRACTION = 0.05


def _solve_once(name: str, mode: str) -> dict:
    from ascentplan.optimisation import nlp
    from ascentplan.pipeline import clear_cache, solve
    from ascentplan.problem.loader import load_problem

    # read when a solver is built; clear_cache() makes solve() build a new one
    nlp.IPOPT_OPTIONS["calc_lam_p"] = mode == "with"
    problem = load_problem(problem_path(name))
    clear_cache()
    t0, c0 = time.perf_counter(), time.process_time()
    result = solve(problem)
    ratios_s, count = 0.0, 0
    if mode == "with":
        t1 = time.perf_counter()
        count = len(result.exchange_ratios())
        ratios_s = time.perf_counter() - t1
    total_s, total_cpu_s = time.perf_counter() - t0, time.process_time() - c0
    return {"mode": mode, "status": result.status, "objective": result.objective_value,
            "iterations": result.iterations, "ratios_s": ratios_s, "total_s": total_s,
            "total_cpu_s": total_cpu_s, "exchange_ratios": count}


def _point(name: str, first: str) -> dict:
    """Both modes in one fresh interpreter, ``first`` first: a pair under the same load."""
    order = (first, "without" if first == "with" else "with")
    _solve_once(name, order[0])  # loads the solver plugins, so neither timed solve pays it
    runs = {mode: _solve_once(name, mode) for mode in order}
    return {"problem": name, "first": first, **{f"{m}_{k}": v for m, r in runs.items()
                                               for k, v in r.items() if k != "mode"}}


def _row(name: str, points: list[dict]) -> dict:
    ok = [p for p in points if "error" not in p]
    row = {"problem": name, "errors": [p["error"] for p in points if "error" in p],
           "pairs": len(ok)}
    for m in ("with", "without"):
        row[f"{m}_total_s"] = median([p[f"{m}_total_s"] for p in ok])
        row[f"{m}_total_cpu_s"] = median([p[f"{m}_total_cpu_s"] for p in ok])
        row[f"{m}_iterations"] = median([p[f"{m}_iterations"] for p in ok])
    row["ratios_s"] = median([p["with_ratios_s"] for p in ok])
    row["exchange_ratios"] = ok[0]["with_exchange_ratios"] if ok else 0
    row["status"] = ok[0]["with_status"] if ok else "error"
    row["objectives_equal"] = all(p["with_objective"] == p["without_objective"] for p in ok)
    # per pair, so that a change of the machine's load between pairs cancels
    row["added_fraction_wall"] = median([p["with_total_s"] / p["without_total_s"] - 1.0
                                         for p in ok])
    row["added_fraction_cpu"] = median([p["with_total_cpu_s"] / p["without_total_cpu_s"] - 1.0
                                        for p in ok])
    return row


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--repeats", type=int, default=None)
    parser.add_argument("--point", nargs=2, metavar=("PROBLEM", "FIRST"))
    args = parser.parse_args(argv)
    if args.point:
        emit_point(_point(*args.point))
        return 0
    examples = QUICK_EXAMPLES if args.quick else EXAMPLES
    repeats = args.repeats or (2 if args.quick else 5)
    t_run = time.perf_counter()
    data = {"machine": machine_info(), "repeats": repeats,
            "command": "python tests/benchmarks/bench_exchange.py"
                       + (" --quick" if args.quick else ""), "rows": []}
    for name in examples:
        points = []
        for k in range(repeats):
            first = "with" if k % 2 == 0 else "without"
            points.append(run_point(__file__, [name, first]))
            p = points[-1]
            print(f"{name} pair {k}: " + (p["error"] if "error" in p else
                  f"with {p['with_total_s']:.2f} s, without {p['without_total_s']:.2f} s"),
                  flush=True)
        data["rows"].append(_row(name, points))
    data["run_time_s"] = time.perf_counter() - t_run
    data["load_average_end"] = load_average()
    worst = max(max(r["added_fraction_wall"], r["added_fraction_cpu"]) for r in data["rows"])
    data["goals"] = [{
        "goal": f"exchange ratios add under {GOAL_FRACTION:.0%} to a solve",
        "met": bool(worst < GOAL_FRACTION),
        "evidence": "largest median added fraction over the pairs (wall or CPU): "
                    f"{worst:+.1%}; per problem " + ", ".join(
                        f"{r['problem']} {r['added_fraction_wall']:+.1%} wall, "
                        f"{r['added_fraction_cpu']:+.1%} CPU" for r in data["rows"]) + "."}]
    return finish("exchange", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
