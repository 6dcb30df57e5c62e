"""The command line never crashes: exit statuses, one-line messages, atomic result files,
and ``simulate`` judging its flight against the limits of the problem file.

Conventions checked here and where they come from:

* exit status 2 for bad input, one line per problem, no traceback: common practice for
  command-line tools (and the README's promise);
* 70 for an internal error: ``EX_SOFTWARE`` of BSD ``sysexits.h``;
* 130 after Ctrl-C and 141 when standard output is closed early: 128 + the signal
  number, as a POSIX shell reports a process ended by SIGINT (2) or SIGPIPE (13);
* a closed standard output ends quietly with stdout pointed at the null device: the
  Python documentation, ``signal`` module, "Note on SIGPIPE";
* a file replaced by writing a temporary file in the same folder and renaming it:
  POSIX ``rename`` replaces the target in one step (common practice for atomic writes).
"""

from __future__ import annotations

import csv
import dataclasses
import json
import subprocess
import sys
from pathlib import Path

import pytest

from ascentplan import cli
from ascentplan.problem.loader import load_problem

ROOT = Path(__file__).resolve().parents[1]
PROBLEMS = ROOT / "problems"
SMALL = PROBLEMS / "small_launcher.yaml"
SOUNDING = PROBLEMS / "sounding_rocket.yaml"
#: the optimised schedule of the small launcher, as ``solve`` hands it on
SMALL_SCHEDULE = ROOT / "results" / "small-launcher-demo" / "schedule.csv"


def _one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    return lines[0]


# --------------------------------------------------------------------------------------
# broken pipe, interrupt, internal error


