"""Property-based tests of the command line: whatever the problem file or the arguments,
``ascentplan.cli.main`` returns a documented exit status, in bounded time, and echoes
no raw control character.

Inputs are the example problem files mutated (values replaced by awkward YAML, lines
deleted, duplicated or inserted, the text cut short, characters inserted), schedule files
mutated likewise, and argument lists drawn from the verbs' own options mixed with random
text. ``check`` and ``simulate`` run on every case, ``solve`` on a few, on a six-node
trapezoidal mesh without refinement.

The default run is bounded to some 20 s. The long run, about 10,000 cases per verb test
(and one fiftieth of that for ``solve``), is::

    ASCENTPLAN_FUZZ_EXAMPLES=10000 python -m pytest -q tests/test_fuzz_cli.py

Properties (common practice for command-line tools): no exception escapes ``main``; the
exit status is one of :data:`ascentplan.cli.EXIT_STATUSES`; no call takes longer than
:data:`TIME_BOUND`; stdout and stderr carry no control character but line breaks.
"""

from __future__ import annotations

import contextlib
import io
import os
import re
import tempfile
import time
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ascentplan import cli

ROOT = Path(__file__).resolve().parents[1]
PROBLEMS = ROOT / "problems"
SCHEDULE = ROOT / "results" / "small-launcher-demo" / "schedule.csv"
#: longest a single call of ``main`` may take [s] (a flight or a solve of the examples
#: takes well under 2 s; a mutated vehicle may fly for longer, never unboundedly)
TIME_BOUND = 10.0
#: cases per test in the long run; the default run takes the small counts below
_LONG = int(os.environ.get("ASCENTPLAN_FUZZ_EXAMPLES", "0") or 0)
#: characters no message may carry: C0 controls but the line feed, and DEL
_CONTROL = re.compile(r"[\x00-\x09\x0b-\x1f\x7f]")
#: a tiny mesh so that a solve stays quick
_TINY_MESH = "mesh: {scheme: trapezoidal, nodes_per_phase: 6, max_refinements: 0}"


def _settings(default: int, long_share: int = 1):
    examples = max(default, _LONG // long_share) if _LONG else default
    return settings(max_examples=examples, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.too_slow,
                                           HealthCheck.function_scoped_fixture])


#: awkward YAML values: wrong types, units and signs, extremes, tags, aliases, controls
_NASTY = ["-1", "0", "-0.0", "1e308", "1e-308", ".nan", ".inf", "-.inf", "null", "~", "[]",
          "{}", "''", '"\\0"', '"a\\x00b"', '"\\x1b[31m"', "x" * 300, "5 kPa", "5 kg",
          "-850 kg", "1e6 t", "0 s", "1e9 s", "[1, 2, 3]", "{model: nope}", "{unit: deg}",
          "!!python/object:os.system", "!!binary aGk=", "&a 1", "*a", "? x", "- 1", "true",
          "0x10", "1_000", "'50 kPa'", "1 m/s", "90 deg", "-90 deg", "vacuum", "vertical",
          "planar", "constant", "exponential", "[0, 1e9]", "{min: 2, max: 1}",
          "{min: 0, max: 5}", "[.nan]", "1 parsec", "kPa", "5 kPa kPa", "1e400 m", "|\n  x"]
_VALUES = st.one_of(st.sampled_from(_NASTY), st.text(max_size=24),
                    st.floats(allow_nan=True, allow_infinity=True).map(repr),
                    st.integers(-10**20, 10**20).map(str))
#: a plausible edit: one number scaled, so that many mutated files still fly
_SCALE = st.tuples(st.just("scale"), st.integers(0, 10**6),
                   st.floats(0.01, 100.0).map(repr))
_EDITS = st.lists(st.one_of(_SCALE, st.tuples(
    st.sampled_from(["value", "delete", "duplicate", "insert", "truncate", "character"]),
    st.integers(0, 10**6), _VALUES)), min_size=1, max_size=4)
_NUMBER = re.compile(r"(?<![\w.])\d+(\.\d+)?(e[-+]?\d+)?")


def _mutated(text: str, edits) -> str:
    """``text`` after ``edits``: (what, where, value) each; positions wrap around."""
    lines = text.split("\n")
    for what, where, value in edits:
        if not lines:
            # every line deleted: the file is empty, and an empty file has one empty line
            lines = [""]
        i = where % len(lines)
        if what == "scale":
            factor = float(value)
            lines[i] = _NUMBER.sub(lambda m, f=factor: repr(float(m.group()) * f), lines[i],
                                   count=1)
        elif what == "value" and ":" in lines[i]:
            key = lines[i].split(":", 1)[0]
            lines[i] = f"{key}: {value}"
        elif what == "delete" and lines:
            del lines[i]
        elif what == "duplicate" and lines:
            lines.insert(i, lines[i])
        elif what == "insert":
            lines.insert(i, value)
        elif what == "truncate":
            joined = "\n".join(lines)
            lines = joined[:where % (len(joined) + 1)].split("\n")
        elif what == "character":
            joined = "\n".join(lines)
            j = where % (len(joined) + 1)
            lines = (joined[:j] + (value[:1] or "\x00") + joined[j:]).split("\n")
    return "\n".join(lines)


