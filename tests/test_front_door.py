"""The package's front door: the names a user imports first."""

from __future__ import annotations

import subprocess
import sys

import pytest

import ascentplan


def test_front_door_names_are_the_library_objects():
    from ascentplan.pipeline import solve
    from ascentplan.problem.loader import load_problem
    from ascentplan.replay.simulate import simulate

    assert ascentplan.load_problem is load_problem
    assert ascentplan.solve is solve
    assert ascentplan.simulate is simulate
    for name in ascentplan.__all__:
        assert getattr(ascentplan, name) is not None


def test_unknown_name_is_an_attribute_error():
    with pytest.raises(AttributeError, match="no_such_name"):
        ascentplan.no_such_name  # noqa: B018


def test_import_is_light():
    """``import ascentplan`` must not import CasADi (the front-door names load on use)."""
    code = "import sys, ascentplan; print('casadi' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "False"
