"""Problem files: unit conversion, the examples, and one clear message per bad input."""

from __future__ import annotations

import copy
import math
import subprocess
import sys
from pathlib import Path

import pytest
import yaml

from ascentplan import cli
from ascentplan._registry import REQUIRED, Param
from ascentplan.models.aero import DRAG_MODELS
from ascentplan.models.atmosphere import ATMOSPHERES
from ascentplan.problem.loader import ProblemError, load_problem, problem_from_dict
from ascentplan.problem.units import UnitError, list_to_si, to_si

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "problems").glob("*.yaml"))
#: standard gravity [m s^-2] (CGPM 1901; USSA 1976)
G0 = 9.80665


# -- units ---------------------------------------------------------------------------
@pytest.mark.parametrize("value, unit, expected", [
    ("35 kPa", "Pa", 35e3),
    ("1200 kN", "N", 1.2e6),
    ("320 s", "s", 320.0),
    ("24 t", "kg", 24e3),             # tonne = 1000 kg (SI brochure)
    ("2.5 tonne", "kg", 2.5e3),
    ("5 g0", "g0", 5.0),
    ("5 g0", "m/s^2", 5 * G0),        # standard gravity 9.80665 m/s^2 (CGPM 1901)
    ("49.033250 m/s^2", "g0", 5.0),
    ("0.6 m^2", "m^2", 0.6),
    ("28.5 deg", "rad", 28.5 * math.pi / 180),
    ("3.5 km/s", "m/s", 3500.0),
    ("200 km", "m", 2e5),
    ("150 kPa deg", "Pa*rad", 150e3 * math.pi / 180),
    ("7.292115e-5 rad/s", "rad/s", 7.292115e-5),
    ("15 degC", "K", 288.15),         # 0 degC = 273.15 K (SI brochure)
    ("50 %", "", 0.5),
    ("1e5", "Pa", 1e5),               # YAML reads 1e5 as text; it is still a number
    (35000, "Pa", 35000.0),           # plain numbers are already in the unit
    (0.5, "rad", 0.5),
])
def test_to_si_converts(value, unit, expected):
    assert to_si(value, unit, "a.b") == pytest.approx(expected, rel=1e-12)


def test_wrong_dimension_message_names_key_value_and_dimension():
    with pytest.raises(UnitError) as info:
        to_si("35 kg", "Pa", "limits.max_dynamic_pressure")
    assert str(info.value) == ("limits.max_dynamic_pressure: expected a pressure "
                               "(e.g. '35 kPa'), got '35 kg' (mass)")


@pytest.mark.parametrize("value, unit, fragment", [
    ("35 kilopascl", "Pa", "unknown unit 'kilopascl'"),
    ("kPa", "Pa", "cannot read 'kPa'"),
    ("lots", "N", "cannot read 'lots'"),
    (True, "Pa", "yes/no value"),
    (None, "kg", "no value given"),
    ([1, 2], "kg", "got a list"),
    (float("inf"), "m", "finite"),
    ("150 kPa", "Pa*rad", "got '150 kPa' (pressure)"),
    ("5 g", "g0", "write 'g0' for standard gravity"),
    ("0.3 rad/s", "1/s", "(angular rate)"),
])
def test_to_si_rejects(value, unit, fragment):
    with pytest.raises(UnitError) as info:
        to_si(value, unit, "x.y")
    assert str(info.value).startswith("x.y: ")
    assert fragment in str(info.value)


def test_lists_of_strings_and_unit_mappings():
    assert list_to_si(["0 s", "1 min", 90], "s", "t") == (0.0, 60.0, 90.0)
    got = list_to_si({"unit": "deg", "values": [0, 45, 90]}, "rad", "p")
    assert got == pytest.approx((0.0, math.pi / 4, math.pi / 2), rel=1e-15)
    with pytest.raises(UnitError, match=r"p\.unit: expected an angle"):
        list_to_si({"unit": "kg", "values": [1]}, "rad", "p")
    with pytest.raises(UnitError) as info:
        list_to_si(["1 s", "2 kg", "x"], "s", "t")
    lines = str(info.value).split("\n")
    assert len(lines) == 2 and lines[0].startswith("t[1]:") and lines[1].startswith("t[2]:")


