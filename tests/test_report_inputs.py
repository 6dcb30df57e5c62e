"""Results folders that stand alone: the problem restated in summary.json and the report,
the problem file's SHA-256, re-rendering from summary.json alone, CSV files that open with
their caution, and the summary blocks other parts of the tool add."""

from __future__ import annotations

import csv
import hashlib
import html
import json
import re
import shutil
from pathlib import Path

import casadi
import numpy
import pytest
import scipy
import yaml

from ascentplan import __version__, cli
from ascentplan.cautions import CAUTION
from ascentplan.output.report import render_html

ROOT = Path(__file__).resolve().parents[1]
PROBLEMS = ROOT / "problems"
#: standard gravity [m s^-2] (CGPM 1901)
G0 = 9.80665


def _coarse_copy(folder: Path, name: str = "sounding_rocket.yaml") -> Path:
    """An example problem on a coarse mesh (fast), written as a file of its own."""
    data = yaml.safe_load((PROBLEMS / name).read_text(encoding="utf-8"))
    data["mesh"] = {"nodes_per_phase": 15, "max_refinements": 1}
    path = folder / name
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    """A solve of the sounding rocket written by the solve verb: (problem file, folder)."""
    folder = tmp_path_factory.mktemp("inputs")
    source = _coarse_copy(folder)
    out = folder / "out"
    status = cli.main(["solve", str(source), "--out", str(out)])
    assert status in (0, 1), status
    return source, out


def _section(page: str, title: str) -> str:
    start = page.index(f"<h2>{title}</h2>")
    return page[start:page.index("</section>", start)]


def _text(fragment: str) -> str:
    """The visible text of an HTML fragment, cells separated by single spaces."""
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", fragment)).split())


def test_summary_records_the_problem_file_and_its_hash(solved):
    source, out = solved
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    provenance = summary["provenance"]
    # the content hash computed here with hashlib (FIPS 180-4 SHA-256)
    assert provenance["source_file"] == source.name
    assert provenance["source_sha256"] == hashlib.sha256(source.read_bytes()).hexdigest()
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", provenance["written_utc"])
    versions = provenance["versions"]
    assert versions["ascentplan"] == __version__ and versions["casadi"] == casadi.__version__
    assert versions["numpy"] == numpy.__version__ and versions["scipy"] == scipy.__version__
    assert versions["ipopt"] is None or re.fullmatch(r"\d+\.\d+\.\d+", versions["ipopt"])


#: SI factors of the units the example file writes its values in, read here without the
#: package's unit code (angles stay in degrees, accelerations in g0)
_FACTORS = {"kg": 1.0, "t": 1e3, "N": 1.0, "kN": 1e3, "s": 1.0, "m": 1.0, "km": 1e3,
            "m^2": 1.0, "deg": 1.0, "Pa": 1.0, "kPa": 1e3, "g0": 1.0}


def _in(text, unit: str) -> float:
    """A value as the file writes it ("850 kg", "0.85 t"), in ``unit``."""
    if isinstance(text, (int, float)):
        return float(text) / _FACTORS[unit]
    number, written = str(text).split(" ", 1)
    return float(number) * _FACTORS[written] / _FACTORS[unit]


def _raw(source: Path) -> dict:
    """The problem file's stage, payload, site and limits, read with PyYAML alone."""
    data = yaml.safe_load(source.read_text(encoding="utf-8"))
    stage = data["vehicle"]["stages"][0]
    return {"name": stage["name"], "propellant_kg": _in(stage["propellant_mass"], "kg"),
            "dry_kg": _in(stage["dry_mass"], "kg"),
            "thrust_kN": _in(stage["thrust_vacuum"], "kN"), "isp_s": _in(stage["isp_vacuum"], "s"),
            "exit_area_m2": _in(stage["nozzle_exit_area"], "m^2"),
            "throttle": (stage["throttle"]["min"], stage["throttle"]["max"]),
            "payload_kg": _in(data["vehicle"]["payload_mass"], "kg"),
            "altitude_m": _in(data["launch"]["altitude"], "m"),
            "latitude_deg": _in(data["launch"]["latitude"], "deg"),
            "q_kPa": _in(data["limits"]["max_dynamic_pressure"], "kPa"),
            "axial_g0": _in(data["limits"]["max_axial_acceleration"], "g0"),
            "cd": data["aerodynamics"]["drag"]["cd"]}


