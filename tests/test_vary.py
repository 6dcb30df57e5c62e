"""Studies of any numeric input: values as lists or ranges with units, a grid of two inputs,
columns in the user unit of each key, the same optimum as separate solves, and the
performance curve, map and study report."""

from __future__ import annotations

import csv
import json

import pytest
from cases import vertical_q_yaml

from ascentplan.pipeline import clear_cache, solve
from ascentplan.problem.loader import load_problem
from ascentplan.study.command import sweep_command
from ascentplan.study.errors import StudyError
from ascentplan.study.files import KeyUnit
from ascentplan.study.runner import run_study
from ascentplan.study.spec import limit_sweep, parse_values, vary
from ascentplan.study.summary import curve_slopes

# Invented vehicle: the single-stage throttleable rocket of tests/test_sweep.py, with its
# dry mass and Isp written with units, on a coarse mesh (each solve well under 1 s)
PROBLEM_YAML = vertical_q_yaml("vary-study").replace("exhaust_speed: 2600 m/s", "isp_vacuum: 265 s")

DRY = "vehicle.stages[0].dry_mass"
ISP = "vehicle.stages[0].isp_vacuum"
Q = "limits.max_dynamic_pressure"


@pytest.fixture(scope="module")
def problem_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("problem") / "vary.yaml"
    path.write_text(PROBLEM_YAML, encoding="utf-8")
    return path


