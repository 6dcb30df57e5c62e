"""The problem: its SI data model, the problem-file loader and the unit parser."""

from ascentplan.problem.model import *  # noqa: F401,F403  (the data classes under one name)
