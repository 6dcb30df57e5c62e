"""The velocity-loss budget closes: ideal = achieved + gravity + drag + steering + back-pressure."""

from __future__ import annotations

import math

import numpy as np
import pytest

from ascentplan.constants import PLANETS
from ascentplan.models.aero import ConstantDrag
from ascentplan.models.atmosphere import ExponentialAtmosphere
from ascentplan.models.gravity import ConstantGravity, InverseSquareGravity
from ascentplan.problem.model import (
    Aerodynamics,
    Launch,
    Planet,
    Problem,
    Stage,
    TimeSchedule,
    Vehicle,
)
from ascentplan.replay.simulate import LOSS_QUANTITIES, simulate

EARTH = Planet("earth", **PLANETS["earth"])
LOSS_TERMS = ("gravity", "drag", "steering", "back_pressure")


def _tsiolkovsky_sum(vehicle):
    # Tsiolkovsky 1903, stage by stage (Curtis, "Rocket vehicle dynamics", staging
    # section, from memory): sum of c_i ln(m_ignition/m_burnout)
    return sum(s.exhaust_speed * math.log(vehicle.ignition_mass(i) / vehicle.burnout_mass(i))
               for i, s in enumerate(vehicle.stages))


def _closure(losses):
    return losses["ideal"] - losses["achieved"] - sum(losses[k] for k in LOSS_TERMS)


@pytest.fixture(scope="module")
def planar_flight():
    stages = (
        Stage("first", propellant_mass=24000.0, dry_mass=2400.0, thrust_vacuum=520e3,
              exhaust_speed=2900.0, nozzle_exit_area=0.6, throttle_min=0.5),
        Stage("second", propellant_mass=6000.0, dry_mass=700.0, thrust_vacuum=110e3,
              exhaust_speed=3300.0, nozzle_exit_area=0.3, throttle_min=0.5),
    )
    # a pitch programme that does not follow the velocity: non-zero angle of attack
    schedule = TimeSchedule(time=(0.0, 10.0, 60.0, 100.0, 130.0, 140.0, 250.0),
                            throttle=(1.0, 1.0, 0.8, 0.7, 1.0, 1.0, 0.9),
                            pitch=tuple(np.radians([90.0, 88.0, 62.0, 45.0, 35.0, 28.0, 10.0])))
    problem = Problem(
        name="budget", dynamics="planar", vehicle=Vehicle(500.0, stages), planet=EARTH,
        atmosphere=ExponentialAtmosphere(), gravity=InverseSquareGravity(
            EARTH.gravitational_parameter),
        aerodynamics=Aerodynamics(3.0, ConstantDrag(0.3)),
        launch=Launch(vertical_rise=6.0, latitude=math.radians(28.5)), schedule=schedule)
    return problem, simulate(problem, schedule)


def test_planar_budget_closes(planar_flight):
    problem, traj = planar_flight
    assert traj.status == "ok", traj.message
    losses = traj.losses
    # d|v|/dt = (F cos a - D.v_hat)/m - g sin(gamma) integrated term by term
    # (common practice: the projection of Newton's second law on v_hat): closes to
    # integration error, 1e-7 of the ideal velocity increment
    assert abs(_closure(losses)) < 1e-7 * losses["ideal"]
    # the case exercises every term
    assert np.max(np.abs(traj.quantities["angle_of_attack"][traj.phase < 3])) > math.radians(2)
    for name in LOSS_TERMS:
        assert losses[name] > 1.0, name


def test_planar_budget_closes_along_the_flight(planar_flight):
    problem, traj = planar_flight
    q = traj.quantities
    speed = np.hypot(traj.state[2], traj.state[3])
    residual = (q[LOSS_QUANTITIES["ideal"]] - (speed - speed[0])
                - sum(q[LOSS_QUANTITIES[k]] for k in LOSS_TERMS))
    # the identity holds at every instant, not only at burnout (same source as above)
    assert np.max(np.abs(residual)) < 1e-7 * traj.losses["ideal"]


def test_planar_ideal_is_the_rocket_equation(planar_flight):
    problem, traj = planar_flight
    assert [e["kind"] for e in traj.events][:4] == ["liftoff", "burnout", "staging", "burnout"]
    assert traj.losses["ideal"] == pytest.approx(_tsiolkovsky_sum(problem.vehicle), rel=1e-8)