# -- the examples ------------------------------------------------------------------
def test_examples_exist():
    names = {p.name for p in EXAMPLES}
    assert {"sounding_rocket.yaml", "small_launcher.yaml", "medium_launcher.yaml",
            "goddard.yaml"} <= names


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_example_loads(path):
    problem = load_problem(path)
    assert problem.source_path == str(path)
    assert problem.vehicle.liftoff_mass > 0


def test_small_launcher_values_are_converted_to_si():
    p = load_problem(ROOT / "problems" / "small_launcher.yaml")
    first, second = p.vehicle.stages
    assert first.propellant_mass == 24.5e3 and first.dry_mass == 2.3e3
    assert first.thrust_vacuum == 530e3
    assert first.exhaust_speed == pytest.approx(298 * G0, rel=1e-15)
    assert (first.throttle_min, first.throttle_max) == (0.5, 1.0)
    assert (second.throttle_min, second.throttle_max) == (0.6, 1.0)
    assert p.launch.pitch_over == pytest.approx(math.radians(3.0), rel=1e-15)
    assert p.limits.max_dynamic_pressure == 30e3
    assert p.limits.max_axial_acceleration == 5.5
    assert p.target.altitude == 200e3 and p.target.flight_path_angle == 0.0
    assert p.mesh.scheme == "hermite_simpson" and p.mesh.nodes_per_phase == 40


def test_goddard_file_maps_onto_the_normalised_problem():
    # Dolan, More, Munson, COPS 3.0 (ANL/MCS-TM-273, 2004), problem 10: g0 = 1, c = 0.5,
    # Tmax = 3.5, Dc = 310, hc = 500, final mass 0.6, with scales R, sqrt(R/g), m0.
    p = load_problem(ROOT / "problems" / "goddard.yaml")
    radius = p.planet.radius
    g = p.planet.gravitational_parameter / radius**2
    (stage,) = p.vehicle.stages
    m0 = p.vehicle.liftoff_mass
    assert p.dynamics == "vertical" and p.objective == "max_burnout_altitude"
    assert g == pytest.approx(G0, rel=1e-12)
    assert stage.exhaust_speed / math.sqrt(g * radius) == pytest.approx(0.5, rel=1e-12)
    assert stage.thrust_vacuum / (m0 * g) == pytest.approx(3.5, rel=1e-12)
    assert p.vehicle.burnout_mass(0) / m0 == pytest.approx(0.6, rel=1e-15)
    assert (stage.throttle_min, stage.throttle_max) == (0.0, 1.0)
    assert stage.nozzle_exit_area == 0.0 and p.planet.rotation_rate == 0.0
    atm = p.atmosphere
    rho0 = float(atm.state(0.0).density)
    # density falls by e over (h - h0)/h0 = 1/hc
    assert float(atm.state(radius / 500).density) / rho0 == pytest.approx(math.exp(-1), rel=1e-12)
    half_rho_cd_area = 0.5 * rho0 * float(p.aerodynamics.drag.drag_coefficient(0.3)) \
        * p.aerodynamics.reference_area
    assert half_rho_cd_area * radius / m0 == pytest.approx(310.0, rel=1e-12)
    assert float(p.gravity.acceleration(2 * radius)) == pytest.approx(g / 4, rel=1e-12)


def test_structural_ratio_gives_dry_mass():
    data = _base()
    stage = data["vehicle"]["stages"][1]
    del stage["dry_mass"]
    stage["structural_ratio"] = 0.1
    p = problem_from_dict(data)
    # eps = dry/(dry + propellant)  =>  dry = eps/(1 - eps) propellant (common practice)
    assert p.vehicle.stages[1].dry_mass == pytest.approx(0.1 / 0.9 * 5000.0, rel=1e-15)
    assert p.vehicle.stages[1].structural_ratio == 0.1


def test_thrust_from_thrust_to_weight_and_exhaust_speed():
    data = _base()
    stage = data["vehicle"]["stages"][1]
    del stage["thrust_vacuum"], stage["isp_vacuum"]
    stage["thrust_to_weight"] = 0.9
    stage["exhaust_speed"] = "3.3 km/s"
    p = problem_from_dict(data)
    s = p.vehicle.stages[1]
    assert s.exhaust_speed == 3300.0
    assert s.thrust_vacuum == pytest.approx(0.9 * G0 * p.vehicle.ignition_mass(1), rel=1e-15)


