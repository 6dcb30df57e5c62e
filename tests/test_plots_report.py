"""Plots and the HTML report: files, bound and event lines, node overlays, report content."""

from __future__ import annotations

import base64
import html
import json
import re
import shutil
import struct
from dataclasses import replace
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from ascentplan.cautions import CAUTION
from ascentplan.constants import G0, PLANETS
from ascentplan.models.aero import ConstantDrag
from ascentplan.models.atmosphere import ExponentialAtmosphere
from ascentplan.models.gravity import InverseSquareGravity
from ascentplan.output import figure_marks, split_map_plot
from ascentplan.output import files as outputs
from ascentplan.output import plots as plots_module
from ascentplan.output.figure_marks import EVENT_KINDS, caution_line
from ascentplan.output.plots import (
    DPI,
    FIGURES,
    _node_quantities,
    _overview_figure,
    _panel_figure,
    order_figures,
    plot_split_map,
    plot_trajectory,
    result_nodes,
)
from ascentplan.output.report import render_html, render_report_from_folder, write_report
from ascentplan.pipeline import solve
from ascentplan.problem.loader import load_problem
from ascentplan.problem.model import (
    Aerodynamics,
    Launch,
    Limits,
    Mesh,
    Planet,
    Problem,
    Stage,
    Target,
    Vehicle,
    phase_plan,
)
from ascentplan.replay.simulate import simulate

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
PROBLEMS = Path(__file__).resolve().parent.parent / "problems"
EARTH = Planet("earth", **PLANETS["earth"])


def _vertical_problem(limits: Limits) -> Problem:
    stage = Stage("booster", propellant_mass=900.0, dry_mass=150.0, thrust_vacuum=30e3,
                  exhaust_speed=250.0 * G0, throttle_min=0.4, throttle_max=1.0)
    return Problem(name="sounding-one-stage", dynamics="vertical",
                   vehicle=Vehicle(100.0, (stage,)), planet=EARTH,
                   atmosphere=ExponentialAtmosphere(),
                   gravity=InverseSquareGravity(EARTH.gravitational_parameter),
                   aerodynamics=Aerodynamics(0.2, ConstantDrag(0.3)), limits=limits,
                   mesh=Mesh(nodes_per_phase=20))


def _planar_problem(limits: Limits) -> Problem:
    first = Stage("first", 24e3, 2.4e3, 520e3, 296.0 * G0, nozzle_exit_area=0.6,
                  throttle_min=0.5)
    # a liquid upper stage at fixed thrust, cut off by guidance before depletion
    second = Stage("second", 6e3, 0.7e3, 110e3, 336.0 * G0, shutdown="early")
    return Problem(name="demo-two-stage", dynamics="planar",
                   vehicle=Vehicle(500.0, (first, second)), planet=EARTH,
                   atmosphere=ExponentialAtmosphere(),
                   gravity=InverseSquareGravity(EARTH.gravitational_parameter),
                   aerodynamics=Aerodynamics(3.0, ConstantDrag(0.3)),
                   launch=Launch(vertical_rise=8.0, pitch_over=np.radians(1.0)),
                   limits=limits, target=Target(flight_path_angle=0.0),
                   mesh=Mesh(nodes_per_phase=20))


PLANAR_LIMITS = Limits(max_dynamic_pressure=25e3, max_axial_acceleration=5.0,
                       max_q_alpha=200e3 * np.pi / 180.0, min_altitude=0.0)


@pytest.fixture(scope="module")
def vertical_flight():
    problem = _vertical_problem(Limits(max_dynamic_pressure=30e3, max_axial_acceleration=4.0))
    return problem, simulate(problem)


@pytest.fixture(scope="module")
def planar_flight():
    problem = _planar_problem(PLANAR_LIMITS)
    return problem, simulate(problem, coast_to_apogee=False)


@pytest.fixture(scope="module")
def planar_result():
    problem = _planar_problem(Limits(max_dynamic_pressure=25e3, max_axial_acceleration=5.0))
    result = solve(problem)
    assert result.status == "optimal", result.message
    return result


