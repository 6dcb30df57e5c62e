"""Sections of the report with the flight's detail: stages and their propellant, the
velocity budget, the stage-mass split, the solver, peaks, phases, events and anything
the report does not know."""

from __future__ import annotations

import json

from ascentplan.output.inputs import unit_key
from ascentplan.output.report.markup import (
    cell,
    esc,
    is_number,
    key_header,
    key_values,
    note,
    num,
    section,
    split_unit,
    table,
    words,
)
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import SCHEMES

#: value keys of a peak and (unit, divisor to that unit): the limits' user units, and the
#: SI keys of summaries written before peaks took them (``value_Pa`` and the like)
_PEAK_VALUES = {**{"value_" + spec.si_unit.replace(" ", "_"): (spec.unit, spec.factor)
                   for spec in LIMITS.values()},
                **{"value_" + unit_key(spec.unit): (spec.unit, 1.0) for spec in LIMITS.values()}}


def stages_section(summary: dict) -> str:
    stages = summary.get("stages")
    if not stages:
        return ""
    rows = [[s.get("name", str(i)), num(s.get("propellant_mass_kg"), 1),
             num(s.get("dry_mass_kg"), 1), num(s.get("burn_time_s"), 2),
             num(s.get("thrust_vacuum_N"), 2, 1000.0)] for i, s in enumerate(stages)]
    return section("Stages", table(
        ["stage", "propellant [kg]", "dry mass [kg]", "burn time [s]",
         "vacuum thrust [kN]"], rows, numeric={1, 2, 3, 4}))


def propellant_section(summary: dict) -> str:
    """Per stage, its propellant as flown: loaded, burnt, kept as reserve, left unburnt."""
    if summary.get("status") in ("infeasible", "failed"):
        # where the solver stopped short of a flight, its propellant figures mean little
        return ""
    blocks = [(str(s.get("name", i)), s["propellant"])
              for i, s in enumerate(summary.get("stages") or [])
              if isinstance(s, dict) and isinstance(s.get("propellant"), dict)]
    if not blocks:
        return ""  # a summary from before propellant was accounted per stage
    shutdown = {"early": "yes", "at_depletion": "no: burns to depletion"}
    keys = ("loaded_kg", "burnt_kg", "reserve_kg", "unplanned_residual_kg")
    rows = [[name, *(num(p.get(k), 1, fixed=True) for k in keys),
             num(p.get("unplanned_residual_percent"), 2, fixed=True),
             shutdown.get(p.get("shutdown"), "n/a")] for name, p in blocks]
    flagged = {i for i, (_, p) in enumerate(blocks) if p.get("unplanned_residual_reported")}
    text = ("Loaded = burnt + reserve + unplanned residual. The reserve stays on board by "
            "design; an unplanned residual is propellant dropped unburnt at staging (its row "
            "is highlighted where it is more than rounding).")
    return section("Propellant", table(
        ["stage", "loaded [kg]", "burnt [kg]", "reserve [kg]", "unplanned residual [kg]",
         "unplanned residual [% of loaded]", "may shut down early"], rows,
        numeric={1, 2, 3, 4, 5}, flagged_rows=flagged) + "\n" + note(text))


def losses_section(summary: dict) -> str:
    losses = summary.get("losses_m_s")
    if not losses:
        return ""
    terms = (("gravity", "gravity loss"), ("drag", "drag loss"),
             ("steering", "steering loss"), ("back_pressure", "back-pressure loss"))
    rows = [["ideal velocity increment", num(losses.get("ideal"), 2)]]
    rows += [[label, num(losses.get(key), 2)] for key, label in terms if key in losses]
    achieved_row = len(rows)
    rows.append(["achieved change of inertial speed", num(losses.get("achieved"), 2)])
    parts = [losses.get("ideal"), losses.get("achieved")] + [losses.get(k) for k, _ in terms
                                                             if k in losses]
    residual = losses.get("residual")
    if residual is None and all(is_number(p) for p in parts):
        residual = parts[0] - parts[1] - sum(parts[2:])
    rows.append(["closure: ideal - achieved - losses", num(residual, 4)])
    known = {"ideal", "achieved", "residual"} | {k for k, _ in terms}
    rows += [[words(k), num(val, 2)] for k, val in losses.items() if k not in known]
    body = table(["term", "velocity [m/s]"], rows, numeric={1}, total_rows={0, achieved_row})
    body += "\n" + note("Budget to burnout: ideal velocity increment = achieved + gravity + "
                        "drag + steering + back-pressure losses; the closure row is the "
                        "integration residual.")
    return section("Velocity-loss budget", body)


