"""Results as pandas DataFrames: the trajectory, the schedule and study rows, with the
columns and values of the CSV files the tool writes (read back by pandas itself)."""

from __future__ import annotations

import builtins
import json
import math
from dataclasses import replace

import numpy as np
import pytest
from cases import vertical_q_problem

from ascentplan.output.files import write_schedule_csv, write_trajectory_csv
from ascentplan.problem.model import phase_plan
from ascentplan.replay.schedule import PhaseControls, PhaseSchedule
from ascentplan.replay.simulate import simulate
from ascentplan.study.files import StudyFiles
from ascentplan.study.frames import study_frame

pd = pytest.importorskip("pandas")


@pytest.fixture(scope="module")
def flight():
    problem = vertical_q_problem(max_q=40e3)
    return problem, simulate(problem)


def test_trajectory_frame_equals_the_csv_file(flight, tmp_path):
    problem, trajectory = flight
    frame = trajectory.to_dataframe()
    path = tmp_path / "trajectory.csv"
    write_trajectory_csv(trajectory, path)
    written = pd.read_csv(path, comment="#")
    # the same columns in the same order, plus the phase's kind and stage beside it
    assert [c for c in frame.columns if c not in ("phase_kind", "stage")] == list(
        written.columns)
    assert list(frame.columns[1:4]) == ["phase", "phase_kind", "stage"]
    assert len(frame) == len(written) == trajectory.time.size
    for column in written.columns:
        # the file holds 12 significant digits
        np.testing.assert_allclose(frame[column].to_numpy(float), written[column].to_numpy(),
                                   rtol=1e-11, atol=1e-300, err_msg=column)
    assert frame["phase"].dtype.kind == "i"
    kinds = [trajectory.phase_kinds[k] for k in trajectory.phase]
    assert frame["phase_kind"].tolist() == kinds
    assert set(frame["stage"]) <= set(range(len(problem.vehicle.stages)))
    # unit-named columns, as the CSV names them
    assert {"time_s", "altitude_m", "dynamic_pressure_kPa", "axial_acceleration_g0",
            "mass_kg", "throttle"} <= set(frame.columns)


def _schedule(problem):
    plan = phase_plan(problem)
    phases = []
    for k, phase in enumerate(plan):
        time = np.linspace(0.0, 10.0 + k, 4)
        throttle = np.linspace(1.0, 0.5, 4) if phase.powered else np.zeros(4)
        # the held last value: the duration is beyond the last node
        phases.append(PhaseControls(duration=12.0 + k, time=time, throttle=throttle))
    return PhaseSchedule(tuple(phases)), plan


def test_schedule_frame_equals_the_csv_file(flight, tmp_path):
    problem, _ = flight
    schedule, plan = _schedule(problem)
    frame = schedule.to_dataframe(plan)
    path = tmp_path / "schedule.csv"
    write_schedule_csv(schedule, path, plan)
    written = pd.read_csv(path, comment="#")
    assert list(frame.columns) == list(written.columns)
    assert len(frame) == len(written)
    for column in ("phase", "stage", "phase_time_s", "time_s", "throttle", "pitch_deg"):
        np.testing.assert_allclose(frame[column].to_numpy(float),
                                   written[column].to_numpy(float), rtol=0, atol=0,
                                   err_msg=column)
    assert frame["kind"].tolist() == written["kind"].tolist()
    # a problem gives its own phase plan; each phase ends at its duration
    same = schedule.to_dataframe(problem)
    assert same.equals(frame)
    ends = frame.groupby("phase")["phase_time_s"].max().to_numpy()
    assert ends == pytest.approx([pc.duration for pc in schedule.phases], rel=0, abs=0)
    # without a plan the kind and stage are those recorded on the controls (none here)
    assert schedule.to_dataframe()["kind"].isna().all()


def test_schedule_frame_of_a_planar_schedule_has_pitch_in_degrees():
    pc = PhaseControls(duration=5.0, time=[0.0, 5.0], throttle=[1.0, 1.0],
                       pitch=[math.pi / 2, math.pi / 4], kind="burn", stage=0)
    frame = PhaseSchedule((pc,)).to_dataframe()
    assert frame["pitch_deg"].tolist() == pytest.approx([90.0, 45.0], rel=1e-15)
    assert frame["stage"].tolist() == [0, 0] and frame["kind"].tolist() == ["burn", "burn"]