@pytest.fixture(scope="module")
def vertical_plots(vertical_flight, tmp_path_factory):
    problem, traj = vertical_flight
    folder = tmp_path_factory.mktemp("vertical")
    return folder, plot_trajectory(problem, traj, folder)


@pytest.fixture(scope="module")
def result_folder(planar_result, tmp_path_factory):
    """A results folder whose report was written from the result alone (plots drawn)."""
    folder = tmp_path_factory.mktemp("solved")
    return folder, write_report(planar_result, folder)


def _png_size(path) -> tuple[int, int]:
    data = path.read_bytes()
    assert data[:8] == PNG_SIGNATURE, f"{path.name} is not a PNG"
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def _check_pngs(paths, expected_stems):
    assert [p.stem for p in paths] == expected_stems
    for path in paths:
        assert path.is_file()
        # a plot with axes, curves and text compresses to well over 10 kB at 150 dpi
        assert path.stat().st_size > 10_000, path.name
        width, height = _png_size(path)
        if not path.stem.endswith("overview"):
            assert (width, height) == (7 * DPI, round(4.2 * DPI)), path.name


def _lines_by_gid(ax, gid):
    return [line for line in ax.get_lines() if line.get_gid() == gid]


def test_vertical_plot_files(vertical_plots):
    _folder, paths = vertical_plots
    _check_pngs(paths, ["overview", "altitude", "speed", "dynamic_pressure",
                        "axial_acceleration", "throttle", "mass"])
    # six panels: a 2x3 grid of 5 x 3.4 inch cells plus bands for the title and status
    # above, the legend and caution below
    assert _png_size(paths[0]) == (15 * DPI, round((2 * 3.4 + 1.1) * DPI))


def test_planar_plot_files_with_prefix(planar_flight, tmp_path):
    problem, traj = planar_flight
    paths = plot_trajectory(problem, traj, tmp_path, prefix="case1_")
    assert all(p.name.startswith("case1_") for p in paths)
    _check_pngs(paths, [f"case1_{s}" for s in ("overview", "altitude", "speed",
                                               "dynamic_pressure", "axial_acceleration",
                                               "q_alpha", "throttle", "pitch", "mass")])
    # eight panels need a 3x3 grid; the empty cell is removed
    fig = _overview_figure(problem, traj)
    assert len(fig.axes) == 8


def test_dynamic_pressure_bound_line(vertical_flight):
    problem, traj = vertical_flight
    ax = _panel_figure(problem, traj, "dynamic_pressure").axes[0]
    bounds = _lines_by_gid(ax, "bound")
    assert len(bounds) == 1
    np.testing.assert_allclose(bounds[0].get_ydata(), 30.0)  # 30 kPa
    assert "30 kPa" in bounds[0].get_label()
    replay = [line for line in ax.get_lines() if line.get_label() == "replay"][0]
    np.testing.assert_allclose(np.max(replay.get_ydata()),
                               np.max(traj.quantities["dynamic_pressure"]) / 1000.0)
    # without the limit there is no bound line
    free = replace(problem, limits=Limits())
    assert _lines_by_gid(_panel_figure(free, traj, "dynamic_pressure").axes[0], "bound") == []


def test_every_imposed_limit_is_drawn(planar_flight):
    problem, traj = planar_flight
    expected = {"dynamic_pressure": 25.0, "axial_acceleration": 5.0, "q_alpha": 200.0,
                "altitude": 0.0}
    for key, value in expected.items():
        bounds = _lines_by_gid(_panel_figure(problem, traj, key).axes[0], "bound")
        assert len(bounds) == 1, key
        np.testing.assert_allclose(bounds[0].get_ydata(), value, atol=1e-9)
    for key in ("speed", "throttle", "pitch", "mass"):
        assert _lines_by_gid(_panel_figure(problem, traj, key).axes[0], "bound") == []