def test_defaults():
    data = _base()
    for key in ("launch", "limits", "target", "mesh", "gravity", "planet", "dynamics",
                "objective"):
        data.pop(key, None)
    data.pop("atmosphere")
    del data["vehicle"]["stages"][1]["name"]
    p = problem_from_dict(data)
    assert p.dynamics == "planar" and p.objective == "max_burnout_speed"
    assert p.planet.name == "earth" and type(p.atmosphere) is ATMOSPHERES["us1976"]
    assert type(p.gravity).__name__ == "InverseSquareGravity"
    assert p.mesh.nodes_per_phase == 40 and p.limits.active_names() == []
    assert p.mass_split is None and p.schedule is None
    assert p.vehicle.stages[1].name == "stage 2"


def test_schedule_and_mass_split_are_read():
    data = _base()
    data["schedule"] = {"time": ["0 s", "10 s", "2 min"], "throttle": [1, 0.8, 0.6],
                        "pitch": {"unit": "deg", "values": [90, 80, 30]}}
    data["mass_split"] = {"hold": "liftoff_mass", "liftoff_mass": "30 t"}
    p = problem_from_dict(data)
    assert p.schedule.time == (0.0, 10.0, 120.0)
    assert p.schedule.pitch == pytest.approx((math.pi / 2, math.radians(80), math.radians(30)))
    assert p.mass_split.hold == "liftoff_mass" and p.mass_split.liftoff_mass == 30e3


# -- bad problem files ------------------------------------------------------------
def _base() -> dict:
    """A valid two-stage planar problem, as a YAML file would hold it."""
    return {
        "name": "table-case",
        "dynamics": "planar",
        "atmosphere": {"model": "us1976"},
        "aerodynamics": {"reference_area": "2.0 m^2", "drag": {"model": "constant", "cd": 0.3}},
        "vehicle": {
            "payload_mass": "400 kg",
            "stages": [
                {"name": "first", "propellant_mass": "20 t", "dry_mass": "2 t",
                 "thrust_vacuum": "450 kN", "isp_vacuum": "300 s",
                 "nozzle_exit_area": "0.5 m^2", "throttle": {"min": 0.5, "max": 1.0}},
                {"name": "second", "propellant_mass": "5 t", "dry_mass": "600 kg",
                 "thrust_vacuum": "50 kN", "isp_vacuum": "340 s"},
            ],
        },
        "launch": {"altitude": "0 m", "vertical_rise": "8 s", "pitch_over": "3 deg"},
        "limits": {"max_dynamic_pressure": "30 kPa", "max_axial_acceleration": "6 g0"},
        "target": {"altitude": "200 km", "flight_path_angle": "0 deg"},
        "objective": "max_burnout_speed",
    }


def _set(*path_and_value):
    """A mutation setting data[path...] = value (a value of _DELETE removes the key)."""
    *path, value = path_and_value

    def mutate(data):
        node = data
        for key in path[:-1]:
            node = node[key]
        if value is _DELETE:
            del node[path[-1]]
        else:
            node[path[-1]] = value
    return mutate


_DELETE = object()
S0 = ("vehicle", "stages", 0)
S1 = ("vehicle", "stages", 1)


def _vertical(*more):
    def mutate(data):
        data["dynamics"] = "vertical"
        data["launch"].pop("pitch_over")
        data["target"].pop("flight_path_angle")
        for m in more:
            m(data)
    return mutate


def _both(*mutations):
    def mutate(data):
        for m in mutations:
            m(data)
    return mutate