def _run(argv) -> tuple[int, float]:
    """``main(argv)``: its status and wall time [s]; asserts the properties."""
    out, err = io.StringIO(), io.StringIO()
    start = time.perf_counter()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = cli.main(argv)
    elapsed = time.perf_counter() - start
    assert status in cli.EXIT_STATUSES, (status, err.getvalue()[-2000:])
    assert elapsed < TIME_BOUND, (argv, elapsed)
    for stream in (out.getvalue(), err.getvalue()):
        found = _CONTROL.search(stream)
        assert found is None, (argv, stream[max(found.start() - 80, 0):found.end() + 80])
    assert "Traceback" not in err.getvalue() or "--debug" in argv
    return status, elapsed


@contextlib.contextmanager
def _scratch():
    """A temporary working folder: anything written by default lands there."""
    before = os.getcwd()
    with tempfile.TemporaryDirectory() as folder:
        os.chdir(folder)
        try:
            yield Path(folder)
        finally:
            os.chdir(before)


@_settings(40)
@given(source=st.sampled_from(sorted(PROBLEMS.glob("*.yaml"))), edits=_EDITS)
def test_check_any_problem_file(source, edits):
    with _scratch() as folder:
        path = folder / "mutated.yaml"
        path.write_text(_mutated(source.read_text(encoding="utf-8"), edits),
                        encoding="utf-8", errors="surrogatepass")
        status, _ = _run(["check", str(path)])
        assert status in (0, cli.EXIT_BAD_INPUT)


@_settings(20)
@given(source=st.sampled_from([PROBLEMS / "sounding_rocket.yaml", PROBLEMS / "goddard.yaml"]),
       edits=_EDITS)
def test_simulate_any_problem_file(source, edits):
    with _scratch() as folder:
        path = folder / "mutated.yaml"
        path.write_text(_mutated(source.read_text(encoding="utf-8"), edits),
                        encoding="utf-8", errors="surrogatepass")
        status, _ = _run(["simulate", str(path), "--out", str(folder / "out")])
        assert status in (0, 1, cli.EXIT_BAD_INPUT, cli.EXIT_LIMITS_EXCEEDED)


@_settings(8)
@given(edits=_EDITS)
def test_simulate_any_schedule_file(edits):
    with _scratch() as folder:
        path = folder / "schedule.csv"
        path.write_text(_mutated(SCHEDULE.read_text(encoding="utf-8"), edits),
                        encoding="utf-8", errors="surrogatepass")
        status, _ = _run(["simulate", str(PROBLEMS / "small_launcher.yaml"), "--schedule",
                          str(path), "--out", str(folder / "out")])
        assert status in (0, 1, cli.EXIT_BAD_INPUT, cli.EXIT_LIMITS_EXCEEDED)


_TOKENS = ["check", "simulate", "split", "report", "--out", "--schedule", "--hold", "payload",
           "liftoff_mass", "--delta-v", "9000", "-1", "nan", "inf", "--debug", "--version",
           "--help", "-h", "--", "-", "", "\x00", "\x1b[31m", "nonexistent.yaml", ".",
           str(PROBLEMS / "sounding_rocket.yaml"), str(PROBLEMS / "goddard.yaml"),
           str(PROBLEMS / "medium_launcher.yaml"), str(SCHEDULE)]
#: verbs that solve (slow) or start worker processes are not drawn from random text
_ARGUMENT = st.one_of(st.sampled_from(_TOKENS),
                      st.text(max_size=12).filter(lambda s: s not in ("solve", "sweep")))


@_settings(60)
@given(argv=st.lists(_ARGUMENT, max_size=6))
def test_any_argument_list(argv):
    with _scratch():
        _run(argv)


@_settings(1, long_share=50)
@given(edits=_EDITS)
def test_solve_any_problem_file_on_a_tiny_mesh(edits):
    text = "\n".join(line for line in (PROBLEMS / "sounding_rocket.yaml").read_text(
        encoding="utf-8").split("\n") if not line.startswith("mesh:"))
    with _scratch() as folder:
        path = folder / "mutated.yaml"
        path.write_text(_mutated(text, edits) + "\n" + _TINY_MESH + "\n",
                        encoding="utf-8", errors="surrogatepass")
        status, _ = _run(["solve", str(path), "--out", str(folder / "out")])
        assert status in (0, 1, cli.EXIT_BAD_INPUT, 3, 4)