def test_events_marked_and_labelled(planar_flight):
    problem, traj = planar_flight
    ax = _panel_figure(problem, traj, "mass").axes[0]
    staging = [e["time"] for e in traj.events if e["kind"] == "staging"]
    burnouts = [e["time"] for e in traj.events if e["kind"] == "burnout"]
    assert len(staging) == 1 and len(burnouts) == 2
    xs = sorted(line.get_xdata()[0] for line in _lines_by_gid(ax, "event"))
    # first-stage burnout and staging coincide: one line of each kind there, one label
    np.testing.assert_allclose(xs, [staging[0], staging[0], burnouts[1]])
    labels = [t.get_text() for t in ax.texts]
    assert "burnout + staging (first)" in labels
    assert "burnout (second)" in labels
    # each kind has its own style and is named once in the legend
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert legend.count(EVENT_KINDS["burnout"].legend) == 1
    assert legend.count(EVENT_KINDS["staging"].legend) == 1
    assert EVENT_KINDS["flameout"].legend not in legend


def test_replay_passes_through_optimiser_nodes(planar_result):
    result = planar_result
    problem, traj = result.solved_problem, result.trajectory
    nodes = result_nodes(result)
    assert len(nodes) == len(phase_plan(problem))
    checks = {"throttle": 1e-6, "pitch": 1e-4, "mass": 1e-3, "dynamic_pressure": 0.05}
    for key, tol in checks.items():
        ax = _panel_figure(problem, traj, key, nodes).axes[0]
        markers = [line for line in ax.get_lines() if line.get_marker() == "o"]
        assert len(markers) == len(nodes), key
        for k, line in enumerate(markers):
            mask = traj.phase == k
            t_nodes = np.asarray(line.get_xdata())
            np.testing.assert_allclose(t_nodes, result.solution.times[k])
            replay = [ln for ln in ax.get_lines() if ln.get_label() in ("replay",)][0]
            on_replay = np.interp(t_nodes, traj.time[mask],
                                  np.asarray(replay.get_ydata())[mask])
            # the same quantity in the same plot units: the replay meets every node
            np.testing.assert_allclose(line.get_ydata(), on_replay, atol=tol,
                                       err_msg=f"{key}, phase {k}")


def _saved_figures(monkeypatch, module=plots_module) -> list:
    """Record, for every PNG saved through ``module``, its file stem and its texts then."""
    saved = []
    original = figure_marks.save_png

    def record(fig, path, **options):
        texts = {t.get_gid(): t.get_text() for t in fig.texts if t.get_gid()}
        saved.append((Path(path).stem, texts))
        original(fig, path, **options)

    monkeypatch.setattr(module, "save_png", record)
    return saved


def test_every_png_is_stamped_with_the_status_and_the_caution(planar_result, planar_flight,
                                                              tmp_path, monkeypatch):
    saved = _saved_figures(monkeypatch)
    plots_module.plot_result(planar_result, tmp_path / "solved")
    # planar flight: no q-alpha limit here, no split, no ground track (three-dimensional)
    assert [stem for stem, _ in saved] == [s for s in FIGURES if s not in (
        "q_alpha", "split_map", "ground_track")]
    for stem, texts in saved:
        assert texts["status"] == "optimal and verified by replay", stem
        assert texts["caution"] == caution_line(), stem
    # the caution line is the caution's own first sentence
    assert CAUTION.startswith(caution_line()[:-1])
    problem, traj = planar_flight
    for status, start in (("infeasible", "INFEASIBLE - not a solution"),
                          ("failed", "SOLVER FAILED - not a solution"),
                          ("not_verified", "NOT VERIFIED"),
                          (None, "forward simulation of a given schedule")):
        saved.clear()
        plot_trajectory(problem, traj, tmp_path / str(status), status=status)
        assert len(saved) == 9
        assert all(texts["status"].startswith(start) for _, texts in saved), status


def _with_coast(problem: Problem, seconds: float) -> Problem:
    first = replace(problem.vehicle.stages[0], coast_after=seconds)
    return replace(problem, vehicle=replace(problem.vehicle,
                                            stages=(first, *problem.vehicle.stages[1:])))


