"""Shared pieces of the optimiser benchmarks: machine record, point runs, JSON and README."""

from __future__ import annotations

import datetime as _dt
import json
import math
import os
import platform
import subprocess
import sys
from importlib import metadata
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
PROBLEMS = ROOT / "problems"
RESULTS = ROOT / "results" / "benchmarks"
#: a smoke run writes here so that it never overwrites the figures of a full run
QUICK_RESULTS = RESULTS / "quick"

#: marks the one stdout line of a point subprocess that carries its JSON answer
POINT_MARK = "BENCHMARK-POINT "


def problem_path(name: str) -> Path:
    return PROBLEMS / f"{name}.yaml"


def _cpu_model() -> str:
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.lower().startswith("model name"):
                return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


def _version(name: str) -> str:
    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "not installed"


def machine_info() -> dict:
    """Versions, processor, core count and load: what a timing depends on."""
    try:
        usable = len(os.sched_getaffinity(0))
    except AttributeError:
        usable = os.cpu_count()
    info = {
        "date": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "python": platform.python_version(),
        "implementation": platform.python_implementation(),
        "platform": platform.platform(),
        "cpu": _cpu_model(),
        "cpu_count": os.cpu_count(),
        "usable_cpus": usable,
        "packages": {name: _version(name) for name in
                     ("ascentplan", "casadi", "numpy", "scipy", "matplotlib")},
    }
    # other work on a small machine skews timings; the load says how much there was
    info["load_average_1_5_15_min"] = load_average()
    return info


def load_average() -> list | None:
    """The 1, 5 and 15 minute load averages, where the system reports them."""
    if hasattr(os, "getloadavg"):
        return [round(x, 2) for x in os.getloadavg()]
    return None


def emit_point(data: dict) -> None:
    """Print a point's answer as the one marked JSON line its parent reads."""
    print(POINT_MARK + json.dumps(data), flush=True)


def run_point(script: str, args: list[str], timeout: float = 900.0) -> dict:
    """Run ``script --point args...`` in a fresh interpreter and return its JSON answer.

    A fresh process per point gives a cold state (no built solvers, no loaded solver
    plugins) and a peak resident size of that point alone.
    """
    cmd = [sys.executable, script, "--point", *args]
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout,
                              cwd=str(ROOT))
    except subprocess.TimeoutExpired:
        return {"error": f"timed out after {timeout:.0f} s"}
    for line in reversed(proc.stdout.splitlines()):
        if line.startswith(POINT_MARK):
            return json.loads(line[len(POINT_MARK):])
    tail = (proc.stderr or proc.stdout).strip().splitlines()[-5:]
    return {"error": f"exit code {proc.returncode}: " + " | ".join(tail)}


def count_ipopt() -> dict:
    """A dict that IPOPT's own wall-time counters (``t_wall_nlp_*``, ``t_wall_total``),
    summed over every solve from now on, and the last NLP's size (``variables``) and build
    time (``build_s``) are written into (wraps ``AscentNLP.solve`` in this process)."""
    from ascentplan.optimisation import nlp as nlp_module

    counters: dict = {}
    own_solve = nlp_module.AscentNLP.solve

    def counted(self, *args, **kwargs):
        out = own_solve(self, *args, **kwargs)
        for key, value in self.solver.stats().items():
            if key.startswith("t_wall_nlp") or key == "t_wall_total":
                counters[key] = counters.get(key, 0.0) + float(value)
        counters["variables"] = int(self.w.shape[0])
        counters["build_s"] = float(self.build_time)
        return out

    nlp_module.AscentNLP.solve = counted
    return counters


def median(values):
    values = sorted(v for v in values if v is not None and not math.isnan(v))
    if not values:
        return float("nan")
    n = len(values)
    mid = n // 2
    return values[mid] if n % 2 else 0.5 * (values[mid - 1] + values[mid])


def write_result(name: str, data: dict, quick: bool) -> Path:
    """Write ``<name>.json`` with the machine record, then regenerate the README."""
    out_dir = QUICK_RESULTS if quick else RESULTS
    out_dir.mkdir(parents=True, exist_ok=True)
    path = out_dir / f"{name}.json"
    path.write_text(json.dumps(data, indent=2) + "\n")
    write_readme(out_dir)
    return path


# ----------------------------------------------------------------- README tables

