"""Memory of one long-lived process over many solves: does it stay flat?

Run: ``python tests/benchmarks/bench_memory.py`` (1,000 solves) or ``--quick`` (150).
Writes ``results/benchmarks/memory.json`` (``quick/`` for a quick run) and regenerates the
README there.

One interpreter solves the Goddard example (``problems/goddard.yaml``, optimise, replay,
verify) again and again, as a sweep worker or a notebook does, with the NLP cache cleared
every ``REBUILD_EVERY`` solves so that NLP construction and release are exercised too.
The resident set size (current, from ``/proc/self/statm``; not the peak) is sampled after
every solve. Goal: under 10 % growth from the end of the warm-up (the first 10 % of the
solves) to the end.
"""

from __future__ import annotations

import argparse
import gc
import os
import sys
import time

from _common import finish, machine_info, problem_path

GOAL_GROWTH = 0.10
REBUILD_EVERY = 50


def _rss_mb() -> float:
    with open("/proc/self/statm") as handle:
        pages = int(handle.read().split()[1])
    return pages * os.sysconf("SC_PAGE_SIZE") / 2**20


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--solves", type=int, default=None)
    args = parser.parse_args(argv)
    solves = args.solves or (150 if args.quick else 1000)
    warmup = max(1, solves // 10)

    from ascentplan import load_problem, solve
    from ascentplan.pipeline import clear_cache

    problem = load_problem(problem_path("goddard"))
    samples, statuses = [], {}
    t0 = time.perf_counter()
    for i in range(solves):
        if i % REBUILD_EVERY == 0:
            clear_cache()
        result = solve(problem)
        statuses[result.status] = statuses.get(result.status, 0) + 1
        del result
        if i % 10 == 9:
            gc.collect()
        samples.append(_rss_mb())
        if (i + 1) % 100 == 0:
            print(f"{i + 1}/{solves} solves: RSS {samples[-1]:.1f} MB", flush=True)
    wall = time.perf_counter() - t0
    base = samples[warmup - 1]
    end = samples[-1]
    growth = (end - base) / base
    data = {
        "benchmark": "memory",
        "command": "python tests/benchmarks/bench_memory.py" + (" --quick" if args.quick else ""),
        "machine": machine_info(),
        "problem": "goddard", "solves": solves, "warmup_solves": warmup,
        "rebuild_every": REBUILD_EVERY, "statuses": statuses,
        "rss_after_warmup_mb": base, "rss_end_mb": end, "rss_max_mb": max(samples),
        "rss_min_after_warmup_mb": min(samples[warmup - 1:]),
        "growth_fraction": growth, "wall_time_s": wall, "run_time_s": wall,
        "rss_every_10_mb": samples[9::10],
        "goals": [{
            "goal": f"memory flat over {solves} solves in one process (under "
                    f"{GOAL_GROWTH:.0%} growth after the warm-up)",
            "met": bool(growth < GOAL_GROWTH),
            "evidence": (f"RSS {base:.1f} MB after {warmup} solves, {end:.1f} MB after "
                         f"{solves} ({growth:+.1%}); max {max(samples):.1f} MB; statuses "
                         f"{statuses}; {wall:.0f} s"),
        }],
    }
    return finish("memory", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