def test_planar_losses_have_their_signs(planar_flight):
    problem, traj = planar_flight
    q = traj.quantities
    powered = np.isin(traj.phase, [k for k, kind in enumerate(traj.phase_kinds)
                                   if kind in ("rise", "burn")])
    # steering and back-pressure losses never decrease (1 - cos a >= 0, p A_exit >= 0);
    # drag loss does not while the air-relative and inertial velocities are within
    # 90 deg of each other, as on any ascent (common practice); allow rounding
    for name in ("steering", "back_pressure", "drag"):
        running = q[LOSS_QUANTITIES[name]][powered]
        assert np.all(np.diff(running) >= -1e-9), name
    # gravity loss grows while climbing (sin gamma > 0)
    climbing = powered & (traj.state[2] > 0)
    assert np.all(np.diff(q[LOSS_QUANTITIES["gravity"]][climbing]) >= -1e-9)


def test_planar_achieved_starts_from_the_pad_speed(planar_flight):
    problem, traj = planar_flight
    # the pad moves with the planet: omega R cos(latitude) (common practice)
    pad = EARTH.rotation_rate * EARTH.radius * math.cos(problem.launch.latitude)
    assert math.hypot(traj.state[2, 0], traj.state[3, 0]) == pytest.approx(pad, rel=1e-14)
    xb = traj.burnout_state()
    assert traj.losses["achieved"] == pytest.approx(math.hypot(xb[2], xb[3]) - pad, rel=1e-12)


def test_vertical_budget_closes_with_constant_gravity():
    g = 9.81
    stages = (
        Stage("booster", propellant_mass=800.0, dry_mass=150.0, thrust_vacuum=30e3,
              exhaust_speed=2100.0, nozzle_exit_area=0.02),
        Stage("sustainer", propellant_mass=120.0, dry_mass=30.0, thrust_vacuum=5e3,
              exhaust_speed=2400.0, nozzle_exit_area=0.005),
    )
    problem = Problem(
        name="vertical budget", dynamics="vertical", vehicle=Vehicle(20.0, stages),
        planet=EARTH, atmosphere=ExponentialAtmosphere(), gravity=ConstantGravity(g),
        aerodynamics=Aerodynamics(0.05, ConstantDrag(0.4)))
    traj = simulate(problem)
    assert traj.status == "ok", traj.message
    losses = traj.losses
    # budget identity, 1e-7 of the ideal increment (common practice: Newton's second law
    # along the velocity)
    assert abs(_closure(losses)) < 1e-7 * losses["ideal"]
    # Tsiolkovsky: both stages burn out
    assert losses["ideal"] == pytest.approx(_tsiolkovsky_sum(problem.vehicle), rel=1e-8)
    # vertical climb in constant gravity: the gravity term of v(t) = u ln(m0/m) - g t is
    # g t (Simmons 1972, ch. 2 misc. problem 29)
    assert losses["gravity"] == pytest.approx(g * traj.burnout_time(), rel=1e-9)
    # thrust along the velocity: no steering loss beyond the softened start at v = 0
    # (definition of the steering loss, 1 - cos a = 0)
    assert 0.0 <= losses["steering"] < 1e-5
    assert losses["drag"] > 1.0 and losses["back_pressure"] > 1.0
    assert losses["achieved"] == pytest.approx(traj.burnout_state()[1], rel=1e-12)


def test_three_dimensional_budget_closes_with_j2():
    # with J2 the field is not central: the gravity loss is the whole field resolved
    # along the velocity, and the budget closes as in the plane (exact identity of
    # d|v|/dt = a . v/|v|; common practice)
    from dataclasses import replace
    from pathlib import Path

    from ascentplan import load_problem

    root = Path(__file__).resolve().parents[1] / "problems"
    problem = load_problem(root / "medium_launcher_transfer.yaml")
    assert problem.planet.j2 > 0.0
    losses = simulate(replace(problem, schedule=None)).losses
    assert abs(_closure(losses)) < 1e-6 * losses["ideal"]
