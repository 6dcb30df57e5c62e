"""Trade-study scaling: a 40-point sweep of the small launcher's dynamic-pressure limit on
one and on two local worker processes, measured side by side in one run.

Each study runs in a fresh interpreter (``--point``), so both counts pay the same
start-up; the runs alternate (1, 2, 1, 2, ...) so that other load on the machine falls on
both. The speed-up is the ratio of the wall times of ``run_study`` (from the call to its return:
checking the points, starting the workers, solving, writing the rows), of the medians and
of the fastest runs: on a shared machine the fastest run is the one least disturbed by
other work (the reading the Python documentation gives for ``timeit``'s minimum). Between
the runs, :func:`parallel_capacity` measures how much CPU two processes could get at all.

Run: python tests/benchmarks/bench_study.py [--quick] [--repeats N]
Writes results/benchmarks/study.json (results/benchmarks/quick/ with --quick).
"""

from __future__ import annotations

import argparse
import collections
import multiprocessing
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


def _burn(loops: int) -> float:
    """Seconds for a pure-interpreter loop: CPU alone, no memory traffic, no threads."""
    t0 = time.perf_counter()
    total = 0
    for i in range(loops):
        total += i * i % 7
    return time.perf_counter() - t0


def parallel_capacity(loops: int = 4_000_000) -> dict:
    """How many cores' worth of work two processes get at this moment, against one.

    The same CPU-bound loop alone, then in two processes at once: the capacity is
    2 x (time alone) / (time of the pair). It is 2 on two idle cores and near 1 when
    other work on the machine leaves about one core free; no study can run faster on
    two workers than this allows.
    """
    alone = _burn(loops)
    with multiprocessing.get_context("spawn").Pool(2) as pool:
        t0 = time.perf_counter()
        pool.map(_burn, [loops, loops])
        pair = time.perf_counter() - t0
    return {"alone_s": alone, "pair_s": pair, "capacity": 2.0 * alone / pair,
            "load_average": load_average()}


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
    capacity = []
    for _ in range(repeats):
        capacity.append(parallel_capacity())
        print(f"two-process capacity: {capacity[-1]}", flush=True)
        for workers in (1, 2):
            answer = run_point(__file__, [str(workers), str(points)])
            print(f"workers {workers}: {answer}", flush=True)
            runs[workers].append(answer)
    capacity.append(parallel_capacity())
    walls = {w: [r.get("wall_time_s", float("nan")) for r in runs[w]] for w in runs}
    times = {w: median(walls[w]) for w in runs}
    fastest = {w: min(walls[w]) for w in runs}
    speedup = times[1] / times[2]
    best = fastest[1] / fastest[2]
    cap = median([c["capacity"] for c in capacity])
    goal = {"goal": f"a {points}-point study on 2 workers at least {GOAL_SPEEDUP} times as "
                    f"fast as on 1 worker",
            "met": bool(best >= GOAL_SPEEDUP),
            "evidence": f"fastest runs {fastest[1]:.2f} s on 1 worker, {fastest[2]:.2f} s on "
                        f"2 workers: {best:.2f}x (medians {times[1]:.2f} s and "
                        f"{times[2]:.2f} s: {speedup:.2f}x), while two processes got "
                        f"{cap:.2f} times the CPU of one (median of {len(capacity)} "
                        f"measurements between the runs; other work shared the machine)"}
    data = {"machine": machine_info(), "problem": "problems/small_launcher.yaml",
            "swept": "limits.max_dynamic_pressure", "bounds_kPa": BOUNDS_KPA[:points],
            "repeats": repeats, "runs": {str(w): runs[w] for w in runs},
            "median_wall_time_s": {str(w): times[w] for w in times},
            "speedup_2_over_1": speedup, "fastest_wall_time_s": {str(w): fastest[w]
                                                                  for w in fastest},
            "fastest_speedup_2_over_1": best, "two_process_capacity": capacity,
            "median_two_process_capacity": cap, "goals": [goal]}
    return finish("study", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
