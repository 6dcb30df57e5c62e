"""Three-dimensional flight: the planar optimum reproduced, coasts that conserve what
two-body motion conserves, the J2 drift of the node, orbit targets met, and targets the
site cannot reach refused.

Sources beside each check: the planar kind's own optimum (a point-mass ascent in the plane
of an orbit through the site is planar flight, so the two kinds must agree); Kepler
(energy and angular momentum of two-body motion); Vallado, *Fundamentals of
Astrodynamics and Applications*, eq. 9-41 (secular node rate of J2,
dOmega/dt = -3/2 n J2 (R/p)^2 cos i); spherical trigonometry of the launch azimuth
(cos i = cos(latitude) sin(Az), Vallado section 6.4).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from ascentplan import load_problem, problem_from_dict, solve
from ascentplan.models import dynamics, orbit
from ascentplan.problem.loader import ProblemError
from ascentplan.replay.rates import Rates

SMALL = {
    "name": "three-d-small",
    "dynamics": "three_dimensional",
    "planet": {"name": "earth", "shape": "sphere"},
    "atmosphere": {"model": "us1976"},
    "aerodynamics": {"reference_area": "3.0 m^2", "drag": 0.3},
    "vehicle": {"payload_mass": "500 kg", "stages": [
        {"name": "first", "propellant_mass": "24.5 t", "dry_mass": "2.3 t",
         "thrust_vacuum": "520 kN", "isp_vacuum": "296 s", "throttle": {"min": 0.5, "max": 1.0}},
        {"name": "second", "propellant_mass": "5.6 t", "dry_mass": "650 kg",
         "thrust_vacuum": "110 kN", "isp_vacuum": "336 s", "throttle": {"min": 0.5, "max": 1.0}},
    ]},
    "launch": {"altitude": "0 m", "latitude": "0 deg", "vertical_rise": "8 s"},
    "target": {"circular_orbit_altitude": "200 km", "inclination": "0 deg"},
    "objective": "max_payload",
    "mesh": {"nodes_per_phase": 20, "max_refinements": 1},
}


def _document(**changes):
    doc = {k: (dict(v) if isinstance(v, dict) else v) for k, v in SMALL.items()}
    for path, value in changes.items():
        section, key = path.split(".")
        doc[section][key] = value
    return doc


def _planar_twin(doc):
    """The same vehicle and target flown by the planar kind (no inclination key)."""
    twin = {k: (dict(v) if isinstance(v, dict) else v) for k, v in doc.items()}
    twin["dynamics"] = "planar"
    twin["target"] = {k: v for k, v in twin["target"].items() if k != "inclination"}
    return twin


@pytest.mark.parametrize("latitude", ["0 deg", "28.5 deg"])
def test_planar_optimum_reproduced_from_the_equator_and_at_latitude_equal_inclination(latitude):
    """From the equator to an equatorial orbit, and from a site whose latitude equals the
    target inclination (a due-east launch is then in the orbit plane), the
    three-dimensional optimum equals the planar kind's within 0.05 % (the planar kind
    as the independent reference)."""
    doc = _document(**{"launch.latitude": latitude, "target.inclination": latitude})
    three = solve(problem_from_dict(doc))
    planar = solve(problem_from_dict(_planar_twin(doc)))
    assert three.status == "optimal" and planar.status == "optimal"
    assert three.objective_value == pytest.approx(planar.objective_value, rel=5e-4)
    block = three.summary()["orbit"]
    assert block["passed"] and {c["name"] for c in block["checks"]} >= {
        "perigee_altitude_m", "apogee_altitude_m", "inclination_deg"}
    xb = np.asarray(three.trajectory.burnout_state())
    r, v = xb[:3], xb[3:6]
    replayed = orbit.elements(r, v, three.problem.planet.gravitational_parameter)
    assert math.degrees(replayed["inclination"]) == pytest.approx(
        float(latitude.split()[0]), abs=0.01)
    assert block["replay"]["inclination_deg"] == pytest.approx(math.degrees(
        replayed["inclination"]), abs=1e-9)


def _coast(problem, x0, duration, n_points=2000):
    """A coast integrated with the replay's rate function (DOP853, rtol 1e-10)."""
    model = dynamics.flight_model(problem)
    rates = Rates(model)
    prop = dynamics.Propulsion(0.0, 3000.0, 0.0)
    kind = model.kind

    def rule(t, x):
        return [0.0, 0.0, 0.0]

    fun = rates.bind(prop, rule)
    y0 = np.concatenate([x0, np.zeros(rates.function.size1_out(0) - kind.n_states)])
    t = np.linspace(0.0, duration, n_points)
    sol = solve_ivp(fun, (0.0, duration), y0, method="DOP853", rtol=1e-11, atol=1e-6,
                    t_eval=t)
    return sol.t, sol.y[:kind.n_states]


