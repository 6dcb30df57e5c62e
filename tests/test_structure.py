"""Guards on the package's shape: one place per concept, small modules and functions.

These are the contributor guide's rules (common practice for a maintainable scientific
library), checked over the syntax tree so that they cannot drift silently:

* no module over 600 lines, no function over 80 lines of code (its docstring aside)
  unless its first lines say why (a comment starting ``# long:``);
* no branch on a dynamics kind's name outside the dynamics module (ask the kind);
* the replay package does not import the output package (input/output at the edge).
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "src" / "ascentplan"
MODULES = sorted(p for p in PACKAGE.rglob("*.py"))
MAX_MODULE_LINES = 600
MAX_FUNCTION_LINES = 80
KIND_NAMES = {"vertical", "planar"}


def _relative(path: Path) -> str:
    return path.relative_to(PACKAGE).as_posix()


@pytest.mark.parametrize("path", MODULES, ids=_relative)
def test_module_is_short(path):
    lines = path.read_text(encoding="utf-8").count("\n")
    assert lines <= MAX_MODULE_LINES, f"{_relative(path)} has {lines} lines"


def _long_functions(path: Path) -> list[str]:
    source = path.read_text(encoding="utf-8")
    lines = source.splitlines()
    out = []
    for node in ast.walk(ast.parse(source)):
        if not isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            continue
        length = node.end_lineno - node.lineno + 1
        body = node.body
        if (body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant)
                and isinstance(body[0].value.value, str)):
            # the docstring is documentation, not logic to follow
            length -= body[0].end_lineno - body[0].lineno + 1
        if length <= MAX_FUNCTION_LINES:
            continue
        head = "\n".join(lines[node.lineno - 1:node.lineno + 6])
        if "# long:" not in head:
            out.append(f"{node.name} ({length} lines)")
    return out


@pytest.mark.parametrize("path", MODULES, ids=_relative)
def test_functions_are_short_or_say_why(path):
    assert _long_functions(path) == []


def _kind_name_comparisons(path: Path) -> list[int]:
    """Lines comparing something with a dynamics kind's name (``== "vertical"`` etc.)."""
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Compare):
            for operand in [node.left, *node.comparators]:
                if isinstance(operand, ast.Constant) and operand.value in KIND_NAMES:
                    found.append(node.lineno)
    return found


@pytest.mark.parametrize("path", [p for p in MODULES if p.name != "dynamics.py"],
                         ids=_relative)
def test_no_branch_on_the_kind_name(path):
    assert _kind_name_comparisons(path) == []


def test_replay_does_not_import_output():
    code = ("import sys, ascentplan.replay.simulate, ascentplan.replay.verify; "
            "print(sorted(m for m in sys.modules if m.startswith('ascentplan.output')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "[]"