def _f(value, digits=4):
    """A table cell: about ``digits`` significant figures, no exponent above 1e-3."""
    if value is None:
        return "-"
    if isinstance(value, str):
        return value
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    if math.isnan(value):
        return "-"
    size = abs(value)
    if size == 0:
        return "0"
    if size < 1e-3:
        return f"{value:.2e}"
    decimals = max(0, digits - 1 - math.floor(math.log10(size)))
    return f"{value:.{decimals}f}"


def _table(header, rows):
    lines = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    lines += ["| " + " | ".join(_f(c) for c in row) + " |" for row in rows]
    return lines


def _machine_lines(data):
    m = data.get("machine", {})
    pk = m.get("packages", {})
    load = m.get("load_average_1_5_15_min")
    return [
        f"Run {m.get('date', '?')} on {m.get('cpu', '?')}, {m.get('usable_cpus', '?')} usable "
        f"of {m.get('cpu_count', '?')} CPUs, {m.get('platform', '?')}; Python "
        f"{m.get('python', '?')}, CasADi {pk.get('casadi', '?')}, NumPy {pk.get('numpy', '?')}, "
        f"SciPy {pk.get('scipy', '?')}"
        + (f"; load average at start {load[0]} / {load[1]} / {load[2]} (1 / 5 / 15 min)"
           if load else "") + ".",
        f"Wall time of the whole run: {_f(data.get('run_time_s'))} s"
        + (f"; load average at the end {data['load_average_end'][0]} (1 min)"
           if data.get("load_average_end") else "") + ".",
        "",
    ]


def _goal_lines(goals):
    lines = []
    for g in goals:
        verdict = "met" if g["met"] else "NOT met"
        lines.append(f"- **Goal: {g['goal']}** — {verdict}. {g['evidence']}")
    return lines + [""]


def _examples_section(data):
    lines = ["## Solve-plus-verify time of the example problems", "",
             f"Regenerate: `{data['command']}`", ""] + _machine_lines(data)
    lines += [data.get("method", ""), ""]
    header = ["problem", "nodes", "status", "iterations", "objective", "cold solve() [s]",
              "its CPU [s]", "deferred import [s]",
              "first guess [s]", "build [s]", "NLP solve [s]", "replay + verify [s]",
              "sum of parts [s]", "rebuild solve() [s]", "cached re-solve [s]",
              "import [s]", "peak RSS [MB]"]
    rows = []
    for e in data["examples"]:
        m = e["median"]
        rows.append([e["problem"], e["nodes"], e["status"], e["iterations"],
                     f"{e['objective']:.6g} {e['objective_unit']}", m["cold_solve_s"],
                     m.get("cold_solve_cpu_s"), m.get("deferred_import_s"),
                     m["first_guess_s"], m["build_s"], m["nlp_solve_s"],
                     m["replay_verify_s"], m["sum_of_parts_s"], m["rebuild_solve_s"],
                     m["cached_solve_s"], m["import_s"], m["peak_rss_mb"]])
    lines += _table(header, rows) + [""]
    lines += ["Medians over the repetitions; each repetition runs in fresh processes.", ""]
    lines += ["Where the IPOPT solve time goes (IPOPT's own wall-time counters, medians):", ""]
    rows = []
    for e in data["examples"]:
        t = {k: median([r["parts"]["ipopt_wall_times_s"].get(k, float("nan"))
                        for r in e["repetitions"]])
             for k in ("t_wall_total", "t_wall_nlp_hess_l", "t_wall_nlp_jac_g",
                       "t_wall_nlp_g", "t_wall_nlp_grad_f", "t_wall_nlp_f")}
        evaluations = sum(v for k, v in t.items() if k != "t_wall_total")
        rows.append([e["problem"], e["variables"], e["constraints"], t["t_wall_total"],
                     t["t_wall_nlp_hess_l"], t["t_wall_nlp_jac_g"],
                     t["t_wall_nlp_g"] + t["t_wall_nlp_grad_f"] + t["t_wall_nlp_f"],
                     t["t_wall_total"] - evaluations])
    lines += _table(["problem", "variables", "constraints", "IPOPT total [s]",
                     "Hessian evaluations [s]", "Jacobian evaluations [s]",
                     "other evaluations [s]", "IPOPT itself and MUMPS [s]"], rows) + [""]
    lines += _goal_lines(data.get("goals", []))
    return lines


