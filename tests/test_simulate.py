"""Forward simulation against closed forms: rocket equation, vertical flight, Kepler orbits."""

from __future__ import annotations

import json
import math
import pickle
from dataclasses import dataclass

import numpy as np
import pytest
from scipy.optimize import brentq, minimize_scalar

from ascentplan.cautions import CAUTION
from ascentplan.cli import run_simulate
from ascentplan.constants import G0, PLANETS
from ascentplan.models.aero import ConstantDrag
from ascentplan.models.atmosphere import ExponentialAtmosphere, Vacuum
from ascentplan.models.gravity import ConstantGravity, InverseSquareGravity
from ascentplan.output.files import (
    ScheduleFileError,
    read_schedule_csv,
    simulation_summary,
    write_schedule_csv,
    write_trajectory_csv,
)
from ascentplan.problem.model import (
    Aerodynamics,
    Launch,
    Planet,
    Problem,
    Stage,
    TimeSchedule,
    Vehicle,
    phase_plan,
)
from ascentplan.replay.simulate import PhaseControls, PhaseSchedule, simulate


@dataclass(frozen=True)
class _NoGravity:
    """Zero gravity (the problem models insist on g > 0; this one is for the rocket
    equation alone)."""

    def acceleration(self, radius):
        return 0.0 * radius


EARTH = Planet("earth", **PLANETS["earth"])
MU = EARTH.gravitational_parameter
STILL_EARTH = Planet("still earth", EARTH.radius, MU, rotation_rate=0.0)
NO_DRAG = Aerodynamics(reference_area=1.0, drag=ConstantDrag(0.3))

# G. F. Simmons, Differential Equations with Applications and Historical Notes
# (McGraw-Hill 1972), ch. 2, miscellaneous problem 29, a case computed from its formula:
# u = 2000 m/s, m0 = 1000 kg, 800 kg of propellant burnt at 10 kg/s, g = 9.81 m/s^2
U, M0, MP, ALPHA, G = 2000.0, 1000.0, 800.0, 10.0, 9.81


def _problem(dynamics, stages, *, gravity, atmosphere=None, planet=EARTH, payload=0.0,
             launch=None, objective="max_burnout_speed", aero=NO_DRAG, name="test"):
    return Problem(name=name, dynamics=dynamics, vehicle=Vehicle(payload, tuple(stages)),
                   planet=planet, atmosphere=atmosphere or Vacuum(), gravity=gravity,
                   aerodynamics=aero, launch=launch or Launch(), objective=objective)


def _simmons_stage(**kw):
    return Stage("simmons", propellant_mass=MP, dry_mass=M0 - MP, thrust_vacuum=ALPHA * U,
                 exhaust_speed=U, **kw)


def _simmons_v(t, alpha=ALPHA):
    # Simmons 1972, ch. 2 misc. problem 29: v(t) = u ln(m0/(m0 - alpha t)) - g t
    return U * np.log(M0 / (M0 - alpha * t)) - G * t


def _simmons_h(t, alpha=ALPHA):
    # Simmons 1972: h(t) = u t - g t^2/2 - (u (m0 - alpha t)/alpha) ln(m0/(m0 - alpha t))
    m = M0 - alpha * t
    return U * t - 0.5 * G * t * t - (U * m / alpha) * np.log(M0 / m)


def _kepler_apoapsis(r, vr, vt):
    """Apoapsis radius and time from the state to it.

    Vis-viva energy, angular momentum and Kepler's equation M = E - e sin E (Newton,
    Kepler; any orbital-mechanics text, e.g. Curtis, ch. 2-3, from memory).
    """
    energy = 0.5 * (vr * vr + vt * vt) - MU / r
    a = -MU / (2.0 * energy)
    h = r * vt
    e = math.sqrt(1.0 + 2.0 * energy * h * h / (MU * MU))
    # eccentric anomaly of the current point, on the ascending half of the orbit
    cos_e = (1.0 - r / a) / e
    ecc = math.acos(max(-1.0, min(1.0, cos_e)))
    if vr < 0:
        ecc = 2.0 * math.pi - ecc
    n = math.sqrt(MU / a ** 3)
    mean = ecc - e * math.sin(ecc)
    return a * (1.0 + e), (math.pi - mean) / n


# --------------------------------------------------------------------------------------


