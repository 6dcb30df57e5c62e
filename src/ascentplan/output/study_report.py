"""The plots and the self-contained HTML report of a trade study, made from its folder alone
(``study.json`` and ``study.jsonl``), so that a resumed or finished study can be rendered
again at any time."""

from __future__ import annotations

import base64
import html
import math
import re
from pathlib import Path

from ascentplan import __version__
from ascentplan.cautions import CAUTION
from ascentplan.output.atomic import write_text
from ascentplan.output.study_plots import (
    DISPERSION_PLOT,
    PERFORMANCE_CURVE,
    PERFORMANCE_MAP,
    plot_dispersion,
    plot_performance_curve,
    plot_performance_map,
)
from ascentplan.problem.objectives import OBJECTIVE_SPECS
from ascentplan.study.files import STUDY_CSV, KeyUnit, StudyTable, read_study
from ascentplan.study.summary import curve_slopes

__all__ = ["STUDY_REPORT", "write_study_outputs"]

STUDY_REPORT = "study_report.html"

#: rows of the points table shown in the report; all are in study.csv
_ROWS_SHOWN = 400
#: characters an HTML document may not carry: shown as escapes
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")

_STYLE = """
body { font-family: sans-serif; margin: 2em auto; max-width: 80em; padding: 0 1em;
       color: #1a1a1a; line-height: 1.4; }
h2 { border-bottom: 1px solid #bbb; padding-bottom: 0.2em; margin-top: 1.6em; }
.caution { border: 2px solid #a05a00; background: #fff3dc; padding: 0.8em 1em;
           font-weight: bold; margin: 1em 0; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 0.9em; }
th { background: #f0f0f0; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.6em; text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
.scroll { overflow-x: auto; }
"""


def _e(value) -> str:
    text = html.escape(str(value), quote=True)
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def _cell(value) -> str:
    if value is None:
        return "<td></td>"
    if isinstance(value, bool):
        return f"<td>{'yes' if value else 'no'}</td>"
    if isinstance(value, (int, float)):
        shown = f"{value:.7g}" if isinstance(value, float) and math.isfinite(value) else value
        return f'<td class="num">{_e(shown)}</td>'
    return f"<td>{_e(value)}</td>"


def _table(header: list, rows: list) -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(_cell(v) for v in row) + "</tr>" for row in rows)
    return f'<div class="scroll"><table><tr>{head}</tr>{body}</table></div>'


def _units(meta: dict) -> dict:
    return {k: KeyUnit(**u) for k, u in meta.get("key_units", {}).items()}


def _objective(meta: dict, rows: list) -> tuple[str, str, bool]:
    name = meta.get("objective_name") or next(
        (r["objective_name"] for r in rows if r.get("objective_name")), "objective")
    spec = OBJECTIVE_SPECS.get(name)
    return name, meta.get("objective_unit", ""), spec.maximise if spec else True


def _plots(folder: Path, meta: dict, rows: list) -> list:
    """The study's plots: a performance curve (one input), a map (two), or the spread of
    a dispersion."""
    name, unit, maximise = _objective(meta, rows)
    units = _units(meta)
    axes = meta.get("axes", [])
    title = meta.get("name", "")
    if meta.get("kind") == "vary" and len(axes) == 1:
        key = axes[0]["key"]
        points = curve_slopes(rows, key, units[key], unit)
        return [plot_performance_curve(points, key, units[key].shown, name, unit,
                                       folder / PERFORMANCE_CURVE, title)]
    if meta.get("kind") == "vary" and len(axes) == 2:
        keys = [a["key"] for a in axes]
        cells = [(units[keys[0]].user_value(r.get(keys[0])),
                  units[keys[1]].user_value(r.get(keys[1])), r.get("objective"),
                  r.get("status") == "optimal" and bool(r.get("verified"))) for r in rows]
        return [plot_performance_map(cells, axes, name, unit, maximise,
                                     folder / PERFORMANCE_MAP, title)]
    reserve = (meta.get("results") or {}).get("dispersion_reserve")
    if meta.get("kind") == "dispersion" and reserve:
        nominal = meta.get("nominal_index")
        values = [r["objective"] for r in rows if r["index"] != nominal
                  and r.get("status") == "optimal" and r.get("objective") is not None]
        return [plot_dispersion(values, reserve, folder / DISPERSION_PLOT, title)]
    return []