def _scaling_section(data):
    lines = ["## Time and memory against mesh size", "",
             f"Regenerate: `{data['command']}`", ""] + _machine_lines(data)
    lines += [data.get("method", ""), ""]
    header = ["problem", "symbolic", "nodes", "variables", "iterations", "status",
              "first guess [s]", "build [s]", "NLP solve [s]", "replay + verify [s]",
              "total [s]", "peak RSS [MB]", "peak traced Python [MB]"]
    rows = []
    for p in data["points"]:
        if "error" in p:
            rows.append([p["problem"], p["symbolic"], p["nodes"], "-", "-", p["error"]]
                        + ["-"] * 7)
            continue
        rows.append([p["problem"], p["symbolic"], p["nodes"], p["variables"], p["iterations"],
                     p["status"], p["first_guess_s"], p["build_s"], p["nlp_solve_s"],
                     p["replay_verify_s"], p["total_s"], p["peak_rss_mb"],
                     p.get("traced_python_peak_mb")])
    lines += _table(header, rows) + [""]
    if data.get("skipped"):
        lines += ["Skipped points:", ""]
        lines += [f"- {s['problem']} {s['symbolic']} at {s['nodes']} nodes per phase: "
                  f"{s['reason']}" for s in data["skipped"]]
        lines += [""]
    fits = data.get("fits", [])
    if fits:
        lines += ["Growth exponents (least squares of log time on log nodes over the points "
                  "listed):", ""]
        lines += _table(["problem", "symbolic", "nodes fitted", "total", "build", "NLP solve",
                         "iterations", "NLP solve per iteration"],
                        [[f["problem"], f["symbolic"], ", ".join(str(n) for n in f["nodes"]),
                          f["total_exponent"], f["build_exponent"], f["solve_exponent"],
                          f["iterations_exponent"], f.get("solve_per_iteration_exponent")]
                         for f in fits]) + [""]
    if data.get("plot"):
        lines += [f"![time against nodes]({data['plot']})", ""]
    lines += _goal_lines(data.get("goals", []))
    return lines


def _baseline_section(data):
    lines = ["## Collocation against a single-shooting baseline", "",
             f"Regenerate: `{data['command']}`", ""] + _machine_lines(data)
    lines += [data.get("method", ""), ""]
    header = ["method", "wall time [s]", "iterations", "trajectory integrations",
              "status", "burnout speed, optimiser [m/s]", "burnout speed, verified [m/s]",
              "peak q, verified [kPa]", "q bound [kPa]", "q excess [%]"]
    rows = []
    for r in data["methods"]:
        rows.append([r["method"], r["wall_time_s"], r["iterations"], r.get("integrations"),
                     r["status"], f"{r['objective_m_s']:.3f}",
                     f"{r['verified_objective_m_s']:.3f}", f"{r['verified_peak_q_kpa']:.3f}",
                     r["q_bound_kpa"], f"{r['q_excess_percent']:+.3f}"])
    lines += _table(header, rows) + [""]
    ratio = data.get("ratio", {})
    if ratio:
        lines += [f"Wall-time ratio baseline / ascentplan: {_f(ratio.get('median'))} against "
                  f"the median ascentplan solve, {_f(ratio.get('slowest'))} against the "
                  f"slowest (the first in the process). Verified burnout speed, ascentplan "
                  f"minus baseline: {_f(ratio.get('objective_difference_m_s'))} m/s.", ""]
    lines += _goal_lines(data.get("goals", []))
    return lines


def _split_section(data):
    lines = ["## Stage-mass split: coupled against fixed-split solve time", "",
             f"Regenerate: `{data['command']}`", "",
             f"Run {data['date']}; median of {data['repeats']} cold runs (NLP cache "
             "cleared). The fixed split is the vehicle as written; the coupled time includes "
             "flying the rocket-equation split optimally first (its result seeds the coupled "
             "solve).", "",
             "| problem | stages | fixed split [s] | coupled split [s] | fixed objective | "
             "rocket-equation split flown | coupled objective | unit | coupled status |",
             "|---|---|---|---|---|---|---|---|---|"]
    for r in data["rows"]:
        lines.append(f"| {r['problem']} | {r['stages']} | {r['fixed_split_wall_time_s']:.2f} | "
                     f"{r['coupled_wall_time_s']:.2f} | {r['fixed_split_objective']:.2f} | "
                     f"{r['rocket_equation_split_flown_objective']:.2f} | "
                     f"{r['coupled_objective']:.2f} | {r['objective_unit']} | "
                     f"{r['coupled_status']} |")
    return lines + [""]


