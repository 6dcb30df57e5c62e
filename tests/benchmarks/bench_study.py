"""Trade-study scaling: a 40-point sweep of the small launcher's dynamic-pressure limit on
one and on two local worker processes, measured side by side in one run.

Each study runs in a fresh interpreter (``--point``), so both counts pay the same
start-up; the runs alternate (1, 2, 1, 2, ...) so that other load on the machine falls on
both. The speed-up is the ratio of the median wall times of ``run_study`` (from the call to
its return: checking the points, starting the workers, solving, writing the rows).

Run: python tests/benchmarks/bench_study.py [--quick] [--repeats N]
Writes results/benchmarks/study.json (results/benchmarks/quick/ with --quick).
"""

from __future__ import annotations

import argparse
import collections
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from _common import (  # noqa: E402
    emit_point,
    finish,
    load_average,
    machine_info,
    median,
    problem_path,
    run_point,
)

#: the speed-up goal of two workers over one on a two-core machine
GOAL_SPEEDUP = 1.7
#: the swept bounds [kPa]: 40 points from 25 to 44.5 kPa
BOUNDS_KPA = [25.0 + 0.5 * k for k in range(40)]


def _point(workers: int, points: int) -> None:
    """One study in this fresh interpreter; prints its timings as the marked line."""
    from ascentplan.study.runner import run_study
    from ascentplan.study.spec import limit_sweep

    # bounds with their unit: a bare number would be read in SI units (Pa)
    study = limit_sweep(str(problem_path("small_launcher")), "max_dynamic_pressure",
                        [f"{bound} kPa" for bound in BOUNDS_KPA[:points]])
    with tempfile.TemporaryDirectory() as folder:
        t0 = time.perf_counter()
        rows = run_study(study, Path(folder) / "study", workers=workers, progress=False)
        wall = time.perf_counter() - t0
    per_worker = collections.defaultdict(list)
    for row in rows:
        per_worker[row["worker"]].append(row["wall_time_s"])
    emit_point({
        "workers": workers, "points": len(rows), "wall_time_s": wall,
        "optimal": sum(r["status"] == "optimal" for r in rows),
        "warm_started": sum(bool(r.get("warm_started")) for r in rows),
        "points_per_worker": sorted(len(v) for v in per_worker.values()),
        "solve_time_per_worker_s": sorted(round(sum(v), 3) for v in per_worker.values()),
        "sum_point_time_s": sum(r["wall_time_s"] for r in rows),
        "load_average_after": load_average(),
    })


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--quick", action="store_true", help="10 points, one repeat")
    parser.add_argument("--repeats", type=int, default=2, help="runs of each worker count")
    parser.add_argument("--point", nargs=2, type=int, metavar=("WORKERS", "POINTS"),
                        help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.point:
        _point(*args.point)
        return 0
    points = 10 if args.quick else len(BOUNDS_KPA)
    repeats = 1 if args.quick else max(1, args.repeats)
    runs = {1: [], 2: []}
    for _ in range(repeats):
        for workers in (1, 2):
            answer = run_point(__file__, [str(workers), str(points)])
            print(f"workers {workers}: {answer}", flush=True)
            runs[workers].append(answer)
    times = {w: median([r.get("wall_time_s", float("nan")) for r in runs[w]]) for w in runs}
    speedup = times[1] / times[2]
    goal = {"goal": f"a {points}-point study on 2 workers at least {GOAL_SPEEDUP} times as "
                    f"fast as on 1 worker",
            "met": bool(speedup >= GOAL_SPEEDUP),
            "evidence": f"median wall time {times[1]:.2f} s on 1 worker, {times[2]:.2f} s on "
                        f"2 workers: {speedup:.2f}x"}
    data = {"machine": machine_info(), "problem": "problems/small_launcher.yaml",
            "swept": "limits.max_dynamic_pressure", "bounds_kPa": BOUNDS_KPA[:points],
            "repeats": repeats, "runs": {str(w): runs[w] for w in runs},
            "median_wall_time_s": {str(w): times[w] for w in times},
            "speedup_2_over_1": speedup, "goals": [goal]}
    return finish("study", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
