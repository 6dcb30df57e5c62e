"""The ``ascentplan check`` verb and the command-line entry."""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest
import yaml

from ascentplan import __version__, cli
from ascentplan.cautions import CAUTION

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "problems").glob("*.yaml"))
#: standard gravity [m s^-2] (CGPM 1901)
G0 = 9.80665
#: Earth: WGS 84 equatorial radius [m] and EGM96 GM [m^3 s^-2] (NIMA TR8350.2)
EARTH_RADIUS, EARTH_MU = 6378137.0, 3.986004418e14
#: the few units the example files use, to read them without the package's unit code
_FACTORS = {"kg": 1.0, "t": 1e3, "N": 1.0, "kN": 1e3, "s": 1.0, "m/s": 1.0, "km/s": 1e3,
            "m": 1.0, "km": 1e3, "m^2": 1.0, "m^3/s^2": 1.0}


def _si(value):
    if isinstance(value, (int, float)):
        return float(value)
    number, unit = value.split(" ", 1)
    return float(number) * _FACTORS[unit]


def _troposphere_pressure(z):
    """USSA 1976 (NOAA-S/T 76-1562) pressure [Pa] below 11 km geometric altitude z [m]."""
    r0, t0, lapse = 6356766.0, 288.15, -0.0065
    h = r0 * z / (r0 + z)  # geopotential height
    exponent = G0 * 28.9644 / (8314.32 * lapse)
    return 101325.0 * (t0 / (t0 + lapse * h)) ** exponent


def _expected(path):
    """Per-stage ideal dv and burn times, and liftoff T/W, computed from the raw file."""
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    payload = _si(data["vehicle"]["payload_mass"])
    stages = data["vehicle"]["stages"]
    masses = [(_si(s["propellant_mass"]), _si(s["dry_mass"])) for s in stages]
    rows = []
    for i, s in enumerate(stages):
        c = _si(s["exhaust_speed"]) if "exhaust_speed" in s else G0 * _si(s["isp_vacuum"])
        above = payload + sum(mp + md for mp, md in masses[i + 1:])
        m0 = above + sum(masses[i])
        mf = above + masses[i][1]
        thrust = _si(s["thrust_vacuum"])
        # Tsiolkovsky (1903): dv = c ln(m0/mf); burn time = propellant / (F/c)
        rows.append((s["name"], c * math.log(m0 / mf), masses[i][0] * c / thrust))
    planet = data.get("planet", "earth")
    if planet == "earth":
        radius, mu = EARTH_RADIUS, EARTH_MU
    else:
        radius, mu = _si(planet["radius"]), _si(planet["gravitational_parameter"])
    altitude = _si(data.get("launch", {}).get("altitude", 0.0))
    first = stages[0]
    exit_area = _si(first.get("nozzle_exit_area", 0.0))
    pressure = _troposphere_pressure(altitude) if exit_area else 0.0
    top = first.get("throttle", {}).get("max", 1.0)
    liftoff = payload + sum(mp + md for mp, md in masses)
    ratio = (top * _si(first["thrust_vacuum"]) - pressure * exit_area) / (
        liftoff * mu / (radius + altitude) ** 2)
    return rows, ratio


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_check_prints_rocket_equation_budget(path, capsys):
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    if "fairing" in data["vehicle"] or any("boosters" in s for s in data["vehicle"]["stages"]):
        pytest.skip("serial stages only here; parallel staging is checked against its closed "
                    "form in tests/test_stack_flight.py")
    status = cli.main(["check", str(path)])
    out, err = capsys.readouterr()
    assert status == 0 and err == ""
    rows, ratio = _expected(path)
    lines = out.splitlines()
    for name, dv, burn in rows:
        (row,) = [ln for ln in lines if ln.split() and ln.split()[0] == name
                  and len(ln.split()) > 5]
        fields = row.split()
        # printed to 0.1 m/s and 0.1 s
        assert float(fields[-1]) == pytest.approx(dv, abs=0.051)
        assert float(fields[-2]) == pytest.approx(burn, abs=0.051)
    total = re.search(r"total ideal velocity increment ([\d.]+) m/s", out)
    assert float(total.group(1)) == pytest.approx(sum(r[1] for r in rows), abs=0.051)
    tw = re.search(r"Liftoff thrust-to-weight: ([\d.]+)", out)
    assert float(tw.group(1)) == pytest.approx(ratio, abs=6e-4)
    assert CAUTION in out
    assert out.rstrip().endswith(CAUTION)