def test_no_optimiser_controls_drawn_on_a_coast():
    # nodes taken from a replay with a coast between the stages; on the coast the
    # optimiser leaves its controls free (here a throttle of 0.3 and a pitch of 30 deg,
    # which would give a q alpha the flight never has)
    problem = _with_coast(_planar_problem(PLANAR_LIMITS), 15.0)
    traj = simulate(problem, coast_to_apogee=False)
    phases = phase_plan(problem)
    assert [ph.powered for ph in phases].count(False) == 1
    nodes = []
    for k, ph in enumerate(phases):
        mask = traj.phase == k
        times = np.linspace(traj.time[mask][0], traj.time[mask][-1], 6)
        states = np.array([np.interp(times, traj.time[mask], row)
                           for row in np.asarray(traj.state)[:, mask]])
        controls = np.array([np.interp(times, traj.time[mask], row)
                             for row in np.asarray(traj.controls)[:, mask]])
        if not ph.powered:
            controls = np.vstack([np.full(6, 0.3), np.full(6, np.radians(30.0))])
        nodes.append((times, controls, states))
    values = _node_quantities(problem, nodes)
    for ph, v in zip(phases, values):
        shown = {"throttle", "pitch", "q_alpha"} & set(v)
        assert shown == (set() if not ph.powered else {"throttle", "pitch", "q_alpha"})
        # the state is no control: it is drawn on every phase
        assert {"altitude", "speed", "dynamic_pressure", "mass"} <= set(v)
    for key in ("throttle", "pitch", "q_alpha"):
        ax = _panel_figure(problem, traj, key, nodes).axes[0]
        markers = [line for line in ax.get_lines() if line.get_marker() == "o"]
        assert len(markers) == len(phases) - 1, key
        coast = phases.index(next(ph for ph in phases if not ph.powered))
        # (its end nodes are shared with the burns on either side)
        coast_times = set(np.round(nodes[coast][0][1:-1], 9))
        for line in markers:
            assert not coast_times & set(np.round(line.get_xdata(), 9)), key


def test_flameout_burnout_and_staging_have_their_own_lines_and_legend(planar_flight):
    problem, traj = planar_flight
    events = [dict(e) for e in traj.events]
    last = max((e for e in events if e["kind"] == "burnout"), key=lambda e: e["time"])
    # the upper stage runs dry 20 s before its scheduled end
    events.append({**last, "kind": "flameout", "time": last["time"] - 20.0})
    flown = replace(traj, events=events)
    for fig in (_panel_figure(problem, flown, "speed"), _overview_figure(problem, flown)):
        names = [t.get_text() for t in (fig.legends[0] if fig.legends
                                        else fig.axes[0].get_legend()).get_texts()]
        for kind in ("burnout", "flameout", "staging"):
            assert names.count(EVENT_KINDS[kind].legend) == 1, (kind, names)
    ax = _panel_figure(problem, flown, "speed").axes[0]
    styles = {}
    for line in _lines_by_gid(ax, "event"):
        styles.setdefault(line.get_label(), set()).add((line.get_color(), line.get_linestyle()))
    drawn = {label: style for label, style in styles.items() if label != "_nolegend_"}
    assert len({next(iter(s)) for s in drawn.values()}) == 3  # three kinds, three looks


def test_one_order_of_figures_for_the_solve_and_the_report(planar_result, result_folder,
                                                           tmp_path):
    assert FIGURES[0] == "overview" and FIGURES[-1] == "split_map"
    names = [tmp_path / f"case_{s}.png" for s in reversed(FIGURES)]
    assert [p.stem for p in order_figures(names)] == [f"case_{s}" for s in FIGURES]
    # "q_alpha" is not read as another figure's name
    assert order_figures([tmp_path / "q_alpha.png", tmp_path / "altitude.png"])[0].stem == \
        "altitude"
    folder, path = result_folder
    solved = [img["alt"] for img in _parse(path.read_text(encoding="utf-8")).images]
    for png in folder.glob("*.png"):
        shutil.copy(png, tmp_path)
    outputs.write_json(planar_result.summary(), tmp_path / "summary.json")
    again = render_report_from_folder(tmp_path).read_text(encoding="utf-8")
    assert [img["alt"] for img in _parse(again).images] == solved
    stems = [p.stem for p in plots_module.plot_result(planar_result, tmp_path / "p")]
    assert stems == [s for s in FIGURES if s in stems]


