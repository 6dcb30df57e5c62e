"""Writing the results of a solve against the solve itself, per example problem.

Each example runs in a fresh interpreter (``--point``), as ``ascentplan solve`` does: the
problem is read, the drawing processes of the plots start (they import matplotlib, load
its fonts and make their figures while the problem is solved), then the solve (with the
split comparison and, where the file asks, the split map's re-solves), then the result
files (``summary.json``, the CSV files, every PNG and ``report.html``), timed apart; the
solve's time includes the start of the drawing processes and whatever their work took
from it. The split map's PNG is drawn by the solve in the command; here it is drawn
after the solve, in the main process, and counted with the outputs.

Run: python tests/benchmarks/bench_outputs.py [--quick] [--repeats N]
Writes results/benchmarks/outputs.json (results/benchmarks/quick/ with --quick).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from _common import (  # noqa: E402
    PROBLEMS,
    emit_point,
    finish,
    machine_info,
    median,
    run_point,
)

QUICK_EXAMPLES = ("goddard", "small_launcher")


#: whether a drawing process is used: as the verb decides (when a processor is idle),
#: always, or never (every figure drawn in the main process)
DRAWING_PROCESS = {"auto": None, "on": 1, "off": 0}


def _point(name: str, drawing: str = "auto") -> None:
    from ascentplan.output.plot_workers import PlotWorkers
    from ascentplan.pipeline import solve_problem, write_outputs
    from ascentplan.problem.loader import load_problem
    from ascentplan.problem.objectives import OBJECTIVE_SPECS

    problem = load_problem(PROBLEMS / f"{name}.yaml")
    # as the solve verb does: the drawing processes start just before the solve, and
    # their start is counted with the solve
    t0 = time.perf_counter()
    with PlotWorkers(problem, count=DRAWING_PROCESS[drawing]) as plotter:
        result = solve_problem(problem, out_dir=None)
        solve_s = time.perf_counter() - t0
        _write(name, problem, result, solve_s, plotter, write_outputs,
               OBJECTIVE_SPECS[problem.objective].unit)


def _write(name, problem, result, solve_s, plotter, write_outputs, unit) -> None:
    with tempfile.TemporaryDirectory() as folder:
        t0 = time.perf_counter()
        split = result.extra.get("mass_split", {}).get("map")
        if split:
            from ascentplan.output.plots import plot_split_map

            plot_split_map(split, folder, unit=unit, objective=problem.objective)
        written = write_outputs(result, folder, plotter=plotter)
        outputs_s = time.perf_counter() - t0
        pngs = sorted(p.name for p in Path(folder).glob("*.png"))
    emit_point({"example": name, "status": result.status, "solve_s": solve_s,
                "outputs_s": outputs_s, "files": len(written), "pngs": pngs,
                "drawing_processes": plotter.count})


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--quick", action="store_true", help="two examples, one repeat")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--drawing-process", choices=sorted(DRAWING_PROCESS), default="auto",
                        help="draw the plots in a drawing process as the solve verb decides "
                             "(auto), always (on) or never (off)")
    parser.add_argument("--point", nargs="+", metavar="EXAMPLE", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.point:
        _point(*args.point)
        return 0
    names = QUICK_EXAMPLES if args.quick else sorted(p.stem for p in PROBLEMS.glob("*.yaml"))
    repeats = 1 if args.quick else max(1, args.repeats)
    rows, goals = [], []
    for name in names:
        runs = [run_point(__file__, [name, args.drawing_process]) for _ in range(repeats)]
        failed = [r["error"] for r in runs if "error" in r]
        if failed:
            rows.append({"example": name, "error": failed[0]})
            print(f"{name}: {failed[0]}", flush=True)
            continue
        row = {"example": name, "status": runs[0]["status"], "pngs": runs[0]["pngs"],
               "solve_s": median([r["solve_s"] for r in runs]),
               "outputs_s": median([r["outputs_s"] for r in runs]),
               "drawing_process_runs": sum(r["drawing_processes"] for r in runs),
               "runs": runs}
        row["outputs_over_solve"] = row["outputs_s"] / row["solve_s"]
        rows.append(row)
        print(f"{name}: solve {row['solve_s']:.2f} s, outputs {row['outputs_s']:.2f} s "
              f"({len(row['pngs'])} PNG)", flush=True)
        goals.append({"goal": f"{name}: writing the outputs no slower than the solve",
                      "met": bool(row["outputs_s"] <= row["solve_s"]),
                      "evidence": f"median solve {row['solve_s']:.2f} s, outputs "
                                  f"{row['outputs_s']:.2f} s over {repeats} run(s)"})
    data = {"machine": machine_info(), "repeats": repeats, "examples": rows, "goals": goals,
            "drawing_process": args.drawing_process}
    return finish("outputs", data, args.quick)


if __name__ == "__main__":
    sys.exit(main())
