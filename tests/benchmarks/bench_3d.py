"""Three-dimensional transfer-orbit example: cold solve-and-verify time against nodes per
phase, in a fresh interpreter per point (imports excluded).

    python tests/benchmarks/bench_3d.py [--quick]

Writes results/benchmarks/three_dimensional.json (quick: results/benchmarks/quick/).
Goal: 40 nodes per phase solved and verified in under 1.5 s; growth no worse than x^1.2.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
PROBLEM = ROOT / "problems" / "medium_launcher_transfer.yaml"

_POINT = r"""
import json, sys, time
from dataclasses import replace
from ascentplan import load_problem, solve
problem = load_problem(sys.argv[1])
problem = replace(problem, mesh=replace(problem.mesh, nodes_per_phase=int(sys.argv[2]),
                                        max_refinements=0))
t0 = time.perf_counter()
result = solve(problem)
print(json.dumps({"nodes": int(sys.argv[2]), "wall_time_s": time.perf_counter() - t0,
                  "status": result.status, "iterations": result.iterations,
                  "objective": result.objective_value}))
"""


def main(argv=None) -> int:
    quick = "--quick" in (argv or sys.argv[1:])
    nodes = [20, 40] if quick else [20, 40, 80]
    rows = []
    for n in nodes:
        out = subprocess.run([sys.executable, "-c", _POINT, str(PROBLEM), str(n)],
                             capture_output=True, text=True, check=True).stdout
        rows.append(json.loads(out.strip().splitlines()[-1]))
        print(rows[-1], flush=True)
    slope = None
    if len(rows) >= 2:
        slope = float(np.polyfit(np.log([r["nodes"] for r in rows]),
                                 np.log([r["wall_time_s"] for r in rows]), 1)[0])
    folder = ROOT / "results" / "benchmarks" / ("quick" if quick else "")
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "three_dimensional.json").write_text(json.dumps(
        {"problem": PROBLEM.name, "points": rows, "growth_exponent": slope}, indent=2))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
