"""The name lists that problem files are validated against match what the code implements."""

from ascentplan.optimisation.collocation import COLLOCATION_SCHEMES
from ascentplan.pipeline import OBJECTIVE_UNITS
from ascentplan.problem.limits import LIMITS
from ascentplan.problem.model import LIMIT_UNITS, OBJECTIVES, SCHEMES, Limits


def test_schemes_match_the_collocation_classes():
    assert set(SCHEMES) == set(COLLOCATION_SCHEMES)


def test_objectives_have_units():
    assert set(OBJECTIVES) == set(OBJECTIVE_UNITS)


def test_limits_have_units_and_replay_quantities():
    names = set(Limits().__dataclass_fields__)
    assert names == set(LIMIT_UNITS) == set(LIMITS)