def test_split_map_draws_cells_not_contour_islands(tmp_path, monkeypatch):
    from matplotlib.collections import QuadMesh
    from matplotlib.contour import ContourSet

    captured = []
    monkeypatch.setattr(split_map_plot, "save_png", lambda fig, path: captured.append(fig))
    center = [0.25, 0.33, 0.42]
    offsets = np.linspace(-0.05, 0.05, 5)
    fractions = [[center[0] + a, center[1] + b, center[2] - a - b]
                 for a in offsets for b in offsets]
    values = [8951.79 - 3e4 * (a * a + b * b) for a in offsets for b in offsets]
    values[12] = 8951.10  # the centre, a re-solve within solver tolerance of its neighbour
    values[13] = 8951.79
    plot_split_map({"stage_names": ["one", "two", "three"], "center_fractions": center,
                    "fractions": fractions, "objective": values}, tmp_path,
                   unit="kg", objective="max_payload")
    [fig] = captured
    ax = fig.axes[0]
    assert not [c for c in ax.collections if isinstance(c, ContourSet)]
    [mesh] = [c for c in ax.collections if isinstance(c, QuadMesh)]
    assert mesh.get_array().size == 25
    # the two neighbours differ by under 1 % of the colour range: no rival optimum drawn
    low, high = mesh.norm.vmin, mesh.norm.vmax
    assert abs(8951.79 - 8951.10) / (high - low) < 0.01
    texts = [t.get_text() for t in ax.texts if t.get_gid() == "split-value"]
    assert len(texts) == 25 and "8,951.1" in texts and "8,951.8" in texts
    assert [line for line in ax.get_lines() if line.get_gid() == "optimum"]
    assert {t.get_gid() for t in fig.texts} >= {"status", "caution"}


class _StrictParser(HTMLParser):
    """Collects tags and fails on an end tag that does not close the open element."""

    VOID = {"meta", "img", "br", "hr", "link", "input", "col", "wbr"}

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.errors, self.images, self.text = [], [], [], []

    def handle_starttag(self, tag, attrs):
        if tag == "img":
            self.images.append(dict(attrs))
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:] or 'nothing'}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def _parse(page: str) -> _StrictParser:
    parser = _StrictParser()
    parser.feed(page)
    parser.close()
    assert parser.errors == []
    assert parser.stack == [], f"unclosed: {parser.stack}"
    return parser


def _check_images(parser, count):
    assert len(parser.images) == count
    for img in parser.images:
        src = img["src"]
        assert src.startswith("data:image/png;base64,")
        assert base64.b64decode(src.split(",", 1)[1])[:8] == PNG_SIGNATURE
        assert img.get("alt")


def test_report_from_result(planar_result, result_folder):
    result = planar_result
    folder, path = result_folder
    assert path == folder / "report.html"
    # no plots were in the folder, so the report drew them with plot_result
    order = ("altitude", "speed", "dynamic_pressure", "axial_acceleration", "throttle",
             "pitch", "mass", "overview")
    _check_pngs(sorted(folder.glob("*.png"), key=lambda p: order.index(p.stem)), list(order))
    page = path.read_text(encoding="utf-8")
    parser = _parse(page)
    _check_images(parser, 8)
    text = " ".join(parser.text)
    assert text.count(CAUTION) == 2  # top and bottom
    assert "Optimal and verified" in text and "optimal" in text
    for name in ("max_dynamic_pressure", "max_axial_acceleration"):
        assert name in text
    summary = result.summary()
    for lim in summary["limits"]:
        assert lim["shadow_price_unit"] in text
    assert f"{summary['objective']['value']:,.3f}" in text
    # self-contained: nothing fetched from elsewhere
    assert not re.search(r"<(script|link)\b", page)
    assert not re.search(r"(src|href)=\"(?!data:)", page)