def _memory_section(data):
    lines = ["## Memory over many solves in one process", "",
             f"Regenerate: `{data['command']}`", ""] + _machine_lines(data)
    lines += [f"{data['solves']} solves of the {data['problem']} example in one interpreter, "
              f"the NLP cache cleared every {data['rebuild_every']} solves; resident set size "
              "sampled after every solve.", ""]
    lines += _table(["solves", "RSS after warm-up [MB]", "RSS at the end [MB]",
                     "max RSS [MB]", "growth", "wall time [s]"],
                    [[data["solves"], _f(data["rss_after_warmup_mb"]), _f(data["rss_end_mb"]),
                      _f(data["rss_max_mb"]), f"{data['growth_fraction']:+.1%}",
                      _f(data["wall_time_s"])]])
    return lines + [""] + _goal_lines(data.get("goals", []))


def _exchange_section(data):
    lines = ["## Exchange ratios: what they add to a solve", "",
             f"Regenerate: `{data['command']}`", ""] + _machine_lines(data)
    lines += [f"{data['repeats']} pairs of cold solves per problem, each pair in a fresh "
              "interpreter: `solve()` plus `exchange_ratios()` as shipped, against `solve()` "
              "with IPOPT's parameter multipliers switched off (`calc_lam_p` False) and no "
              "ratios computed; times are medians, the added fractions medians over the pairs.",
              ""]
    lines += _table(["problem", "status", "ratios", "with [s]", "without [s]", "added (wall)",
                     "with CPU [s]", "without CPU [s]", "added (CPU)", "conversion [s]"],
                    [[r["problem"], r["status"], r["exchange_ratios"], r["with_total_s"],
                      r["without_total_s"], f"{r['added_fraction_wall']:+.1%}",
                      r["with_total_cpu_s"], r["without_total_cpu_s"],
                      f"{r['added_fraction_cpu']:+.1%}", r["ratios_s"]]
                     for r in data["rows"]])
    return lines + [""] + _goal_lines(data.get("goals", []))


def _three_dimensional_section(data):
    lines = ["## Three-dimensional transfer-orbit example against mesh size", "",
             f"Regenerate: `{data['command']}`", ""] + _machine_lines(data)
    lines += ["Cold `solve()` in fresh interpreters (imports excluded), no mesh refinement, on "
              "problems/medium_launcher_transfer.yaml; wall and CPU times are medians over "
              f"{data.get('repetitions', 1)} fresh process(es) per point; IPOPT's counters, of "
              "the median run, summed over its solves (a failed first try and its fallback "
              "included; "
              "above 40 nodes per phase the solve on 40 that starts the fine mesh included; "
              "variables and build time are the final NLP's).",
              ""]
    lines += _table(["nodes", "variables", "status", "iterations", "payload [kg]",
                     "wall [s]", "CPU [s]", "build [s]", "IPOPT [s]", "Hessian [s]",
                     "Jacobian [s]"],
                    [[r["nodes"], r.get("variables", "-"), r.get("status", r.get("error")),
                      r.get("iterations", "-"), r.get("objective_kg", "-"),
                      r.get("wall_time_s", "-"), r.get("cpu_time_s", "-"),
                      r.get("build_s", "-"), r.get("t_wall_total", "-"),
                      r.get("t_wall_nlp_hess_l", "-"), r.get("t_wall_nlp_jac_g", "-")]
                     for r in data["points"]])
    return lines + [""] + _goal_lines(data.get("goals", []))


def _stack_section(data):
    lines = ["## Vehicle stacks: booster ascents", "", f"Regenerate: `{data['command']}`",
             ""] + _machine_lines(data)
    lines += ["Cold `solve()` in fresh interpreters (imports excluded), 40 nodes per phase, "
              "medians over the repetitions: the four-phase variant of "
              "problems/booster_launcher.yaml (ground-lit pair only, no fairing: vertical rise, "
              "boosters with the core, the core alone, the upper stage) and the example itself "
              "(two booster pairs and a heat-flux fairing: six phases).", ""]
    lines += _table(["variant", "phases", "variables", "status", "verified", "iterations",
                     "payload [kg]", "wall [s]", "CPU [s]", "build [s]", "IPOPT [s]",
                     "Hessian [s]"],
                    [[r.get("variant"), r.get("phases", "-"), r.get("variables", "-"),
                      r.get("status", r.get("error")), r.get("verified", "-"),
                      r.get("iterations", "-"), r.get("objective_kg", "-"),
                      r.get("wall_time_s", "-"), r.get("cpu_time_s", "-"),
                      r.get("build_s", "-"), r.get("t_wall_total", "-"),
                      r.get("t_wall_nlp_hess_l", "-")] for r in data["rows"]])
    return lines + [""] + _goal_lines(data.get("goals", []))


