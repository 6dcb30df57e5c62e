"""Sections of the report that say what the result is worth: the verdict, what must give,
the objective, the flight, the limits, the verification, the target miss and the
exchange ratios."""

from __future__ import annotations

from ascentplan.output.report.markup import (
    cell,
    esc,
    is_number,
    key_header,
    key_values,
    note,
    num,
    percent,
    section,
    split_unit,
    table,
    words,
    yes_no,
)
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import OBJECTIVES

#: plain-words verdict for each status of a solve (pipeline) or a simulation
VERDICTS = {
    "optimal": ("good", "Optimal and verified: the independent forward integration of the "
                        "delivered schedule agrees with the optimiser within tolerance."),
    "not_verified": ("bad", "NOT verified: the optimiser converged on its mesh, but the "
                            "independent forward integration disagrees with it. Do not use "
                            "these numbers as an optimum."),
    "infeasible": ("bad", "Infeasible: no schedule was found that meets every limit and "
                          "target. The numbers below are where the solver stopped."),
    "failed": ("bad", "Failed: the solver did not converge. The numbers below are where it "
                      "stopped, not an answer."),
    "ok": ("neutral", "Forward simulation of a given schedule, flown to the end: not "
                      "optimised, so there is nothing to verify."),
    "impact": ("bad", "Forward simulation of a given schedule: the vehicle fell back to the "
                      "ground. Not optimised."),
    "limits_exceeded": ("bad", "Forward simulation of a given schedule: it exceeds a limit of "
                               "the problem file beyond the verification tolerance (see "
                               "Limits). Not optimised."),
}


def status_box(summary: dict) -> str:
    status = str(summary.get("status", "unknown"))
    kind, verdict = VERDICTS.get(status, ("bad", f"Status {status}: not a verified optimum."))
    verification = summary.get("verification")
    if isinstance(verification, dict) and status == "optimal" and not verification.get(
            "passed", True):
        # guard against an inconsistent summary: a failed check is never shown as good
        kind, verdict = VERDICTS["not_verified"]
    message = summary.get("message") or ""
    return (f'<div class="status {kind}">\n<p class="verdict">{esc(verdict)}</p>\n'
            f"<p>status: <code>{esc(status)}</code>"
            + (f" &mdash; {esc(message)}" if message else "") + "</p>\n</div>")


def must_give_section(summary: dict) -> str:
    """For an infeasible problem: the targets and limits that must give, and by how much."""
    block = summary.get("infeasibility")
    if not isinstance(block, dict):
        return ""
    text = str(block.get("text", ""))
    body = f"<p>{esc(text[:1].upper() + text[1:])}</p>"  # the verdict as a sentence
    rows = []
    for c in block.get("conditions") or []:
        name = str(c.get("name", ""))
        depleting = set(c.get("stages_burning_to_depletion") or [])
        stages = ", ".join(f"{s} (burns to depletion)" if s in depleting else str(s)
                           for s in c.get("stages") or [])
        rows.append([f"{words(name)} ({name})", c.get("kind", ""), num(c.get("value")),
                     num(c.get("required")), num(c.get("relaxation")), c.get("unit", ""),
                     stages or "-"])
    if rows:
        body += "\n" + table(["condition", "kind", "as written", "needed", "change", "unit",
                              "stages"], rows, numeric={2, 3, 4}) + "\n" + note(
            "Needed: the nearest target within reach, or the bound the flight needs. "
            "Stages: those burning where a limit is passed.")
    return section("What must give", body)


def objective_section(summary: dict) -> str:
    obj = summary.get("objective")
    if not isinstance(obj, dict):
        return ""
    name = obj.get("name", "")
    unit = obj.get("unit", "")
    rows = [("objective", f"{words(name)} ({OBJECTIVES.get(name, 'see the manual')})"),
            (f"value from the optimiser [{unit}]", num(obj.get("value"))),
            (f"value as replayed [{unit}]", num(obj.get("replayed_value")))]
    value, replayed = obj.get("value"), obj.get("replayed_value")
    if is_number(value) and is_number(replayed):
        rows.append((f"replay minus optimiser [{unit}]", num(replayed - value, 4)))
    known = {"name", "unit", "value", "replayed_value"}
    rows += [(key_header(k), cell(v)) for k, v in obj.items() if k not in known]
    return section("Objective", key_values(rows))


