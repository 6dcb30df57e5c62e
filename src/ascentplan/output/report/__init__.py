"""Self-contained HTML report of a solve or a simulation, written from its summary and plots.

The sections are in :mod:`~ascentplan.output.report.verdict` (what the result is worth),
:mod:`~ascentplan.output.report.details` (the flight's detail) and
:mod:`~ascentplan.output.report.problem` (the inputs restated); the pieces they are
made of in :mod:`~ascentplan.output.report.markup`.
"""

from __future__ import annotations

import base64
import json
from pathlib import Path

from ascentplan import __version__
from ascentplan.cautions import CAUTION
from ascentplan.output.atomic import write_text
from ascentplan.output.figure_list import order_figures
from ascentplan.output.report import details, timeline, verdict
from ascentplan.output.report.markup import STYLE, caution_box, esc, section, words
from ascentplan.output.report.problem import problem_section

__all__ = ["REPORT_NAME", "render_html", "render_report_from_folder", "write_report"]

#: file name of the report inside a results folder
REPORT_NAME = "report.html"

#: summary keys rendered by a section of their own; any other key goes to "Other results"
_KNOWN_KEYS = {"problem", "dynamics", "status", "message", "objective", "burnout", "apogee",
               "limits", "verification", "stages", "payload_mass_kg", "liftoff_mass_kg",
               "solver", "losses_m_s", "peaks", "phases", "events", "caution", "mass_split",
               "infeasibility", "inputs", "provenance", "exchange_ratios", "target_miss",
               "control_smoothing", "timeline", "mass_accounting"}

def _folder_plots(folder: Path) -> list[Path]:
    return order_figures(p for p in folder.glob("*.png") if p.is_file())


def _plots_section(plots: list[Path]) -> str:
    if not plots:
        return section("Plots", "<p>No plots were found.</p>")
    figures = []
    for path in plots:
        data = base64.b64encode(Path(path).read_bytes()).decode("ascii")
        caption = words(Path(path).stem)
        figures.append(f'<figure>\n<img src="data:image/png;base64,{data}" '
                       f'alt="{esc(caption)}">\n<figcaption>{esc(caption)}</figcaption>\n'
                       "</figure>")
    note = ("<p>Solid lines: the replay by forward integration; markers, where shown: the "
            "optimiser's node values; dashed horizontal lines: imposed limits; dotted "
            "vertical lines: events.</p>")
    return section("Plots", note + "\n" + "\n".join(figures))


def _other_section(summary: dict) -> str:
    return details.other_section(summary, _KNOWN_KEYS)


#: the sections in reading order: the verdict and what must give first, then the
#: results, the stage masses and their propellant together, the timeline and the mass
#: accounting, the inputs restated, the solver's detail and anything unknown last
_SECTIONS = (verdict.status_box, verdict.must_give_section, verdict.objective_section,
             verdict.flight_section, verdict.limits_section, verdict.verification_section,
             verdict.exchange_ratios_section, details.stages_section,
             details.propellant_section, timeline.timeline_section, timeline.mass_section,
             details.losses_section, details.split_section,
             problem_section, details.solver_section, details.smoothing_section,
             details.peaks_section,
             details.phases_section, details.events_section, _other_section)


def _subtitle(summary: dict) -> str:
    """The line under the title: the tool, the kind of flight, the file and its hash."""
    dynamics = summary.get("dynamics") or (summary.get("inputs") or {}).get(
        "models", {}).get("dynamics")
    text = f"ascentplan {__version__} report" + (f", {dynamics} flight" if dynamics else "")
    provenance = summary.get("provenance")
    if isinstance(provenance, dict) and provenance.get("source_file"):
        digest = provenance.get("source_sha256")
        text += f"; problem file {provenance['source_file']}" + (
            f" (SHA-256 {digest[:16]}...)" if isinstance(digest, str) else "")
    if isinstance(provenance, dict) and provenance.get("written_utc"):
        text += f"; written {provenance['written_utc']}"
    return text


def render_html(summary: dict, plots: list[Path] = ()) -> str:
    """The report page as a string.

    Parameters
    ----------
    summary : dict
        The content of summary.json of a solve (see
        :func:`ascentplan.output.inputs.solve_summary`) or of a simulation (see
        :func:`ascentplan.output.files.simulation_summary`); sections whose keys are
        missing are left out, so a folder written by an older version still renders.
    plots : sequence of path-like
        PNG files embedded in the page, in this order.

    Returns
    -------
    str
        A complete HTML document with no external resources.
    """
    name = summary.get("problem", "unnamed problem")
    # the caution in the file's own summary wins: it is what was shipped with the numbers
    caution = summary.get("caution") or CAUTION
    head = ('<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n'
            '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
            f"<title>{esc(name)} - ascentplan report</title>\n<style>{STYLE}</style>\n"
            f'</head>\n<body>\n<h1>{esc(name)}</h1>\n<p class="sub">{esc(_subtitle(summary))}</p>')
    parts = [head, caution_box(caution), *(part(summary) for part in _SECTIONS),
             _plots_section([Path(p) for p in plots]), caution_box(caution),
             "</body>\n</html>"]
    return "\n".join(p for p in parts if p) + "\n"


def write_report(result_or_summary, out_dir, *, plots=None) -> Path:
    """Write ``report.html``: the summary, tables and embedded plots in one file.

    Parameters
    ----------
    result_or_summary : ascentplan.pipeline.Result or dict
        A solve result (its summary with the problem's inputs and the run's provenance,
        :func:`ascentplan.output.inputs.solve_summary`), or a summary dict as written to
        summary.json.
    out_dir : str or Path
        Folder to write into; created if missing.
    plots : sequence of path-like, optional
        PNG files to embed, in this order. By default the PNGs already in ``out_dir``
        (overview first); if there are none and a result was given, its plots are
        drawn into ``out_dir`` first (:func:`ascentplan.output.plots.plot_result`).

    Returns
    -------
    Path
        The report written.
    """
    from ascentplan.output.inputs import solve_summary

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    if isinstance(result_or_summary, dict):
        summary, result = result_or_summary, None
    else:
        summary, result = solve_summary(result_or_summary), result_or_summary
    if plots is None:
        plots = _folder_plots(out)
        if not plots and result is not None:
            from ascentplan.output.plots import plot_result

            plots = order_figures(plot_result(result, out))
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