def test_summary_restates_the_vehicle_as_written(solved):
    source, out = solved
    inputs = json.loads((out / "summary.json").read_text(encoding="utf-8"))["inputs"]
    raw = _raw(source)
    [stage] = inputs["vehicle"]["stages"]
    assert stage["name"] == raw["name"]
    assert stage["propellant_mass_kg"] == pytest.approx(raw["propellant_kg"], rel=1e-12)
    assert stage["dry_mass_kg"] == pytest.approx(raw["dry_kg"], rel=1e-12)
    assert stage["thrust_vacuum_N"] == pytest.approx(raw["thrust_kN"] * 1e3, rel=1e-12)
    assert stage["isp_vacuum_s"] == pytest.approx(raw["isp_s"], rel=1e-12)
    assert stage["nozzle_exit_area_m2"] == pytest.approx(raw["exit_area_m2"], rel=1e-12)
    assert (stage["throttle_min"], stage["throttle_max"]) == raw["throttle"]
    assert stage["shutdown"] == "early"  # throttleable: may shut down early (README rule)
    assert inputs["vehicle"]["payload_mass_kg"] == pytest.approx(raw["payload_kg"])
    assert inputs["site"]["altitude_m"] == pytest.approx(raw["altitude_m"])
    assert inputs["site"]["latitude_deg"] == pytest.approx(raw["latitude_deg"], rel=1e-12)
    assert {lim["name"]: (lim["bound"], lim["unit"]) for lim in inputs["limits"]} == {
        "max_dynamic_pressure": (pytest.approx(raw["q_kPa"]), "kPa"),
        "max_axial_acceleration": (pytest.approx(raw["axial_g0"]), "g0")}
    assert inputs["models"]["dynamics"] == "vertical"
    assert inputs["models"]["atmosphere"]["name"] == "us1976"
    assert inputs["models"]["drag"]["parameters"]["cd"] == raw["cd"]
    assert inputs["mesh"]["nodes_per_phase"] == 15
    assert inputs["objective"]["name"] == "max_apogee"


def test_report_has_the_problem_section(solved):
    source, out = solved
    page = (out / "report.html").read_text(encoding="utf-8")
    problem = _text(_section(page, "Problem"))
    assert hashlib.sha256(source.read_bytes()).hexdigest() in problem
    assert source.name in problem
    # the vehicle table: stage, propellant, dry mass [kg], thrust [kN], Isp [s], exit area
    # [m^2], throttle range, shutdown rule, as the file writes them
    raw = _raw(source)
    row = (f"{raw['name']} {raw['propellant_kg']:,.1f} {raw['dry_kg']:,.1f} "
           f"{raw['thrust_kN']:,.2f} {raw['isp_s']:,.1f} {raw['exit_area_m2']:,.3f} "
           f"{raw['throttle'][0]:.2f} - {raw['throttle'][1]:.2f} early")
    assert row in problem
    liftoff = raw["payload_kg"] + raw["propellant_kg"] + raw["dry_kg"]
    assert f"payload {raw['payload_kg']:,.1f}" in problem
    assert f"liftoff mass {liftoff:,.1f}" in problem
    for words in (f"pad altitude [m] {raw['altitude_m']:,.1f}",
                  f"max dynamic pressure (max_dynamic_pressure) {raw['q_kPa']:,.4f} kPa",
                  "dynamics kind vertical", "atmosphere us1976",
                  f"ascentplan version {__version__}", f"CasADi version {casadi.__version__}",
                  f"NumPy version {numpy.__version__}", f"SciPy version {scipy.__version__}",
                  "IPOPT version"):
        assert words in problem, words
    # the file and its hash are also under the title, before any result
    assert page.index(f"problem file {source.name} (SHA-256 ") < page.index("<h2>")