def flight_section(summary: dict) -> str:
    rows = []
    b = summary.get("burnout")
    if isinstance(b, dict):
        rows += [("burnout time [s]", num(b.get("time_s"), 2)),
                 ("burnout altitude [km]", num(b.get("altitude_m"), 3, 1000.0)),
                 ("burnout inertial speed [m/s]", num(b.get("speed_m_s"), 2)),
                 ("burnout flight-path angle [deg]", num(b.get("flight_path_angle_deg"), 3)),
                 ("burnout mass [kg]", num(b.get("mass_kg"), 1))]
    a = summary.get("apogee")
    if isinstance(a, dict):
        rows += [("apogee time [s]", num(a.get("time_s"), 2)),
                 ("apogee altitude [km]", num(a.get("altitude_m"), 3, 1000.0))]
    if "payload_mass_kg" in summary:
        rows.append(("payload mass [kg]", num(summary.get("payload_mass_kg"), 1)))
    if "liftoff_mass_kg" in summary:
        rows.append(("liftoff mass [kg]", num(summary.get("liftoff_mass_kg"), 1)))
    return section("Flight", key_values(rows)) if rows else ""


def _first(row: dict, *keys):
    """The value of the first of ``keys`` present in ``row`` (None if none is)."""
    return next((row[k] for k in keys if k in row), None)


def limits_section(summary: dict) -> str:
    limits = summary.get("limits")
    if limits is None:
        return ""
    if not limits:
        return section("Limits", "<p>No path limits were imposed.</p>")
    if not any(isinstance(lim, dict) and "shadow_price" in lim for lim in limits):
        return _flown_limits_section(limits)
    # excess and tolerance beside each peak, when the summary carries them
    with_excess = any(isinstance(lim, dict) and ("excess_fraction" in lim or "excess" in lim)
                      for lim in limits)
    rows = []
    for lim in limits:
        name = str(lim.get("name", ""))
        unit = lim.get("unit") or (LIMITS[name].unit if name in LIMITS else "")
        row = [f"{words(name)} ({name})", unit, num(lim.get("bound"), 3),
               num(lim.get("peak"), 3), num(lim.get("peak_time_s"), 2)]
        if with_excess:
            row += [percent(_first(lim, "excess_fraction", "excess"), 3),
                    percent(_first(lim, "tolerance_fraction", "tolerance"), 2),
                    percent(lim.get("margin_fraction"), 2)]
        row += [yes_no(lim.get("active")), num(lim.get("shadow_price"), 4),
                lim.get("shadow_price_unit", "")]
        rows.append(row)
    header = ["limit", "unit", "bound", "peak", "peak at [s]"]
    header += (["excess [% of bound]", "tolerance [% of bound]", "margin [% of bound]"]
               if with_excess else [])
    header += ["active", "shadow price", "shadow price unit"]
    numeric = {2, 3, 4} | ({5, 6, 7, 9} if with_excess else {6})
    text = ("Peak: the extreme on the replay's dense time grid (for the minimum altitude, "
            "the lowest point), in the limit's unit. Shadow price: the change of the "
            "objective per unit of relaxed limit, from the optimiser's multipliers; zero "
            "when the limit is not active.")
    if with_excess:
        text += (" Excess: how far the replayed peak passes the bound (negative: inside it);"
                 " the replay passes verification within the tolerance. Margin: how far "
                 "inside the bound the optimiser held the limit.")
    return section("Limits", table(header, rows, numeric=numeric) + "\n" + note(text))


def _flown_limits_section(limits: list) -> str:
    """The limits of a flight of ``simulate``: bound, peak, excess, exceeded or not."""
    rows = []
    for lim in limits:
        name = str(lim.get("name", ""))
        rows.append([f"{words(name)} ({name})", lim.get("unit", ""), num(lim.get("bound"), 3),
                     num(lim.get("peak"), 3), num(lim.get("peak_time_s"), 2),
                     percent(lim.get("excess_fraction")),
                     "EXCEEDED" if lim.get("exceeded") else "within"])
    tolerance = limits[0].get("tolerance_fraction")
    text = ("Peak: the extreme on the flight's dense time grid, as verification takes it, "
            "in the limit's unit. A limit counts as exceeded beyond "
            f"{percent(tolerance)} % of its bound, the tolerance of verification.")
    return section("Limits", table(
        ["limit", "unit", "bound", "peak", "peak at [s]", "excess [% of bound]",
         "verdict"], rows, numeric={2, 3, 4, 5}) + "\n" + note(text))


def verification_section(summary: dict) -> str:
    v = summary.get("verification")
    if not isinstance(v, dict):
        return ""
    rows = [("passed", yes_no(v.get("passed"))),
            ("burnout speed, replay minus optimiser [m/s]",
             num(v.get("burnout_speed_difference_m_s"), 4)),
            ("burnout altitude, replay minus optimiser [m]",
             num(v.get("burnout_altitude_difference_m"), 3)),
            ("worst limit excess [% of bound]",
             percent(v.get("worst_limit_excess_fraction"), 3))]
    known = {"passed", "burnout_speed_difference_m_s", "burnout_altitude_difference_m",
             "worst_limit_excess_fraction", "reasons"}
    rows += [(key_header(k), cell(val, 4)) for k, val in v.items()
             if k not in known and not isinstance(val, (dict, list))]
    body = key_values(rows)
    reasons = v.get("reasons") or []
    if reasons:
        body += "\n<p>Reasons:</p>\n<ul>" + "".join(f"<li>{esc(r)}</li>" for r in reasons) \
            + "</ul>"
    return section("Verification by forward integration", body + target_miss_table(summary))


