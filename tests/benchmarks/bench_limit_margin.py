"""Cost of ``mesh.limit_margin`` on the examples: objective, replayed peaks, refinements, time.

Each example with limits is solved cold (empty NLP cache) at each margin, in this process,
one after another; the objective change against margin 0 is the price of keeping every
replayed peak within its bound. Writes ``results/benchmarks/limit_margin.json``
(``quick/`` with ``--quick``: two examples, two margins).

Run from the repository root: ``python tests/benchmarks/bench_limit_margin.py [--quick]``.
"""

from __future__ import annotations

import argparse
import json
import time
from dataclasses import replace

from _common import PROBLEMS, QUICK_RESULTS, RESULTS

from ascentplan import load_problem
from ascentplan.pipeline import clear_cache, solve

EXAMPLES = ("small_launcher", "medium_launcher", "sounding_rocket", "small_launcher_split",
            "medium_launcher_split")
MARGINS = (0.0, 0.005, 0.0075, 0.01)


def _run(name: str, margin: float) -> dict:
    problem = load_problem(PROBLEMS / f"{name}.yaml")
    problem = replace(problem, mesh=replace(problem.mesh, limit_margin=margin))
    clear_cache()
    t0 = time.perf_counter()
    result = solve(problem)
    wall = time.perf_counter() - t0
    return {"problem": name, "limit_margin": margin, "status": result.status,
            "objective": result.objective_value, "wall_time_s": wall,
            "mesh_refinements": result.mesh_refinements, "iterations": result.iterations,
            "peak_over_bound": {c.name: c.peak / c.bound for c in result.verification.limits}}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    args = parser.parse_args()
    examples = EXAMPLES[:2] if args.quick else EXAMPLES
    margins = (0.0, 0.0075) if args.quick else MARGINS
    rows = []
    for name in examples:
        base = None
        for margin in margins:
            row = _run(name, margin)
            if base is None:
                base = row["objective"]
            row["objective_change_fraction"] = (row["objective"] - base) / abs(base)
            rows.append(row)
            print(json.dumps(row), flush=True)
    folder = QUICK_RESULTS if args.quick else RESULTS
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "limit_margin.json").write_text(json.dumps({"rows": rows}, indent=2) + "\n")


if __name__ == "__main__":
    main()