@pytest.mark.parametrize("dynamics", ["planar", "vertical"])
def test_rocket_equation_without_gravity(dynamics):
    stage = Stage("s", propellant_mass=8000.0, dry_mass=1000.0, thrust_vacuum=200e3,
                  exhaust_speed=3000.0)
    problem = _problem(dynamics, [stage], gravity=_NoGravity(), payload=1000.0,
                       launch=Launch(pitch_over=0.3), planet=STILL_EARTH)
    traj = simulate(problem, coast_to_apogee=False)
    assert traj.status == "ok", traj.message
    x = traj.burnout_state()
    speed = math.hypot(x[2], x[3]) if dynamics == "planar" else x[1]
    # Tsiolkovsky 1903; Curtis, Orbital Mechanics, "Rocket vehicle dynamics": c ln(m0/mf)
    expected = 3000.0 * math.log(10000.0 / 2000.0)
    assert speed == pytest.approx(expected, rel=1e-8)
    # burn time m_p c / F (definition of mass flow)
    assert traj.burnout_time() == pytest.approx(8000.0 * 3000.0 / 200e3, rel=1e-10)


def test_vertical_flight_simmons_case():
    problem = _problem("vertical", [_simmons_stage()], gravity=ConstantGravity(G))
    traj = simulate(problem)
    assert traj.status == "ok", traj.message
    # Simmons (1972) closed form, the computed case above, 1e-6 relative
    h10, v10, _ = traj.state_at(10.0)
    assert v10 == pytest.approx(112.62103, rel=1e-6)
    assert h10 == pytest.approx(544.60718, rel=1e-6)
    hb, vb, mb = traj.burnout_state()
    assert traj.burnout_time() == pytest.approx(80.0, rel=1e-9)
    assert vb == pytest.approx(2434.07582, rel=1e-6)
    assert hb == pytest.approx(64230.48350, rel=1e-6)
    assert mb == pytest.approx(200.0, rel=1e-12)
    apogee = [e for e in traj.events if e["kind"] == "apogee"]
    assert len(apogee) == 1
    assert apogee[0]["altitude"] == pytest.approx(366204.24096, rel=1e-6)
    assert apogee[0]["time"] == pytest.approx(328.1219, rel=1e-6)
    # the whole burn against the closed form (Simmons 1972), 1e-9 of the burnout values
    burn = traj.phase == 0
    t = traj.time[burn]
    assert np.max(np.abs(traj.state[1, burn] - _simmons_v(t))) < 1e-9 * 2434.07582
    assert np.max(np.abs(traj.state[0, burn] - _simmons_h(t))) < 1e-9 * 64230.48350


def test_kepler_coast_conserves_energy_and_angular_momentum():
    # a planet spinning at 8500 m/s at the surface launches a supercircular coast;
    # thrust is zero throughout (throttle 0), so the flight is a Kepler ellipse
    v0 = 8500.0
    planet = Planet("spin", EARTH.radius, MU, rotation_rate=v0 / EARTH.radius)
    stage = Stage("s", propellant_mass=100.0, dry_mass=100.0, thrust_vacuum=1e4,
                  exhaust_speed=3000.0)
    problem = _problem("planar", [stage], gravity=InverseSquareGravity(MU), planet=planet)
    schedule = PhaseSchedule((PhaseControls(1000.0, [0.0, 1000.0], [0.0, 0.0], [0.0, 0.0]),))
    traj = simulate(problem, schedule)
    assert traj.status == "ok", traj.message
    r, _, vr, vt, _ = traj.state
    energy = 0.5 * (vr ** 2 + vt ** 2) - MU / r
    momentum = r * vt
    # Newton/Kepler: specific energy and angular momentum are constants of a coast
    assert np.max(np.abs(energy / energy[0] - 1.0)) < 1e-9
    assert np.max(np.abs(momentum / momentum[0] - 1.0)) < 1e-9
    # Kepler: apoapsis a(1 + e) reached half a period after the periapsis at liftoff
    r_apo, t_apo = _kepler_apoapsis(EARTH.radius, 0.0, v0)
    apogee = [e for e in traj.events if e["kind"] == "apogee"]
    assert len(apogee) == 1
    assert apogee[0]["altitude"] + EARTH.radius == pytest.approx(r_apo, rel=1e-9)
    assert apogee[0]["time"] == pytest.approx(t_apo, rel=1e-8)


