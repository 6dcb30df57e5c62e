"""Sections of the report on the vehicle stack: the timeline of events and the mass
accounting (propellant burnt per element and phase, items jettisoned, residuals)."""

from __future__ import annotations

from ascentplan.output.report.markup import esc, note, num, section, table

__all__ = ["mass_section", "timeline_section"]


def timeline_section(summary: dict) -> str:
    """Every event in time order, replay beside optimiser."""
    entries = summary.get("timeline")
    if not entries:
        return ""
    rows = [[num(e.get("time_s"), 2), num(e.get("optimiser_time_s"), 3),
             str(e.get("label", e.get("kind", ""))), num(e.get("altitude_m"), 3, 1000.0),
             num(e.get("speed_m_s"), 2), num(e.get("flight_path_angle_deg"), 3),
             num(e.get("mass_kg"), 1)] for e in entries]
    text = ("Times, altitudes, speeds and masses are the replay's (the verified flight); the "
            "optimiser's time is the phase boundary at which the event falls (n/a for an "
            "event inside a phase). The mass is after the drop for an ignition, before it "
            "for a burnout, a jettison or staging.")
    return section("Timeline", table(
        ["time [s]", "optimiser time [s]", "event", "altitude [km]", "speed [m/s]",
         "flight-path angle [deg]", "mass [kg]"], rows, numeric={0, 1, 3, 4, 5, 6})
        + "\n" + note(text))


def _element_name(e: dict) -> str:
    name = str(e.get("name", ""))
    return f"{e.get('count')} x {name}" if e.get("kind") == "booster_group" else name


def _balance(block: dict) -> str:
    return table(["quantity", "mass [kg]"], [
        ["liftoff mass", num(block.get("liftoff_mass_kg"), 1, fixed=True)],
        ["final mass (end of the last phase)", num(block.get("final_mass_kg"), 1, fixed=True)],
        ["propellant burnt", num(block.get("propellant_burnt_kg"), 1, fixed=True)],
        ["jettisoned", num(block.get("jettisoned_kg"), 1, fixed=True)],
        ["closure: liftoff - final - burnt - jettisoned", num(block.get("closure_kg"), 3,
                                                              fixed=True)],
    ], numeric={1}, total_rows={4})


def _per_phase(block: dict, elements: list[dict]) -> str:
    names = [_element_name(e) for e in elements]
    rows = []
    for p in block.get("phases") or []:
        burnt = list(p.get("burnt_kg") or [])
        rows.append([str(p.get("phase", "")), str(p.get("kind", "")),
                     num(p.get("start_s"), 2), num(p.get("duration_s"), 2),
                     *(num(b, 1, fixed=True) for b in burnt[:len(names)])])
    totals = ["total", "", "", "", *(num(e.get("burnt_kg"), 1, fixed=True) for e in elements)]
    header = ["phase", "kind", "start [s]", "duration [s]",
              *(f"{n} burnt [kg]" for n in names)]
    return table(header, rows + [totals], numeric=set(range(2, len(header))),
                 total_rows={len(rows)})


def mass_section(summary: dict) -> str:
    """Where the liftoff mass went: the balance, each element, each phase, each drop."""
    block = summary.get("mass_accounting")
    if not isinstance(block, dict) or summary.get("status") in ("infeasible", "failed"):
        # where the solver stopped short of a flight, its masses mean little
        return ""
    elements = block.get("elements") or []
    element_rows = [[_element_name(e), str(e.get("kind", "")).replace("_", " "),
                     num(e.get("loaded_kg"), 1, fixed=True), num(e.get("burnt_kg"), 1, fixed=True),
                     num(e.get("residual_kg"), 1, fixed=True)] for e in elements]
    dropped = [[str(i.get("item", "")) + (" casings" if i.get("kind") == "booster_casings"
                                          else ""), num(i.get("time_s"), 2),
                num(i.get("mass_kg"), 1, fixed=True), num(i.get("dry_mass_kg"), 1, fixed=True),
                num(i.get("unburnt_propellant_kg"), 1, fixed=True)]
               for i in block.get("jettisoned") or []]
    residuals = [[str(r.get("element", "")), str(r.get("event", "")).replace("_", " "),
                  num(r.get("time_s"), 2), num(r.get("propellant_remaining_kg"), 1, fixed=True),
                  num(r.get("replay_propellant_remaining_kg"), 1, fixed=True)]
                 for r in block.get("residuals") or []]
    text = ("From the optimiser's solution: a booster group burns at its fixed mass flow for "
            "each phase it burns in, the stage's core the rest of the phase's mass decrease. "
            "Jettisoned masses are the vehicle's figures (casings, fairing, each spent stage's "
            "dry mass and the propellant it did not burn), so the closure shows any mass the "
            "solution gains or loses at an event.")
    parts = [_balance(block), "<h3>Propellant per element</h3>",
             table(["element", "kind", "loaded [kg]", "burnt [kg]", "residual [kg]"],
                   element_rows, numeric={2, 3, 4}),
             "<h3>Propellant burnt per phase</h3>", _per_phase(block, elements)]
    if dropped:
        parts += ["<h3>Jettisoned</h3>", table(
            ["item", "time [s]", "mass [kg]", "dry mass [kg]", "unburnt propellant [kg]"],
            dropped, numeric={1, 2, 3, 4})]
    if residuals:
        parts += [f"<h3>{esc('Residual at each burnout and cut-off')}</h3>", table(
            ["element", "event", "time [s]", "propellant left [kg]",
             "replay: propellant left [kg]"], residuals, numeric={2, 3, 4})]
    return section("Mass accounting", "\n".join(parts) + "\n" + note(text))
