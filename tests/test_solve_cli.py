"""The solve verb end to end: a published benchmark through a problem file, the
infeasible case, the output files and the schedule that ``simulate`` flies back."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from ascentplan.cli import main
from ascentplan.pipeline import solve
from ascentplan.problem.loader import load_problem

PROBLEMS = Path(__file__).resolve().parent.parent / "problems"


def test_goddard_maximum_altitude():
    # Dolan, More, Munson, Benchmarking Optimization Software with COPS 3.0, ANL/MCS-TM-273
    # (2004), problem 10: optimal final altitude ratio h(tf)/h0 = 1.01283, here posed in SI
    # units through the problem file (the mapping is derived in its header)
    problem = load_problem(PROBLEMS / "goddard.yaml")
    result = solve(problem)
    assert result.status == "optimal", result.message
    ratio = (problem.planet.radius + result.solution.objective) / problem.planet.radius
    assert ratio == pytest.approx(1.01283, rel=1e-4)
    assert result.verification.passed
    # cost guard (SciPy-style): a regression in scaling shows up as many more iterations
    assert result.iterations < 200


def _infeasible_file(tmp_path):
    # the invented sounding rocket with a 1 kPa dynamic-pressure bound and a throttle that
    # cannot go below 80 %, burning to depletion: even minimum throttle passes 1 kPa a few
    # seconds after liftoff (a motor allowed to shut down early could instead stop at once
    # and stay under the bound, a feasible if useless flight)
    text = (PROBLEMS / "sounding_rocket.yaml").read_text()
    text = text.replace("max_dynamic_pressure: 50 kPa", "max_dynamic_pressure: 1 kPa")
    text = text.replace("throttle: {min: 0.4, max: 1.0}",
                        "throttle: {min: 0.8, max: 1.0}\n      shutdown: at_depletion")
    assert "1 kPa" in text and "min: 0.8" in text and "at_depletion" in text
    path = tmp_path / "infeasible.yaml"
    path.write_text(text)
    return path


def test_infeasible_limit_is_a_status_with_exit_code_3(tmp_path, capsys):
    out = tmp_path / "out"
    status = main(["solve", str(_infeasible_file(tmp_path)), "--out", str(out)])
    captured = capsys.readouterr()
    assert status == 3
    assert "Traceback" not in captured.out + captured.err
    summary = json.loads((out / "summary.json").read_text())
    assert summary["status"] == "infeasible"
    assert "max_dynamic_pressure" in summary["message"]
    assert summary["verification"]["passed"] is False
    # the partial result is written
    for name in ("trajectory.csv", "schedule.csv", "report.html"):
        assert (out / name).exists(), name
    assert "infeasible" in captured.out


def test_solve_outputs_and_schedule_round_trip(tmp_path):
    out = tmp_path / "sounding"
    path = PROBLEMS / "sounding_rocket.yaml"
    assert main(["solve", str(path), "--out", str(out)]) == 0
    summary = json.loads((out / "summary.json").read_text())
    # the stable keys documented in the README
    assert set(summary) >= {"status", "message", "objective", "burnout", "limits",
                            "verification", "stages", "solver", "caution"}
    assert set(summary["objective"]) >= {"name", "value", "unit"}
    assert set(summary["burnout"]) == {"time_s", "altitude_m", "speed_m_s",
                                       "flight_path_angle_deg", "mass_kg"}
    for lim in summary["limits"]:
        assert set(lim) >= {"name", "bound", "unit", "peak", "active", "shadow_price",
                            "shadow_price_unit"}
    assert set(summary["verification"]) >= {"passed", "burnout_speed_difference_m_s",
                                            "burnout_altitude_difference_m",
                                            "burnout_speed_tolerance_m_s",
                                            "burnout_altitude_tolerance_m",
                                            "worst_limit_excess_fraction", "target_met"}
    for lim in summary["limits"]:
        assert set(lim) >= {"excess_fraction", "tolerance_fraction", "margin_fraction",
                            "within_bound", "passed"}
    assert set(summary["target_miss"]) == {"passed", "conditions", "circular_orbit"}
    # the apogee is replayed from the flight itself
    assert summary["objective"]["independently_replayed"] is True
    assert set(summary["solver"]) >= {"iterations", "wall_time_s", "nodes", "mesh_refinements"}
    for name in ("altitude.png", "dynamic_pressure.png", "throttle.png", "overview.png"):
        assert (out / name).stat().st_size > 10_000
    # simulate flies the handed-on schedule back to the same burnout (same integrator,
    # same interpolation: agreement to integration tolerance)
    again = tmp_path / "again"
    assert main(["simulate", str(path), "--schedule", str(out / "schedule.csv"),
                 "--out", str(again)]) == 0
    flown = json.loads((again / "summary.json").read_text())
    assert flown["burnout"]["speed_m_s"] == pytest.approx(summary["burnout"]["speed_m_s"],
                                                          rel=1e-7)
    assert flown["burnout"]["altitude_m"] == pytest.approx(summary["burnout"]["altitude_m"],
                                                           rel=1e-7)


def test_solve_bad_file_exits_2_without_traceback(tmp_path):
    bad = tmp_path / "bad.yaml"
    bad.write_text((PROBLEMS / "sounding_rocket.yaml").read_text().replace(
        "propellant_mass: 850 kg", "propellant_mass: -850 kg"))
    run = subprocess.run([sys.executable, "-m", "ascentplan", "solve", str(bad)],
                         capture_output=True, text=True, timeout=120)
    assert run.returncode == 2
    assert "Traceback" not in run.stdout + run.stderr
    assert "propellant_mass" in run.stderr


def test_report_verb_on_a_folder_without_summary_exits_2(tmp_path, capsys):
    assert main(["report", str(tmp_path)]) == 2
    captured = capsys.readouterr()
    assert "summary.json" in captured.err and "Traceback" not in captured.err


def test_split_verb_prints_the_rocket_equation_split(capsys):
    # the verb prints the split of ascentplan.staging (checked against Curtis and SciPy in
    # test_staging.py): its total ideal velocity increment, with the caution; an option
    # that does not fit the mode exits 2
    from ascentplan.problem.loader import load_problem as load
    from ascentplan.staging.rocket_equation import split_for_vehicle

    assert main(["split", str(PROBLEMS / "medium_launcher.yaml")]) == 0
    out = capsys.readouterr().out
    assert "liftoff mass held" in out and "Caution" in out
    total = split_for_vehicle(load(PROBLEMS / "medium_launcher.yaml").vehicle).total_delta_v
    assert f"{total:.1f} m/s" in out
    assert main(["split", str(PROBLEMS / "medium_launcher.yaml"), "--delta-v", "9000"]) == 2


def test_split_map_zero_switches_off_the_map_the_file_asks_for(tmp_path):
    # a command-line option overrides the file, 0 included (common practice)
    text = (PROBLEMS / "small_launcher_split.yaml").read_text(encoding="utf-8")
    assert "map_points: 9" in text
    text = "\n".join(line for line in text.split("\n") if not line.startswith("mesh:"))
    path = tmp_path / "split.yaml"
    path.write_text(text + "\nmesh: {nodes_per_phase: 12, max_refinements: 0}\n",
                    encoding="utf-8")
    out = tmp_path / "out"
    status = main(["solve", str(path), "--out", str(out), "--split-map", "0"])
    assert status in (0, 1)
    assert (out / "summary.json").exists() and not (out / "split_map.png").exists()