def test_schedule_frame_refuses_a_plan_of_other_length(flight):
    problem, _ = flight
    schedule, plan = _schedule(problem)
    longer = list(plan) * 2
    with pytest.raises(ValueError, match=f"phase_plan: {len(longer)} phases, the schedule has "
                                         f"{len(plan)}"):
        schedule.to_dataframe(longer)


def _study_rows():
    base = {"status": "optimal", "objective_unit": "km", "objective_name": "max_apogee",
            "burnout_speed_m_s": 2400.0, "burnout_altitude_m": 57e3, "verified": True,
            "max_dynamic_pressure.unit": "kPa", "max_dynamic_pressure.active": True,
            "max_dynamic_pressure.shadow_price_unit": "km per kPa", "iterations": 30,
            "nodes": 40, "warm_started": False, "wall_time_s": 1.0, "worker": "w",
            "error": None, "message": "ok"}
    rows = []
    for i, bound in enumerate((40.0, 50.0, 60.0)):
        rows.append(dict(index=i, run=1, **{"limits.max_dynamic_pressure": f"{bound} kPa"},
                         **base, objective=300.0 + i, **{
                             "max_dynamic_pressure.bound": bound,
                             "max_dynamic_pressure.peak": bound + 0.1,
                             "max_dynamic_pressure.shadow_price": 0.8 - 0.2 * i}))
    rows[1]["objective"] = math.nan  # a point whose solver did not converge
    return rows


def test_study_frame_from_a_folder_has_the_csv_columns(tmp_path):
    rows = _study_rows()
    columns = ["index", "run", "limits.max_dynamic_pressure", "status", "objective",
               "objective_unit", "objective_name", "burnout_speed_m_s",
               "burnout_altitude_m", "verified"] + [
        f"max_dynamic_pressure.{p}" for p in ("bound", "peak", "unit", "active",
                                              "shadow_price", "shadow_price_unit")] + [
        "iterations", "nodes", "warm_started", "wall_time_s", "worker", "error", "message"]
    files = StudyFiles(tmp_path, columns)
    files.meta.write_text(json.dumps({"columns": columns}), encoding="utf-8")
    files.rebuild_csv([])
    files.append(list(reversed(rows)))
    frame = study_frame(tmp_path)
    written = pd.read_csv(files.csv)
    assert list(frame.columns) == list(written.columns) == columns
    assert frame["index"].tolist() == [0, 1, 2]  # by index, whatever the arrival order
    assert frame["max_dynamic_pressure.bound"].tolist() == [40.0, 50.0, 60.0]
    assert pd.isna(frame.loc[1, "objective"])
    assert frame.attrs["units"]["objective"] == "km"
    assert frame.attrs["units"]["max_dynamic_pressure.peak"] == "kPa"
    assert frame.attrs["units"]["max_dynamic_pressure.shadow_price"] == "km per kPa"
    assert frame.attrs["units"]["burnout_speed_m_s"] == "m/s"
    assert frame.attrs["units"]["wall_time_s"] == "s"
    # the rows run_study returns give the same table
    again = study_frame(rows)
    assert list(again.columns) == columns
    assert again["objective"].iloc[[0, 2]].tolist() == [300.0, 302.0]


def test_study_frame_of_a_folder_without_rows_says_so(tmp_path):
    with pytest.raises(FileNotFoundError, match="no study.jsonl"):
        study_frame(tmp_path)


def test_missing_pandas_names_the_extra(flight, monkeypatch):
    _, trajectory = flight
    real_import = builtins.__import__

    def no_pandas(name, *args, **kwargs):
        if name == "pandas" or name.startswith("pandas."):
            raise ImportError("No module named 'pandas'")
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_pandas)
    for call in (trajectory.to_dataframe, PhaseSchedule((replace(
            PhaseControls(duration=1.0, time=[0.0], throttle=[1.0])),)).to_dataframe,
                 lambda: study_frame([])):
        with pytest.raises(ImportError, match=r'pip install "ascentplan\[pandas\]"'):
            call()