def test_report_verb_renders_from_summary_json_alone(solved, tmp_path, capsys):
    _, out = solved
    alone = tmp_path / "alone"
    alone.mkdir()
    shutil.copy(out / "summary.json", alone / "summary.json")
    assert cli.main(["report", str(alone)]) == 0
    assert capsys.readouterr().out.strip() == f"report written to {alone / 'report.html'}"
    original = (out / "report.html").read_text(encoding="utf-8")
    again = (alone / "report.html").read_text(encoding="utf-8")
    # everything but the plots (not copied) is the same page
    cut = "<section>\n<h2>Plots</h2>"
    assert again[:again.index(cut)] == original[:original.index(cut)]
    assert "<h2>Problem</h2>" in again and again.count(CAUTION) == 2


def _comment_lines(path: Path) -> list[str]:
    lines = path.read_text(encoding="utf-8").splitlines()
    return [line for line in lines[:lines.index(next(ln for ln in lines
                                                     if not ln.startswith("#")))]]


@pytest.mark.parametrize("name", ["schedule.csv", "trajectory.csv"])
def test_csv_files_open_with_their_caution(solved, name):
    _, out = solved
    path = out / name
    header = _comment_lines(path)
    # "# " comment lines before the column names (common practice for CSV data files)
    assert header and all(line.startswith("# ") for line in header)
    text = "\n".join(header)
    assert f"ascentplan {__version__}" in text and "sounding-rocket-demo" in text
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert f"status: {summary['status']}" in text
    assert CAUTION in text and "units:" in text
    # the column names follow, each with its unit (or a plain number: phase, throttle...)
    with open(path, newline="", encoding="utf-8") as fh:
        rows = [row for row in csv.reader(fh) if not row[0].startswith("#")]
    plain = {"phase", "kind", "stage", "throttle", "mach"}
    units = ("_s", "_m", "_m_s", "_kg", "_N", "_Pa", "_deg", "_g0", "_kg_s", "_kg_m3",
             "_kPa", "_kPa_deg")
    assert all(c in plain or c.endswith(units) for c in rows[0]), rows[0]
    assert len(rows) > 2
    # numpy reads the data once the comment lines are skipped by its own rule
    data = numpy.loadtxt(path, delimiter=",", comments="#", skiprows=len(header) + 1,
                         dtype=str if name == "schedule.csv" else float)
    assert len(data) == len(rows) - 1


def test_simulate_flies_the_commented_schedule_back(solved, tmp_path, capsys):
    source, out = solved
    flown = tmp_path / "flown"
    status = cli.main(["simulate", str(source), "--schedule", str(out / "schedule.csv"),
                       "--out", str(flown)])
    printed = capsys.readouterr().out
    summary = json.loads((flown / "summary.json").read_text(encoding="utf-8"))
    solved_summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    if solved_summary["status"] == "optimal":
        assert status == 0 and summary["status"] == "ok"
    # peaks in the units of the limits on them, as the solve reports its limits
    q = summary["peaks"]["dynamic_pressure"]
    assert "value_kPa" in q and "value_Pa" not in q
    assert f"max q        {q['value_kPa']:.3f} kPa" in printed
    # the flight's own files stand alone too: a comment header and the problem restated
    assert _comment_lines(flown / "trajectory.csv")[1].startswith(f"# status: {summary['status']}")
    assert summary["provenance"]["source_sha256"] == hashlib.sha256(
        source.read_bytes()).hexdigest()
    assert cli.main(["report", str(flown)]) == 0
    assert "<h2>Problem</h2>" in (flown / "report.html").read_text(encoding="utf-8")