def solver_section(summary: dict) -> str:
    s = summary.get("solver")
    if not isinstance(s, dict):
        return ""
    scheme = s.get("scheme", "n/a")
    rows = [("collocation", SCHEMES.get(scheme, words(scheme))),
            ("nodes per phase (final mesh)", str(s.get("nodes", "n/a"))),
            ("mesh refinements", str(s.get("mesh_refinements", "n/a"))),
            ("IPOPT iterations (all meshes)", str(s.get("iterations", "n/a"))),
            ("IPOPT return status", str(s.get("return_status", "n/a"))),
            ("wall time [s]", num(s.get("wall_time_s"), 2))]
    known = {"scheme", "nodes", "mesh_refinements", "iterations", "return_status",
             "wall_time_s"}
    rows += [(key_header(k), cell(v)) for k, v in s.items() if k not in known]
    return section("Solver", key_values(rows))


def smoothing_section(summary: dict) -> str:
    """The control-smoothness penalty and what it costs, when one was imposed."""
    block = summary.get("control_smoothing")
    if not isinstance(block, dict) or not block.get("weight"):
        return ""
    unit = block.get("unit", "")
    rows = [("weight", cell(block.get("weight"), 6)),
            (f"penalty [{unit}]", num(block.get("penalty"), 4)),
            (f"objective without the penalty [{unit}]",
             num(block.get("objective_without_penalty"), 3)),
            (f"objective with the penalty, as optimised [{unit}]",
             num(block.get("objective_with_penalty"), 3))]
    return section("Control smoothing", key_values(rows) + "\n" + note(
        "A penalty on the differences of neighbouring node controls keeps the schedule "
        "free of chatter; the penalty is what it costs in the objective."))


def _peak_value(peak: dict) -> tuple[str, str]:
    """(value, unit) of a peak in the unit of its limit."""
    for key, (unit, divisor) in _PEAK_VALUES.items():
        if key in peak:
            return num(peak[key], 3, divisor), unit
    key = next((k for k in peak if str(k).startswith("value_")), None)
    if key is None:
        return "n/a", ""
    return num(peak[key], 3), split_unit("x" + key[len("value"):])[1]


def peaks_section(summary: dict) -> str:
    peaks = summary.get("peaks")
    if not isinstance(peaks, dict):
        return ""
    items = [(name, p) for name, p in peaks.items() if isinstance(p, dict)]
    known = {"time_s", "altitude_m", "mach"}
    extra: list[str] = []  # e.g. the excess and tolerance of the limit on the quantity
    for _, p in items:
        extra += [k for k in p if k not in extra and k not in known and not str(
            k).startswith("value_") and not isinstance(p[k], (dict, list))]
    rows = []
    for name, p in items:
        value, unit = _peak_value(p)
        rows.append([words(name), unit, value, num(p.get("time_s"), 2),
                     num(p.get("altitude_m"), 3, 1000.0), num(p.get("mach"), 2)]
                    + [cell(p.get(k), 4) for k in extra])
    header = ["quantity", "unit", "peak", "at [s]", "altitude [km]", "Mach"]
    return section("Peaks", table(header + [key_header(k) for k in extra], rows,
                                  numeric=set(range(2, 6 + len(extra)))))


