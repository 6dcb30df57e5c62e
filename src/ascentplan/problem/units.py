"""Conversion of problem-file quantities such as "35 kPa", "24 t" or "28.5 deg" to SI
numbers, with their dimension checked."""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np
import pint

#: the package's unit registry; 't' (tonne) and 'g0' (standard gravity, 9.80665 m s^-2)
#: are part of pint's default definitions
ureg = pint.UnitRegistry()
Quantity = ureg.Quantity


class UnitError(ValueError):
    """A value that cannot be read as the quantity expected; the text names the key path."""


#: (unit, description, example) for the quantities a problem file contains; the
#: description is used both for what was expected and for what was found
_KINDS = (
    ("kg", "a mass", "24 t"),
    ("m", "a length", "200 km"),
    ("s", "a time", "320 s"),
    ("N", "a force", "1200 kN"),
    ("Pa", "a pressure", "35 kPa"),
    ("m^2", "an area", "0.6 m^2"),
    ("m/s", "a speed", "3.5 km/s"),
    ("m/s^2", "an acceleration", "5 g0"),
    ("rad", "an angle", "28.5 deg"),
    ("rad/s", "an angular rate", "7.292e-5 rad/s"),
    ("1/s", "a rate", "0.2 1/s"),
    ("Pa*rad", "a pressure times an angle", "150 kPa deg"),
    ("kg/m^3", "a density", "1.225 kg/m^3"),
    ("K", "a temperature", "288.15 K"),
    ("m^3/s^2", "a gravitational parameter", "3.986e14 m^3/s^2"),
    ("Pa*s", "a dynamic viscosity", "1.8e-5 Pa s"),
    ("kg/s", "a mass flow", "150 kg/s"),
    ("", "a plain number", "0.5"),
)

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def _signature(units) -> tuple:
    """Dimension of a unit with angles counted as a dimension of their own.

    pint treats the radian as dimensionless; counting it here makes "150 kPa" an error
    where "150 kPa deg" is expected, and "0.3 rad/s" an error where a rate in 1/s is.
    """
    dims = tuple(sorted(ureg.get_dimensionality(units).items()))
    root = ureg.get_root_units(units)[1]
    angle = dict(root._units).get("radian", 0)
    return dims, angle


_KIND_BY_SIGNATURE = {_signature(u): (d, e) for u, d, e in _KINDS}


def describe_unit(unit: str) -> tuple[str, str]:
    """What a unit measures, and an example of how to write it.

    Parameters
    ----------
    unit : str
        A pint unit expression, "" for a plain number.

    Returns
    -------
    description, example : str
        For example ``("a pressure", "35 kPa")``.
    """
    sig = _signature(unit)
    if sig in _KIND_BY_SIGNATURE:
        description, example = _KIND_BY_SIGNATURE[sig]
        if unit == "g0":
            example = "5 g0"
        return description, example
    return f"a quantity in {unit}", f"1 {unit}"


def _found(units) -> str:
    """Short name of the dimension of a value that was given, e.g. 'mass'."""
    sig = _signature(units)
    if sig in _KIND_BY_SIGNATURE:
        text = _KIND_BY_SIGNATURE[sig][0]
        if text == "a plain number":
            return "no unit"
        return text.split(" ", 1)[1]
    dims = ureg.get_dimensionality(units)
    text = str(dims) if dims else "dimensionless"
    if sig[1]:
        text += f" times angle^{sig[1]}" if sig[1] != 1 else " times an angle"
    return text


def show(value: Any) -> str:
    """A value as it was written in the file, for messages."""
    if isinstance(value, str):
        return repr(value)
    if value is None:
        return "nothing"
    return str(value)


def expected_text(unit: str) -> str:
    """What a value of ``unit`` looks like, for error messages."""
    description, example = describe_unit(unit)
    if description == "a plain number":
        return "a plain number"
    return f"{description} (e.g. '{example}')"


def _parse_string(text: str, unit: str, key_path: str) -> float:
    match = _NUMBER.match(text)
    if match is None:
        raise UnitError(f"{key_path}: cannot read {text!r} as a number with a unit; "
                        f"expected {expected_text(unit)}")
    number, unit_text = float(match.group(1)), match.group(2)
    if not unit_text:
        # a bare number in quotes (YAML reads 1e5 as a string) counts like a plain number
        return number
    try:
        given = ureg.parse_units(unit_text)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError,
            AttributeError, ValueError, TypeError, SyntaxError) as exc:
        detail = exc.unit_names if isinstance(exc, pint.errors.UndefinedUnitError) else None
        if isinstance(detail, (list, tuple)):
            detail = ", ".join(map(str, detail))
        hint = f" (unknown unit {detail!r})" if detail else ""
        raise UnitError(f"{key_path}: cannot read the unit of {text!r}{hint}; "
                        f"expected {expected_text(unit)}") from None
    if _signature(given) != _signature(unit):
        hint = ""
        if _signature(unit) == _signature("m/s^2") and _signature(given) == _signature("kg"):
            hint = " ('g' is the gram; write 'g0' for standard gravity)"
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got {text!r} "
                        f"({_found(given)}){hint}")
    return float(Quantity(number, given).to(unit).magnitude)