def test_piecewise_linear_throttle_replayed_exactly():
    stages = [_simmons_stage(throttle_min=0.3),
              Stage("upper", propellant_mass=100.0, dry_mass=40.0, thrust_vacuum=6000.0,
                    exhaust_speed=3000.0, throttle_min=0.3)]
    problem = _problem("vertical", stages, gravity=ConstantGravity(G), payload=60.0)
    t1 = np.array([0.0, 7.5, 20.0, 33.3, 50.0])
    eta1 = np.array([1.0, 0.55, 0.8, 0.5, 0.9])
    t2 = np.array([0.0, 4.0, 11.0, 20.0])
    eta2 = np.array([0.4, 1.0, 0.35, 0.7])
    schedule = PhaseSchedule((PhaseControls(50.0, t1, eta1), PhaseControls(20.0, t2, eta2)))
    traj = simulate(problem, schedule, coast_to_apogee=False)
    assert traj.status == "ok", traj.message
    assert traj.phase_bounds[1] == pytest.approx((50.0, 70.0), abs=1e-12)
    vehicle = problem.vehicle
    for k, (times, eta, start, m_start) in enumerate([
            (t1, eta1, 0.0, vehicle.liftoff_mass),
            (t2, eta2, 50.0, vehicle.mass_above(0))]):
        stage = stages[k]
        mdot = eta * stage.max_mass_flow
        # trapezoid rule: exact for the integral of a linear mass flow (common practice)
        used = np.concatenate([[0.0], np.cumsum(0.5 * (mdot[1:] + mdot[:-1]) * np.diff(times))])
        for tj, used_j in zip(times, used):
            h, v, m = traj.state_at(start + tj, phase=k)
            assert m == pytest.approx(m_start - used_j, rel=1e-12)
        # rocket equation with constant gravity holds for any burn-rate history:
        # v - v_start = c ln(m_start/m) - g (t - t_start) (Tsiolkovsky; Simmons 1972)
        v_start = traj.state_at(start, phase=k)[1]
        for tj, used_j in zip(times, used):
            v = traj.state_at(start + tj, phase=k)[1]
            dv = stage.exhaust_speed * math.log(m_start / (m_start - used_j)) - G * tj
            assert v - v_start == pytest.approx(dv, rel=1e-9, abs=1e-9)
        # the recorded controls are the linear interpolant itself
        mask = traj.phase == k
        np.testing.assert_allclose(traj.controls[0, mask],
                                   np.interp(traj.time[mask] - start, times, eta),
                                   rtol=1e-14, atol=1e-14)
    # staging drops the spent stage with its unburnt propellant
    staging = [e for e in traj.events if e["kind"] == "staging"]
    assert len(staging) == 1
    burnt = 0.5 * np.sum((eta1[1:] + eta1[:-1]) * np.diff(t1)) * stages[0].max_mass_flow
    assert staging[0]["dropped_mass"] == pytest.approx(stages[0].mass - burnt, rel=1e-11)
    assert staging[0]["mass"] == pytest.approx(vehicle.mass_above(0), rel=1e-14)


def test_staging_on_depletion_drops_dry_mass_and_keeps_both_sides():
    stages = [_simmons_stage(),
              Stage("upper", propellant_mass=150.0, dry_mass=50.0, thrust_vacuum=9000.0,
                    exhaust_speed=3000.0)]
    problem = _problem("vertical", stages, gravity=ConstantGravity(G), payload=100.0)
    traj = simulate(problem)
    assert traj.status == "ok", traj.message
    kinds = [e["kind"] for e in traj.events]
    assert kinds == ["liftoff", "burnout", "staging", "burnout", "apogee"]
    vehicle = problem.vehicle
    burnout, staging = traj.events[1], traj.events[2]
    # mass bookkeeping of serial staging: the spent stage leaves (common practice)
    assert burnout["mass"] == pytest.approx(vehicle.burnout_mass(0), rel=1e-12)
    assert staging["mass"] == pytest.approx(vehicle.mass_above(0), rel=1e-14)
    assert staging["dropped_mass"] == pytest.approx(stages[0].dry_mass, rel=1e-9)
    t_stage = burnout["time"]
    assert t_stage == pytest.approx(MP / ALPHA, rel=1e-9)  # burn time m_p / mdot
    at_stage = np.nonzero(traj.time == t_stage)[0]
    assert len(at_stage) == 2  # both sides of the mass jump
    assert traj.state[2, at_stage[0]] == pytest.approx(vehicle.burnout_mass(0), rel=1e-12)
    assert traj.state[2, at_stage[1]] == pytest.approx(vehicle.mass_above(0), rel=1e-14)
    # altitude and speed are continuous through staging
    assert traj.state[0, at_stage[0]] == traj.state[0, at_stage[1]]
    assert traj.state[1, at_stage[0]] == traj.state[1, at_stage[1]]
    # no duplicate sample times within a phase
    for k in range(len(traj.phase_kinds)):
        assert np.all(np.diff(traj.time[traj.phase == k]) > 0)