#: (case id, mutation of the base problem, fragments the messages must contain)
BAD_CASES = [
    ("unknown-top-key", _set("vehicel", {}), ["vehicel: unknown key; did you mean 'vehicle'?"]),
    ("unknown-stage-key", _set(*S0, "isp_vac", "300 s"),
     ["vehicle.stages[0].isp_vac: unknown key; did you mean 'isp_vacuum'?"]),
    ("unknown-throttle-key", _set(*S0, "throttle", "minimum", 0.5),
     ["vehicle.stages[0].throttle.minimum: unknown key"]),
    ("unknown-limit-key", _set("limits", "max_dynamic_presure", "30 kPa"),
     ["limits.max_dynamic_presure: unknown key; did you mean 'max_dynamic_pressure'?"]),
    ("unknown-model-parameter",
     _set("atmosphere", {"model": "exponential", "scale_heigth": "7 km"}),
     ["atmosphere.scale_heigth: unknown key; did you mean 'scale_height'?"]),
    ("missing-name", _set("name", _DELETE), ["name: missing"]),
    ("missing-propellant", _set(*S1, "propellant_mass", _DELETE),
     ["vehicle.stages[1].propellant_mass: missing; expected a mass (e.g. '24 t')"]),
    ("missing-payload", _set("vehicle", "payload_mass", _DELETE),
     ["vehicle.payload_mass: missing"]),
    ("missing-vehicle", _set("vehicle", _DELETE), ["vehicle: missing"]),
    ("stages-not-a-list", _set("vehicle", "stages", {"first": {}}),
     ["vehicle.stages: expected a list of stages, got a mapping"]),
    ("no-stages", _set("vehicle", "stages", []), ["vehicle.stages: expected at least one stage"]),
    ("limits-is-a-list", _set("limits", ["30 kPa"]), ["limits: expected a mapping", "got a list"]),
    ("text-not-a-number", _set(*S0, "thrust_vacuum", "lots"),
     ["vehicle.stages[0].thrust_vacuum: cannot read 'lots'"]),
    ("yes-no-as-number", _set(*S0, "thrust_vacuum", True),
     ["vehicle.stages[0].thrust_vacuum: expected a force", "yes/no value"]),
    ("wrong-dimension", _set("limits", "max_dynamic_pressure", "35 kg"),
     ["limits.max_dynamic_pressure: expected a pressure (e.g. '35 kPa'), got '35 kg' (mass)"]),
    ("wrong-dimension-isp", _set(*S0, "isp_vacuum", "300 m/s"),
     ["vehicle.stages[0].isp_vacuum: expected a time", "got '300 m/s' (speed)"]),
    ("negative-dry-mass", _set(*S0, "dry_mass", "-200 kg"),
     ["vehicle.stages[0].dry_mass: must be > 0 kg, got '-200 kg'"]),
    ("negative-payload", _set("vehicle", "payload_mass", -5),
     ["vehicle.payload_mass: must be >= 0 kg, got -5"]),
    ("zero-propellant", _set(*S1, "propellant_mass", 0),
     ["vehicle.stages[1].propellant_mass: must be > 0 kg, got 0"]),
    ("throttle-min-above-max", _set(*S0, "throttle", {"min": 0.9, "max": 0.6}),
     ["vehicle.stages[0].throttle: min must not exceed max, got min 0.9 > max 0.6"]),
    ("throttle-above-one", _set(*S0, "throttle", {"min": 0.5, "max": 1.2}),
     ["vehicle.stages[0].throttle.max: must be > 0 and <= 1, got 1.2"]),
    ("structural-ratio-one", _both(_set(*S1, "dry_mass", _DELETE),
                                   _set(*S1, "structural_ratio", 1.2)),
     ["vehicle.stages[1].structural_ratio: must be > 0 and < 1, got 1.2"]),
    ("dry-and-structural-ratio", _set(*S1, "structural_ratio", 0.1),
     ["vehicle.stages[1]: give dry_mass or structural_ratio, not both"]),
    ("isp-and-exhaust-speed", _set(*S1, "exhaust_speed", "3.3 km/s"),
     ["vehicle.stages[1]: give isp_vacuum or exhaust_speed, not both"]),
    ("liftoff-thrust-below-weight", _set(*S0, "thrust_vacuum", "250 kN"),
     ["vehicle.stages[0].thrust_vacuum: liftoff thrust-to-weight is 0.727,"]),
    ("unknown-atmosphere", _set("atmosphere", {"model": "us1967"}),
     ["atmosphere.model: unknown atmosphere model 'us1967'; valid names: "
      + ", ".join(sorted(ATMOSPHERES))]),
    ("unknown-drag", _set("aerodynamics", "drag", {"model": "mach_tabel", "cd": [0.3]}),
     ["aerodynamics.drag.model: unknown drag model 'mach_tabel'",
      ", ".join(sorted(DRAG_MODELS)), "did you mean 'mach_table'?"]),
    ("model-rejects-table", _set("aerodynamics", "drag",
                                 {"model": "mach_table", "mach": [0, 2, 1], "cd": [0.3, 0.4, 0.3]}),
     ["aerodynamics.drag.mach: must be strictly increasing"]),
    ("model-missing-parameter", _set("aerodynamics", "drag", {"model": "mach_table",
                                                              "mach": [0, 1]}),
     ["aerodynamics.drag.cd: missing"]),
    ("reynolds-needs-length", _set("aerodynamics", "drag", {"model": "sphere_reynolds"}),
     ["aerodynamics.reference_length: missing"]),
    ("unknown-planet", _set("planet", "mars"), ["planet: unknown planet 'mars'"]),
    ("bad-objective", _set("objective", "max_speed"),
     ["objective: unknown objective 'max_speed'; did you mean 'max_burnout_speed'?",
      "valid names: max_burnout_speed"]),
    ("bad-dynamics", _set("dynamics", "flat"), ["dynamics: unknown dynamics 'flat'"]),
    ("vertical-q-alpha", _vertical(_set("limits", "max_q_alpha", "150 kPa deg")),
     ["limits.max_q_alpha: applies to planar or three_dimensional flight only (dynamics is "
      "vertical), "
      "got '150 kPa deg'"]),
    ("vertical-pitch-over", _both(_set("dynamics", "vertical"),
                                  _set("target", "flight_path_angle", _DELETE)),
     ["launch.pitch_over: applies to planar or three_dimensional flight only", "got '3 deg'"]),
    ("vertical-flight-path-angle", _both(_set("dynamics", "vertical"),
                                         _set("launch", "pitch_over", _DELETE)),
     ["target.flight_path_angle: applies to planar or three_dimensional flight only"]),
    ("vertical-circular-orbit", _vertical(_set("target", {"circular_orbit_altitude": "300 km"})),
     ["target.circular_orbit_altitude: applies to planar or three_dimensional flight only"]),
    ("vertical-schedule-pitch", _vertical(_set("schedule", {
        "time": [0, 10], "throttle": [1, 1], "pitch": ["90 deg", "80 deg"]})),
     ["schedule.pitch: applies to planar or three_dimensional flight only"]),
    ("unsorted-schedule", _set("schedule", {"time": ["0 s", "20 s", "10 s"],
                                            "throttle": [1, 1, 1]}),
     ["schedule.time[2]: times must increase strictly, got 10 s after 20 s"]),
    ("schedule-not-from-zero", _set("schedule", {"time": [5, 20], "throttle": [1, 1]}),
     ["schedule.time[0]: must be 0"]),
    ("schedule-lengths", _set("schedule", {"time": [0, 20, 40], "throttle": [1, 1]}),
     ["schedule.throttle: expected 3 values (one per time), got 2"]),
    ("vertical-rise-too-long", _set("launch", "vertical_rise", "10 min"),
     ["launch.vertical_rise: is longer than the first stage's full-throttle burn",
      "got '10 min'"]),
    ("latitude-in-degrees-as-plain-number", _set("launch", "latitude", 28.5),
     ["launch.latitude: must be >= -90 deg and <= 90 deg, got 28.5",
      "a plain number is in radians"]),
    ("max-payload-without-target", _both(_set("target", _DELETE),
                                         _set("objective", "max_payload")),
     ["objective: max_payload needs a target"]),
    ("objective-fixed-by-target", _set("target", "speed", "7.8 km/s"),
     ["objective: max_burnout_speed maximises what target.speed fixes"]),
    ("circular-orbit-with-altitude", _set("target", "circular_orbit_altitude", "300 km"),
     ["target.circular_orbit_altitude: cannot be combined with altitude, flight_path_angle"]),
    ("mesh-too-few-nodes", _set("mesh", {"nodes_per_phase": 3}),
     ["mesh.nodes_per_phase: must be >= 5, got 3"]),
    ("mesh-nodes-not-integer", _set("mesh", {"nodes_per_phase": "forty"}),
     ["mesh.nodes_per_phase: expected a whole number >= 5, got 'forty'"]),
    ("unknown-scheme", _set("mesh", {"scheme": "simpson"}),
     ["mesh.scheme: unknown collocation scheme 'simpson'"]),
    ("mass-split-bad-hold", _set("mass_split", {"hold": "propellant"}),
     ["mass_split.hold: unknown hold 'propellant'"]),
    ("coast-after-last-stage", _set(*S1, "coast_after", "5 s"),
     ["vehicle.stages[1].coast_after: has no effect on the last stage"]),
    ("upper-stage-over-acceleration-limit", _set("limits", "max_axial_acceleration", "4 g0"),
     ["limits.max_axial_acceleration: cannot be met: second reaches 5.10 g0 at burnout"]),
    ("min-altitude-above-pad", _set("limits", "min_altitude", "1 km"),
     ["limits.min_altitude: must not be above the launch altitude"]),
]


