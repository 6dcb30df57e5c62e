"""Small problems built directly from the data model, shared by the optimiser tests."""

from __future__ import annotations

from dataclasses import replace

from ascentplan.constants import G0
from ascentplan.models.aero import ConstantDrag
from ascentplan.models.atmosphere import ExponentialAtmosphere, Vacuum
from ascentplan.models.gravity import ConstantGravity, InverseSquareGravity
from ascentplan.problem.model import (
    Aerodynamics,
    Limits,
    Mesh,
    Planet,
    Problem,
    Stage,
    Target,
    Vehicle,
)


def flat_vacuum_problem(scheme="hermite_simpson", nodes=40, target_altitude=30e3,
                        max_refinements=0) -> Problem:
    """Flat-planet limit (R = 1e9 m), constant gravity, vacuum, full thrust: the setting of
    the linear-tangent steering law (Bryson and Ho, Applied Optimal Control, 1975)."""
    radius = 1e9
    planet = Planet("flat", radius, G0 * radius**2, 0.0)
    stage = Stage("only", propellant_mass=8000.0, dry_mass=1000.0, thrust_vacuum=250e3,
                  exhaust_speed=3000.0)
    return Problem(
        name="flat-vacuum", dynamics="planar", vehicle=Vehicle(1000.0, (stage,)),
        planet=planet, atmosphere=Vacuum(), gravity=ConstantGravity(G0),
        aerodynamics=Aerodynamics(1.0, ConstantDrag(0.3)),
        target=Target(altitude=target_altitude, flight_path_angle=0.0),
        objective="max_burnout_speed",
        mesh=Mesh(scheme=scheme, nodes_per_phase=nodes, max_refinements=max_refinements))


def vertical_q_problem(max_q=None, nodes=40, max_refinements=2, max_accel=None) -> Problem:
    """A throttleable single-stage vertical rocket in an exponential atmosphere (invented
    vehicle), maximising burnout speed; ``max_q`` [Pa] makes the dynamic-pressure limit
    active."""
    planet = Planet("earth-like", 6.371e6, 3.986004418e14, 0.0)
    stage = Stage("booster", propellant_mass=3000.0, dry_mass=400.0, thrust_vacuum=90e3,
                  exhaust_speed=2600.0, throttle_min=0.3, throttle_max=1.0)
    return Problem(
        name="vertical-q", dynamics="vertical", vehicle=Vehicle(100.0, (stage,)),
        planet=planet, atmosphere=ExponentialAtmosphere(scale_height=7200.0),
        gravity=InverseSquareGravity(planet.gravitational_parameter),
        aerodynamics=Aerodynamics(0.5, ConstantDrag(0.35)),
        limits=Limits(max_dynamic_pressure=max_q, max_axial_acceleration=max_accel),
        objective="max_burnout_speed",
        mesh=Mesh(nodes_per_phase=nodes, max_refinements=max_refinements))


def with_mesh(problem: Problem, **changes) -> Problem:
    return replace(problem, mesh=replace(problem.mesh, **changes))


def vertical_q_yaml(name: str) -> str:
    """The rocket of :func:`vertical_q_problem` as a problem file named ``name`` (a study
    sends its workers a path), with a 30 kPa limit on a coarse mesh so that each solve
    takes well under a second."""
    return f"name: {name}\n" + _VERTICAL_Q_BODY


_VERTICAL_Q_BODY = """\
dynamics: vertical
planet: {name: earth-like, radius: 6371 km, gravitational_parameter: 3.986004418e14 m^3/s^2}
atmosphere: {model: exponential, scale_height: 7.2 km}
gravity: inverse_square
aerodynamics:
  reference_area: 0.5 m^2
  drag: {model: constant, cd: 0.35}
vehicle:
  payload_mass: 100 kg
  stages:
    - {name: booster, propellant_mass: 3000 kg, dry_mass: 400 kg, thrust_vacuum: 90 kN,
       exhaust_speed: 2600 m/s, throttle: {min: 0.3, max: 1.0}}
limits: {max_dynamic_pressure: 30 kPa}
objective: max_burnout_speed
mesh: {scheme: hermite_simpson, nodes_per_phase: 20}
"""
