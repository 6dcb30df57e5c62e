"""Robustness of the automatic first guess: the fraction of a grid of orbit targets that
the three-dimensional transfer-orbit example's vehicle reaches, optimal and verified,
from the problem file alone (no hand-made guess), on a coarse mesh.

    python tests/benchmarks/bench_3d_grid.py [--quick] [--nodes N]
    python tests/benchmarks/bench_3d_grid.py --plot   # payload against inclination


Grid: low circular (200 km), higher circular (800 km) and the 200 x 35,786 km transfer
orbit; inclinations from just above the site latitude (38.6 deg N) to polar and
retrograde; northerly and southerly azimuths. Each point in a fresh interpreter. Writes
results/benchmarks/3d_grid.json (quick: results/benchmarks/quick/).
"""

from __future__ import annotations

import itertools
import json
import sys
import time

from _common import emit_point, load_average, machine_info, problem_path, run_point

PROBLEM = "medium_launcher_transfer"
ORBITS = {
    "circular_200km": {"circular_orbit_altitude": "200 km"},
    "circular_800km": {"circular_orbit_altitude": "800 km"},
    "transfer_200x35786km": {"perigee_altitude": "200 km", "apogee_altitude": "35786 km"},
}
INCLINATIONS_DEG = (40.0, 55.0, 90.0, 98.0, 120.0)
DIRECTIONS = ("northerly", "southerly")


def _point(orbit: str, inclination: float, direction: str, nodes: int) -> None:
    import yaml

    from ascentplan import problem_from_dict, solve

    doc = yaml.safe_load(problem_path(PROBLEM).read_text())
    doc["target"] = {**ORBITS[orbit], "inclination": f"{inclination} deg"}
    doc["launch"]["direction"] = direction
    doc["mesh"] = {**doc.get("mesh", {}), "nodes_per_phase": nodes}
    wall = time.perf_counter()
    result = solve(problem_from_dict(doc))
    emit_point({"orbit": orbit, "inclination_deg": inclination, "direction": direction,
                "status": result.status, "iterations": result.iterations,
                "payload_kg": result.objective_value,
                "wall_time_s": time.perf_counter() - wall})


def plot_payload(path=None) -> None:
    """Payload against inclination per orbit and azimuth branch, from 3d_grid.json (the
    study of the grid's optimal points), written beside it as 3d_payload_inclination.png."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from _common import RESULTS

    path = RESULTS / "3d_grid.json" if path is None else path
    data = json.loads(path.read_text())
    fig, ax = plt.subplots(figsize=(7.0, 4.5))
    for orbit, direction in itertools.product(ORBITS, DIRECTIONS):
        rows = [r for r in data["points"] if r["orbit"] == orbit
                and r["direction"] == direction and r.get("status") == "optimal"]
        ax.plot([r["inclination_deg"] for r in rows], [r["payload_kg"] / 1e3 for r in rows],
                "o-" if direction == "northerly" else "s--",
                label=f"{orbit.replace('_', ' ')}, {direction}")
    ax.set_xlabel("inclination [deg]")
    ax.set_ylabel("payload [t]")
    ax.set_title(f"{data['problem']}: payload against inclination (site 38.6 deg N, "
                 f"{data['nodes_per_phase']} nodes per phase)", fontsize=9)
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(path.with_name("3d_payload_inclination.png"), dpi=100)


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    if argv and argv[0] == "--plot":
        plot_payload()
        return 0
    if argv and argv[0] == "--point":
        _point(argv[1], float(argv[2]), argv[3], int(argv[4]))
        return 0
    quick = "--quick" in argv
    nodes = int(argv[argv.index("--nodes") + 1]) if "--nodes" in argv else 15
    inclinations = INCLINATIONS_DEG[::2] if quick else INCLINATIONS_DEG
    rows = []
    for orbit, inc, direction in itertools.product(ORBITS, inclinations, DIRECTIONS):
        row = run_point(__file__, [orbit, str(inc), direction, str(nodes)], timeout=600.0)
        row.update(orbit=orbit, inclination_deg=inc, direction=direction)
        rows.append(row)
        print(row, flush=True)
    ok = [r for r in rows if r.get("status") == "optimal"]
    data = {"command": "python tests/benchmarks/bench_3d_grid.py", "problem": PROBLEM,
            "nodes_per_phase": nodes, "machine": machine_info(), "points": rows,
            "converged": len(ok), "total": len(rows),
            "fraction_converged": len(ok) / len(rows), "load_average_end": load_average()}
    from _common import QUICK_RESULTS, RESULTS

    out = (QUICK_RESULTS if quick else RESULTS) / "3d_grid.json"
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(data, indent=2) + "\n")
    print(f"wrote {out}: {len(ok)} of {len(rows)} optimal and verified")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
