"""The burnout orbit as elements: the optimiser's, the replay's, the target's, compared.

For every kind that has an orbit (:meth:`DynamicsKind.position_velocity`), the burnout
states of the optimiser and of the replay are turned into classical elements
(:func:`ascentplan.models.orbit.elements`) and compared with stated tolerances:

* perigee and apogee altitudes within max(1 km, 0.1 % of the altitude);
* inclination within 0.01 deg;
* ascending node within 0.01 deg (when the orbit is inclined by more than 0.1 deg);
* argument of perigee within 0.1 deg (when the eccentricity exceeds 0.01).

The replay is compared with the optimiser (the replay flies the optimiser's schedule)
and with each element the target names. Angles in the launch frame: the node is
measured eastwards from the launch site's meridian at liftoff.
"""

from __future__ import annotations

import math

import numpy as np

from ascentplan.models import orbit
from ascentplan.models.dynamics import dynamics_kind

#: tolerances of the comparison: a length [m] or fraction of the altitude, angles [deg]
RADIUS_TOLERANCE_M = 1000.0
RADIUS_TOLERANCE_FRACTION = 1e-3
INCLINATION_TOLERANCE_DEG = 0.01
NODE_TOLERANCE_DEG = 0.01
PERIGEE_ARGUMENT_TOLERANCE_DEG = 0.1


def orbit_block(problem, state, mu: float | None = None) -> dict | None:
    """Elements of a burnout ``state`` with units in the key names, or None when the kind
    has no orbit (vertical flight)."""
    kind = dynamics_kind(problem.dynamics)
    try:
        r, v = kind.position_velocity(np.asarray(state, dtype=float))
    except NotImplementedError:
        return None
    planet = problem.planet
    el = orbit.elements(np.array(r, dtype=float), np.array(v, dtype=float),
                        mu or planet.gravitational_parameter)
    return {
        "semi_major_axis_m": el["semi_major_axis"],
        "eccentricity": el["eccentricity"],
        "perigee_altitude_m": el["perigee_radius"] - planet.radius,
        "apogee_altitude_m": (el["apogee_radius"] - planet.radius
                              if math.isfinite(el["apogee_radius"]) else None),
        "inclination_deg": math.degrees(el["inclination"]),
        "ascending_node_deg": math.degrees(el["ascending_node"]),
        "argument_of_perigee_deg": math.degrees(el["argument_of_perigee"]),
        "true_anomaly_deg": math.degrees(el["true_anomaly"]),
    }


def _angle_difference(a: float, b: float) -> float:
    return (a - b + 180.0) % 360.0 - 180.0


def _differences(replay: dict, reference: dict, planet) -> list[tuple]:
    """(key, difference, tolerance, unit) of each compared element."""
    rows = []
    for key in ("perigee_altitude_m", "apogee_altitude_m"):
        if reference.get(key) is None or replay.get(key) is None:
            continue
        rows.append((key, replay[key] - reference[key],
                     max(RADIUS_TOLERANCE_M, RADIUS_TOLERANCE_FRACTION * abs(reference[key])),
                     "m"))
    if reference.get("inclination_deg") is not None:
        rows.append(("inclination_deg",
                     replay["inclination_deg"] - reference["inclination_deg"],
                     INCLINATION_TOLERANCE_DEG, "deg"))
    inclined = min(replay["inclination_deg"], 180.0 - replay["inclination_deg"]) > 0.1
    if reference.get("ascending_node_deg") is not None and inclined:
        rows.append(("ascending_node_deg", _angle_difference(
            replay["ascending_node_deg"], reference["ascending_node_deg"]),
            NODE_TOLERANCE_DEG, "deg"))
    if reference.get("argument_of_perigee_deg") is not None and replay["eccentricity"] > 0.01:
        rows.append(("argument_of_perigee_deg", _angle_difference(
            replay["argument_of_perigee_deg"], reference["argument_of_perigee_deg"]),
            PERIGEE_ARGUMENT_TOLERANCE_DEG, "deg"))
    return rows


def target_elements(problem) -> dict:
    """The elements the target names, in the keys of :func:`orbit_block`."""
    t, planet = problem.target, problem.planet
    out = {}
    radii = orbit.target_radii(t, planet)
    if radii is not None:
        out["perigee_altitude_m"] = radii[0] - planet.radius
        out["apogee_altitude_m"] = radii[1] - planet.radius
    for key, name in (("inclination_deg", "inclination"), ("ascending_node_deg",
                                                            "ascending_node"),
                      ("argument_of_perigee_deg", "argument_of_perigee")):
        value = getattr(t, name, None)
        if value is not None:
            out[key] = math.degrees(value) % 360.0 if name != "inclination" \
                else math.degrees(value)
    return out


def compare_orbits(problem, optimiser_state, replay_state) -> tuple[dict | None, list[str]]:
    """The ``orbit`` block of summary.json and the reasons it fails verification.

    Returns ``(block, reasons)``; the block is None for a kind without an orbit, else
    ``optimiser``, ``replay`` and ``target`` elements, and ``checks``: per compared
    element ``against`` (``optimiser`` or ``target``), ``name``, ``difference``,
    ``tolerance``, ``unit`` and ``passed``.
    """
    optimiser = orbit_block(problem, optimiser_state)
    replay = orbit_block(problem, replay_state)
    if optimiser is None or replay is None:
        return None, []
    target = target_elements(problem)
    checks, reasons = [], []
    for against, reference in (("optimiser", optimiser), ("target", target)):
        for key, diff, tol, unit in _differences(replay, reference, problem.planet):
            ok = abs(diff) <= tol
            checks.append({"against": against, "name": key, "difference": float(diff),
                           "tolerance": float(tol), "unit": unit, "passed": bool(ok)})
            if not ok:
                reasons.append(f"the replay's orbit {key} differs from the {against}'s by "
                               f"{diff:+.4g} {unit} (tolerance {tol:.4g} {unit})")
    block = {"frame": "inertial at liftoff; node from the launch site's meridian, eastwards",
             "optimiser": optimiser, "replay": replay, "target": target, "checks": checks,
             "passed": not reasons}
    return block, reasons