def test_impact_when_thrust_is_below_weight():
    # 4.5 kg/s at 2000 m/s gives 9000 N on 1000 kg: sinks from the pad
    stage = Stage("weak", propellant_mass=MP, dry_mass=M0 - MP, thrust_vacuum=4.5 * U,
                  exhaust_speed=U)
    problem = _problem("vertical", [stage], gravity=ConstantGravity(G))
    traj = simulate(problem)
    assert traj.status == "impact"
    assert traj.events[-1]["kind"] == "impact"
    # Simmons 1972 closed form h(t) with alpha = 4.5 kg/s reaches -1 m (impact margin)
    t_hit = brentq(lambda t: _simmons_h(t, 4.5) + 1.0, 1e-3, 10.0, xtol=1e-14)
    assert traj.events[-1]["time"] == pytest.approx(t_hit, rel=1e-9)
    assert traj.state[0, -1] == pytest.approx(-1.0, abs=1e-9)


def test_impact_during_a_long_coast():
    stages = [_simmons_stage(coast_after=1000.0),
              Stage("tiny", propellant_mass=1.0, dry_mass=1.0, thrust_vacuum=100.0,
                    exhaust_speed=2000.0)]
    # the burn is not Simmons' any more (the upper stage rides along); only the ballistic
    # fall after burnout is checked
    problem = _problem("vertical", stages, gravity=ConstantGravity(G), payload=0.0)
    traj = simulate(problem)
    assert traj.status == "impact", traj.message
    burnout = next(e for e in traj.events if e["kind"] == "burnout")
    tb, hb, vb = burnout["time"], burnout["altitude"], burnout["speed"]
    # ballistic flight in constant gravity (Galileo; any mechanics text):
    # hb + vb s - g s^2/2 = -1 m
    s = (vb + math.sqrt(vb * vb + 2.0 * G * (hb + 1.0))) / G
    assert traj.events[-1]["kind"] == "impact"
    assert traj.events[-1]["phase"] == 1
    assert traj.events[-1]["time"] == pytest.approx(tb + s, rel=1e-9)
    # the apogee passed on the way is recorded: vb/g after burnout, vb^2/(2g) higher
    apogee = [e for e in traj.events if e["kind"] == "apogee"]
    assert len(apogee) == 1
    assert apogee[0]["time"] == pytest.approx(tb + vb / G, rel=1e-9)
    assert apogee[0]["altitude"] == pytest.approx(hb + vb * vb / (2.0 * G), rel=1e-9)


def test_apogee_phase_of_the_plan_ends_on_the_kepler_apoapsis():
    stage = Stage("s", propellant_mass=8000.0, dry_mass=1000.0, thrust_vacuum=200e3,
                  exhaust_speed=3000.0)
    problem = _problem("planar", [stage], gravity=InverseSquareGravity(MU), payload=500.0,
                       launch=Launch(vertical_rise=10.0, pitch_over=math.radians(4.0)),
                       objective="max_apogee")
    assert phase_plan(problem)[-1].ends_at_apogee
    traj = simulate(problem)
    assert traj.status == "ok", traj.message
    assert traj.phase_kinds == ("rise", "burn", "coast")
    r, _, vr, vt, _ = traj.burnout_state()
    r_apo, t_apo = _kepler_apoapsis(r, vr, vt)
    apogee = traj.events[-1]
    assert apogee["kind"] == "apogee"
    # Kepler: the coast from burnout peaks at a(1 + e) after the time of flight to it
    assert apogee["altitude"] + EARTH.radius == pytest.approx(r_apo, rel=1e-9)
    assert apogee["time"] - traj.burnout_time() == pytest.approx(t_apo, rel=1e-7)
    assert abs(traj.state[2, -1]) < 1e-6