def _vacuum_problem(gravity):
    doc = _document(**{"launch.latitude": "30 deg"})
    doc["atmosphere"] = {"model": "vacuum"}
    doc.pop("aerodynamics")
    doc["gravity"] = gravity
    doc["planet"] = "earth"
    doc["target"] = {"circular_orbit_altitude": "400 km"}
    return problem_from_dict(doc)


def test_coast_conserves_energy_and_angular_momentum():
    """Inverse-square gravity in a vacuum: specific energy and the angular-momentum
    vector stay constant over a day of coasting (Kepler), to 1e-9 relative."""
    problem = _vacuum_problem("inverse_square")
    mu = problem.planet.gravitational_parameter
    r0 = problem.planet.radius + 500e3
    inc = math.radians(51.6)
    x0 = np.array([r0, 0.0, 0.0, 0.0, 7700.0 * math.cos(inc), 7700.0 * math.sin(inc), 1e3])
    _, x = _coast(problem, x0, 86400.0)
    energy = 0.5 * np.sum(x[3:6] ** 2, axis=0) - mu / np.linalg.norm(x[:3], axis=0)
    h = np.cross(x[:3].T, x[3:6].T)
    assert np.max(np.abs(energy / energy[0] - 1.0)) < 1e-9
    assert np.max(np.abs(h - h[0])) / np.linalg.norm(h[0]) < 1e-9


def test_j2_drift_of_the_node_against_its_secular_rate():
    """J2 moves the ascending node at dOmega/dt = -3/2 n J2 (R/p)^2 cos i (Vallado
    eq. 9-41); over 15 orbits the replayed drift agrees within 1 % (the rest is
    short-period motion and the difference of osculating from mean elements)."""
    problem = _vacuum_problem("j2")
    planet = problem.planet
    mu, R, j2 = planet.gravitational_parameter, planet.radius, planet.j2
    r0 = R + 500e3
    inc = math.radians(51.6)
    v0 = math.sqrt(mu / r0)
    x0 = np.array([r0, 0.0, 0.0, 0.0, v0 * math.cos(inc), v0 * math.sin(inc), 1e3])
    period = 2 * math.pi * math.sqrt(r0 ** 3 / mu)
    t, x = _coast(problem, x0, 15 * period, n_points=15 * 400 + 1)
    el = orbit.elements(x[:3], x[3:6], mu)
    node = np.unwrap(el["ascending_node"])
    drift = (node[-1] - node[0]) / (t[-1] - t[0])
    a, e = el["semi_major_axis"].mean(), el["eccentricity"].mean()
    p = a * (1 - e * e)
    expected = -1.5 * math.sqrt(mu / a ** 3) * j2 * (R / p) ** 2 * math.cos(inc)
    assert drift == pytest.approx(expected, rel=0.01)


def test_impossible_inclination_is_refused_with_its_value():
    """A plane through the planet's centre cannot hold a site at latitude 38.6 deg with
    an inclination of 30 deg (cos i = cos(lat) sin(Az) has no solution): refused before
    any solve, naming the key and the value."""
    doc = _document(**{"launch.latitude": "38.6 deg", "target.inclination": "30 deg"})
    with pytest.raises(ProblemError) as err:
        problem_from_dict(doc)
    text = str(err.value)
    assert "target.inclination: cannot be reached from the launch site" in text
    assert "'30 deg'" in text and "38.6 deg" in text
    # a dog-leg allowance makes it a question for the optimiser instead
    doc["launch"]["dog_leg"] = "10 deg"
    assert problem_from_dict(doc).target.inclination == pytest.approx(math.radians(30.0))


def test_orbit_keys_refused_for_planar_and_pairs_completed():
    doc = _planar_twin(_document())
    doc["target"] = {"circular_orbit_altitude": "200 km", "inclination": "10 deg"}
    with pytest.raises(ProblemError, match="target.inclination: applies to three_dimensional "
                                           "flight only"):
        problem_from_dict(doc)
    doc = _document()
    doc["target"] = {"perigee_altitude": "200 km"}
    with pytest.raises(ProblemError, match="target.apogee_altitude: missing"):
        problem_from_dict(doc)
    doc = _planar_twin(_document())
    doc["gravity"] = "j2"
    with pytest.raises(ProblemError, match="gravity: j2 gravity depends on latitude"):
        problem_from_dict(doc)


