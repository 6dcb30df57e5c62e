"""Self-contained HTML report of a solve or a simulation, written from its summary and plots."""

from __future__ import annotations

import base64
import html
import json
import math
import re
from pathlib import Path

from ascentplan import __version__
from ascentplan.cautions import CAUTION
from ascentplan.output.atomic import write_text
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import OBJECTIVES, SCHEMES

__all__ = ["REPORT_NAME", "render_html", "render_report_from_folder", "write_report"]

#: file name of the report inside a results folder
REPORT_NAME = "report.html"

#: plain-words verdict for each status of a solve (pipeline) or a simulation
_VERDICTS = {
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

#: summary keys rendered by a section of their own; any other key goes to "Other results"
_KNOWN_KEYS = {"problem", "dynamics", "status", "message", "objective", "burnout", "apogee",
               "limits", "verification", "stages", "payload_mass_kg", "liftoff_mass_kg",
               "solver", "losses_m_s", "peaks", "phases", "events", "caution", "mass_split",
               "infeasibility"}

#: PNG file stems in the order the report shows them (overview first); others follow
_PLOT_ORDER = ("overview", "split_map", "altitude", "speed", "dynamic_pressure",
               "axial_acceleration", "q_alpha", "throttle", "pitch", "mass")

_STYLE = """
body { font-family: sans-serif; margin: 2em auto; max-width: 70em; padding: 0 1em;
       color: #1a1a1a; line-height: 1.4; }
h1 { margin-bottom: 0.1em; }  .sub { color: #555; margin-top: 0; }
h2 { border-bottom: 1px solid #bbb; padding-bottom: 0.2em; margin-top: 1.6em; }
.caution { border: 2px solid #a05a00; background: #fff3dc; padding: 0.8em 1em;
           font-weight: bold; margin: 1em 0; }
.status { border: 2px solid #777; padding: 0.8em 1em; margin: 1em 0; }
.status.good { border-color: #2e7d32; background: #eef7ee; }
.status.bad { border-color: #b71c1c; background: #fbeaea; }
.status.neutral { border-color: #555; background: #f2f2f2; }
.status .verdict { font-size: 1.15em; font-weight: bold; margin: 0 0 0.4em 0; }
table { border-collapse: collapse; margin: 0.6em 0; }  th { background: #f0f0f0; }
th, td { border: 1px solid #ccc; padding: 0.25em 0.7em; text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
tr.total td { font-weight: bold; }  tr.flag td { background: #fff3dc; font-weight: bold; }
code { background: #f4f4f4; padding: 0 0.2em; }
pre { background: #f6f6f6; padding: 0.6em; overflow-x: auto; }
figure { margin: 1.2em 0; }  figcaption { color: #555; font-size: 0.9em; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
"""


#: the limit whose user unit shows each peak of a summary, by the peak's value key
#: (``value_Pa``, ``value_g0``, ``value_Pa_rad``, ``value_m``: the SI unit of the limit)
_PEAK_UNITS = {"value_" + spec.si_unit.replace(" ", "_"): spec for spec in LIMITS.values()}

#: a cell that reads as a number (or n/a) is right-aligned in a numeric column
_NUMERIC = re.compile(r"^(n/a|[-+]?[\d,]*\.?\d+(e[-+]?\d+)?)$")


#: characters an HTML document may not carry (its syntax forbids C0/C1 controls but
#: tab, line feed and carriage return): shown as escapes instead
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")


def _e(value) -> str:
    text = _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", str(value))
    return html.escape(text, quote=True)


def _is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _num(value, decimals: int = 3, scale: float = 1.0, fixed: bool = False) -> str:
    """A number for a table cell; "n/a" for a missing or non-finite value. A very large or
    small one is in exponent form unless ``fixed``: a mass balance's rounding residual of
    a few grams reads 0.0 kg, not -1.20e-05."""
    if not _is_number(value) or not math.isfinite(value):
        return "n/a"
    x = value / scale
    if not fixed and x != 0.0 and (abs(x) >= 1e7 or abs(x) < 10.0 ** (-decimals)):
        return f"{x:.{max(decimals, 2)}e}"
    return f"{round(x, decimals) + 0.0:,.{decimals}f}"  # + 0.0: never "-0.0"


def _yes_no(value) -> str:
    if value is None:
        return "n/a"
    return "yes" if value else "no"


def _words(name: str) -> str:
    return str(name).replace("_", " ")


def _table(header: list[str], rows: list[list], numeric: set[int] = frozenset(),
           total_rows: set[int] = frozenset(), flagged_rows: set[int] = frozenset()) -> str:
    """An HTML table; cells are escaped here, so pass plain text. Flagged rows are
    highlighted: a figure the reader must not miss."""
    out = ["<table>", "<thead><tr>" + "".join(f"<th>{_e(h)}</th>" for h in header)
           + "</tr></thead>", "<tbody>"]
    for i, row in enumerate(rows):
        cls = (' class="total"' if i in total_rows else ' class="flag"' if i in flagged_rows
               else "")
        cells = "".join(f'<td class="num">{_e(c)}</td>' if j in numeric and _NUMERIC.match(
            str(c)) else f"<td>{_e(c)}</td>" for j, c in enumerate(row))
        out.append(f"<tr{cls}>{cells}</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def _key_values(rows: list[tuple[str, str]]) -> str:
    return _table(["quantity", "value"], [list(r) for r in rows], numeric={1})


def _section(title: str, body: str) -> str:
    return f"<section>\n<h2>{_e(title)}</h2>\n{body}\n</section>"


def _caution_box(text: str) -> str:
    return f'<div class="caution" role="note">{_e(text)}</div>'


def _status_box(summary: dict) -> str:
    status = str(summary.get("status", "unknown"))
    kind, verdict = _VERDICTS.get(status, ("bad", f"Status {status}: not a verified optimum."))
    verification = summary.get("verification")
    if isinstance(verification, dict) and status == "optimal" and not verification.get(
            "passed", True):
        # guard against an inconsistent summary: a failed check is never shown as good
        kind, verdict = _VERDICTS["not_verified"]
    message = summary.get("message") or ""
    return (f'<div class="status {kind}">\n<p class="verdict">{_e(verdict)}</p>\n'
            f"<p>status: <code>{_e(status)}</code>"
            + (f" &mdash; {_e(message)}" if message else "") + "</p>\n</div>")


def _must_give_section(summary: dict) -> str:
    """For an infeasible problem: the targets and limits that must give, and by how much."""
    block = summary.get("infeasibility")
    if not isinstance(block, dict):
        return ""
    text = str(block.get("text", ""))
    body = f"<p>{_e(text[:1].upper() + text[1:])}</p>"  # the verdict as a sentence
    rows = []
    for c in block.get("conditions") or []:
        name = str(c.get("name", ""))
        depleting = set(c.get("stages_burning_to_depletion") or [])
        stages = ", ".join(f"{s} (burns to depletion)" if s in depleting else str(s)
                           for s in c.get("stages") or [])
        rows.append([f"{_words(name)} ({name})", c.get("kind", ""), _num(c.get("value")),
                     _num(c.get("required")), _num(c.get("relaxation")), c.get("unit", ""),
                     stages or "-"])
    if rows:
        body += "\n" + _table(["condition", "kind", "as written", "needed", "change", "unit",
                               "stages"], rows, numeric={2, 3, 4}) + (
            "\n<p>Needed: the nearest target within reach, or the bound the flight needs. "
            "Stages: those burning where a limit is passed.</p>")
    return _section("What must give", body)


def _objective_section(summary: dict) -> str:
    obj = summary.get("objective")
    if not isinstance(obj, dict):
        return ""
    name = obj.get("name", "")
    unit = obj.get("unit", "")
    rows = [("objective", f"{_words(name)} ({OBJECTIVES.get(name, 'see the manual')})"),
            (f"value from the optimiser [{unit}]", _num(obj.get("value"))),
            (f"value as replayed [{unit}]", _num(obj.get("replayed_value")))]
    value, replayed = obj.get("value"), obj.get("replayed_value")
    if _is_number(value) and _is_number(replayed):
        rows.append((f"replay minus optimiser [{unit}]", _num(replayed - value, 4)))
    return _section("Objective", _key_values(rows))


def _flight_section(summary: dict) -> str:
    rows = []
    b = summary.get("burnout")
    if isinstance(b, dict):
        rows += [("burnout time [s]", _num(b.get("time_s"), 2)),
                 ("burnout altitude [km]", _num(b.get("altitude_m"), 3, 1000.0)),
                 ("burnout inertial speed [m/s]", _num(b.get("speed_m_s"), 2)),
                 ("burnout flight-path angle [deg]", _num(b.get("flight_path_angle_deg"), 3)),
                 ("burnout mass [kg]", _num(b.get("mass_kg"), 1))]
    a = summary.get("apogee")
    if isinstance(a, dict):
        rows += [("apogee time [s]", _num(a.get("time_s"), 2)),
                 ("apogee altitude [km]", _num(a.get("altitude_m"), 3, 1000.0))]
    if "payload_mass_kg" in summary:
        rows.append(("payload mass [kg]", _num(summary.get("payload_mass_kg"), 1)))
    if "liftoff_mass_kg" in summary:
        rows.append(("liftoff mass [kg]", _num(summary.get("liftoff_mass_kg"), 1)))
    return _section("Flight", _key_values(rows)) if rows else ""


def _limits_section(summary: dict) -> str:
    limits = summary.get("limits")
    if limits is None:
        return ""
    if not limits:
        return _section("Limits", "<p>No path limits were imposed.</p>")
    if all(isinstance(lim, dict) and "exceeded" in lim for lim in limits):
        return _flown_limits_section(limits)
    rows = []
    for lim in limits:
        name = str(lim.get("name", ""))
        unit = lim.get("unit") or (LIMITS[name].unit if name in LIMITS else "")
        rows.append([f"{_words(name)} ({name})", unit, _num(lim.get("bound"), 3),
                     _num(lim.get("peak"), 3), _num(lim.get("peak_time_s"), 2),
                     _yes_no(lim.get("active")), _num(lim.get("shadow_price"), 4),
                     lim.get("shadow_price_unit", "")])
    note = ("<p>Peak: the extreme on the replay's dense time grid (for the minimum "
            "altitude, the lowest point). Shadow price: the change of the objective per "
            "unit of relaxed limit, from the optimiser's multipliers; zero when the limit "
            "is not active.</p>")
    return _section("Limits", _table(
        ["limit", "unit", "bound", "peak", "peak at [s]", "active", "shadow price",
         "shadow price unit"], rows, numeric={2, 3, 4, 6}) + "\n" + note)


def _flown_limits_section(limits: list) -> str:
    """The limits of a flight of ``simulate``: bound, peak, excess, exceeded or not."""
    rows = []
    for lim in limits:
        name = str(lim.get("name", ""))
        excess = lim.get("excess_fraction")
        rows.append([f"{_words(name)} ({name})", lim.get("unit", ""), _num(lim.get("bound"), 3),
                     _num(lim.get("peak"), 3), _num(lim.get("peak_time_s"), 2),
                     _num(excess * 100.0 if _is_number(excess) else None, 2),
                     "EXCEEDED" if lim.get("exceeded") else "within"])
    tolerance = limits[0].get("tolerance_fraction")
    note = ("<p>Peak: the extreme on the flight's dense time grid, as verification takes "
            "it. A limit counts as exceeded beyond "
            f"{_num(tolerance * 100.0 if _is_number(tolerance) else None, 2)} % of its "
            "bound, the tolerance of verification.</p>")
    return _section("Limits", _table(
        ["limit", "unit", "bound", "peak", "peak at [s]", "excess [% of bound]", "verdict"],
        rows, numeric={2, 3, 4, 5}) + "\n" + note)


def _verification_section(summary: dict) -> str:
    v = summary.get("verification")
    if not isinstance(v, dict):
        return ""
    excess = v.get("worst_limit_excess_fraction")
    rows = [("passed", _yes_no(v.get("passed"))),
            ("burnout speed, replay minus optimiser [m/s]",
             _num(v.get("burnout_speed_difference_m_s"), 4)),
            ("burnout altitude, replay minus optimiser [m]",
             _num(v.get("burnout_altitude_difference_m"), 3)),
            ("worst limit excess [% of bound]",
             _num(excess * 100.0 if _is_number(excess) else None, 3))]
    body = _key_values(rows)
    reasons = v.get("reasons") or []
    if reasons:
        body += "\n<p>Reasons:</p>\n<ul>" + "".join(f"<li>{_e(r)}</li>" for r in reasons) \
            + "</ul>"
    return _section("Verification by forward integration", body)


def _stages_section(summary: dict) -> str:
    stages = summary.get("stages")
    if not stages:
        return ""
    rows = [[s.get("name", str(i)), _num(s.get("propellant_mass_kg"), 1),
             _num(s.get("dry_mass_kg"), 1), _num(s.get("burn_time_s"), 2),
             _num(s.get("thrust_vacuum_N"), 2, 1000.0)] for i, s in enumerate(stages)]
    return _section("Stages", _table(
        ["stage", "propellant [kg]", "dry mass [kg]", "burn time [s]",
         "vacuum thrust [kN]"], rows, numeric={1, 2, 3, 4}))


def _propellant_section(summary: dict) -> str:
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
    rows = [[name, *(_num(p.get(k), 1, fixed=True) for k in keys),
             _num(p.get("unplanned_residual_percent"), 2, fixed=True),
             shutdown.get(p.get("shutdown"), "n/a")] for name, p in blocks]
    flagged = {i for i, (_, p) in enumerate(blocks) if p.get("unplanned_residual_reported")}
    note = ("<p>Loaded = burnt + reserve + unplanned residual. The reserve stays on board by "
            "design; an unplanned residual is propellant dropped unburnt at staging (its row "
            "is highlighted where it is more than rounding).</p>")
    return _section("Propellant", _table(
        ["stage", "loaded [kg]", "burnt [kg]", "reserve [kg]", "unplanned residual [kg]",
         "unplanned residual [% of loaded]", "may shut down early"], rows,
        numeric={1, 2, 3, 4, 5}, flagged_rows=flagged) + "\n" + note)


def _losses_section(summary: dict) -> str:
    losses = summary.get("losses_m_s")
    if not losses:
        return ""
    terms = (("gravity", "gravity loss"), ("drag", "drag loss"),
             ("steering", "steering loss"), ("back_pressure", "back-pressure loss"))
    rows = [["ideal velocity increment", _num(losses.get("ideal"), 2)]]
    rows += [[label, _num(losses.get(key), 2)] for key, label in terms if key in losses]
    achieved_row = len(rows)
    rows.append(["achieved change of inertial speed", _num(losses.get("achieved"), 2)])
    parts = [losses.get("ideal"), losses.get("achieved")] + [losses.get(k) for k, _ in terms
                                                             if k in losses]
    residual = losses.get("residual")
    if residual is None and all(_is_number(p) for p in parts):
        residual = parts[0] - parts[1] - sum(parts[2:])
    rows.append(["closure: ideal - achieved - losses", _num(residual, 4)])
    known = {"ideal", "achieved", "residual"} | {k for k, _ in terms}
    rows += [[_words(k), _num(val, 2)] for k, val in losses.items() if k not in known]
    body = _table(["term", "velocity [m/s]"], rows, numeric={1}, total_rows={0, achieved_row})
    body += ("\n<p>Budget to burnout: ideal = achieved + gravity + drag + steering + "
             "back-pressure losses; the closure row is the integration residual.</p>")
    return _section("Velocity-loss budget", body)


def _solver_section(summary: dict) -> str:
    s = summary.get("solver")
    if not isinstance(s, dict):
        return ""
    scheme = s.get("scheme", "n/a")
    rows = [("collocation", SCHEMES.get(scheme, _words(scheme))),
            ("nodes per phase (final mesh)", str(s.get("nodes", "n/a"))),
            ("mesh refinements", str(s.get("mesh_refinements", "n/a"))),
            ("IPOPT iterations (all meshes)", str(s.get("iterations", "n/a"))),
            ("IPOPT return status", str(s.get("return_status", "n/a"))),
            ("wall time [s]", _num(s.get("wall_time_s"), 2))]
    known = {"scheme", "nodes", "mesh_refinements", "iterations", "return_status",
             "wall_time_s"}
    rows += [(_words(k), str(v)) for k, v in s.items() if k not in known]
    return _section("Solver", _key_values(rows))


def _peaks_section(summary: dict) -> str:
    peaks = summary.get("peaks")
    if not isinstance(peaks, dict):
        return ""
    rows = []
    for name, p in peaks.items():
        if not isinstance(p, dict):
            continue
        key = next((k for k in _PEAK_UNITS if k in p), None)
        if key is not None:
            spec = _PEAK_UNITS[key]
            value, unit = _num(p[key], 3, spec.factor), spec.unit
        else:
            value, unit = "n/a", ""
        rows.append([_words(name), unit, value, _num(p.get("time_s"), 2),
                     _num(p.get("altitude_m"), 3, 1000.0), _num(p.get("mach"), 2)])
    return _section("Peaks", _table(["quantity", "unit", "peak", "at [s]", "altitude [km]",
                                     "Mach"], rows, numeric={2, 3, 4, 5}))


def _phases_section(summary: dict) -> str:
    phases = summary.get("phases")
    if not phases:
        return ""
    rows = [[str(p.get("index", i)), str(p.get("kind", "")), str(p.get("stage", "")),
             _num(p.get("start_s"), 2), _num(p.get("end_s"), 2)]
            for i, p in enumerate(phases)]
    return _section("Phases", _table(["phase", "kind", "stage", "start [s]", "end [s]"], rows,
                                     numeric={3, 4}))


def _events_section(summary: dict) -> str:
    events = summary.get("events")
    if not events:
        return ""
    rows = [[str(ev.get("kind", "")), _num(ev.get("time_s"), 2),
             _num(ev.get("altitude_m"), 3, 1000.0), _num(ev.get("speed_m_s"), 2),
             _num(ev.get("flight_path_angle_deg"), 3), _num(ev.get("mass_kg"), 1)]
            for ev in events]
    return _section("Events", _table(["event", "time [s]", "altitude [km]", "speed [m/s]",
                                      "flight-path angle [deg]", "mass [kg]"], rows,
                                     numeric={1, 2, 3, 4, 5}))


def _split_section(summary: dict) -> str:
    split = summary.get("mass_split")
    if not isinstance(split, dict):
        return ""
    unit = split.get("objective_unit", "")
    rows = []
    for st in split.get("stages", []):
        rows.append([st.get("name", ""), _num(st.get("written_propellant_mass_kg"), 1),
                     _num(st.get("rocket_equation_propellant_mass_kg"), 1),
                     _num(st.get("analytic_propellant_mass_kg"), 1),
                     _num(st.get("coupled_propellant_mass_kg"), 1),
                     _num(st.get("coupled_dry_mass_kg"), 1)])
    table = _table(["stage", "as written [kg]", "rocket equation [kg]",
                    "flown with the rocket-equation proportions [kg]",
                    "coupled optimum [kg]", "coupled dry mass [kg]"], rows,
                   numeric={1, 2, 3, 4, 5})
    held = _words(split.get("hold", ""))
    objectives = _key_values([
        (f"{held} held", ""),
        (f"rocket-equation split flown optimally [{unit}]",
         f"{_num(split.get('analytic_objective'), 3)} ({split.get('analytic_status', '')})"),
        (f"coupled optimum [{unit}]", _num(split.get("coupled_objective"), 3)),
        ("liftoff mass, rocket-equation split [kg]",
         _num(split.get("analytic_liftoff_mass_kg"), 1)),
        ("liftoff mass, coupled [kg]", _num(split.get("coupled_liftoff_mass_kg"), 1)),
    ])
    note = ("<p>The rocket-equation split ignores gravity, drag and the limits; flown "
            "optimally it achieves the first objective, the split optimised with the "
            "trajectory the second. The map of the objective around the optimum, when "
            "computed, is in split_map.png below and in summary.json.</p>")
    return _section("Stage-mass split", table + "\n" + objectives + "\n" + note)


def _other_section(summary: dict) -> str:
    extra = {k: v for k, v in summary.items() if k not in _KNOWN_KEYS and not str(
        k).startswith("_")}
    if not extra:
        return ""
    text = json.dumps(extra, indent=2, default=str, allow_nan=True)
    return _section("Other results", f"<pre>{_e(text)}</pre>")


def _plot_sort_key(path: Path) -> tuple:
    stem = path.stem
    for i, key in enumerate(_PLOT_ORDER):
        if stem.endswith(key):  # also with a file-name prefix
            return (i, stem)
    return (len(_PLOT_ORDER), stem)


def _folder_plots(folder: Path) -> list[Path]:
    return sorted((p for p in folder.glob("*.png") if p.is_file()), key=_plot_sort_key)


def _plots_section(plots: list[Path]) -> str:
    if not plots:
        return _section("Plots", "<p>No plots were found.</p>")
    figures = []
    for path in plots:
        data = base64.b64encode(Path(path).read_bytes()).decode("ascii")
        caption = _words(Path(path).stem)
        figures.append(f'<figure>\n<img src="data:image/png;base64,{data}" '
                       f'alt="{_e(caption)}">\n<figcaption>{_e(caption)}</figcaption>\n'
                       "</figure>")
    note = ("<p>Solid lines: the replay by forward integration; markers, where shown: the "
            "optimiser's node values; dashed horizontal lines: imposed limits; dotted "
            "vertical lines: events.</p>")
    return _section("Plots", note + "\n" + "\n".join(figures))


#: the sections in reading order: the verdict and what must give first, the stage masses
#: and their propellant together, the solver's detail and anything unknown last
_SECTIONS = (_status_box, _must_give_section, _objective_section, _flight_section,
             _limits_section, _verification_section, _stages_section, _propellant_section,
             _losses_section, _split_section, _solver_section, _peaks_section,
             _phases_section, _events_section, _other_section)


def render_html(summary: dict, plots: list[Path] = ()) -> str:
    """The report page as a string.

    Parameters
    ----------
    summary : dict
        The content of summary.json of a solve (see
        :meth:`ascentplan.pipeline.Result.summary`) or of a simulation (see
        :func:`ascentplan.outputs.simulation_summary`); sections whose keys are
        missing are left out.
    plots : sequence of path-like
        PNG files embedded in the page, in this order.

    Returns
    -------
    str
        A complete HTML document with no external resources.
    """
    name = summary.get("problem", "unnamed problem")
    dynamics = summary.get("dynamics")
    # the caution in the file's own summary wins: it is what was shipped with the numbers
    caution = summary.get("caution") or CAUTION
    subtitle = f"ascentplan {__version__} report" + (f", {dynamics} flight" if dynamics
                                                       else "")
    head = ('<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n'
            '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
            f"<title>{_e(name)} - ascentplan report</title>\n<style>{_STYLE}</style>\n"
            f'</head>\n<body>\n<h1>{_e(name)}</h1>\n<p class="sub">{_e(subtitle)}</p>')
    parts = [head, _caution_box(caution), *(section(summary) for section in _SECTIONS),
             _plots_section([Path(p) for p in plots]), _caution_box(caution),
             "</body>\n</html>"]
    return "\n".join(p for p in parts if p) + "\n"


def write_report(result_or_summary, out_dir, *, plots=None) -> Path:
    """Write ``report.html``: the summary, tables and embedded plots in one file.

    Parameters
    ----------
    result_or_summary : ascentplan.pipeline.Result or dict
        A solve result, or a summary dict as written to summary.json.
    out_dir : str or Path
        Folder to write into; created if missing.
    plots : sequence of path-like, optional
        PNG files to embed, in this order. By default the PNGs already in ``out_dir``
        (overview first); if there are none and a result was given, its plots are
        drawn into ``out_dir`` first (:func:`ascentplan.plots.plot_result`).

    Returns
    -------
    Path
        The report written.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    if isinstance(result_or_summary, dict):
        summary, result = result_or_summary, None
    else:
        summary, result = result_or_summary.summary(), result_or_summary
    if plots is None:
        plots = _folder_plots(out)
        if not plots and result is not None:
            from ascentplan.output.plots import plot_result

            plots = sorted(plot_result(result, out), key=_plot_sort_key)
    path = out / REPORT_NAME
    write_text(path, render_html(summary, plots))
    return path


def render_report_from_folder(folder) -> Path:
    """Render ``report.html`` in a results folder from its summary.json and PNG files.

    No re-solve: the report shows what the folder holds.

    Parameters
    ----------
    folder : str or Path
        A results folder holding ``summary.json``.

    Returns
    -------
    Path
        The report written into ``folder``.

    Raises
    ------
    FileNotFoundError
        If the folder has no summary.json.
    ValueError
        If summary.json is not a JSON object, or not one of the shape 'solve' and
        'simulate' write.
    """
    folder = Path(folder)
    source = folder / "summary.json"
    if not source.is_file():
        raise FileNotFoundError(f"{source}: no summary.json in this folder; "
                                "a results folder from 'solve' or 'simulate' is expected")
    try:
        summary = json.loads(source.read_text(encoding="utf-8"))
    except json.JSONDecodeError as exc:
        raise ValueError(f"{source}: not valid JSON ({exc})") from exc
    if not isinstance(summary, dict):
        raise ValueError(f"{source}: expected a JSON object at the top level, got "
                         f"{type(summary).__name__}")
    try:
        page = render_html(summary, _folder_plots(folder))
    except (AttributeError, IndexError, KeyError, TypeError, ValueError) as exc:
        # the file is the input here: content of another shape is the input's fault
        raise ValueError(f"{source}: not a summary written by 'solve' or 'simulate' "
                         f"({type(exc).__name__}: {exc})") from None
    path = folder / REPORT_NAME
    write_text(path, page)
    return path