def test_base_problem_is_valid():
    problem = problem_from_dict(_base())
    assert len(problem.vehicle.stages) == 2


def test_enough_bad_cases():
    assert len(BAD_CASES) >= 20


@pytest.mark.parametrize("case_id, mutate, fragments", BAD_CASES,
                         ids=[c[0] for c in BAD_CASES])
def test_bad_problem(case_id, mutate, fragments, tmp_path, capsys):
    data = copy.deepcopy(_base())
    mutate(data)
    path = tmp_path / f"{case_id}.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")

    with pytest.raises(ProblemError) as info:
        load_problem(path)
    text = "\n".join(info.value.messages)
    for fragment in fragments:
        assert fragment in text, f"{fragment!r} not in:\n{text}"

    status = cli.main(["check", str(path)])
    out, err = capsys.readouterr()
    assert status == 2
    assert "Traceback" not in out + err
    assert out == ""
    lines = err.strip().split("\n")
    assert all(line.startswith(f"{path}: ") for line in lines)
    for fragment in fragments:
        assert fragment in err


def test_several_errors_are_all_reported():
    data = _base()
    data["vehicle"]["stages"][0]["dry_mass"] = "-1 t"
    data["vehicle"]["stages"][1]["isp_vac"] = "340 s"
    data["limits"]["max_dynamic_pressure"] = "35 kg"
    data["objective"] = "fastest"
    data["mesh"] = {"nodes_per_phase": 2}
    with pytest.raises(ProblemError) as info:
        problem_from_dict(data)
    text = "\n".join(info.value.messages)
    for start in ("vehicle.stages[0].dry_mass:", "vehicle.stages[1].isp_vac:",
                  "limits.max_dynamic_pressure:", "objective:", "mesh.nodes_per_phase:"):
        assert start in text
    assert len(info.value.messages) == 5


