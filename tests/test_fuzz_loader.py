"""Property: whatever a problem document holds, the loader returns a Problem or raises a
ProblemError with printable, bounded messages, within a time bound, never another
exception and never a hang.

The documents are the example problems with a few values replaced by random text,
numbers (huge, tiny, non-finite, whole numbers past the float range), unit strings built
from random names and operators, nested lists and mappings, long text and control
characters, or with keys removed or added; some go through a YAML file, the rest
straight to ``problem_from_dict``.

The default run tries 600 documents and 1,500 unit texts (10 to 25 s). The long run tries 10,000
and more::

    ASCENTPLAN_FUZZ_EXAMPLES=10000 MPLBACKEND=Agg python -m pytest -q -p no:cacheprovider \
        tests/test_fuzz_loader.py -k long
"""

from __future__ import annotations

import copy
import os
import time
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ascentplan.problem.loader import ProblemError, load_problem, problem_from_dict
from ascentplan.problem.model import Problem
from ascentplan.problem.screen import MAX_MESSAGE, MAX_MESSAGES
from ascentplan.problem.units import UnitError, to_si

ROOT = Path(__file__).resolve().parents[1]


def _keys(node):
    """Every mapping key in a document."""
    if isinstance(node, dict):
        for key, item in node.items():
            yield key
            yield from _keys(item)
    elif isinstance(node, list):
        for item in node:
            yield from _keys(item)



DOCUMENTS = [yaml.safe_load(p.read_text(encoding="utf-8"))
             for p in sorted((ROOT / "problems").glob("*.yaml"))]
#: the longest one load may take [s]; an example loads in about 10 ms
TIME_BOUND = 2.0
LONG_EXAMPLES = int(os.environ.get("ASCENTPLAN_FUZZ_EXAMPLES", "0"))

# -- values -----------------------------------------------------------------------------
_UNIT_NAMES = ["kg", "t", "m", "km", "s", "min", "N", "kN", "Pa", "kPa", "deg", "rad", "g0",
               "g", "K", "degC", "%", "kilopascl", "lots", "1", "0", "10.0", "9", "e", "pi",
               "nan", "inf", "Ym"]
_OPERATORS = ["*", "/", "^", "**", " ", "(", ")", "-", "+", ",", "**-", "^2", "**99999999",
              "**1e-400", "^0.5", ""]
_ODD_NUMBERS = [0, -0.0, 5e-324, -5e-324, 1e-300, 1e308, -1e308, 1.7976931348623157e308,
                10**400, -(10**400), 2**1023, 10**18, float("inf"), float("-inf"),
                float("nan"), 1e-9, 1e15]
_CONTROL = st.characters(codec=None, categories=["Cc", "Cs", "Cf", "Zl", "Zp"])
_PRINTABLE = st.characters(categories=["L", "N", "P", "S", "Zs"])
#: key names of the problem format, so that added keys are often real ones
_KEY_NAMES = sorted({key for doc in DOCUMENTS for key in _keys(doc)})

unit_strings = st.builds(
    lambda number, parts: f"{number} " + "".join(parts),
    st.sampled_from(["30", "1e5", "-2", "0", "5e-324", "1e308", "0.5", ""]),
    st.lists(st.one_of(st.sampled_from(_UNIT_NAMES), st.sampled_from(_OPERATORS)),
             max_size=12))
long_text = st.builds(lambda c, n: c * n, st.sampled_from(["x", "é", "\x1b", "1", " ", "[",
                                                           "\udc80", "kPa*"]),
                      st.integers(0, 5000))
plain_scalars = st.one_of(
    st.none(), st.booleans(), st.integers(), st.sampled_from(_ODD_NUMBERS),
    st.floats(allow_nan=True, allow_infinity=True), st.text(_PRINTABLE, max_size=40),
    unit_strings)
#: text that no file system, terminal or unit parser should see raw
nasty_scalars = st.one_of(st.text(max_size=10), st.text(_CONTROL, max_size=5), long_text)
# one in four values is nasty text, so that most documents get past the text checks to
# the values behind them
scalars = st.one_of(plain_scalars, plain_scalars, plain_scalars, nasty_scalars)
keys = st.one_of(st.sampled_from(_KEY_NAMES), st.sampled_from(_KEY_NAMES),
                 st.text(_PRINTABLE, max_size=12), st.text(max_size=6))