def test_default_steering_flies_a_gravity_turn():
    stage = Stage("s", propellant_mass=20000.0, dry_mass=2000.0, thrust_vacuum=450e3,
                  exhaust_speed=2900.0)
    problem = _problem("planar", [stage], gravity=InverseSquareGravity(MU), payload=500.0,
                       atmosphere=ExponentialAtmosphere(),
                       aero=Aerodynamics(3.0, ConstantDrag(0.3)),
                       launch=Launch(vertical_rise=8.0, pitch_over=math.radians(2.0)))
    traj = simulate(problem, coast_to_apogee=False)
    assert traj.status == "ok", traj.message
    t, alpha = traj.time, traj.quantities["angle_of_attack"]
    turn = (traj.phase == 1) & (t > 8.0 + 5.0 + 1e-9)
    # a gravity turn keeps the thrust on the air-relative velocity (common practice)
    assert np.max(np.abs(alpha[turn])) < 1e-8
    rise = traj.phase == 0
    np.testing.assert_allclose(traj.controls[1, rise], 0.5 * math.pi, rtol=0, atol=0)
    assert np.all(traj.controls[0, traj.phase == 1] == stage.throttle_max)
    # peak dynamic pressure: a refined maximum is not below any sample
    value, time, index = traj.peak("dynamic_pressure")
    assert value >= np.max(traj.quantities["dynamic_pressure"])
    assert abs(time - traj.time[index]) <= np.max(np.diff(traj.time[traj.phase == 1]))


def test_time_schedule_with_flameout_of_a_phase_schedule():
    problem = _problem("vertical", [_simmons_stage()], gravity=ConstantGravity(G))
    # ask for 100 s of full throttle: propellant for 80 s only
    schedule = PhaseSchedule((PhaseControls(100.0, [0.0, 100.0], [1.0, 1.0]),))
    traj = simulate(problem, schedule, coast_to_apogee=False)
    flameout = [e for e in traj.events if e["kind"] == "flameout"]
    assert len(flameout) == 1
    assert flameout[0]["time"] == pytest.approx(80.0, rel=1e-9)  # m_p / mdot
    # the same flight from a time schedule (held throttle) stages on depletion
    same = simulate(_problem("vertical", [_simmons_stage()], gravity=ConstantGravity(G)),
                    TimeSchedule((0.0, 10.0), (1.0, 1.0)), coast_to_apogee=False)
    np.testing.assert_allclose(same.burnout_state(), traj.state_at(80.0), rtol=1e-9)
    # a timed phase that runs dry coasts, engine off, to its scheduled end
    assert traj.burnout_time() == pytest.approx(100.0, rel=1e-12)
    after = traj.time > 80.0 + 1e-6
    np.testing.assert_allclose(traj.state[2, after], 200.0, rtol=1e-12)
    assert np.all(traj.controls[0, after] == 0.0)
    # Simmons (1972): after burnout, v falls by g per second
    v_b = traj.state_at(80.0)[1]
    assert traj.burnout_state()[1] == pytest.approx(v_b - G * 20.0, rel=1e-9)


def test_schedule_csv_round_trip_and_errors(tmp_path):
    stage = Stage("s", propellant_mass=8000.0, dry_mass=1000.0, thrust_vacuum=200e3,
                  exhaust_speed=3000.0, throttle_min=0.5)
    problem = _problem("planar", [stage], gravity=InverseSquareGravity(MU), payload=500.0,
                       launch=Launch(vertical_rise=10.0), name="csv-case")
    plan = phase_plan(problem)
    schedule = PhaseSchedule((
        PhaseControls(10.0, [0.0, 10.0], [1.0, 1.0], [math.pi / 2, math.pi / 2]),
        PhaseControls(100.0, [0.0, 30.0, 100.0], [1.0, 0.7, 0.9],
                      np.radians([88.0, 50.0, 20.0])),
    ))
    path = tmp_path / "schedule.csv"
    write_schedule_csv(schedule, path, plan)
    back = read_schedule_csv(path)
    # round trip: the file gives back what was written
    for a, b in zip(schedule.phases, back.phases):
        assert a.duration == b.duration
        np.testing.assert_array_equal(a.time, b.time)
        np.testing.assert_array_equal(a.throttle, b.throttle)
        np.testing.assert_allclose(a.pitch, b.pitch, rtol=1e-15)
    assert [p.kind for p in back.phases] == ["rise", "burn"]

    bad = tmp_path / "bad.csv"
    bad.write_text("phase,kind,stage,phase_time_s,time_s,throttle,pitch_deg\n"
                   "0,rise,0,0,0,1,90\n0,rise,0,abc,5,1,90\n")
    with pytest.raises(ScheduleFileError, match=r"line 3: phase_time_s"):
        read_schedule_csv(bad)
    missing = tmp_path / "missing.csv"
    missing.write_text("phase,kind,stage,time_s,throttle\n0,burn,0,0,1\n")
    with pytest.raises(ScheduleFileError, match="missing column"):
        read_schedule_csv(missing)

    out = tmp_path / "out"
    assert run_simulate(problem, out=out, schedule=bad) == 2
    assert run_simulate(problem, out=out, schedule=path) == 0
    summary = json.loads((out / "summary.json").read_text())
    assert summary["status"] == "ok" and summary["caution"] == CAUTION
    # comment lines ("# ", common practice) open the file, then the column names
    lines = (out / "trajectory.csv").read_text().splitlines()
    header = next(line for line in lines if not line.startswith("#")).split(",")
    for column in ("time_s", "altitude_m", "speed_m_s", "dynamic_pressure_kPa",
                   "axial_acceleration_g0", "q_alpha_kPa_deg", "pitch_deg"):
        assert column in header