def test_transfer_orbit_example_reaches_its_orbit():
    """The inclined transfer-orbit example, on a coarse mesh: optimal, verified, and the
    replay's orbit has the target perigee and apogee (0.1 % or 1 km) and inclination
    (0.01 deg)."""
    from dataclasses import replace

    problem = load_problem("problems/medium_launcher_transfer.yaml")
    problem = replace(problem, mesh=replace(problem.mesh, nodes_per_phase=20))
    result = solve(problem)
    assert result.status == "optimal", result.message
    planet = problem.planet
    xb = np.asarray(result.trajectory.burnout_state())
    el = orbit.elements(xb[:3], xb[3:6], planet.gravitational_parameter)
    target = problem.target
    for radius, altitude in ((el["perigee_radius"], target.perigee_altitude),
                             (el["apogee_radius"], target.apogee_altitude)):
        wanted = planet.radius + altitude
        assert abs(radius - wanted) <= max(1e3, 1e-3 * wanted)
    assert math.degrees(el["inclination"]) == pytest.approx(41.0, abs=0.01)
    # the azimuth it found: cos i = cos(lat_geocentric) sin(Az_inertial) (Vallado 6.4)
    assert result.objective_value > 1000.0


_ORBITS = {
    # a southerly azimuth from 30 deg N to 60 deg (the branch pi - Az of Vallado 6.4)
    "southerly": ({"launch.latitude": "30 deg", "launch.direction": "southerly"},
                  {"circular_orbit_altitude": "200 km", "inclination": "60 deg"}),
    "polar": ({"launch.latitude": "30 deg"},
              {"circular_orbit_altitude": "200 km", "inclination": "90 deg"}),
    "retrograde": ({"launch.latitude": "30 deg"},
                   {"circular_orbit_altitude": "200 km", "inclination": "100 deg"}),
    # node chosen so that the plane holds the site near liftoff: sin u = sin(lat)/sin(i),
    # tan(alpha - node) = cos(i) tan(u) gives node = -43.5 deg at liftoff (spherical
    # trigonometry, Vallado 6.4), plus the ~2 deg the planet turns during the ascent
    "argument_of_perigee": ({"launch.latitude": "30 deg"},
                            {"perigee_altitude": "200 km", "apogee_altitude": "1000 km",
                             "inclination": "40 deg", "ascending_node": "318 deg",
                             "argument_of_perigee": "70 deg"}),
}


def _coarse(case):
    changes, target = _ORBITS[case]
    doc = _document(**changes)
    doc["target"] = target
    doc["mesh"] = {"nodes_per_phase": 10, "max_refinements": 1}
    return problem_from_dict(doc)


@pytest.mark.parametrize("case", sorted(_ORBITS))
def test_southerly_polar_retrograde_and_perigee_targets_are_met(case):
    """Each target met by the replay: inclination within 0.01 deg, node and argument of
    perigee (where given) within 0.1 deg, perigee and apogee within max(1 km, 0.1 %), as
    orbit.elements computes them from the replayed burnout (Curtis algorithm 4.2); a
    southerly launch crosses the target plane heading south (negative north component of
    the inertial velocity at burnout: geometry of the branch, common practice)."""
    problem = _coarse(case)
    result = solve(problem)
    assert result.status == "optimal", result.message
    planet, target = problem.planet, problem.target
    xb = np.asarray(result.trajectory.burnout_state())
    el = orbit.elements(xb[:3], xb[3:6], planet.gravitational_parameter)
    assert math.degrees(el["inclination"]) == pytest.approx(
        math.degrees(target.inclination), abs=0.01)
    wanted = orbit.target_radii(target, planet)
    for got, want in zip((el["perigee_radius"], el["apogee_radius"]), wanted):
        assert abs(got - want) <= max(1e3, 1e-3 * (want - planet.radius))
    if target.ascending_node is not None:
        assert math.degrees(el["ascending_node"]) == pytest.approx(
            math.degrees(target.ascending_node), abs=0.1)
        assert math.degrees(el["argument_of_perigee"]) == pytest.approx(
            math.degrees(target.argument_of_perigee), abs=0.1)
    if case == "southerly":
        r, v = xb[:3], xb[3:6]
        north = np.array([0.0, 0.0, 1.0]) - r[2] * r / float(r @ r)
        assert float(v @ north) < 0.0


