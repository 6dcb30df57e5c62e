"""Trade studies: limit sweeps, dispersions, resume, failed points, local and Dask runs."""

from __future__ import annotations

import csv
import json
import shutil
from dataclasses import replace

import numpy as np
import pytest
from cases import vertical_q_problem, vertical_q_yaml

from ascentplan.constants import G0
from ascentplan.problem.loader import load_problem
from ascentplan.study.sweep import (
    STUDY_CSV,
    STUDY_JSON,
    STUDY_JSONL,
    Study,
    StudyError,
    apply_changes,
    dispersion,
    limit_sweep,
    run_study,
    summarise_study,
    sweep_command,
    sweep_slopes,
)

# Invented vehicle: the single-stage throttleable rocket of cases.vertical_q_problem, as a
# file (studies send workers a path), on a coarse mesh to keep each solve well under 1 s.
PROBLEM_YAML = vertical_q_yaml("vertical-q-study")

BOUNDS_KPA = ["20 kPa", "25 kPa", "30 kPa", "35 kPa"]
KEY = "limits.max_dynamic_pressure"


@pytest.fixture(scope="module")
def problem_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("problem") / "vertical_q.yaml"
    path.write_text(PROBLEM_YAML, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def sweep_run(problem_file, tmp_path_factory):
    """The 4-point max-q sweep on two local worker processes (run once, shared)."""
    out = tmp_path_factory.mktemp("sweep")
    study = limit_sweep(problem_file, "max_dynamic_pressure", BOUNDS_KPA)
    rows = run_study(study, out, workers=2, progress=True)
    return study, out, rows


def _jsonl(path):
    return [json.loads(line) for line in path.read_text().splitlines() if line.strip()]


def _csv(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


# --- limit sweep ------------------------------------------------------------------------

def test_limit_sweep_points_are_si_values(problem_file):
    study = limit_sweep(problem_file, "max_dynamic_pressure", ["20 kPa", 25000.0])
    assert study.points == [{KEY: 20000.0}, {KEY: 25000.0}]
    with pytest.raises(StudyError, match="max_dynamic_presure.*did you mean "
                                         "'max_dynamic_pressure'"):
        limit_sweep(problem_file, "max_dynamic_presure", ["20 kPa"])
    with pytest.raises(StudyError, match=r"values\[1\].*pressure.*'5 g0'"):
        limit_sweep(problem_file, "max_dynamic_pressure", ["20 kPa", "5 g0"])


def test_limit_sweep_rows_in_order_optimal_and_objective_non_decreasing(sweep_run):
    study, out, rows = sweep_run
    assert [r["index"] for r in rows] == [0, 1, 2, 3]
    assert [r[KEY] for r in rows] == [20e3, 25e3, 30e3, 35e3]
    assert all(r["status"] == "optimal" and r["verified"] and r["error"] is None
               for r in rows)
    assert all(r["objective_unit"] == "m/s" and r["run"] == 1 for r in rows)
    # the limit binds at each bound: the optimiser holds it mesh.limit_margin (0.75 %)
    # inside, and the replayed peak lies within the verification tolerance
    # (mesh.limit_tolerance_fraction, 0.5 %) of that, never above the bound
    margin = load_problem(study.problem_path).mesh.limit_margin
    for r in rows:
        assert r["max_dynamic_pressure.active"]
        ratio = r["max_dynamic_pressure.peak"] / r["max_dynamic_pressure.bound"]
        assert 1.0 - margin - 5e-3 <= ratio <= 1.0
    # a larger feasible set cannot lower the optimum (common practice)
    objectives = [r["objective"] for r in rows]
    assert all(b >= a for a, b in zip(objectives, objectives[1:]))
    # the burnout speed is the objective (both in m/s)
    for r in rows:
        assert r["burnout_speed_m_s"] == pytest.approx(r["objective"], rel=1e-3)
    # every row was written to both files as it finished; the study is described
    assert sorted(r["index"] for r in _jsonl(out / STUDY_JSONL)) == [0, 1, 2, 3]
    table = _csv(out / STUDY_CSV)
    assert sorted(int(r["index"]) for r in table) == [0, 1, 2, 3]
    # every column of a quantity names its unit, the limit's user unit (kPa, not Pa)
    assert "max_dynamic_pressure.shadow_price [m/s per kPa]" in table[0]
    assert [float(r["limits.max_dynamic_pressure [kPa]"]) for r in
            sorted(table, key=lambda r: int(r["index"]))] == [20.0, 25.0, 30.0, 35.0]
    meta = json.loads((out / STUDY_JSON).read_text())
    assert meta["points"] == study.points and len(meta["problem_sha256"]) == 64


def test_finite_difference_slope_agrees_with_shadow_prices(sweep_run):
    _, _, rows = sweep_run
    slopes = sweep_slopes(rows)
    assert len(slopes) == 3
    for s, (a, b) in zip(slopes, zip(rows, rows[1:])):
        # independent of sweep_slopes: objective difference over bound difference in kPa
        slope = (b["objective"] - a["objective"]) / ((b[KEY] - a[KEY]) / 1000.0)
        assert s["slope"] == pytest.approx(slope, rel=1e-12)
        # d(objective)/d(bound) from the NLP multipliers against the finite
        # difference. The objective need not be concave in the bound, so the slope need not
        # lie between the two end prices; require it within 30 % of their mean
        mean_price = 0.5 * (a["max_dynamic_pressure.shadow_price"]
                            + b["max_dynamic_pressure.shadow_price"])
        assert mean_price > 0.0
        assert abs(slope / mean_price - 1.0) < 0.30
    text = summarise_study(rows)
    assert "4 points: 4 optimal" in text and "slope from previous" in text
    assert f"{slopes[0]['slope']:.5g}" in text


# --- resume -----------------------------------------------------------------------------

def test_resume_solves_only_the_missing_point(sweep_run, tmp_path):
    study, out, rows = sweep_run
    folder = tmp_path / "resumed"
    shutil.copytree(out, folder)
    # an interrupted study: the row that finished last is missing from both files
    lines = (folder / STUDY_JSONL).read_text().splitlines(keepends=True)
    lost = json.loads(lines[-1])["index"]
    (folder / STUDY_JSONL).write_text("".join(lines[:-1]))
    csv_lines = (folder / STUDY_CSV).read_text().splitlines(keepends=True)
    (folder / STUDY_CSV).write_text("".join(csv_lines[:-1]))

    again = run_study(study, folder, workers=1, progress=False)
    assert [r["index"] for r in again] == [0, 1, 2, 3]
    # only the missing point was solved by this run (run 2); the others are read back
    assert [r["index"] for r in again if r["run"] == 2] == [lost]
    for old, new in zip(rows, again):
        if new["index"] != lost:
            assert new == old
    # solved cold instead of warm-started: the same optimum to the mesh error (about 2e-5)
    assert again[lost]["objective"] == pytest.approx(rows[lost]["objective"], rel=1e-3)
    assert sorted(r["index"] for r in _jsonl(folder / STUDY_JSONL)) == [0, 1, 2, 3]
    assert sorted(int(r["index"]) for r in _csv(folder / STUDY_CSV)) == [0, 1, 2, 3]
    # nothing left to do: no worker is started, nothing is appended
    before = (folder / STUDY_JSONL).read_text()
    assert run_study(study, folder, workers=1, progress=False) == again
    assert (folder / STUDY_JSONL).read_text() == before


def test_resume_refuses_a_folder_of_another_study(sweep_run, problem_file, tmp_path):
    _, out, _ = sweep_run
    folder = tmp_path / "other"
    shutil.copytree(out, folder)
    other = limit_sweep(problem_file, "max_dynamic_pressure", ["21 kPa", "25 kPa"])
    with pytest.raises(StudyError, match="row 0 was computed for"):
        run_study(other, folder, workers=1, progress=False)


def test_truncated_last_line_is_dropped_and_solved_again(sweep_run, tmp_path):
    study, out, rows = sweep_run
    folder = tmp_path / "cut"
    shutil.copytree(out, folder)
    text = (folder / STUDY_JSONL).read_text()
    lost = json.loads(text.splitlines()[-1])["index"]
    (folder / STUDY_JSONL).write_text(text[:-40])  # cut inside the last row
    again = run_study(study, folder, workers=1, progress=False)
    assert [r["index"] for r in again if r["run"] == 2] == [lost]
    assert len(_jsonl(folder / STUDY_JSONL)) == 4


# --- dispersion -------------------------------------------------------------------------

def test_dispersion_reproducible_from_seed(problem_file):
    spreads = {"vehicle.stages[0].thrust_vacuum": ("normal", 0.02),
               "vehicle.stages[0].dry_mass": ("uniform", 0.05)}
    a = dispersion(problem_file, spreads, samples=50, seed=7)
    b = dispersion(problem_file, spreads, samples=50, seed=7)
    c = dispersion(problem_file, spreads, samples=50, seed=8)
    assert a.points == b.points
    assert a.points != c.points
    # more samples keep the first ones (an extended study resumes); point 0 is the nominal
    longer = dispersion(problem_file, spreads, samples=80, seed=7)
    assert len(a.points) == 51 and longer.points[:51] == a.points
    assert a.points[0] == {"vehicle.stages[0].thrust_vacuum": 90e3,
                           "vehicle.stages[0].dry_mass": 400.0}
    # a key's draws do not depend on the other keys
    alone = dispersion(problem_file, {"vehicle.stages[0].dry_mass": ("uniform", 0.05)},
                       samples=50, seed=7)
    assert [p["vehicle.stages[0].dry_mass"] for p in alone.points] == \
        [p["vehicle.stages[0].dry_mass"] for p in a.points]
    dry = np.array([p["vehicle.stages[0].dry_mass"] for p in a.points])
    assert np.all(np.abs(dry / 400.0 - 1.0) <= 0.05)


def test_dispersion_spread_matches_requested_sigma(problem_file):
    n = 4000
    study = dispersion(problem_file, {"vehicle.stages[0].thrust_vacuum": ("normal", 0.02)},
                       samples=n, seed=1)
    rel = np.array([p["vehicle.stages[0].thrust_vacuum"] for p in study.points]) / 90e3 - 1
    # sampling error of a standard deviation is sigma / sqrt(2 n) (common practice);
    # allow 5 of those, and 5 sigma / sqrt(n) for the mean
    assert abs(rel.std(ddof=1) / 0.02 - 1.0) < 5.0 / np.sqrt(2 * n)
    assert abs(rel.mean()) < 5.0 * 0.02 / np.sqrt(n)


def test_dispersion_bad_arguments(problem_file):
    with pytest.raises(StudyError, match="unknown kind 'gauss'"):
        dispersion(problem_file, {"vehicle.payload_mass": ("gauss", 0.1)}, 3, 0)
    with pytest.raises(StudyError, match="samples: expected a whole number >= 1, got 0"):
        dispersion(problem_file, {"vehicle.payload_mass": ("normal", 0.1)}, 0, 0)
    with pytest.raises(StudyError, match="vehicle.payload_mas.*did you mean 'payload_mass'"):
        dispersion(problem_file, {"vehicle.payload_mas": ("normal", 0.1)}, 3, 0)


# --- changes ----------------------------------------------------------------------------

def test_unknown_key_gives_clear_error(problem_file, tmp_path):
    problem = load_problem(problem_file)
    with pytest.raises(StudyError, match=r"limits.max_dynamc_pressure: unknown key.*did you "
                                         r"mean 'max_dynamic_pressure'"):
        apply_changes(problem, {"limits.max_dynamc_pressure": 3e4})
    with pytest.raises(StudyError, match=r"vehicle.stages\[2\].dry_mass: index 2 is out of "
                                         r"range"):
        apply_changes(problem, {"vehicle.stages[2].dry_mass": 300.0})
    with pytest.raises(StudyError, match="vehicle.stages\\[0\\].name: is not a number"):
        apply_changes(problem, {"vehicle.stages[0].name": 1.0})
    # a study with an unknown key stops before anything is solved or written
    study = Study(problem_file, [{KEY: 3e4}, {"vehicle.stage[0].dry_mass": 300.0}])
    with pytest.raises(StudyError, match=r"points\[1\]: vehicle.stage\[0\].dry_mass: unknown "
                                         r"key.*did you mean 'stages'"):
        run_study(study, tmp_path / "never", workers=1, progress=False)
    assert not (tmp_path / "never" / STUDY_JSONL).exists()


def test_changes_apply_in_si_and_derived_masses_follow():
    problem = vertical_q_problem(max_q=30e3)
    changed = apply_changes(problem, {KEY: 25e3, "vehicle.payload_mass": 150.0,
                                      "vehicle.stages[0].thrust_vacuum": 95e3,
                                      "mesh.nodes_per_phase": 30.0})
    assert changed.limits.max_dynamic_pressure == 25e3
    assert changed.vehicle.payload_mass == 150.0
    assert changed.vehicle.stages[0].thrust_vacuum == 95e3
    assert changed.mesh.nodes_per_phase == 30 and isinstance(changed.mesh.nodes_per_phase, int)
    assert problem.limits.max_dynamic_pressure == 30e3  # the original is untouched
    # a stage given by its structural ratio keeps it; one given by thrust-to-weight keeps it
    stage = replace(problem.vehicle.stages[0], structural_ratio=0.1, thrust_to_weight=2.5)
    ratio_problem = replace(problem, vehicle=replace(problem.vehicle, stages=(stage,)))
    new = apply_changes(ratio_problem, {"vehicle.stages[0].propellant_mass": 2700.0})
    s = new.vehicle.stages[0]
    assert s.dry_mass == pytest.approx(0.1 / 0.9 * 2700.0, rel=1e-12)
    assert s.thrust_vacuum == pytest.approx(2.5 * G0 * new.vehicle.liftoff_mass, rel=1e-12)
    with pytest.raises(StudyError, match=r"dry_mass: must be > 0 kg, got -50.0"):
        apply_changes(problem, {"vehicle.stages[0].dry_mass": -50.0})
    with pytest.raises(StudyError, match="thrust-to-weight is 0.58"):
        apply_changes(problem, {"vehicle.stages[0].thrust_vacuum": 20e3})


# --- failures ---------------------------------------------------------------------------

def test_worker_failure_becomes_failed_row(problem_file, monkeypatch):
    # a point that raises inside its worker (a solver fault, made here by running the
    # worker's function in this process) becomes a failed row and the others go on
    import ascentplan.pipeline
    from ascentplan.study.files import file_digest
    from ascentplan.study.worker import solve_chunk

    solve = ascentplan.pipeline.solve

    def faulty(problem, **options):
        if problem.limits.max_dynamic_pressure == 32e3:
            raise RuntimeError("the solver stopped")
        return solve(problem, **options)

    monkeypatch.setattr(ascentplan.pipeline, "solve", faulty)
    path = str(problem_file.resolve())
    rows = solve_chunk(path, file_digest(path), [(0, {KEY: 30e3}), (1, {KEY: 32e3}),
                                                 (2, {KEY: 35e3})], run=1)
    assert [r["status"] for r in rows] == ["optimal", "failed", "optimal"]
    assert rows[1]["error"] == "RuntimeError: the solver stopped"
    assert "Traceback" in rows[1]["traceback"]
    assert rows[0]["error"] is None and rows[2]["error"] is None
    # the point after the failure is solved cold, not from the failed point
    assert rows[2]["warm_started"] is False
    text = summarise_study(rows)
    # a limit sweep's table: the failed point is counted and listed, the slopes skip it
    assert "3 points: 2 optimal, 1 failed (1 raised an error" in text


def test_refused_value_stops_the_study_before_any_worker(problem_file, tmp_path,
                                                         monkeypatch):
    from ascentplan.study import runner

    def no_worker(*args, **kwargs):
        raise AssertionError("a worker was started")

    monkeypatch.setattr(runner, "LocalPool", no_worker)
    study = Study(problem_file, [{KEY: 30e3}, {"vehicle.stages[0].dry_mass": -50.0},
                                 {KEY: 35e3}])
    with pytest.raises(StudyError, match=r"points\[1\] \(vehicle.stages\[0\].dry_mass = "
                                         r"-50.0\): vehicle.stages\[0\].dry_mass: must be "
                                         r"> 0 kg, got -50.0"):
        run_study(study, tmp_path / "never", workers=1, progress=False)
    assert not (tmp_path / "never").exists()


def test_sweep_command_exit_status_and_output(problem_file, tmp_path, capsys):
    out = tmp_path / "cli"
    # a value the loader refuses: exit status 2 naming point, key and value; nothing run
    status = sweep_command(str(problem_file), limit="max_dynamic_pressure",
                           values=["30 kPa", "-5 kPa"], workers=1, out=str(out),
                           progress=False)
    err = capsys.readouterr().err
    assert status == 2
    assert ("points[1] (limits.max_dynamic_pressure = -5000.0): "
            "limits.max_dynamic_pressure: must be > 0 kPa, got -5000.0") in err
    assert not out.exists()
    # text the unit parser cannot read: a message naming the value, never a traceback
    assert sweep_command(str(problem_file), limit="max_dynamic_pressure",
                         values=["30 kPa/0"], workers=1, out=str(out), progress=False) == 2
    err = capsys.readouterr().err
    assert "values[0]" in err and "30 kPa/0" in err and "Traceback" not in err
    assert not out.exists()
    status = sweep_command(str(problem_file), limit="max_dynamic_pressure",
                           values=["30 kPa"], workers=1, out=str(out), progress=False)
    printed = capsys.readouterr().out
    assert status == 0
    assert [r["error"] for r in _jsonl(out / STUDY_JSONL)] == [None]
    assert "1 points: 1 optimal" in printed
    assert str(out / STUDY_CSV) in printed and "Caution" in printed
    # bad input is exit status 2 with the argument named, and nothing is run
    assert sweep_command(str(problem_file), limit="max_q", values=["30 kPa"],
                         out=str(tmp_path / "bad"), progress=False) == 2
    assert "unknown limit 'max_q'" in capsys.readouterr().err
    assert sweep_command(str(problem_file), dispersion=["vehicle.payload_mass=normal"],
                         samples=3, out=str(tmp_path / "bad"), progress=False) == 2
    assert "KEY=KIND:SPREAD" in capsys.readouterr().err
    assert not (tmp_path / "bad").exists()


# --- Dask -------------------------------------------------------------------------------

def test_dask_cluster_gives_the_local_results(sweep_run, tmp_path):
    distributed = pytest.importorskip("distributed")
    study, _, local = sweep_run
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=":0", silence_logs=40) as cluster:
        rows = run_study(study, tmp_path / "dask", scheduler=cluster.scheduler_address,
                         progress=False)
    assert [r["index"] for r in rows] == [0, 1, 2, 3]
    # the same chunks (two workers either way), hence the same warm starts and solves
    for a, b in zip(local, rows):
        assert b["status"] == a["status"] == "optimal"
        assert b["objective"] == pytest.approx(a["objective"], rel=1e-9)
        assert b["max_dynamic_pressure.shadow_price"] == pytest.approx(
            a["max_dynamic_pressure.shadow_price"], rel=1e-6)
    assert sorted(r["index"] for r in _jsonl(tmp_path / "dask" / STUDY_JSONL)) == [0, 1, 2, 3]


def test_sweep_verb_runs_through_the_command_line(problem_file, tmp_path, capsys):
    # the CLI front door: a bad limit name exits 2 without a traceback; a good sweep exits 0
    # and writes the study files
    from ascentplan.cli import main

    out = tmp_path / "cli"
    assert main(["sweep", str(problem_file), "--limit", "max_dynamic_presure", "--values",
                 "30 kPa", "--out", str(out)]) == 2
    assert "Traceback" not in capsys.readouterr().err
    status = main(["sweep", str(problem_file), "--limit", "max_dynamic_pressure", "--values",
                   "30 kPa", "40 kPa", "--workers", "1", "--out", str(out), "--quiet"])
    assert status == 0
    assert (out / "study.csv").exists() and (out / "study.jsonl").exists()
    assert "max_dynamic_pressure" in capsys.readouterr().out


def test_problem_built_in_code_keeps_its_drag_scale_in_a_study():
    # a problem built in code is written as a document and read back by the loader: every
    # input survives, the drag-coefficient scale of drag trades included (common practice:
    # a round trip through the file format loses nothing)
    from ascentplan.problem.loader import problem_from_dict
    from ascentplan.study.problem_file import problem_document

    problem = vertical_q_problem(max_q=30e3)
    scaled = replace(problem, aerodynamics=replace(problem.aerodynamics, drag_scale=1.1))
    assert problem_from_dict(problem_document(scaled)).aerodynamics.drag_scale == 1.1