def test_check_shows_limits_and_target_in_user_units(capsys):
    assert cli.main(["check", str(ROOT / "problems" / "small_launcher.yaml")]) == 0
    out = capsys.readouterr().out
    assert "max_dynamic_pressure 30 kPa" in out
    assert "max_axial_acceleration 5.5 g0" in out
    assert "altitude 200.000 km" in out and "flight-path angle 0.000 deg" in out
    assert "atmosphere us1976" in out and "drag mach_table" in out
    assert "Objective: max_burnout_speed" in out


def test_check_prints_kilograms_as_solve_does(capsys):
    # one user unit per quantity: a 240 t vehicle's masses in kg, as solve and
    # summary.json give them (common practice: one unit per quantity in a tool's output)
    assert cli.main(["check", str(ROOT / "problems" / "medium_launcher.yaml")]) == 0
    out = capsys.readouterr().out
    data = yaml.safe_load((ROOT / "problems" / "medium_launcher.yaml").read_text())
    payload = _si(data["vehicle"]["payload_mass"])
    liftoff = payload + sum(_si(s["propellant_mass"]) + _si(s["dry_mass"])
                            for s in data["vehicle"]["stages"])
    assert f"liftoff mass {liftoff:.1f} kg" in out
    assert "propellant [kg]" in out and "[t]" not in out


def test_check_many_files_reports_the_bad_one(tmp_path, capsys):
    bad = tmp_path / "bad.yaml"
    bad.write_text("name: x\nvehicle: {payload_mass: 1 kg}\n", encoding="utf-8")
    good = ROOT / "problems" / "goddard.yaml"
    assert cli.main(["check", str(good), str(bad)]) == 2
    out, err = capsys.readouterr()
    assert "Problem: goddard" in out
    assert f"{bad}: vehicle.stages: missing" in err


def test_version(capsys):
    assert cli.main(["--version"]) == 0
    assert capsys.readouterr().out.strip() == f"ascentplan {__version__}"


@pytest.mark.parametrize("argv", [[], ["fly"], ["check"], ["check", "a.yaml", "--bogus"]])
def test_usage_errors_exit_2(argv, capsys):
    assert cli.main(argv) == 2
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err and err


def _fake_simulator(monkeypatch, status=0):
    calls = []

    def simulate_command(problem, out, schedule):
        calls.append((problem, out, schedule))
        return status

    monkeypatch.setattr(cli, "run_simulate", simulate_command)
    return calls


def test_simulate_loads_and_hands_over(monkeypatch):
    calls = _fake_simulator(monkeypatch, status=0)
    path = ROOT / "problems" / "small_launcher.yaml"
    assert cli.main(["simulate", str(path)]) == 0
    problem, out, schedule = calls[0]
    assert problem.name == "small-launcher-demo"
    assert out == Path("results") / "small-launcher-demo" and schedule is None
    assert cli.main(["simulate", str(path), "--out", "elsewhere", "--schedule", "s.csv"]) == 0
    assert calls[1][1:] == (Path("elsewhere"), Path("s.csv"))


def test_simulate_passes_the_status_on(monkeypatch):
    _fake_simulator(monkeypatch, status=3)
    assert cli.main(["simulate", str(ROOT / "problems" / "goddard.yaml")]) == 3


def test_simulate_bad_file_exits_2_before_simulating(monkeypatch, tmp_path, capsys):
    calls = _fake_simulator(monkeypatch)
    bad = tmp_path / "bad.yaml"
    bad.write_text("name: x\nvehicle: []\n", encoding="utf-8")
    assert cli.main(["simulate", str(bad)]) == 2
    err = capsys.readouterr().err
    assert calls == [] and f"{bad}: vehicle: expected" in err