def test_render_report_from_folder(planar_result, result_folder, tmp_path):
    for png in result_folder[0].glob("*.png"):
        shutil.copy(png, tmp_path)
    summary = planar_result.summary()
    # hostile text must come out as text, never as markup
    summary["problem"] = "demo <b>&</b> two"
    summary["message"] = "<script>alert(1)</script>"
    summary["sweep_point"] = {"max_dynamic_pressure_kPa": 25.0}
    (tmp_path / "summary.json").write_text(json.dumps(summary), encoding="utf-8")
    path = render_report_from_folder(tmp_path)
    page = path.read_text(encoding="utf-8")
    parser = _parse(page)
    _check_images(parser, len(list(tmp_path.glob("*.png"))))
    assert "<script>" not in page and html.escape("<script>alert(1)</script>") in page
    assert "<h1>demo &lt;b&gt;&amp;&lt;/b&gt; two</h1>" in page
    text = " ".join(parser.text)
    assert "max_dynamic_pressure_kPa" in text  # unknown keys are shown, not dropped
    # the overview comes first
    assert parser.images[0]["alt"] == "overview"


def test_report_never_shows_unverified_as_good(planar_result, tmp_path):
    summary = planar_result.summary()
    summary["status"] = "not_verified"
    summary["verification"]["passed"] = False
    summary["verification"]["reasons"] = ["burnout speed differs by 3.1 m/s"]
    page = write_report(summary, tmp_path, plots=[]).read_text(encoding="utf-8")
    _parse(page)
    assert 'class="status bad"' in page and "NOT verified" in page
    assert "burnout speed differs by 3.1 m/s" in page
    # an inconsistent summary (optimal, yet the check failed) is not shown as verified
    summary["status"] = "optimal"
    page = write_report(summary, tmp_path, plots=[]).read_text(encoding="utf-8")
    assert 'class="status good"' not in page and "NOT verified" in page


def test_report_from_simulation_summary(vertical_flight, vertical_plots, tmp_path):
    problem, traj = vertical_flight
    for png in vertical_plots[1]:
        shutil.copy(png, tmp_path)
    paths = vertical_plots[1]
    summary = outputs.simulation_summary(problem, traj)
    outputs.write_json(summary, tmp_path / "summary.json")
    page = render_report_from_folder(tmp_path).read_text(encoding="utf-8")
    parser = _parse(page)
    _check_images(parser, len(paths))
    text = " ".join(parser.text)
    assert text.count(CAUTION) == 2
    assert "Forward simulation" in text
    for heading in ("Peaks", "Events", "Velocity-loss budget"):
        assert heading in text
    peak_q = summary["peaks"]["dynamic_pressure"]["value_kPa"]
    assert f"{peak_q:,.3f}" in text


def test_render_report_needs_summary(tmp_path):
    with pytest.raises(FileNotFoundError, match="summary.json"):
        render_report_from_folder(tmp_path)


def _sounding_rocket(**stage_changes) -> Problem:
    """The example sounding rocket on a coarse mesh, its one stage changed as given."""
    problem = load_problem(PROBLEMS / "sounding_rocket.yaml")
    stage = replace(problem.vehicle.stages[0], **stage_changes)
    return replace(problem, vehicle=replace(problem.vehicle, stages=(stage,)),
                   mesh=replace(problem.mesh, nodes_per_phase=20, max_refinements=1))


def _between(page: str, first: str, second: str) -> str:
    """The page from ``first`` (found once) up to the next ``second``."""
    assert page.count(first) == 1
    start = page.index(first)
    return page[start:page.index(second, start)]


