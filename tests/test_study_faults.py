"""Fault injection: a sweep run as a process of its own is stopped at seeded random
instants (SIGTERM or SIGINT to the main process, SIGKILL to one of its workers), then
resumed. No finished point may be lost, every point must be in the study folder exactly
once after the resume, and no process of a run (workers, the multiprocessing resource
tracker) may outlive it.

Conventions checked: exit status 128 + the signal number for a run stopped by a signal
(common practice of POSIX shells: 130 for SIGINT, 143 for SIGTERM); a signal stops the run
through a Python handler in the main process (Python documentation, :mod:`signal`).
"""

from __future__ import annotations

import csv
import json
import os
import random
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest
from cases import vertical_q_yaml

# the processes of a run are found by a mark in their environment, read from /proc
pytestmark = pytest.mark.skipif(not Path("/proc/self/environ").exists(),
                                reason="finds the processes of a run in /proc (Linux)")

# Invented vehicle: the single-stage throttleable rocket of tests/test_sweep.py, on a
# coarse mesh so that a point solves in a fraction of a second
PROBLEM_YAML = vertical_q_yaml("vertical-q-faults")

VALUES = ["20 kPa", "25 kPa", "30 kPa", "35 kPa"]
#: what stops each trial's run; a trial's run is the resume of the run before it
TRIALS = ("SIGTERM", "worker", "SIGINT", "worker", "SIGTERM",
          "worker", "SIGTERM", "worker", "SIGINT", "worker")
SEED = 20240611
#: latest instant of a stop after the run's first worker process appears [s]: a worker
#: takes about 1.5 s to start and 0.5 s per point on two cores, so the stops fall while
#: workers start, while they solve and after the last row
LATEST_STOP_S = 3.0
MARK = "ASCENTPLAN_FAULT_RUN"


def _processes(mark: str) -> dict:
    """pid -> command line of the live processes whose environment carries ``mark``."""
    found = {}
    tag = f"{MARK}={mark}".encode()
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            environ = Path(f"/proc/{entry}/environ").read_bytes()
            cmdline = Path(f"/proc/{entry}/cmdline").read_bytes()
        except OSError:  # gone meanwhile, or not ours
            continue
        if tag in environ.split(b"\0"):
            found[int(entry)] = cmdline.replace(b"\0", b" ").decode(errors="replace")
    return found


def _workers(mark: str) -> list:
    return sorted(pid for pid, cmd in _processes(mark).items() if "spawn_main" in cmd)


def _rows(folder: Path) -> list:
    """The rows of the folder; while a run writes, a line not yet ended is not a row."""
    path = folder / "study.jsonl"
    if not path.exists():
        return []
    return [json.loads(line) for line in path.read_text().split("\n")[:-1] if line.strip()]


def _start(problem: Path, folder: Path, mark: str) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "ascentplan", "sweep", str(problem), "--limit",
         "max_dynamic_pressure", "--values", *VALUES, "--workers", "2", "--out", str(folder),
         "--quiet"],
        env=dict(os.environ, **{MARK: mark}), stdout=subprocess.PIPE,
        stderr=subprocess.PIPE, text=True)


def _stop_at_random(proc: subprocess.Popen, kind: str, mark: str, rng: random.Random,
                    folder: Path) -> None:
    """Wait for the first worker, then stop the run as ``kind`` says at a random instant.

    A run whose rows are all written is left alone: it is past its study and into the
    interpreter's exit, where Python's default handlers are back (a stop there is not a
    stop of the study).
    """
    deadline = time.monotonic() + 30.0
    while proc.poll() is None and not _workers(mark) and time.monotonic() < deadline:
        time.sleep(0.02)
    time.sleep(rng.uniform(0.0, LATEST_STOP_S))
    if proc.poll() is not None or len(_rows(folder)) == len(VALUES):
        return
    if kind == "worker":
        alive = _workers(mark)
        if alive:
            os.kill(rng.choice(alive), signal.SIGKILL)
    else:
        os.kill(proc.pid, getattr(signal, kind))


def _no_process_left(mark: str) -> dict:
    """The processes of a run still alive a few seconds after it ended (none expected)."""
    deadline = time.monotonic() + 10.0
    while _processes(mark) and time.monotonic() < deadline:
        time.sleep(0.05)
    return _processes(mark)


def _check_stop(kind: str, status: int, err: str, before: dict, after: list) -> None:
    assert "Traceback" not in err, err
    indices = [r["index"] for r in after]
    assert len(indices) == len(set(indices)), f"a point written twice: {indices}"
    now = {r["index"]: r for r in after}
    # no finished point is lost or rewritten by a later run
    assert all(now.get(i) == row for i, row in before.items())
    missing = len(VALUES) - len(now)
    if kind == "worker":
        assert status in (0, 1), err
        if missing:
            # the points lost with the killed worker are reported; the others are solved
            assert status == 1 and f"{missing} of {len(VALUES)} points were not run" in err
    else:
        stopped = 128 + getattr(signal, kind)
        assert status in (0, 1, stopped), err
        if status == stopped:
            assert err.strip().splitlines()[-1].startswith(
                f"ascentplan sweep: stopped by {kind}"), err


def _resume_to_the_end(problem: Path, folder: Path, mark: str) -> None:
    before = {r["index"]: r for r in _rows(folder)}
    proc = _start(problem, folder, mark)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 0, err
    rows = _rows(folder)
    assert sorted(r["index"] for r in rows) == list(range(len(VALUES)))
    assert all({r["index"]: r for r in rows}[i] == row for i, row in before.items())
    with open(folder / "study.csv", newline="") as fh:
        assert sorted(int(r["index"]) for r in csv.DictReader(fh)) == list(range(len(VALUES)))


def test_stopped_runs_resume_without_losing_or_repeating_points(tmp_path):
    problem = tmp_path / "vertical_q.yaml"
    problem.write_text(PROBLEM_YAML, encoding="utf-8")
    rng = random.Random(SEED)
    studies = 0
    folder = tmp_path / "study-0"
    for trial, kind in enumerate(TRIALS):
        if len(_rows(folder)) == len(VALUES):
            # this study is complete: the next trial stops the first run of a new one
            studies += 1
            folder = tmp_path / f"study-{studies}"
        mark = uuid.uuid4().hex
        before = {r["index"]: r for r in _rows(folder)}
        proc = _start(problem, folder, mark)
        _stop_at_random(proc, kind, mark, rng, folder)
        _, err = proc.communicate(timeout=120)
        assert not _no_process_left(mark), f"trial {trial} ({kind}): processes left"
        _check_stop(kind, proc.returncode, err, before, _rows(folder))
    # the last study is resumed to its end; the earlier ones were completed by a resume
    mark = uuid.uuid4().hex
    _resume_to_the_end(problem, folder, mark)
    assert not _no_process_left(mark)
    for number in range(studies):
        rows = _rows(tmp_path / f"study-{number}")
        assert sorted(r["index"] for r in rows) == list(range(len(VALUES)))