@pytest.mark.parametrize("text, fragment", [
    ("name: x\nvehicle:\n  payload_mass: [1, 2\n", "line 4"),
    ("name: x\nvehicle: {a: 1}\n  bad: 2\n", "line 3"),
    ("name: x\nname: y\n", "line 2, column 1: not valid YAML: duplicate key 'name'"),
    ("", "the file is empty"),
    ("- a\n- b\n", "the top level must be a mapping"),
])
def test_unreadable_files(text, fragment, tmp_path, capsys):
    path = tmp_path / "broken.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ProblemError) as info:
        load_problem(path)
    assert fragment in str(info.value)
    assert cli.main(["check", str(path)]) == 2
    out, err = capsys.readouterr()
    assert fragment in err and err.startswith(f"{path}: ") and "Traceback" not in out + err


def test_missing_file(tmp_path, capsys):
    path = tmp_path / "nowhere.yaml"
    assert cli.main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.strip() == f"{path}: no such problem file"


def test_no_traceback_escapes_the_command(tmp_path):
    data = _base()
    data["vehicle"]["stages"][0]["throttle"] = {"min": 0.9, "max": 0.6}
    path = tmp_path / "bad.yaml"
    path.write_text(yaml.safe_dump(data), encoding="utf-8")
    run = subprocess.run([sys.executable, "-m", "ascentplan", "check", str(path)],
                         capture_output=True, text=True, timeout=60)
    assert run.returncode == 2
    assert "Traceback" not in run.stdout + run.stderr
    assert "vehicle.stages[0].throttle: min must not exceed max" in run.stderr