def test_report_shows_each_stage_propellant_and_flags_an_unplanned_residual(tmp_path):
    # at its 40 % minimum throttle the motor passes 4 g0 near burnout, so the best flight
    # shuts it down early and drops propellant unburnt; a 25 kg reserve is kept by design
    problem = _sounding_rocket(propellant_reserve=25.0).with_limits(max_axial_acceleration=4.0)
    result = solve(problem)
    assert result.status == "optimal", result.message
    block = result.summary()["stages"][0]["propellant"]
    assert block["unplanned_residual_reported"]
    page = write_report(result.summary(), tmp_path, plots=[]).read_text(encoding="utf-8")
    _parse(page)
    # next to the stage masses, before the velocity budget
    section = _between(page, "<h2>Stages</h2>", "<h2>Velocity-loss budget</h2>")
    table = _between(section, "<h2>Propellant</h2>", "</section>")
    for header in ("loaded [kg]", "burnt [kg]", "reserve [kg]", "unplanned residual [kg]",
                   "unplanned residual [% of loaded]", "may shut down early"):
        assert f"<th>{header}</th>" in table
    cells = [f"{block[k]:,.1f}" for k in ("loaded_kg", "burnt_kg", "reserve_kg",
                                          "unplanned_residual_kg")]
    assert cells[0] == "850.0" and cells[2] == "25.0"
    row = '<tr class="flag"><td>motor</td>' + "".join(
        f'<td class="num">{c}</td>' for c in cells) + (
        f'<td class="num">{block["unplanned_residual_percent"]:,.2f}</td><td>yes</td></tr>')
    assert row in table
    assert "an unplanned residual is propellant dropped unburnt at staging" in table
    # without the residual the row is plain, and a gram of rounding reads 0.0, not -0.0
    quiet = result.summary()
    quiet["stages"][0]["propellant"].update(unplanned_residual_kg=-1.2e-5,
                                            unplanned_residual_percent=-1.4e-6,
                                            unplanned_residual_reported=False,
                                            shutdown="at_depletion")
    page = write_report(quiet, tmp_path, plots=[]).read_text(encoding="utf-8")
    assert 'class="flag"' not in page
    assert ('<td class="num">0.0</td><td class="num">0.00</td>'
            "<td>no: burns to depletion</td>") in page


def test_report_says_what_must_give_for_an_infeasible_result(tmp_path):
    # a motor at fixed full throttle burns to depletion and passes 5 g0 on the way: no
    # schedule keeps the limit, and the report names the limit, the bound and the stage
    problem = _sounding_rocket(throttle_min=1.0, throttle_max=1.0)
    problem = replace(problem, limits=replace(problem.limits, max_dynamic_pressure=None,
                                              max_axial_acceleration=5.0))
    result = solve(problem)
    assert result.status == "infeasible", result.message
    summary = result.summary()
    block = summary["infeasibility"]
    [condition] = block["conditions"]
    page = write_report(summary, tmp_path, plots=[]).read_text(encoding="utf-8")
    _parse(page)
    # right after the verdict, before any number of the flight
    section = _between(page, "<h2>What must give</h2>", "<h2>Objective</h2>")
    assert page.index('<div class="status bad">') < page.index("<h2>What must give</h2>")
    text = block["text"]
    assert f"<p>{html.escape(text[:1].upper() + text[1:])}</p>" in section
    assert "may not shut down before depletion" in text
    for header in ("condition", "kind", "as written", "needed", "change", "unit", "stages"):
        assert f"<th>{header}</th>" in section
    row = ("<tr><td>max axial acceleration (max_axial_acceleration)</td><td>limit</td>"
           '<td class="num">5.000</td>'
           f'<td class="num">{condition["required"]:,.3f}</td>'
           f'<td class="num">{condition["relaxation"]:,.3f}</td>'
           "<td>g0</td><td>motor (burns to depletion)</td></tr>")
    assert row in section
    # the block has a section of its own; where no flight was found there is no
    # propellant table to misread
    assert "Other results" not in page and "<h2>Propellant</h2>" not in page


def test_report_of_a_summary_written_before_propellant_and_infeasibility(planar_result,
                                                                          tmp_path):
    # reports are re-rendered from results folders, which may predate these blocks
    summary = planar_result.summary()
    for stage in summary["stages"]:
        del stage["propellant"]
    summary.pop("infeasibility", None)
    outputs.write_json(summary, tmp_path / "summary.json")
    page = render_report_from_folder(tmp_path).read_text(encoding="utf-8")
    _parse(page)
    assert "<h2>Stages</h2>" in page
    assert "<h2>Propellant</h2>" not in page and "<h2>What must give</h2>" not in page
    # a hand-written infeasibility without conditions shows its text alone
    summary.update(status="infeasible", infeasibility={
        "converged": False, "return_status": "Maximum_Iterations_Exceeded", "iterations": 3,
        "limits_are_the_cause": False, "conditions": [], "text": "<b>no</b> diagnosis"})
    page = render_html(summary)
    section = _between(page, "<h2>What must give</h2>", "</section>")
    assert "&lt;b&gt;no&lt;/b&gt; diagnosis" in section and "<table>" not in section
