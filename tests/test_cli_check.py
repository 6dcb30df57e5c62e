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


def _speed(s):
    return _si(s["exhaust_speed"]) if "exhaust_speed" in s else G0 * _si(s["isp_vacuum"])


def _groups(stage):
    """Per booster group: name, count, propellant and dry mass per booster, thrust per
    booster at its setting, exhaust speed, burn time, exit area per booster, ignition."""
    out = []
    for g in stage.get("boosters") or []:
        c, mp = _speed(g), _si(g["propellant_mass"])
        setting = g.get("throttle", 1.0)
        setting = setting.get("max", 1.0) if isinstance(setting, dict) else setting
        thrust = setting * _si(g["thrust_vacuum"])
        out.append(dict(name=g["name"], n=g.get("count", 1), mp=mp, md=_si(g["dry_mass"]),
                        f=thrust, c=c, burn=mp * c / thrust,
                        area=_si(g.get("nozzle_exit_area", 0.0)),
                        after=(g.get("ignition", "liftoff")[len("after "):]
                               if g.get("ignition", "liftoff") != "liftoff" else None)))
    return out


def _stage_increment(m, s, groups):
    """Ideal increment of a stage with its boosters at full throttle, phase by phase with
    the mass-flow-weighted exhaust speed (parallel staging; Curtis, section 11.6, from
    memory): the stack mass m at its ignition."""
    c, mp = _speed(s), _si(s["propellant_mass"])
    top = s.get("throttle", {}).get("max", 1.0)
    f_core = top * _si(s["thrust_vacuum"])
    starts, ends = {}, {}
    for g in groups:  # an air-lit group is listed after the one it follows
        starts[g["name"]] = ends[g["after"]] if g["after"] else 0.0
        ends[g["name"]] = starts[g["name"]] + g["burn"]
    t, dv, core_left = 0.0, 0.0, mp
    for t_end in sorted(set(ends.values())):
        burning = [g for g in groups if starts[g["name"]] <= t < ends[g["name"]]]
        flow = f_core / c + sum(g["n"] * g["f"] / g["c"] for g in burning)
        thrust = f_core + sum(g["n"] * g["f"] for g in burning)
        m_end = m - flow * (t_end - t)
        dv += thrust / flow * math.log(m / m_end)
        core_left -= f_core / c * (t_end - t)
        m = m_end - sum(g["n"] * g["md"] for g in burning if ends[g["name"]] == t_end)
        t = t_end
    return dv + c * math.log(m / (m - core_left))


def _expected(path):
    """Per-stage ideal dv and burn times, and liftoff T/W, computed from the raw file."""
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    payload = _si(data["vehicle"]["payload_mass"])
    stages = data["vehicle"]["stages"]
    groups = [_groups(s) for s in stages]
    boosters = [sum(g["n"] * (g["mp"] + g["md"]) for g in gs) for gs in groups]
    masses = [(_si(s["propellant_mass"]), _si(s["dry_mass"])) for s in stages]
    fairing = data["vehicle"].get("fairing")
    names = [s["name"] for s in stages]
    f_stage = (names.index(fairing["during"]) if fairing and "during" in fairing
               else min(1, len(stages) - 1))
    f_mass = _si(fairing["mass"]) if fairing else 0.0
    rows = []
    for i, s in enumerate(stages):
        c = _speed(s)
        # carried at ignition: payload, the fairing until its stage's burn, later stages
        above = (payload + (f_mass if fairing and i <= f_stage else 0.0)
                 + sum(mp + md + b for (mp, md), b in zip(masses[i + 1:], boosters[i + 1:])))
        m0 = above + sum(masses[i]) + boosters[i]
        thrust = _si(s["thrust_vacuum"])
        # Tsiolkovsky (1903): dv = c ln(m0/mf), phase by phase with boosters; burn time =
        # propellant / (F/c)
        rows.append((s["name"], _stage_increment(m0, s, groups[i]),
                     masses[i][0] * c / thrust))
    planet = data.get("planet", "earth")
    if planet == "earth":
        radius, mu = EARTH_RADIUS, EARTH_MU
    else:
        radius, mu = _si(planet["radius"]), _si(planet["gravitational_parameter"])
    altitude = _si(data.get("launch", {}).get("altitude", 0.0))
    first = stages[0]
    ground_lit = [g for g in groups[0] if g["after"] is None]
    exit_area = _si(first.get("nozzle_exit_area", 0.0))
    boosters_area = sum(g["n"] * g["area"] for g in ground_lit)
    pressure = _troposphere_pressure(altitude) if exit_area + boosters_area else 0.0
    top = first.get("throttle", {}).get("max", 1.0)
    liftoff = payload + f_mass + sum(mp + md for mp, md in masses) + sum(boosters)
    thrust = (top * _si(first["thrust_vacuum"]) + sum(g["n"] * g["f"] for g in ground_lit)
              - pressure * (exit_area + boosters_area))
    ratio = thrust / (liftoff * mu / (radius + altitude) ** 2)
    return rows, ratio


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_check_prints_rocket_equation_budget(path, capsys):
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
