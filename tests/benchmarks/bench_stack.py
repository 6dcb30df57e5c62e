"""Vehicle stacks: a four-phase booster ascent (vertical rise, boosters beside the core, the
core alone, the upper stage) and the full booster example, cold solve-and-verify time at 40
nodes per phase, one fresh interpreter per repetition (imports excluded).

    python tests/benchmarks/bench_stack.py [--quick]

Writes results/benchmarks/stack.json (quick: results/benchmarks/quick/) and regenerates
the README there. Goal: the four-phase booster ascent solved and verified in under 1.5 s.
"""

from __future__ import annotations

import sys
import time

from _common import (
    count_ipopt,
    emit_point,
    finish,
    load_average,
    machine_info,
    median,
    problem_path,
    run_point,
)

PROBLEM = "booster_launcher"
GOAL_SECONDS = 1.5


def _problem(variant: str):
    """The booster example, or its four-phase variant: the ground-lit pair only and no
    fairing (rise, boosters with the core, the core alone, the upper stage)."""
    import yaml

    from ascentplan.problem.loader import problem_from_dict

    doc = yaml.safe_load(problem_path(PROBLEM).read_text())
    if variant == "four_phase":
        doc["name"] = "booster-four-phase"
        doc["vehicle"].pop("fairing")
        doc["vehicle"]["stages"][0]["boosters"] = doc["vehicle"]["stages"][0]["boosters"][:1]
        doc["vehicle"]["stages"][0]["propellant_mass"] = "175 t"
    return problem_from_dict(doc)


def _point(variant: str) -> None:
    from ascentplan import solve
    from ascentplan.problem.plan import phase_plan

    problem = _problem(variant)
    counters = count_ipopt()
    cpu, wall = time.process_time(), time.perf_counter()
    result = solve(problem)
    emit_point({"variant": variant, "phases": len(phase_plan(problem)),
                "wall_time_s": time.perf_counter() - wall,
                "cpu_time_s": time.process_time() - cpu, "status": result.status,
                "iterations": result.iterations, "objective_kg": result.objective_value,
                "verified": bool(result.verification.passed), **counters})


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    if argv and argv[0] == "--point":
        _point(argv[1])
        return 0
    quick = "--quick" in argv
    repetitions = 1 if quick else 3
    started = time.perf_counter()
    data = {"command": "python tests/benchmarks/bench_stack.py", "problem": PROBLEM,
            "machine": machine_info(), "load_average_start": load_average(), "rows": []}
    for variant in ("four_phase", "full"):
        runs = []
        for _ in range(repetitions):
            row = run_point(__file__, [variant], timeout=900.0)
            print(row, flush=True)
            runs.append(row)
        ok = [r for r in runs if "error" not in r]
        summary = dict(ok[-1]) if ok else {"variant": variant, "error": runs[-1].get("error")}
        for key in ("wall_time_s", "cpu_time_s"):
            if ok:
                summary[key] = median([r[key] for r in ok])
        summary["repetitions"] = len(runs)
        data["rows"].append(summary)
    data["load_average_end"] = load_average()
    data["run_time_s"] = time.perf_counter() - started
    four = data["rows"][0]
    met = bool("error" not in four and four["status"] == "optimal"
               and four["wall_time_s"] < GOAL_SECONDS)
    data["goals"] = [{
        "goal": f"a four-phase booster ascent at 40 nodes per phase solved and verified in "
                f"under {GOAL_SECONDS} s, cold, imports excluded", "met": met,
        "evidence": ("no result" if "error" in four else
                     f"median {four['wall_time_s']:.2f} s wall, {four['cpu_time_s']:.2f} s CPU "
                     f"over {four['repetitions']} fresh processes, {four['iterations']} "
                     f"iterations, status {four['status']}")}]
    return finish("stack", data, quick)


if __name__ == "__main__":
    raise SystemExit(main())