values = st.recursive(scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=5), st.dictionaries(keys, inner, max_size=4)), max_leaves=12)


def _paths(node, prefix=()):
    """Every place in a document: key paths to mappings' values and lists' items."""
    found = [prefix]
    if isinstance(node, dict):
        for key, item in node.items():
            found.extend(_paths(item, prefix + (key,)))
    elif isinstance(node, list):
        for i, item in enumerate(node):
            found.extend(_paths(item, prefix + (i,)))
    return found


@st.composite
def documents(draw):
    """An example problem with one to four values replaced, removed or added."""
    data = copy.deepcopy(draw(st.sampled_from(DOCUMENTS)))
    for _ in range(draw(st.integers(1, 4))):
        path = draw(st.sampled_from(_paths(data)))
        if not path:
            continue
        parent = data
        for key in path[:-1]:
            parent = parent[key]
        action = draw(st.sampled_from(["replace", "replace", "replace", "remove", "add"]))
        if action == "remove":
            del parent[path[-1]]
        elif action == "add" and isinstance(parent, dict):
            parent[draw(keys)] = draw(values)
        elif action == "add":
            parent.insert(draw(st.integers(0, len(parent))), draw(values))
        else:
            parent[path[-1]] = draw(values)
    return data


# -- the property ---------------------------------------------------------------------
def _load(data, via_file: bool, tmp_path: Path):
    if via_file:
        try:
            text = yaml.safe_dump(data, allow_unicode=True)
        except (yaml.YAMLError, UnicodeError, ValueError):
            text = None
        if text is not None:
            path = tmp_path / "fuzz.yaml"
            path.write_text(text, encoding="utf-8", errors="surrogatepass")
            return load_problem(path)
    return problem_from_dict(data)


def _check_one(data, via_file, tmp_path):
    start = time.perf_counter()
    try:
        problem = _load(data, via_file, tmp_path)
    except ProblemError as exc:
        assert exc.messages and len(exc.messages) <= MAX_MESSAGES + 1
        for message in exc.messages:
            assert message.isprintable() and len(message) <= MAX_MESSAGE, repr(message)
    else:
        assert isinstance(problem, Problem)
    elapsed = time.perf_counter() - start
    assert elapsed < TIME_BOUND, f"took {elapsed:.2f} s"


_COMMON = dict(deadline=int(TIME_BOUND * 1000), database=None,
               suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                      HealthCheck.function_scoped_fixture])


@settings(max_examples=600, **_COMMON)
@given(data=documents(), via_file=st.booleans())
def test_loader_returns_a_problem_or_a_problem_error(data, via_file, tmp_path):
    _check_one(data, via_file, tmp_path)


@pytest.mark.skipif(LONG_EXAMPLES < 1, reason="long fuzz run: set ASCENTPLAN_FUZZ_EXAMPLES")
@settings(max_examples=max(LONG_EXAMPLES, 1), **_COMMON)
@given(data=documents(), via_file=st.booleans())
def test_loader_survives_long_fuzz(data, via_file, tmp_path):
    _check_one(data, via_file, tmp_path)


_UNIT_ALPHABET = st.sampled_from([*_UNIT_NAMES, *_OPERATORS, "e", "E", ".", "1", "9", "\t",
                                  "\x00", "\udc80", "[", "]", "{", "'", '"', ":", "#"])


@settings(max_examples=1500, **_COMMON)
@given(number=st.sampled_from(["30", "-1.5e3", "0", ".5", "1e400", ""]),
       parts=st.lists(_UNIT_ALPHABET, max_size=30))
def test_unit_text_gives_a_number_or_a_message(number, parts):
    text = f"{number} {''.join(parts)}"
    start = time.perf_counter()
    try:
        value = to_si(text, "Pa", "limits.max_dynamic_pressure")
    except UnitError as exc:
        assert str(exc).startswith("limits.max_dynamic_pressure: ")
    else:
        assert isinstance(value, float)
    assert time.perf_counter() - start < TIME_BOUND
