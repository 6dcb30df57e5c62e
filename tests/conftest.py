"""Shared fixtures of the test suite."""

from __future__ import annotations

import pytest

from ascentplan.pipeline import clear_cache


@pytest.fixture(autouse=True)
def _fresh_nlp_cache():
    """Every test starts with no built NLP: a cached NLP keeps the variable scales of the
    problem that built it first, so a result could otherwise depend on the test order."""
    clear_cache()
    yield
