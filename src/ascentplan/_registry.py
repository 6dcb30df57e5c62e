"""Declared parameters of the model registries, which the problem loader validates against."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

REQUIRED = object()


@dataclass(frozen=True)
class Param:
    """One parameter of a model, as written in a problem file.

    Parameters
    ----------
    unit : str
        SI unit the value is converted to (a pint expression, "" for dimensionless).
        Plain numbers in the file are taken to be in this unit.
    default : object
        Value when the key is absent; ``REQUIRED`` when it must be given.
    kind : str
        ``"scalar"`` (a number or a string with units) or ``"list"`` (a list of those,
        or a string with units applying to a list of plain numbers is not accepted).
    positive : bool
        Require every value > 0.
    doc : str
        One line for the problem-file reference.
    """

    unit: str = ""
    default: Any = REQUIRED
    kind: str = "scalar"
    positive: bool = False
    nonnegative: bool = False
    doc: str = ""


def unknown_name_message(kind: str, name: Any, registry: dict) -> str:
    """The error text for a model name that is not registered."""
    valid = ", ".join(sorted(registry))
    return f"unknown {kind} model {name!r}; valid names: {valid}"


ModelFactory = Callable[..., Any]