def test_a_schedule_with_notes_between_rows_is_read(solved, tmp_path, capsys):
    # a user's "#" note anywhere is skipped, and line numbers stay the file's own
    source, out = solved
    lines = (out / "schedule.csv").read_text(encoding="utf-8").splitlines()
    first_row = len(_comment_lines(out / "schedule.csv")) + 1
    lines.insert(first_row + 1, "# checked by hand")
    lines[first_row + 2] = lines[first_row + 2].replace(",", ",x", 3)  # a bad row after it
    path = tmp_path / "noted.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    status = cli.main(["simulate", str(source), "--schedule", str(path),
                       "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert status == cli.EXIT_BAD_INPUT
    assert f"line {first_row + 3}:" in err  # 1-based: the edited line of the file


def test_new_summary_blocks_are_rendered_when_present():
    summary = {
        "problem": "blocks", "status": "optimal", "message": "",
        "limits": [{"name": "max_dynamic_pressure", "bound": 30.0, "unit": "kPa",
                    "peak": 30.15, "peak_time_s": 60.0, "active": True, "shadow_price": 5.6,
                    "shadow_price_unit": "m/s per kPa", "excess_fraction": 0.005,
                    "tolerance_fraction": 0.005}],
        "exchange_ratios": [
            {"input": "vehicle.stages[1].dry_mass", "label": "stage 'second' dry mass",
             "value": -2.5, "unit": "m/s per kg", "objective_unit": "m/s", "input_unit": "kg"},
            {"input": "vehicle.stages[0].isp_vacuum", "label": "stage 'first' Isp",
             "value": 31.0, "unit": "m/s per s", "objective_unit": "m/s", "input_unit": "s"},
            {"input": "vehicle.stages[0].dry_mass", "label": "stage 'first' dry mass",
             "value": -0.4, "unit": "m/s per kg", "objective_unit": "m/s",
             "input_unit": "kg"}],
        # the shape the pipeline writes: conditions by name, each key with its unit
        "target_miss": {"passed": False, "conditions": {
            "altitude": {"written_m": 200e3, "replayed_m": 199998.4, "miss_m": -1.6,
                         "tolerance_m": 100.0, "passed": True},
            "flight_path_angle": {"written_deg": 0.0, "replayed_deg": 0.02,
                                  "miss_deg": 0.02, "tolerance_deg": 0.01, "passed": False}},
            "circular_orbit": None},
        "verification": {"passed": True, "reasons": []},
    }
    page = render_html(summary)
    ratios = _text(_section(page, "Exchange ratios"))
    # largest magnitude first: 31, -2.5, -0.4
    assert ratios.index("'first' Isp") < ratios.index("'second' dry mass") < ratios.index(
        "'first' dry mass")
    assert "vehicle.stages[0].isp_vacuum 31.0000 m/s per s" in ratios
    verification = _section(page, "Verification by forward integration")
    assert "Target miss of the replay" in verification
    assert ("<tr><td>altitude</td><td>m</td><td class=\"num\">200,000.0000</td>"
            "<td class=\"num\">199,998.4000</td><td class=\"num\">-1.6000</td>"
            "<td class=\"num\">100.0000</td><td>yes</td></tr>") in verification
    assert '<tr class="flag"><td>flight path angle</td><td>deg</td>' in verification
    limits = _section(page, "Limits")
    for header in ("excess", "tolerance", "margin"):
        assert f"<th>{header} [% of bound]</th>" in limits
    assert "Other results" not in page
    # a summary without them (an older folder) renders without those sections
    for key in ("exchange_ratios", "target_miss"):
        summary.pop(key)
    page = render_html(summary)
    assert "Exchange ratios" not in page and "Target miss" not in page
    assert "<h2>Problem</h2>" not in page