def phases_section(summary: dict) -> str:
    phases = summary.get("phases")
    if not phases:
        return ""
    rows = [[str(p.get("index", i)), str(p.get("kind", "")), str(p.get("stage", "")),
             num(p.get("start_s"), 2), num(p.get("end_s"), 2)]
            for i, p in enumerate(phases)]
    return section("Phases", table(["phase", "kind", "stage", "start [s]", "end [s]"], rows,
                                   numeric={3, 4}))


def events_section(summary: dict) -> str:
    events = summary.get("events")
    if not events:
        return ""
    rows = [[str(ev.get("kind", "")), num(ev.get("time_s"), 2),
             num(ev.get("altitude_m"), 3, 1000.0), num(ev.get("speed_m_s"), 2),
             num(ev.get("flight_path_angle_deg"), 3), num(ev.get("mass_kg"), 1)]
            for ev in events]
    return section("Events", table(["event", "time [s]", "altitude [km]", "speed [m/s]",
                                    "flight-path angle [deg]", "mass [kg]"], rows,
                                   numeric={1, 2, 3, 4, 5}))


#: headers of the stage-split columns and rows the report knows by name (older and
#: newer key names alike); any other key is shown by its own name and unit
_SPLIT_LABELS = {
    "written_propellant_mass_kg": "as written [kg]",
    "rocket_equation_propellant_mass_kg": "rocket equation [kg]",
    "analytic_propellant_mass_kg": "flown with the rocket-equation proportions [kg]",
    "analytic_dry_mass_kg": "dry mass, rocket-equation proportions [kg]",
    "coupled_propellant_mass_kg": "coupled optimum [kg]",
    "coupled_dry_mass_kg": "coupled dry mass [kg]",
    "analytic_objective": "rocket-equation split flown optimally",
    "analytic_status": "status, rocket-equation split flown optimally",
    "analytic_liftoff_mass_kg": "liftoff mass, rocket-equation split [kg]",
    "coupled_objective": "coupled optimum",
    "coupled_liftoff_mass_kg": "liftoff mass, coupled [kg]",
    "rocket_equation_delta_v_m_s": "ideal velocity increment, rocket-equation split [m/s]",
}


def _split_label(key: str, objective_unit: str) -> str:
    label = _SPLIT_LABELS.get(key) or key_header(key)
    if "objective" in key and "[" not in label:
        label += f" [{objective_unit}]"
    return label


def split_section(summary: dict) -> str:
    split = summary.get("mass_split")
    if not isinstance(split, dict):
        return ""
    unit = split.get("objective_unit", "")
    stages = [st for st in split.get("stages") or [] if isinstance(st, dict)]
    keys: list[str] = []
    for st in stages:
        keys += [k for k in st if k not in keys and k != "name" and is_number(st[k])]
    rows = [[st.get("name", "")] + [num(st.get(k), 1) for k in keys] for st in stages]
    body = table(["stage"] + [_split_label(k, unit) for k in keys], rows,
                 numeric=set(range(1, len(keys) + 1)))
    held = words(split.get("hold", ""))
    scalars = [(_split_label(k, unit), cell(v)) for k, v in split.items()
               if k not in ("hold", "objective_unit", "stages", "map")
               and not isinstance(v, (dict, list))]
    if scalars:
        body += "\n" + key_values(([(f"{held} held", "yes")] if held else []) + scalars)
    body += "\n" + note(
        "The rocket-equation split ignores gravity, drag and the limits; flown optimally "
        "it achieves the first objective, the split optimised with the trajectory the "
        "second. The map of the objective around the optimum, when computed, is in "
        "split_map.png below and in summary.json.")
    return section("Stage-mass split", body)


def other_section(summary: dict, known_keys) -> str:
    extra = {k: v for k, v in summary.items() if k not in known_keys and not str(
        k).startswith("_")}
    if not extra:
        return ""
    text = json.dumps(extra, indent=2, default=str, allow_nan=True)
    return section("Other results", f"<pre>{esc(text)}</pre>")