def _csv(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


# --- values -----------------------------------------------------------------------------

def test_range_and_list_parsing_with_units():
    # a range: COUNT evenly spaced values, both ends included, in START's unit
    assert parse_values("target.altitude", "200km:800km:7") == [
        "200 km", "300 km", "400 km", "500 km", "600 km", "700 km", "800 km"]
    # STOP in another unit of the same quantity is converted to START's (1 Mm = 1000 km)
    assert parse_values("target.altitude", "200 km:0.8 Mm:4") == [
        "200 km", "400 km", "600 km", "800 km"]
    # a plain STOP is read in START's unit
    assert parse_values("target.altitude", "200km:800:3") == ["200 km", "500 km", "800 km"]
    assert parse_values(ISP, "320s:360s:5") == ["320 s", "330 s", "340 s", "350 s", "360 s"]
    assert parse_values(Q, "20 kPa,30 kPa") == ["20 kPa", "30 kPa"]
    # plain numbers are kept as numbers (the loader reads them in its unit for the key)
    assert parse_values("vehicle.payload_mass", "100,150.5") == [100, 150.5]
    assert parse_values("vehicle.payload_mass", "100:200:3") == [100.0, 150.0, 200.0]
    assert parse_values("vehicle.payload_mass", ["90 kg", 120.0]) == ["90 kg", 120.0]


@pytest.mark.parametrize("given, message", [
    ("200km:800km:1", r"COUNT .* from 2 to 1000, got '1'"),
    ("200km:800km:x", r"COUNT .* got 'x'"),
    ("200:800km:3", r"START '200' is a plain number but STOP '800km' is not"),
    ("200km:800kPa:3", r"target.altitude \(range STOP\): expected a length.*'800kPa'"),
    ("200km:200km:3", "START and STOP of '200km:200km:3' are the same value"),
    ("200km:800km", r"expected a range START:STOP:COUNT"),
    ("abc,200 km", r"target.altitude values\[0\]: cannot read 'abc'"),
    ("200 km,,300 km", r"target.altitude values\[1\]"),
])
def test_bad_values_name_the_key_and_the_value(given, message):
    with pytest.raises(StudyError, match=message):
        parse_values("target.altitude", given)


def test_limit_values_are_si_numbers_and_the_limit_sweep_is_a_case_of_vary(problem_file):
    study = vary(problem_file, {Q: "20kPa:30kPa:3"})
    assert study.points == [{Q: 20e3}, {Q: 25e3}, {Q: 30e3}]
    assert study.kind == "vary" and study.axes[0]["key"] == Q
    sweep = limit_sweep(problem_file, "max_dynamic_pressure", ["20 kPa", "25 kPa", 30e3])
    assert sweep.points == study.points and sweep.kind == "vary"
    with pytest.raises(StudyError, match=r"limits.max_dynamic_pressure values\[1\]: expected "
                                         r"a pressure.*'5 g0'"):
        vary(problem_file, {Q: "20 kPa,5 g0"})
    with pytest.raises(StudyError, match="a value is given twice"):
        vary(problem_file, {Q: "20 kPa,20 kPa"})
    with pytest.raises(StudyError, match=r"vehicle.stages\[0\].dry_mas: unknown key.*did "
                                         r"you mean 'dry_mass'"):
        vary(problem_file, {"vehicle.stages[0].dry_mas": "300 kg,400 kg"})


def test_two_keys_make_a_grid_first_key_slowest(problem_file):
    study = vary(problem_file, {DRY: "380 kg,420 kg", Q: "20 kPa,25 kPa,30 kPa"})
    assert study.points == [{DRY: a, Q: b} for a in ("380 kg", "420 kg")
                            for b in (20e3, 25e3, 30e3)]
    with pytest.raises(StudyError, match="one or two keys"):
        vary(problem_file, {DRY: "380 kg", Q: "20 kPa", ISP: "300 s"})


def test_refused_values_stop_the_study_before_any_worker(problem_file, tmp_path, monkeypatch,
                                                        capsys):
    from ascentplan.study import runner

    def no_worker(*args, **kwargs):
        raise AssertionError("a worker was started")

    monkeypatch.setattr(runner, "LocalPool", no_worker)
    # a pressure for an altitude, and a negative dry mass: the loader's messages, naming
    # the point, the key and the value, before any worker starts and any file is written
    study = vary(problem_file, {"target.altitude": "100 km,200 kPa"})
    with pytest.raises(StudyError, match=r"points\[1\] \(target.altitude = '200 kPa'\): "
                                         r"target.altitude: expected a length"):
        run_study(study, tmp_path / "never", workers=1, progress=False)
    assert not (tmp_path / "never").exists()
    status = sweep_command(str(problem_file), vary=[f"{DRY}=-50 kg,400 kg"], workers=1,
                           out=str(tmp_path / "never"), progress=False)
    err = capsys.readouterr().err
    assert status == 2
    assert (f"points[0] ({DRY} = '-50 kg'): {DRY}: must be > 0 kg, got '-50 kg'") in err
    assert not (tmp_path / "never").exists()
    assert sweep_command(str(problem_file), vary=["target.altitude"], workers=1,
                         out=str(tmp_path / "never"), progress=False) == 2
    assert "expected KEY=VALUES" in capsys.readouterr().err


# --- solves -----------------------------------------------------------------------------

def test_study_of_an_input_equals_separate_solves(problem_file, tmp_path):
    """Each point of a 3-point study of the dry mass is the optimum of the problem file
    with that dry mass written in it, solved on its own (relative 1e-6; the study's
    points after the first are warm-started, so they agree to the solver tolerance)."""
    study = vary(problem_file, {DRY: "380kg:420kg:3"})
    rows = run_study(study, tmp_path / "study", workers=1, progress=False)
    assert [r[DRY] for r in rows] == ["380 kg", "400 kg", "420 kg"]
    for row, dry in zip(rows, (380, 400, 420)):
        alone = tmp_path / f"dry{dry}.yaml"
        alone.write_text(PROBLEM_YAML.replace("dry_mass: 400 kg", f"dry_mass: {dry} kg"))
        clear_cache()
        result = solve(load_problem(alone))
        assert result.status == row["status"] == "optimal"
        assert row["objective"] == pytest.approx(result.objective_value, rel=1e-6)
    # a heavier stage is slower at burnout (Tsiolkovsky: ln(m0/mf) falls as both grow)
    objectives = [r["objective"] for r in rows]
    assert objectives[0] > objectives[1] > objectives[2]
    # the columns carry the unit the values were written in
    table = _csv(tmp_path / "study" / "study.csv")
    assert [float(r[f"{DRY} [kg]"]) for r in table] == [380.0, 400.0, 420.0]
    assert "objective [m/s]" in table[0] and "burnout_altitude [km]" in table[0]
    meta = json.loads((tmp_path / "study" / "study.json").read_text())
    assert meta["axes"][0]["values"] == [380.0, 400.0, 420.0]
    assert meta["axes"][0]["unit"] == "kg" and meta["kind"] == "vary"


def test_grid_of_two_inputs_writes_map_and_report(problem_file, tmp_path, capsys):
    from ascentplan.output.study_report import write_study_outputs

    out = tmp_path / "grid"
    status = sweep_command(str(problem_file), vary=[f"{ISP}=255 s,275 s", f"{Q}=25kPa:30kPa:2"],
                           workers=1, out=str(out), progress=False, report=write_study_outputs)
    printed = capsys.readouterr().out
    assert status == 0 and "4 points: 4 optimal" in printed
    rows = [json.loads(line) for line in (out / "study.jsonl").read_text().splitlines()]
    assert sorted((r[ISP], r[Q]) for r in rows) == [("255 s", 25e3), ("255 s", 30e3),
                                                   ("275 s", 25e3), ("275 s", 30e3)]
    by = {(r[ISP], r[Q]): r["objective"] for r in rows}
    # more Isp and a looser max-q both raise the burnout speed (a larger feasible set or a
    # better engine cannot lower the optimum: common practice)
    assert by[("275 s", 25e3)] > by[("255 s", 25e3)]
    assert by[("255 s", 30e3)] >= by[("255 s", 25e3)]
    table = _csv(out / "study.csv")
    assert f"{ISP} [s]" in table[0] and f"{Q} [kPa]" in table[0]
    assert sorted({float(r[f"{Q} [kPa]"]) for r in table}) == [25.0, 30.0]
    assert (out / "performance_map.png").stat().st_size > 10_000
    html = (out / "study_report.html").read_text()
    assert "Caution: conceptual-design estimate only" in html
    assert "data:image/png;base64," in html and f"{Q} [kPa]" in html
    assert html.count("<tr>") >= 4 + 1


# --- exchange ratios --------------------------------------------------------------------

def test_exchange_ratio_of_the_varied_key_in_its_shown_unit():
    """The row's d(objective)/d(input) per kg becomes per tonne for a key shown in t
    (1 t = 1000 kg); rows without an entry for the key have none (no tangent)."""
    unit = KeyUnit("t", "kg")
    rows = [{"index": 0, DRY: "0.38 t", "objective": 4060.0, "status": "optimal",
             "verified": True,
             "exchange_ratios": [{"input": DRY, "value": -4.5, "unit": "m/s per kg",
                                  "objective_unit": "m/s", "input_unit": "kg"}]},
            {"index": 1, DRY: "0.42 t", "objective": 3880.0, "status": "optimal",
             "verified": True, "exchange_ratios": []}]
    points = curve_slopes(rows, DRY, unit, "m/s")
    assert [p["x"] for p in points] == [0.38, 0.42]
    assert points[0]["ratio"] == pytest.approx(-4500.0, rel=1e-12)
    assert points[1]["ratio"] is None
    assert points[1]["slope"] == pytest.approx((3880.0 - 4060.0) / 0.04, rel=1e-9)