def test_dict_source_and_error_without_file():
    data = _base()
    data["vehicle"]["payload_mass"] = "heavy"
    with pytest.raises(ProblemError) as info:
        load_problem(data)
    assert info.value.source is None
    assert info.value.messages[0].startswith("vehicle.payload_mass: ")


def test_liftoff_thrust_to_weight_message_gives_the_ratio():
    data = _base()
    data["vehicle"]["stages"][0]["thrust_vacuum"] = "250 kN"
    with pytest.raises(ProblemError) as info:
        problem_from_dict(data)
    # sea-level pressure 101325 Pa (USSA 1976); WGS 84 radius and EGM96 GM for g = mu/R^2
    thrust = 250e3 - 101325.0 * 0.5
    weight = 28000.0 * 3.986004418e14 / 6378137.0**2
    assert f"liftoff thrust-to-weight is {thrust / weight:.3f}," in info.value.messages[0]


def test_vacuum_needs_no_aerodynamics_and_constant_gravity_takes_its_value():
    data = _base()
    data["atmosphere"] = "vacuum"
    data.pop("aerodynamics")
    data["gravity"] = {"model": "constant", "acceleration": "1.62 m/s^2"}
    data["planet"] = {"name": "moonlet", "radius": "1737 km",
                      "gravitational_parameter": "4.9e12 m^3/s^2"}
    data["limits"].pop("max_dynamic_pressure")
    p = problem_from_dict(data)
    assert p.aerodynamics.reference_area == 0.0
    assert float(p.atmosphere.state(0.0).density) == 0.0
    assert float(p.gravity.acceleration(1.737e6)) == 1.62
    assert p.planet.rotation_rate == 0.0 and p.planet.radius == 1.737e6


def test_table_atmosphere_lists_with_units():
    data = _base()
    data["atmosphere"] = {"model": "table", "altitude": {"unit": "km", "values": [0, 10, 30]},
                          "density": ["1.2 kg/m^3", "0.41 kg/m^3", "0.018 kg/m^3"]}
    p = problem_from_dict(data)
    assert p.atmosphere.altitude == (0.0, 1e4, 3e4)
    assert float(p.atmosphere.state(1e4).density) == pytest.approx(0.41, rel=1e-9)
    data["atmosphere"]["density"] = ["1.2 kg/m^3", "-0.41 kg/m^3", "0.018 kg/m^3"]
    with pytest.raises(ProblemError, match=r"atmosphere\.density\[1\]: must be > 0, "
                                           r"got '-0.41 kg/m\^3'"):
        problem_from_dict(data)


class _ThinAir:
    """A stand-in atmosphere model declared only through ``parameters``."""

    parameters = {"ratio": Param("", 2.0, positive=True),
                  "heights": Param("m", REQUIRED, kind="list")}

    def __init__(self, ratio, heights):
        if len(heights) < 2:
            raise ValueError("heights: needs at least 2 points")
        self.ratio, self.heights = ratio, heights

    def state(self, altitude):
        return ATMOSPHERES["vacuum"]().state(altitude)


def test_model_parameters_follow_the_registry(monkeypatch):
    monkeypatch.setitem(ATMOSPHERES, "thin_air", _ThinAir)
    data = _base()
    data["atmosphere"] = {"model": "thin_air", "heights": ["1 km", "2 km"]}
    p = problem_from_dict(data)
    assert isinstance(p.atmosphere, _ThinAir)
    assert p.atmosphere.ratio == 2.0 and p.atmosphere.heights == (1e3, 2e3)
    data["atmosphere"] = {"model": "thin_air", "heights": ["1 km"], "ratio": -1}
    with pytest.raises(ProblemError) as info:
        problem_from_dict(data)
    assert info.value.messages == ["atmosphere.ratio: must be > 0, got -1"]
    data["atmosphere"] = {"model": "thin_air", "heights": ["1 km"]}
    with pytest.raises(ProblemError) as info:
        problem_from_dict(data)
    assert info.value.messages == ["atmosphere.heights: needs at least 2 points"]
    data["atmosphere"] = {"model": "thin_air"}
    with pytest.raises(ProblemError, match=r"atmosphere\.heights: missing"):
        problem_from_dict(data)