def _condition_rows(block) -> tuple[list[dict], dict]:
    """The conditions of a target-miss block, and its other entries: a list of
    conditions, or a mapping of them by name (``{"conditions": {"altitude": {...}}}``)."""
    if isinstance(block, list):
        return [c for c in block if isinstance(c, dict)], {}
    if not isinstance(block, dict):
        return [], {}
    listed = block.get("conditions", {k: v for k, v in block.items() if isinstance(v, dict)})
    if isinstance(listed, dict):
        listed = [{"name": k, **v} for k, v in listed.items() if isinstance(v, dict)]
    # "passed" repeats the rows' verdicts (and the verification's "target met")
    rest = {k: v for k, v in block.items() if k not in ("conditions", "passed") and k not in
            {c.get("name") for c in listed if isinstance(c, dict)}}
    return [c for c in listed if isinstance(c, dict)], rest


def _rest_rows(rest: dict) -> list[tuple[str, str]]:
    """Key-value rows of the block's other entries; a nested mapping (a circular orbit's
    target, perigee and apogee altitudes) row by row, a null one left out."""
    rows = []
    for key, value in rest.items():
        if isinstance(value, dict):
            rows += [(f"{words(key)}: {key_header(k)}", cell(v, 4)) for k, v in value.items()
                     if not isinstance(v, (dict, list))]
        elif value is not None and not isinstance(value, list):
            rows.append((key_header(key), cell(value, 4)))
    return rows


#: columns of the target-miss table: (header, key prefixes), each key ending in its unit
_MISS_COLUMNS = (("as written", ("written", "target")), ("replayed", ("replayed",)),
                 ("miss", ("miss",)), ("tolerance", ("tolerance",)))


def _miss_cells(condition: dict) -> tuple[str, list[str]]:
    """(unit, cells) of one target condition: values under ``written_m``, ``miss_deg``..."""
    unit, cells = "", []
    for _, prefixes in _MISS_COLUMNS:
        key = next((k for k in condition for p in prefixes if str(k).startswith(p + "_")),
                   None)
        if key is None:
            cells.append("n/a")
            continue
        unit = unit or split_unit(key)[1]
        cells.append(num(condition[key], 4))
    return unit, cells


def target_miss_table(summary: dict) -> str:
    """The replay's miss from each target condition, beside the verification (only when
    the summary has a ``target_miss`` block with conditions)."""
    conditions, rest = _condition_rows(summary.get("target_miss"))
    if not conditions:
        return ""  # no target, or a summary from before the target was checked
    rows = []
    for c in conditions:
        unit, cells = _miss_cells(c)
        rows.append([words(c.get("name", "")), unit, *cells, yes_no(c.get("passed"))])
    failed = {i for i, c in enumerate(conditions) if c.get("passed") is False}
    body = "\n<h3>Target miss of the replay</h3>\n" + table(
        ["condition", "unit"] + [h for h, _ in _MISS_COLUMNS] + ["within tolerance"], rows,
        numeric={2, 3, 4, 5}, flagged_rows=failed)
    if _rest_rows(rest):
        body += "\n" + key_values(_rest_rows(rest))
    return body + "\n" + note("The burnout state of the independent forward integration "
                              "against each target condition as written (miss = replayed "
                              "- as written); a row outside its tolerance is highlighted.")


def exchange_ratios_section(summary: dict) -> str:
    """d(objective)/d(input) for each vehicle input, largest magnitude first."""
    ratios = summary.get("exchange_ratios")
    if not isinstance(ratios, list) or not ratios:
        return ""
    entries = [r for r in ratios if isinstance(r, dict)]

    def magnitude(r):
        value = r.get("value")
        return (0, -abs(value)) if is_number(value) else (1, 0.0)

    entries.sort(key=magnitude)
    rows = [[r.get("label") or words(r.get("input", "")), str(r.get("input", "")),
             num(r.get("value"), 4), r.get("unit", "")] for r in entries]
    reasons = sorted({str(r["reason"]) for r in entries if r.get("reason")})
    body = table(["input", "problem-file key", "exchange ratio", "unit"], rows, numeric={2})
    body += "\n" + note("The change of the objective per unit change of each input at the "
                        "optimum, from the optimiser's multipliers (no re-solve); valid "
                        "for small changes. Largest magnitude first.")
    body += "".join("\n" + note(reason) for reason in reasons)
    return section("Exchange ratios", body)
