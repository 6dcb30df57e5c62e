"""The plots drawn by processes started before the solve: the same figures, the same
pixels and the same files as when the main process draws them, and a process that fails
leaves its figures to the main process."""

from __future__ import annotations

import multiprocessing
import re
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from ascentplan.output import plot_workers
from ascentplan.output.canvases import Canvases
from ascentplan.output.figure_list import figure_stems, plot_arguments
from ascentplan.output.plot_workers import PlotWorkers, share_figures
from ascentplan.output.plots import FIGURES, draw_figures, plot_result
from ascentplan.pipeline import solve, write_outputs
from ascentplan.problem.loader import load_problem
from ascentplan.replay.simulate import simulate

PROBLEMS = Path(__file__).resolve().parents[1] / "problems"


@pytest.fixture(scope="module")
def goddard_result():
    result = solve(load_problem(PROBLEMS / "goddard.yaml"))
    assert result.status == "optimal", result.message
    return result


def _pixels(path: Path) -> np.ndarray:
    with Image.open(path) as image:
        return np.asarray(image.convert("RGBA"))


def _same_pictures(paths, reference) -> None:
    assert [p.name for p in paths] == [p.name for p in reference]
    for path, ref in zip(paths, reference):
        assert path.is_file(), path
        assert np.array_equal(_pixels(path), _pixels(ref)), path.name


def test_the_overview_weighs_half_its_panels():
    stems = ["overview", "altitude", "speed", "dynamic_pressure", "axial_acceleration",
             "throttle", "mass"]
    # six panels on the overview weigh three: with two panels, it balances four panels
    shares = share_figures(stems, 6, 2)
    assert shares == [["overview", "axial_acceleration", "mass"],
                      ["altitude", "speed", "dynamic_pressure", "throttle"]]
    # one process draws everything, in the order given
    assert share_figures(stems, 6, 1) == [stems]
    # a ground track is one more panel's work: the shares differ by one panel at most
    with_track = ["overview", *stems[1:], "ground_track"]
    loads = [sum(3 if s == "overview" else 1 for s in share)
             for share in share_figures(with_track, 6, 2)]
    assert sorted(loads) == [5, 5]
    # every figure is drawn exactly once
    shares = share_figures(stems, 6, 3)
    assert sorted(s for share in shares for s in share) == sorted(stems)


@pytest.mark.parametrize(("method", "shares"), [("fork", 2), ("spawn", 2), ("fork", 1)])
def test_processes_draw_the_pictures_the_main_process_draws(goddard_result, tmp_path,
                                                            monkeypatch, method, shares):
    if method not in multiprocessing.get_all_start_methods():
        pytest.skip(f"no {method} here")
    monkeypatch.setattr(plot_workers, "_start_method", lambda: method)
    reference = plot_result(goddard_result, tmp_path / "here")
    # the process makes and draws its figures once before the solve's are drawn; with
    # two shares, it and a forked copy of it draw half of them each
    with PlotWorkers(goddard_result.problem, count=1, shares=shares) as workers:
        assert workers.count == 1
        pending = workers.plot_result(goddard_result, tmp_path / "there")
        paths = pending.wait()
    # the files in the one order of the results folder and the report
    assert [p.stem for p in paths] == [s for s in FIGURES if s in {p.stem for p in paths}]
    _same_pictures(paths, reference)


def test_a_dead_process_leaves_its_figures_to_the_main_process(goddard_result, tmp_path):
    reference = plot_result(goddard_result, tmp_path / "here")
    with PlotWorkers(count=1) as workers:
        process = workers._workers[0][0]
        process.terminate()
        process.join()
        paths = workers.plot_result(goddard_result, tmp_path / "there").wait()
    _same_pictures(paths, reference)


def test_no_process_means_the_main_process_draws(goddard_result, tmp_path):
    reference = plot_result(goddard_result, tmp_path / "here")
    with PlotWorkers(count=0) as workers:
        assert workers.count == 0
        paths = workers.plot_result(goddard_result, tmp_path / "there").wait()
    _same_pictures(paths, reference)


def test_a_fault_ends_the_processes_on_leaving(goddard_result):
    with pytest.raises(RuntimeError, match="stop"):
        with PlotWorkers(count=1) as workers:
            processes = [process for process, _conn in workers._workers]
            raise RuntimeError("stop")
    assert processes and not any(process.is_alive() for process in processes)
    assert workers.count == 0


def test_written_outputs_are_the_same_with_drawing_processes(goddard_result, tmp_path):
    alone = write_outputs(goddard_result, tmp_path / "alone")
    with PlotWorkers(count=1) as workers:
        helped = write_outputs(goddard_result, tmp_path / "helped", plotter=workers)
    assert [p.name for p in helped] == [p.name for p in alone]
    pngs = [p for p in alone if p.suffix == ".png"]
    _same_pictures([p for p in helped if p.suffix == ".png"], pngs)
    # the report embeds the same figures in the same order
    assert _undated(tmp_path / "helped" / "report.html") == _undated(
        tmp_path / "alone" / "report.html")


def _undated(path: Path) -> str:
    """A report's text without the time it was written."""
    return re.sub(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", "DATE",
                  path.read_text(encoding="utf-8"))


def test_figures_drawn_again_have_the_pixels_of_new_ones(goddard_result, tmp_path):
    reference = plot_result(goddard_result, tmp_path / "new")
    arguments = plot_arguments(goddard_result)
    stems = figure_stems(arguments["problem"])
    canvases = Canvases()
    canvases.prepare(panels=len(stems) - 1, single=True)
    # another flight first (a forward simulation: other curves, ranges and stamps)
    draw_figures(arguments["problem"], simulate(arguments["problem"]), tmp_path / "other",
                 stems, canvases=canvases)
    paths = draw_figures(**arguments, out_dir=tmp_path / "again", stems=stems,
                         canvases=canvases)
    _same_pictures(paths, reference)


def test_a_busy_machine_gets_no_drawing_process(goddard_result, tmp_path, monkeypatch):
    monkeypatch.setattr(plot_workers, "_idle_processors", lambda: 0.3)
    reference = plot_result(goddard_result, tmp_path / "here")
    with PlotWorkers(goddard_result.problem) as workers:
        assert workers.count == 0
        paths = workers.plot_result(goddard_result, tmp_path / "there").wait()
    _same_pictures(paths, reference)
    monkeypatch.setattr(plot_workers, "_idle_processors", lambda: 0.8)
    with PlotWorkers() as workers:
        assert workers.count == 1