def to_si(value: Any, unit: str, key_path: str) -> float:
    """Convert one problem-file value to a float in ``unit``.

    Parameters
    ----------
    value : int, float or str
        A plain number, taken to be in ``unit`` already, or a string such as
        ``"35 kPa"``, ``"24 t"``, ``"5 g0"``, ``"28.5 deg"``.
    unit : str
        The unit of the result, a pint expression ("Pa", "kg", "g0", "rad", "" for a
        plain number).
    key_path : str
        Where the value sits in the problem file, for the message.

    Returns
    -------
    float
        The value in ``unit``.

    Raises
    ------
    UnitError
        For booleans, nulls, lists, unreadable strings, non-finite numbers and values of
        the wrong dimension; the message starts with ``key_path``.
    """
    if isinstance(value, bool):
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got {value} (a yes/no value)")
    if isinstance(value, (int, float)):
        result = float(value)
    elif isinstance(value, str):
        result = _parse_string(value, unit, key_path)
    elif value is None:
        raise UnitError(f"{key_path}: no value given; expected {expected_text(unit)}")
    elif isinstance(value, (list, tuple)):
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got a list {value!r}")
    elif isinstance(value, dict):
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got a mapping {value!r}")
    else:
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got {value!r}")
    if not math.isfinite(result):
        raise UnitError(f"{key_path}: expected a finite value, got {show(value)}")
    return result


def list_to_si(value: Any, unit: str, key_path: str) -> tuple[float, ...]:
    """Convert a problem-file list to floats in ``unit``.

    Parameters
    ----------
    value : list or dict
        A list of plain numbers and/or strings with units, or a mapping
        ``{unit: deg, values: [...]}`` whose plain numbers are all in that unit.
    unit : str
        The unit of the result.
    key_path : str
        Where the list sits in the problem file; items are named ``key_path[i]``.

    Returns
    -------
    tuple of float

    Raises
    ------
    UnitError
        With every bad item listed, one per line.
    """
    if isinstance(value, dict):
        extra = sorted(set(value) - {"unit", "values"})
        if extra or "values" not in value:
            raise UnitError(f"{key_path}: a list with a unit is written "
                            f"{{unit: ..., values: [...]}}, got keys {sorted(value)}")
        items = value["values"]
        list_unit = value.get("unit", unit)
        if not isinstance(list_unit, str):
            raise UnitError(f"{key_path}.unit: expected a unit name such as 'deg', "
                            f"got {show(list_unit)}")
        if not isinstance(items, list) or not items:
            raise UnitError(f"{key_path}.values: expected a non-empty list of plain "
                            f"numbers, got {show(items)}")
        bad = [i for i, v in enumerate(items)
               if isinstance(v, bool) or not isinstance(v, (int, float))]
        if bad:
            raise UnitError("\n".join(
                f"{key_path}.values[{i}]: expected a plain number (the unit is given once), "
                f"got {show(items[i])}" for i in bad))
        try:
            given = ureg.parse_units(list_unit) if list_unit else ureg.dimensionless
        except Exception:
            raise UnitError(f"{key_path}.unit: cannot read the unit {list_unit!r}; "
                            f"expected {expected_text(unit)}") from None
        if _signature(given) != _signature(unit):
            raise UnitError(f"{key_path}.unit: expected {expected_text(unit)}, got "
                            f"{list_unit!r} ({_found(given)})")
        converted = Quantity(np.asarray(items, dtype=float), given).to(unit).magnitude
        if not np.all(np.isfinite(converted)):
            raise UnitError(f"{key_path}.values: expected finite values, got {items!r}")
        return tuple(float(v) for v in converted)
    if not isinstance(value, list):
        raise UnitError(f"{key_path}: expected a list of values, e.g. "
                        f"['{describe_unit(unit)[1]}', ...] or {{unit: ..., values: [...]}}, "
                        f"got {show(value)}")
    if not value:
        raise UnitError(f"{key_path}: expected a non-empty list, got []")
    out, errors = [], []
    for i, item in enumerate(value):
        try:
            out.append(to_si(item, unit, f"{key_path}[{i}]"))
        except UnitError as exc:
            errors.append(str(exc))
    if errors:
        raise UnitError("\n".join(errors))
    return tuple(out)


def from_si(value: float, si_unit: str, unit: str) -> float:
    """Express ``value`` given in ``si_unit`` in ``unit`` (for reports)."""
    return float(Quantity(value, si_unit).to(unit).magnitude)
