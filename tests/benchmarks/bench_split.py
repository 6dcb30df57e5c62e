"""Coupled stage-mass split solve-plus-verify time beside the fixed-split solve of the same
vehicles (the two- and three-stage split examples).

Run: python tests/benchmarks/bench_split.py [--quick]
Writes results/benchmarks/split.json and split.md (results/benchmarks/quick/ with
--quick) and regenerates the README there.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from dataclasses import replace
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent.parent
sys.path.insert(0, str(HERE))

from _common import machine_info, write_readme  # noqa: E402

from ascentplan.pipeline import clear_cache, solve  # noqa: E402
from ascentplan.problem.loader import load_problem  # noqa: E402
from ascentplan.staging.coupled import solve_with_split_comparison  # noqa: E402

CASES = ("small_launcher_split.yaml", "medium_launcher_split.yaml")


def _time_fixed(problem):
    clear_cache()
    t0 = time.perf_counter()
    r = solve(replace(problem, mass_split=None))
    return time.perf_counter() - t0, r


def _time_coupled(problem):
    clear_cache()
    t0 = time.perf_counter()
    r = solve_with_split_comparison(replace(problem, mass_split=replace(
        problem.mass_split, map_points=0)))
    return time.perf_counter() - t0, r


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--quick", action="store_true", help="one repeat instead of three")
    args = parser.parse_args(argv)
    repeats = 1 if args.quick else 3
    rows = []
    for name in CASES:
        problem = load_problem(ROOT / "problems" / name)
        fixed_times, coupled_times = [], []
        for _ in range(repeats):
            tf, rf = _time_fixed(problem)
            tc, rc = _time_coupled(problem)
            fixed_times.append(tf)
            coupled_times.append(tc)
        info = rc.extra["mass_split"]
        rows.append({
            "problem": name, "stages": len(problem.vehicle.stages),
            "fixed_split_wall_time_s": statistics.median(fixed_times),
            "fixed_split_status": rf.status, "fixed_split_objective": rf.solution.objective,
            "coupled_wall_time_s": statistics.median(coupled_times),
            "coupled_status": rc.status, "coupled_objective": rc.solution.objective,
            "rocket_equation_split_flown_objective": info["rocket_equation_split_flown_objective"],
            "objective_unit": info["objective_unit"],
            "note": "coupled time includes flying the rocket-equation split optimally "
                    "(two solves, each with its first-guess simulation and replay)",
        })
        print(f"{name}: fixed {rows[-1]['fixed_split_wall_time_s']:.2f} s, coupled "
              f"{rows[-1]['coupled_wall_time_s']:.2f} s", flush=True)
    data = {"benchmark": "split", "machine": machine_info(), "repeats": repeats,
            "date": time.strftime("%Y-%m-%d"), "rows": rows,
            "command": "python tests/benchmarks/bench_split.py"}
    out = ROOT / "results" / "benchmarks"
    if args.quick:
        out = out / "quick"
    out.mkdir(parents=True, exist_ok=True)
    (out / "split.json").write_text(json.dumps(data, indent=2) + "\n")
    lines = ["# Stage-mass split: coupled against fixed-split solve time", "",
             f"Measured {data['date']}, median of {repeats} cold runs (NLP cache cleared); "
             f"regenerate with `{data['command']}`.", "",
             "| problem | stages | fixed split [s] | coupled split [s] | fixed objective | "
             "rocket-equation split flown | coupled objective | unit |",
             "|---|---|---|---|---|---|---|---|"]
    for r in rows:
        lines.append(f"| {r['problem']} | {r['stages']} | {r['fixed_split_wall_time_s']:.2f} | "
                     f"{r['coupled_wall_time_s']:.2f} | {r['fixed_split_objective']:.2f} | "
                     f"{r['rocket_equation_split_flown_objective']:.2f} | "
                     f"{r['coupled_objective']:.2f} | {r['objective_unit']} |")
    lines += ["", "The fixed split is the vehicle as written; the coupled time includes "
              "flying the rocket-equation split optimally first (its result seeds the "
              "coupled solve)."]
    (out / "split.md").write_text("\n".join(lines) + "\n")
    write_readme(out)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
