"""``ascentplan split``: the rocket-equation stage split as text and as JSON, speeds with
units, a payload of 0 refused by its key, exit statuses as the README lists them."""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import pytest
import yaml

from ascentplan import cli
from ascentplan.cautions import CAUTION
from ascentplan.staging.rocket_equation import optimal_split

ROOT = Path(__file__).resolve().parents[1]
PROBLEMS = ROOT / "problems"
#: standard gravity [m s^-2] (CGPM 1901)
G0 = 9.80665
#: the few units the example vehicles are written in, read here without the package
_FACTORS = {"kg": 1.0, "t": 1e3, "s": 1.0}


def _si(value) -> float:
    if isinstance(value, (int, float)):
        return float(value)
    number, unit = value.split(" ", 1)
    return float(number) * _FACTORS[unit]


def _stages_from_file(name: str):
    """Payload [kg], and per stage (name, exhaust speed [m/s], structural ratio, propellant
    [kg], dry [kg]), read from the raw YAML."""
    data = yaml.safe_load((PROBLEMS / name).read_text(encoding="utf-8"))["vehicle"]
    stages = []
    for s in data["stages"]:
        propellant, dry = _si(s["propellant_mass"]), _si(s["dry_mass"])
        stages.append((s["name"], G0 * _si(s["isp_vacuum"]), dry / (dry + propellant),
                       propellant, dry))
    return _si(data["payload_mass"]), stages


def _split_json(capsys, *argv) -> dict:
    assert cli.main(["split", *argv, "--format", "json"]) == 0
    out, err = capsys.readouterr()
    assert err == ""
    return json.loads(out)


@pytest.mark.parametrize("name", ["small_launcher.yaml", "medium_launcher.yaml"])
def test_split_json_matches_the_optimal_split(capsys, name):
    record = _split_json(capsys, str(PROBLEMS / name))
    payload, stages = _stages_from_file(name)
    liftoff = payload + sum(s[3] + s[4] for s in stages)
    # the library's optimum for the same exhaust speeds and structural ratios, liftoff
    # mass held (Curtis, "Optimal staging", Lagrange-multiplier method)
    expected = optimal_split([s[1] for s in stages], [s[2] for s in stages],
                             payload_mass=payload, liftoff_mass=liftoff)
    assert record["hold"] == "liftoff_mass"
    assert record["liftoff_mass_kg"] == pytest.approx(liftoff, rel=1e-12)
    assert record["payload_mass_kg"] == pytest.approx(payload, rel=1e-12)
    assert record["ideal_velocity_increment_m_s"] == pytest.approx(expected.total_delta_v,
                                                                   rel=1e-12)
    assert [s["name"] for s in record["stages"]] == [s[0] for s in stages]
    for row, mp, md, dv in zip(record["stages"], expected.propellant_mass, expected.dry_mass,
                               expected.delta_v):
        assert row["propellant_mass_kg"] == pytest.approx(mp, rel=1e-12)
        assert row["dry_mass_kg"] == pytest.approx(md, rel=1e-12)
        assert row["ideal_velocity_increment_m_s"] == pytest.approx(dv, rel=1e-12)
    # Curtis, "Optimal staging": every stage of the optimum has the mass ratio
    # n_i = (c_i eta - 1) / (c_i eps_i eta), one eta for all; c_i ln n_i sums to the total
    eta = record["lagrange_multiplier_s_m"]
    for row, (_, c, eps, _, _) in zip(record["stages"], stages):
        assert row["mass_ratio"] == pytest.approx((c * eta - 1.0) / (c * eps * eta), rel=1e-9)
        assert row["ideal_velocity_increment_m_s"] == pytest.approx(
            c * math.log(row["mass_ratio"]), rel=1e-9)
        assert row["stage_mass_kg"] == pytest.approx(
            row["propellant_mass_kg"] + row["dry_mass_kg"], rel=1e-12)
    assert sum(r["ideal_velocity_increment_m_s"] for r in record["stages"]) == pytest.approx(
        record["ideal_velocity_increment_m_s"], rel=1e-12)
    assert record["caution"] == CAUTION


