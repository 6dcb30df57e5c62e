"""The rocket-equation stage split of ``ascentplan split`` as a machine-readable record."""

from __future__ import annotations

import json

from ascentplan import __version__
from ascentplan.cautions import CAUTION
from ascentplan.constants import G0
from ascentplan.output.check_text import ideal_delta_v
from ascentplan.output.inputs import file_sha256

__all__ = ["speed_from_text", "split_json", "split_record"]

#: what the split leaves out, stated in every record
_MODEL = ("rocket equation only (Lagrange-multiplier optimum of serial stages): no gravity, "
          "drag, back-pressure or limits")


def speed_from_text(text: str, name: str) -> float:
    """A speed given as text, in m/s: a quantity with its unit ("9.2 km/s", read as a
    problem file's values are) or a bare number in m/s.

    Raises
    ------
    ValueError
        Naming ``name`` and the value, for text that is not a speed or not > 0.
    """
    from ascentplan.problem.units import to_si

    value = to_si(text, "m/s", name)  # its UnitError is a ValueError naming the option
    if not value > 0.0:
        raise ValueError(f"{name}: must be > 0 m/s, got {text!r}")
    return value


def _as_written(vehicle) -> dict:
    """The vehicle's masses and ideal velocity increment as the file writes them."""
    increments = ideal_delta_v(vehicle)
    return {"payload_mass_kg": float(vehicle.payload_mass),
            "liftoff_mass_kg": float(vehicle.liftoff_mass),
            "ideal_velocity_increment_m_s": float(sum(increments)),
            "stages": [{"name": s.name, "propellant_mass_kg": float(s.propellant_mass),
                        "dry_mass_kg": float(s.dry_mass),
                        "ideal_velocity_increment_m_s": float(dv)}
                       for s, dv in zip(vehicle.stages, increments)]}


def split_record(problem, split, hold: str, required_delta_v: float | None = None) -> dict:
    """A :class:`~ascentplan.staging.rocket_equation.StageSplit` as a JSON-ready record.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
        The problem whose vehicle was split (its name and file are recorded).
    split : StageSplit
        The optimum.
    hold : {"liftoff_mass", "payload"}
        What was held.
    required_delta_v : float, optional
        The ideal velocity increment asked for with ``hold="payload"`` [m s^-1]; None
        when the vehicle's own as written was used, or with the liftoff mass held.

    Returns
    -------
    dict
        ``problem``, ``source_file``, ``source_sha256``, ``hold``,
        ``required_ideal_velocity_increment_m_s`` (with ``hold="payload"``: the one asked
        for, else the vehicle's own as written; None with the liftoff mass held),
        ``payload_mass_kg``, ``liftoff_mass_kg``, ``payload_fraction``,
        ``ideal_velocity_increment_m_s`` (the sum over the stages),
        ``lagrange_multiplier_s_m`` (eta of the optimal-staging problem), ``stages`` (per
        stage ``name``, ``exhaust_speed_m_s``, ``isp_vacuum_s``, ``structural_ratio``,
        ``mass_ratio``, ``ideal_velocity_increment_m_s``, ``propellant_mass_kg``,
        ``dry_mass_kg``, ``stage_mass_kg``), ``as_written`` (the vehicle's masses and
        ideal velocity increments as the file gives them), ``model``,
        ``ascentplan_version`` and ``caution``.
    """
    written = _as_written(problem.vehicle)
    if hold == "payload" and required_delta_v is None:
        required_delta_v = written["ideal_velocity_increment_m_s"]
    stages = [{"name": name, "exhaust_speed_m_s": c, "isp_vacuum_s": c / G0,
               "structural_ratio": eps, "mass_ratio": n, "ideal_velocity_increment_m_s": dv,
               "propellant_mass_kg": mp, "dry_mass_kg": md, "stage_mass_kg": ms}
              for name, c, eps, n, dv, mp, md, ms in zip(
                  split.stage_names, split.exhaust_speed, split.structural_ratio,
                  split.mass_ratio, split.delta_v, split.propellant_mass, split.dry_mass,
                  split.stage_mass)]
    source = problem.source_path
    return {
        "problem": problem.name,
        "source_file": None if source is None else str(source).replace("\\", "/").rsplit(
            "/", 1)[-1],
        "source_sha256": None if source is None else file_sha256(source),
        "hold": hold,
        "required_ideal_velocity_increment_m_s": (None if hold != "payload"
                                                  else float(required_delta_v)),
        "payload_mass_kg": split.payload_mass,
        "liftoff_mass_kg": split.liftoff_mass,
        "payload_fraction": split.payload_fraction,
        "ideal_velocity_increment_m_s": split.total_delta_v,
        "lagrange_multiplier_s_m": split.multiplier,
        "stages": stages,
        "as_written": written,
        "model": _MODEL,
        "ascentplan_version": __version__,
        "caution": CAUTION,
    }


def split_json(record: dict) -> str:
    """The record as indented JSON text with a final newline (NaN refused)."""
    return json.dumps(record, indent=2, allow_nan=False) + "\n"
