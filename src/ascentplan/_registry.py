"""Declared parameters of the model registries, which the problem loader validates against."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

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


def float_tuple(name: str, values, unit: str = "") -> tuple[float, ...]:
    """A model's list parameter as a tuple of finite floats, or a ValueError naming it.

    ``unit`` (e.g. ``"m"``) is shown in brackets in the message when given.
    """
    where = f" [{unit}]" if unit else ""
    try:
        array = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: must be a list of numbers{where}, got {values!r}") from None
    if array.ndim != 1:
        raise ValueError(f"{name}: must be a flat list of numbers{where}, got {values!r}")
    bad = np.flatnonzero(~np.isfinite(array))
    if bad.size:
        raise ValueError(f"{name}: must be finite, got {float(array[bad[0]])!r} at index {bad[0]}")
    return tuple(float(v) for v in array)