def test_split_json_file_and_text_together(capsys, tmp_path):
    path = tmp_path / "split.json"
    source = PROBLEMS / "small_launcher.yaml"
    assert cli.main(["split", str(source), "--json", str(path)]) == 0
    out = capsys.readouterr().out
    # the text as before, the file named, the caution last
    assert "liftoff mass held" in out and f"wrote {path}" in out
    assert out.rstrip().endswith(CAUTION)
    written = json.loads(path.read_text(encoding="utf-8"))
    assert written == _split_json(capsys, str(source))
    # the record names the file it split and its content hash (SHA-256, hashlib)
    import hashlib

    assert written["source_file"] == "small_launcher.yaml"
    assert written["source_sha256"] == hashlib.sha256(source.read_bytes()).hexdigest()


@pytest.mark.parametrize("speed", ["9 km/s", "9000 m/s", "9000.0", "32400 km/h"])
def test_delta_v_takes_units_and_a_bare_number_is_m_s(capsys, speed):
    source = str(PROBLEMS / "small_launcher.yaml")
    plain = _split_json(capsys, source, "--hold", "payload", "--delta-v", "9000")
    given = _split_json(capsys, source, "--hold", "payload", "--delta-v", speed)
    assert given["required_ideal_velocity_increment_m_s"] == pytest.approx(9000.0, rel=1e-12)
    # 9 km/s is 9000 m/s to rounding; the whole split follows (km/h: pint's own factor)
    for key in ("liftoff_mass_kg", "ideal_velocity_increment_m_s", "payload_fraction"):
        assert given[key] == pytest.approx(plain[key], rel=1e-12), key
    assert plain["ideal_velocity_increment_m_s"] == pytest.approx(9000.0, rel=1e-9)


@pytest.mark.parametrize("speed, words", [("9 kg", "expected a speed"),
                                          ("-1", "must be > 0 m/s"),
                                          ("0 km/s", "must be > 0 m/s"),
                                          ("nan", "cannot read")])
def test_a_bad_delta_v_is_refused_by_name(capsys, speed, words):
    status = cli.main(["split", str(PROBLEMS / "small_launcher.yaml"), "--hold", "payload",
                       "--delta-v", speed])
    out, err = capsys.readouterr()
    assert status == cli.EXIT_BAD_INPUT and out == ""
    assert "--delta-v" in err and words in err and "Traceback" not in err


def test_a_payload_of_zero_is_refused_by_its_key(capsys, tmp_path):
    text = (PROBLEMS / "sounding_rocket.yaml").read_text(encoding="utf-8")
    path = tmp_path / "no_payload.yaml"
    path.write_text(re.sub(r"payload_mass: .*", "payload_mass: 0 kg", text), encoding="utf-8")
    for extra in ([], ["--format", "json"], ["--hold", "payload", "--delta-v", "2 km/s"]):
        status = cli.main(["split", str(path), *extra])
        out, err = capsys.readouterr()
        assert status == cli.EXIT_BAD_INPUT and out == ""
        [line] = err.strip().splitlines()
        assert line.startswith(f"{path}: vehicle.payload_mass: must be > 0 kg")
        assert line.endswith("got 0 kg")


def test_an_unreachable_velocity_exits_3(capsys):
    status = cli.main(["split", str(PROBLEMS / "small_launcher.yaml"), "--hold", "payload",
                       "--delta-v", "30 km/s", "--format", "json"])
    out, err = capsys.readouterr()
    assert status == 3 and out == "" and "cannot be reached" in err


def test_readme_lists_the_exit_statuses_of_split():
    # every status the verb returns is in its row of the README's command table
    row = next(line for line in (ROOT / "README.md").read_text(encoding="utf-8").splitlines()
               if line.startswith("| `ascentplan split"))
    assert "--format json" in row and "--json FILE" in row
    statuses = row.rsplit("|", 2)[-2]
    for status in ("0", "2", "3"):
        assert re.search(rf"\b{status}\b", statuses), statuses
    assert "vehicle.payload_mass" in row