def _study_section(data):
    lines = ["## Trade study on one and two workers", "",
             "Regenerate: `python tests/benchmarks/bench_study.py`", ""] + _machine_lines(data)
    lines += [f"A {len(data['bounds_kPa'])}-point sweep of `{data['swept']}` of "
              f"`{data['problem']}`, each study in a fresh interpreter, 1 and 2 workers "
              f"alternating, {data['repeats']} run(s) each; wall time of `run_study`.", ""]
    rows = []
    for workers, runs in data["runs"].items():
        for r in runs:
            rows.append([workers, _f(r.get("wall_time_s")), r.get("optimal"),
                         r.get("warm_started"),
                         *(", ".join(map(str, r.get(k) or [])) for k in (
                             "points_per_worker", "solve_time_per_worker_s",
                             "load_average_after"))])
    lines += _table(["workers", "wall time [s]", "optimal", "warm-started",
                     "points per worker", "point time per worker [s]", "load after"], rows)
    lines += ["", f"Speed-up of 2 workers over 1: {data['speedup_2_over_1']:.2f}x of the "
                  f"median wall times, {data.get('fastest_speedup_2_over_1', float('nan')):.2f}x"
                  f" of the fastest runs. Two processes of a CPU-bound loop got "
                  f"{data.get('median_two_process_capacity', float('nan')):.2f} times the "
                  f"CPU of one at the time (the most any two-worker run could gain).", ""]
    return lines + _goal_lines(data.get("goals", []))


def _outputs_section(data):
    lines = ["## Writing the results of a solve", "",
             "Regenerate: `python tests/benchmarks/bench_outputs.py`", ""] + _machine_lines(data)
    lines += [f"Each example in a fresh interpreter, {data['repeats']} run(s), medians: the "
              "solve (with the split comparison and map where the file asks) against writing "
              "summary.json, the CSV files, every PNG and report.html. Drawing process: "
              f"{data.get('drawing_process', 'auto')} (auto: started, as the solve verb does, "
              "only when a processor was idle; the last column counts the runs that had one)."
              "", ""]
    lines += _table(["example", "status", "PNG files", "solve [s]", "outputs [s]",
                     "outputs / solve", "runs with a drawing process"],
                    [[r["example"], r.get("status", r.get("error")), len(r.get("pngs", [])),
                      _f(r.get("solve_s")), _f(r.get("outputs_s")),
                      _f(r.get("outputs_over_solve")),
                      r.get("drawing_process_runs", "-")] for r in data["examples"]])
    return lines + [""] + _goal_lines(data.get("goals", []))


_SECTIONS = (("examples.json", _examples_section), ("scaling.json", _scaling_section),
             ("baseline.json", _baseline_section), ("split.json", _split_section),
             ("memory.json", _memory_section), ("exchange.json", _exchange_section),
             ("3d.json", _three_dimensional_section),
             ("study.json", _study_section), ("outputs.json", _outputs_section),
             ("stack.json", _stack_section))


def finish(name: str, data: dict, quick: bool) -> int:
    """Write a benchmark's JSON (and the README), print where and each goal's verdict."""
    path = write_result(name, data, quick)
    print(f"wrote {path}")
    for g in data.get("goals", []):
        print(("MET: " if g["met"] else "NOT MET: ") + g["goal"] + ". " + g["evidence"])
    return 0


def write_readme(out_dir: Path = RESULTS) -> Path:
    """Render ``README.md`` in ``out_dir`` from the benchmark JSON files found there."""
    lines = ["# ascentplan optimiser benchmarks", "",
             "Generated from the JSON files beside this file by `write_readme()` in "
             "`tests/benchmarks/_common.py` (`python tests/benchmarks/_common.py` "
             "regenerates it alone). Every figure is a measurement of the run named in its "
             "section; timings are wall-clock seconds on the machine stated there.", ""]
    found = False
    for file_name, section in _SECTIONS:
        path = out_dir / file_name
        if path.exists():
            found = True
            lines += section(json.loads(path.read_text()))
    if not found:
        lines += ["No benchmark results yet.", ""]
    readme = out_dir / "README.md"
    readme.write_text("\n".join(lines).rstrip() + "\n")
    return readme


def main(argv=None) -> int:
    quick = "--quick" in (argv if argv is not None else sys.argv[1:])
    print(write_readme(QUICK_RESULTS if quick else RESULTS))
    return 0


if __name__ == "__main__":
    sys.exit(main())