def _inputs_section(meta: dict, rows: list) -> str:
    counts: dict = {}
    for r in rows:
        counts[r.get("status")] = counts.get(r.get("status"), 0) + 1
    facts = [("problem file", meta.get("problem_path")),
             ("problem file SHA-256", meta.get("problem_sha256")),
             ("kind of study", meta.get("kind")), ("points", len(meta.get("points", []))),
             ("finished", ", ".join(f"{n} {s}" for s, n in counts.items())),
             ("objective", f"{meta.get('objective_name')} [{meta.get('objective_unit')}]")]
    out = "<h2>Inputs</h2>" + _table(["", ""], facts)
    axes = meta.get("axes", [])
    if axes:
        out += _table(["varied input", "unit", "values"],
                      [[a["key"], a["unit"] or "-",
                        ", ".join("n/a" if v is None else f"{v:.6g}" for v in a["values"])]
                       for a in axes])
    nominal = meta.get("nominal_index")
    if nominal is not None and nominal < len(meta.get("points", [])):
        units = _units(meta)
        point = meta["points"][nominal]
        out += _table(["dispersed input", "unit", "nominal"],
                      [[k, units[k].label if k in units else "",
                        units[k].user_value(v) if k in units else v]
                       for k, v in point.items()])
    return out


def _reserve_section(meta: dict) -> str:
    reserve = (meta.get("results") or {}).get("dispersion_reserve")
    if not reserve:
        return ""
    unit, pct = reserve["objective_unit"], 100 * reserve["confidence"]
    conf = 100 * reserve["interval_confidence"]
    rows = [["cases", reserve["cases"]],
            ["cases without an optimum (counted as not covered)",
             reserve["cases_without_optimum"]],
            [f"nominal [{unit}]", reserve["nominal"]],
            [f"{reserve['meaning']} covering {pct:.4g} % of cases [{unit}]",
             reserve["reserve"]],
            [f"{conf:.3g} % confidence interval of it [{unit}]",
             f"{reserve['lower']} to {reserve['upper']}"],
            ["order statistics (lower, estimate, upper)", str(reserve["ranks"])],
            [f"value covered [{unit}]", reserve["covered_value"]]]
    if reserve.get("reason"):
        rows.append(["note", reserve["reason"]])
    peaks = [[p["name"], p["unit"], p["bound"], p["value"], p["lower"], p["upper"],
              p["extreme"]] for p in reserve.get("peaks", [])]
    return (f"<h2>Reserve at {pct:.4g} % of the dispersed cases</h2>"
            "<p>Each case is re-optimised (a perfect guidance); a schedule fixed before "
            "flight needs at least this reserve. The interval is distribution-free, from "
            "the binomial distribution of the order statistics.</p>"
            + _table(["", ""], rows)
            + (_table(["limit", "unit", "bound", f"peak at {pct:.4g} %", "interval low",
                       "interval high", "extreme"], peaks) if peaks else ""))


def _figures(paths: list) -> str:
    out = ""
    for path in paths:
        data = base64.b64encode(Path(path).read_bytes()).decode("ascii")
        out += (f'<figure><img alt="{_e(Path(path).stem)}" src="data:image/png;base64,'
                f'{data}"><figcaption>{_e(Path(path).name)}</figcaption></figure>')
    return "<h2>Plots</h2>" + out if out else ""


def _points_section(meta: dict, rows: list) -> str:
    table = StudyTable.of_record(meta)
    shown = rows[:_ROWS_SHOWN]
    cells = [[table.row(r).get(h) for h in table.header] for r in shown]
    note = (f"<p>First {_ROWS_SHOWN} of {len(rows)} points; all are in {STUDY_CSV}.</p>"
            if len(rows) > len(shown) else "")
    return "<h2>Points</h2>" + note + _table(table.header, cells)


def render_study_html(meta: dict, rows: list, plots: list) -> str:
    """The study report as one HTML document (plots inlined)."""
    title = f"Trade study: {meta.get('name', '')}"
    return ("<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{_e(title)}</title><style>{_STYLE}</style></head><body>"
            f"<h1>{_e(title)}</h1><div class=\"caution\">{_e(CAUTION)}</div>"
            + _inputs_section(meta, rows) + _reserve_section(meta) + _figures(plots)
            + _points_section(meta, rows)
            + f"<p>ascentplan {_e(__version__)}</p></body></html>\n")


def write_study_outputs(folder) -> list:
    """Write the study's plot (``performance.png`` for one input, ``performance_map.png``
    for two, ``dispersion.png`` for a dispersion) and ``study_report.html`` in its
    folder.

    Parameters
    ----------
    folder : str or pathlib.Path
        A study folder with ``study.json`` and ``study.jsonl``.

    Returns
    -------
    list of pathlib.Path
        The files written, the report last.
    """
    folder = Path(folder)
    meta, rows = read_study(folder)
    plots = _plots(folder, meta, rows) if rows else []
    report = folder / STUDY_REPORT
    write_text(report, render_study_html(meta, rows, plots))
    return [*plots, report]