def test_written_schedule_flies_back_the_same_three_dimensional_flight(tmp_path):
    """schedule.csv of a three-dimensional solve carries heading_deg; read back and flown
    it gives the solve's own replay to 1e-6 (relative in position and velocity, the same
    integrator on the same nodes: a self-consistency check)."""
    from ascentplan import simulate
    from ascentplan.output.files import read_schedule_csv, write_schedule_csv
    from ascentplan.problem.model import phase_plan

    result = solve(_coarse("polar"))
    assert result.status == "optimal", result.message
    path = tmp_path / "schedule.csv"
    write_schedule_csv(result.schedule, path, phase_plan(result.problem))
    header = next(line for line in path.read_text().splitlines() if not line.startswith("#"))
    assert header.endswith(",pitch_deg,heading_deg")
    schedule = read_schedule_csv(path)
    again = simulate(result.solved_problem, schedule, coast_to_apogee=False)
    x_solve = np.asarray(result.trajectory.burnout_state())
    x_file = np.asarray(again.burnout_state())
    assert np.linalg.norm(x_file[:3] - x_solve[:3]) <= 1e-6 * np.linalg.norm(x_solve[:3])
    assert np.linalg.norm(x_file[3:6] - x_solve[3:6]) <= 1e-6 * np.linalg.norm(x_solve[3:6])
    assert x_file[6] == pytest.approx(x_solve[6], rel=1e-6)


def test_circular_orbit_over_the_ellipsoid_is_verified_at_its_radius():
    """A circular-orbit altitude is above the equatorial radius (the orbit catalogues'
    convention, which the NLP's condition uses); off the equator of the WGS 84 ellipsoid
    the geodetic altitude of the same point is up to 21 km higher (a - b = 21.4 km, NIMA
    TR8350.2), so verification must read the radius too, or a met target would fail."""
    doc = _document(**{"launch.latitude": "45 deg"})
    doc["planet"] = "earth"
    doc["target"] = {"circular_orbit_altitude": "200 km", "inclination": "50 deg"}
    doc["mesh"] = {"nodes_per_phase": 10, "max_refinements": 1}
    result = solve(problem_from_dict(doc))
    assert result.status == "optimal", result.message
    check = next(c for c in result.verification.target_miss.conditions
                 if c.name == "altitude")
    xb = np.asarray(result.trajectory.burnout_state())
    radius_altitude = float(np.linalg.norm(xb[:3])) - result.problem.planet.radius
    assert check.replayed == pytest.approx(radius_altitude, abs=1e-6)
    assert abs(radius_altitude - 200e3) <= 100.0


def test_steering_rate_limit_bounds_the_turn_of_pitch_and_heading_together():
    """max_steering_rate bounds the angle between neighbouring nodes' thrust directions
    (pitch and heading, spherical law of cosines) divided by the interval, so the
    combined turning rate of the flown schedule stays below it (common practice)."""
    free = solve(_coarse("polar"))
    assert free.status == "optimal", free.message
    turning = _fastest_turn(free)
    limit = 0.6 * turning
    problem = _coarse("polar")
    stages = tuple(replace(s, max_steering_rate=limit) for s in problem.vehicle.stages)
    result = solve(replace(problem, vehicle=replace(problem.vehicle, stages=stages)))
    assert result.status == "optimal", result.message
    assert _fastest_turn(result) <= limit * (1 + 1e-5)
    assert result.objective_value <= free.objective_value + 1e-6


def _fastest_turn(result) -> float:
    """Largest turning rate of the thrust direction between neighbouring nodes of the
    burns [rad/s], from the optimiser's node controls (what the replay flies)."""
    from ascentplan.models.dynamics import dynamics_kind
    from ascentplan.problem.model import phase_plan

    kind = dynamics_kind(result.problem.dynamics)
    fastest = 0.0
    for ph, t, u in zip(phase_plan(result.problem), result.solution.times,
                        result.solution.controls):
        if ph.kind != "burn":
            continue
        p, h = u[kind.control_index("pitch")], u[kind.control_index("heading")]
        cos_angle = (np.sin(p[:-1]) * np.sin(p[1:])
                     + np.cos(p[:-1]) * np.cos(p[1:]) * np.cos(np.diff(h)))
        angle = np.arccos(np.clip(cos_angle, -1.0, 1.0))
        fastest = max(fastest, float(np.max(angle / np.diff(t))))
    return fastest