def test_summary_matches_trajectory(tmp_path):
    stages = [_simmons_stage(nozzle_exit_area=0.01)]
    problem = _problem("vertical", stages, gravity=ConstantGravity(G),
                       atmosphere=ExponentialAtmosphere(),
                       aero=Aerodynamics(0.05, ConstantDrag(0.4)))
    traj = simulate(problem)
    summary = simulation_summary(problem, traj)
    json.dumps(summary, allow_nan=False)
    assert summary["burnout"]["time_s"] == pytest.approx(80.0, rel=1e-9)
    assert summary["burnout"]["mass_kg"] == pytest.approx(200.0, rel=1e-12)
    # the budget residual is integration error only (the identity is Newton's second law
    # projected on the velocity; common practice)
    assert abs(summary["losses_m_s"]["residual"]) < 1e-7 * summary["losses_m_s"]["ideal"]
    peak = summary["peaks"]["dynamic_pressure"]
    # in kPa, the user unit of the limit on it
    assert peak["value_kPa"] * 1e3 >= np.max(traj.quantities["dynamic_pressure"]) * (1 - 1e-15)
    path = tmp_path / "trajectory.csv"
    write_trajectory_csv(traj, path)
    # "#" comment lines are skipped; the line of column names after them is not a row
    rows = [line for line in path.read_text().splitlines() if not line.startswith("#")]
    data = np.loadtxt(rows[1:], delimiter=",")
    assert data.shape[0] == traj.time.size


def test_peaks_refined_between_samples_match_closed_forms():
    # drag-free (zero reference area) but with air, so q = rho v^2/2 follows the
    # Simmons 1972 closed forms exactly
    H, RHO0 = 7200.0, 1.225
    problem = _problem("vertical", [_simmons_stage()], gravity=ConstantGravity(G),
                       atmosphere=ExponentialAtmosphere(surface_density=RHO0, scale_height=H),
                       aero=Aerodynamics(0.0, ConstantDrag(0.3)))
    traj = simulate(problem, coast_to_apogee=False)

    def q_closed(t):
        return 0.5 * RHO0 * math.exp(-_simmons_h(t) / H) * _simmons_v(t) ** 2

    best = minimize_scalar(lambda t: -q_closed(t), bounds=(1.0, 79.0), method="bounded",
                           options={"xatol": 1e-10})
    value, time, _ = traj.peak("dynamic_pressure")
    assert value == pytest.approx(-best.fun, rel=1e-9)
    assert time == pytest.approx(best.x, rel=1e-5)  # a flat maximum: time is ill-posed
    # sensed acceleration F/m peaks at burnout: F/(m_burnout g0) (definition of thrust
    # acceleration; standard gravity from constants, CGPM 1901)
    value, time, _ = traj.peak("axial_acceleration")
    assert value == pytest.approx(ALPHA * U / ((M0 - MP) * G0), rel=1e-9)
    assert time == pytest.approx(80.0, rel=1e-9)


def test_trajectory_pickles(tmp_path):
    # sweeps send trajectories between processes (round trip)
    problem = _problem("planar", [Stage("s", 8000.0, 1000.0, 200e3, 3000.0)],
                       gravity=InverseSquareGravity(MU), payload=500.0,
                       launch=Launch(vertical_rise=10.0, pitch_over=math.radians(4.0)))
    traj = simulate(problem)
    back = pickle.loads(pickle.dumps(traj))
    np.testing.assert_array_equal(back.state_at(50.0), traj.state_at(50.0))
    assert back.peak("q_alpha") == traj.peak("q_alpha")