def test_closed_stdout_ends_quietly_with_141():
    # more output than a pipe buffers (64 KiB on Linux), so the writer meets the
    # closed pipe: the reader takes one line and closes, as `| head -1` does
    files = [str(p) for p in sorted(PROBLEMS.glob("*.yaml"))] * 15
    run = subprocess.Popen([sys.executable, "-m", "ascentplan", "check", *files],
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    first = run.stdout.readline()
    run.stdout.close()
    err = run.stderr.read().decode()
    run.stderr.close()
    assert run.wait(timeout=120) == cli.EXIT_BROKEN_PIPE
    assert first.startswith(b"Problem:")
    # neither a traceback nor the interpreter's "Exception ignored ... BrokenPipeError"
    assert err == ""


def _make_simulate_raise(monkeypatch, error):
    import ascentplan.replay.simulate as simulate_module

    def broken(*args, **kwargs):
        raise error

    monkeypatch.setattr(simulate_module, "simulate", broken)


def test_internal_error_is_one_line_with_its_own_status(monkeypatch, tmp_path, capsys):
    monkeypatch.delenv(cli.DEBUG_VARIABLE, raising=False)
    _make_simulate_raise(monkeypatch, RuntimeError("integrator lost\nits way"))
    status = cli.main(["simulate", str(SOUNDING), "--out", str(tmp_path / "out")])
    assert status == cli.EXIT_INTERNAL == 70
    line = _one_line(capsys.readouterr().err)
    assert line.startswith("ascentplan: internal error: RuntimeError: integrator lost\\nits way")
    assert "--debug" in line and cli.DEBUG_VARIABLE in line and "Traceback" not in line


@pytest.mark.parametrize("how", ["flag before the verb", "flag after the verb", "variable"])
def test_debug_shows_the_traceback(monkeypatch, tmp_path, capsys, how):
    monkeypatch.delenv(cli.DEBUG_VARIABLE, raising=False)
    _make_simulate_raise(monkeypatch, RuntimeError("integrator lost"))
    argv = ["simulate", str(SOUNDING), "--out", str(tmp_path / "out")]
    if how == "flag before the verb":
        argv = ["--debug", *argv]
    elif how == "flag after the verb":
        argv = [*argv, "--debug"]
    else:
        monkeypatch.setenv(cli.DEBUG_VARIABLE, "1")
    assert cli.main(argv) == cli.EXIT_INTERNAL
    err = capsys.readouterr().err
    assert "Traceback (most recent call last)" in err and "in broken" in err
    assert err.strip().splitlines()[-1] == ("ascentplan: internal error: RuntimeError: "
                                           "integrator lost")


def test_interrupt_is_one_line_and_130(monkeypatch, tmp_path, capsys):
    _make_simulate_raise(monkeypatch, KeyboardInterrupt())
    assert cli.main(["simulate", str(SOUNDING), "--out", str(tmp_path / "o")]) == 130
    assert _one_line(capsys.readouterr().err) == "ascentplan: interrupted"


# --------------------------------------------------------------------------------------
# echoed input


def test_control_characters_are_escaped_in_messages(tmp_path, capsys):
    missing = str(tmp_path / "no\x1b[31mfile\x07.yaml")
    assert cli.main(["check", missing]) == 2
    err = capsys.readouterr().err
    assert "\\x1b[31m" in err and "\x1b" not in err and "\x07" not in err
    # argparse joins unrecognised arguments as typed: escaped too
    assert cli.main(["check", str(SOUNDING), "--colour\x1b]0;title\x07"]) == 2
    err = capsys.readouterr().err
    assert "\x1b" not in err and "\x07" not in err and "unrecognized" in err
    # a NUL cannot be part of a path: a usage error, not a crash
    assert cli.main(["check", "a\x00b.yaml"]) == 2
    err = capsys.readouterr().err
    assert "\x00" not in err and "Traceback" not in err


def _renamed(monkeypatch, name):
    """Problems loaded by the command line carry ``name`` (as a loader without a name
    rule would give them)."""
    monkeypatch.setattr(cli, "load_problem",
                        lambda path: dataclasses.replace(load_problem(path), name=name))


@pytest.mark.parametrize("name", ["a\x00b", "x" * 300, "../../elsewhere", ".."])
def test_a_name_that_cannot_be_a_folder_is_refused_before_the_solve(monkeypatch, tmp_path,
                                                                    capsys, name):
    import ascentplan.pipeline as pipeline

    monkeypatch.chdir(tmp_path)
    _renamed(monkeypatch, name)
    monkeypatch.setattr(pipeline, "solve", lambda *a, **k: pytest.fail("solved anyway"))
    assert cli.main(["solve", str(SOUNDING)]) == 2
    line = _one_line(capsys.readouterr().err)
    assert "give --out DIR" in line and "\x00" not in line
    assert list(tmp_path.iterdir()) == []


def test_a_results_folder_the_file_system_refuses_is_bad_input(tmp_path, capsys):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    assert cli.main(["simulate", str(SOUNDING), "--out", str(blocker / "out")]) == 2
    line = _one_line(capsys.readouterr().err)
    assert "cannot be created" in line


def test_a_control_character_in_the_name_reaches_no_output_raw(monkeypatch, tmp_path, capsys):
    _renamed(monkeypatch, "demo\x1b[2J$x^$")
    out = tmp_path / "out"
    status = cli.main(["simulate", str(SOUNDING), "--out", str(out)])
    assert status in (0, 3)
    captured = capsys.readouterr()
    assert "\x1b" not in captured.out + captured.err and "demo\\x1b[2J" in captured.out
    # JSON escapes it by itself; the name is kept as written
    assert json.loads((out / "summary.json").read_text())["problem"] == "demo\x1b[2J$x^$"


# --------------------------------------------------------------------------------------
# atomic result files


def test_a_failed_write_leaves_the_previous_file(monkeypatch, tmp_path):
    from ascentplan.output import files

    path = tmp_path / "summary.json"
    files.write_json({"status": "ok"}, path)
    before = path.read_bytes()

    def half_then_fail(obj, fh, **kwargs):
        fh.write('{"status": "lim')
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(files.json, "dump", half_then_fail)
    with pytest.raises(OSError):
        files.write_json({"status": "limits_exceeded"}, path)
    assert path.read_bytes() == before
    # no temporary file left behind either
    assert [p.name for p in tmp_path.iterdir()] == ["summary.json"]


def test_result_files_are_renamed_into_place(monkeypatch, tmp_path):
    # every result file of simulate goes through one rename onto its final name
    import os

    renamed = []
    real_replace = os.replace

    def spy(src, dst):
        renamed.append((Path(src).parent, Path(dst).name))
        return real_replace(src, dst)

    monkeypatch.setattr(os, "replace", spy)
    out = tmp_path / "out"
    cli.main(["simulate", str(SOUNDING), "--out", str(out)])
    assert sorted(name for _, name in renamed) == ["summary.json", "trajectory.csv"]
    assert all(folder == out for folder, _ in renamed)


# --------------------------------------------------------------------------------------
# simulate against the limits of the file; schedules in range


def test_default_schedule_beyond_the_limits_is_not_ok(tmp_path, capsys):
    # the small launcher at full throttle: about 47 kPa against its 30 kPa bound and
    # 7.4 g0 against 5.5 g0 (the file's own comment estimates 7.4 g0)
    out = tmp_path / "out"
    assert cli.main(["simulate", str(SMALL), "--out", str(out)]) == cli.EXIT_LIMITS_EXCEEDED
    summary = json.loads((out / "summary.json").read_text())
    assert summary["status"] == "limits_exceeded"
    limits = {row["name"]: row for row in summary["limits"]}
    q = limits["max_dynamic_pressure"]
    assert q["bound"] == pytest.approx(30.0) and q["unit"] == "kPa"
    assert 40.0 < q["peak"] < 55.0 and q["exceeded"] is True
    # the same peak as the summary's own (sampled, as verification takes it, so not
    # above the refined one)
    assert q["peak"] <= summary["peaks"]["dynamic_pressure"]["value_kPa"] + 1e-9
    assert limits["max_axial_acceleration"]["exceeded"] is True
    captured = capsys.readouterr()
    assert "EXCEEDED" in captured.out and "max_dynamic_pressure" in captured.out
    assert "simulation limits_exceeded" in captured.err


def test_optimised_schedule_within_the_limits_is_ok(tmp_path):
    # the delivered schedule passed verification: within the tolerance here too
    out = tmp_path / "out"
    assert cli.main(["simulate", str(SMALL), "--schedule", str(SMALL_SCHEDULE),
                     "--out", str(out)]) == 0
    summary = json.loads((out / "summary.json").read_text())
    assert summary["status"] == "ok"
    assert all(not row["exceeded"] for row in summary["limits"])


def _edited_schedule(tmp_path, column, value, kind="burn"):
    """The optimised schedule with ``column`` of the first node of the first ``kind``
    phase set to ``value``; returns the file and the edited line number."""
    with open(SMALL_SCHEDULE, newline="") as fh:
        rows = list(csv.reader(fh))
    # "#" comment lines open the file (common practice); the column names follow them
    names = next(i for i, row in enumerate(rows) if not row[0].startswith("#"))
    index = next(i for i, row in enumerate(rows) if i > names and row[1] == kind)
    rows[index][rows[names].index(column)] = value
    path = tmp_path / "edited.csv"
    with open(path, "w", newline="") as fh:
        csv.writer(fh).writerows(rows)
    return path, index + 1


@pytest.mark.parametrize("column, value, words", [
    ("throttle", "5", ["throttle 5", "'first'", "[0.5, 1]"]),
    ("throttle", "0.2", ["throttle 0.2", "[0.5, 1]"]),
    ("pitch_deg", "120", ["pitch 120 deg", "[-90, 90] deg"]),
])
def test_a_schedule_out_of_range_is_refused(tmp_path, capsys, column, value, words):
    path, line_no = _edited_schedule(tmp_path, column, value)
    out = tmp_path / "out"
    assert cli.main(["simulate", str(SMALL), "--schedule", str(path),
                     "--out", str(out)]) == 2
    line = _one_line(capsys.readouterr().err)
    for word in [f"line {line_no}", "t = ", *words]:
        assert word in line, line
    assert not (out / "summary.json").exists()


def test_a_coast_with_the_engine_on_is_refused(tmp_path, capsys):
    problem = load_problem(PROBLEMS / "medium_launcher.yaml")
    from ascentplan.problem.model import phase_plan

    assert any(ph.kind == "coast" for ph in phase_plan(problem))
    from ascentplan.output.files import write_schedule_csv
    from ascentplan.replay.schedule import PhaseControls, PhaseSchedule

    phases = []
    for ph in phase_plan(problem):
        stage = problem.vehicle.stages[ph.stage]
        throttle = 1.0 if ph.kind == "coast" else stage.throttle_max
        phases.append(PhaseControls(10.0, [0.0, 10.0], [throttle] * 2, [0.5, 0.5]))
    path = tmp_path / "coast.csv"
    write_schedule_csv(PhaseSchedule(tuple(phases)), path, phase_plan(problem))
    assert cli.main(["simulate", str(PROBLEMS / "medium_launcher.yaml"), "--schedule",
                     str(path), "--out", str(tmp_path / "out")]) == 2
    assert "in a coast" in _one_line(capsys.readouterr().err)


def test_a_time_schedule_of_the_file_is_checked_against_the_stage_burning(tmp_path, capsys):
    text = SMALL.read_text() + ("\nschedule:\n  time: [0, 100, 400]\n"
                                "  throttle: [1.0, 0.3, 1.0]\n"
                                "  pitch: {unit: deg, values: [90, 40, 0]}\n")
    path = tmp_path / "timed.yaml"
    path.write_text(text)
    assert cli.main(["simulate", str(path), "--out", str(tmp_path / "out")]) == 2
    line = _one_line(capsys.readouterr().err)
    assert "schedule.throttle[1]" in line and "'first'" in line and "[0.5, 1]" in line
