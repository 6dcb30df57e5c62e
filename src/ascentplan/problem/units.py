"""Conversion of problem-file quantities such as "35 kPa", "24 t" or "28.5 deg" to SI
numbers, with their dimension checked."""

from __future__ import annotations

import math
import re
import reprlib
from functools import cache, lru_cache
from typing import Any

import numpy as np
import pint

from ascentplan.problem.unit_grammar import UnitSyntaxError, unit_names

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

#: plausible magnitudes (smallest, largest) of each kind of quantity, in the kind's unit
#: above; zero is always allowed. They keep every later product, quotient and square
#: of problem data far from float overflow and underflow, and hold with margin the
#: vehicles, planets and tables of the trade: masses from a gram to ten million tonnes,
#: forces to ten giganewtons, radii and altitudes to ten billion kilometres,
#: gravitational parameters up to twenty times the Sun's, table densities down to
#: interplanetary space.
PLAUSIBLE = {
    "kg": (1e-6, 1e10), "m": (1e-6, 1e13), "s": (1e-6, 1e9), "N": (1e-6, 1e10),
    "Pa": (1e-12, 1e10), "m^2": (1e-9, 1e8), "m/s": (1e-9, 1e8), "m/s^2": (1e-9, 1e6),
    "rad": (1e-12, 1e3), "rad/s": (1e-15, 1e3), "1/s": (1e-9, 1e6),
    "Pa*rad": (1e-12, 1e10), "kg/m^3": (1e-30, 1e6), "K": (1e-3, 1e6),
    "m^3/s^2": (1e-3, 3e21), "Pa*s": (1e-12, 1e6), "kg/s": (1e-9, 1e8), "": (1e-12, 1e12),
}
#: magnitudes of a quantity of a kind not listed above, in SI units
_PLAUSIBLE_OTHER = (1e-30, 1e30)
#: the longest text a quantity may be written with [characters]: a 30-digit number and
#: the longest unit
_MAX_QUANTITY_TEXT = 30 + 64
#: the longest a value is echoed in a message [characters]
SHOWN_LENGTH = 80

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


#: a value's text for messages: nested lists and mappings cut short before they are
#: written out, so a large or self-referring value costs no more than a short one
_SHORT = reprlib.Repr()
_SHORT.maxlevel, _SHORT.maxlist, _SHORT.maxtuple, _SHORT.maxdict = 4, 12, 12, 12
_SHORT.maxset, _SHORT.maxfrozenset, _SHORT.maxstring = 12, 12, SHOWN_LENGTH
_SHORT.maxlong, _SHORT.maxother = SHOWN_LENGTH, SHOWN_LENGTH
#: whole numbers beyond this many bits are described, not written out (Python refuses
#: to write integers of more than 4300 digits)
_WRITTEN_INT_BITS = 1024


def printable(text: str) -> str:
    """``text`` with every non-printing character (control codes, terminal escapes, lone
    surrogates, line breaks) written as a Python escape, so that echoing it is safe."""
    if text.isprintable():
        return text
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


def show(value: Any) -> str:
    """A value as it was written in the file, for messages: at most
    :data:`SHOWN_LENGTH` characters, cut with an ellipsis, and printable."""
    if isinstance(value, str):
        text = repr(value[:SHOWN_LENGTH + 1])
    elif value is None:
        return "nothing"
    elif isinstance(value, bool):
        return str(value)
    elif isinstance(value, int) and value.bit_length() > _WRITTEN_INT_BITS:
        return f"a whole number of about {int(value.bit_length() * math.log10(2))} digits"
    elif isinstance(value, (int, float)):
        text = str(value)
    else:
        text = _SHORT.repr(value)
    text = printable(text)
    if len(text) > SHOWN_LENGTH:
        text = text[:SHOWN_LENGTH - 3] + "..."
    return text


def expected_text(unit: str) -> str:
    """What a value of ``unit`` looks like, for error messages."""
    description, example = describe_unit(unit)
    if description == "a plain number":
        return "a plain number"
    return f"{description} (e.g. '{example}')"


@lru_cache(maxsize=4096)
def _is_unit_name(name: str) -> bool:
    """Whether the registry knows one unit name (with or without a prefix)."""
    try:
        ureg.parse_units(name)
    except Exception:  # pint's parser raises many kinds; any of them means "unknown"
        return False
    return True


@lru_cache(maxsize=1024)
def _parse_unit(text: str):
    """A unit text, checked against the grammar first, as a pint unit.

    Raises
    ------
    UnitSyntaxError
        Why the text is not a unit, in words.
    """
    unit_names(text, _is_unit_name)
    try:
        return ureg.parse_units(text)
    except Exception:  # the grammar admits only what pint reads; this is the last guard
        raise UnitSyntaxError("not a unit pint can read") from None


def _parse_string(text: str, unit: str, key_path: str) -> float:
    if len(text) > _MAX_QUANTITY_TEXT:
        raise UnitError(f"{key_path}: cannot read {show(text)} as a number with a unit "
                        f"(longer than {_MAX_QUANTITY_TEXT} characters); expected "
                        f"{expected_text(unit)}")
    match = _NUMBER.match(text)
    if match is None:
        raise UnitError(f"{key_path}: cannot read {show(text)} as a number with a unit; "
                        f"expected {expected_text(unit)}")
    number, unit_text = float(match.group(1)), match.group(2)
    if not math.isfinite(number):
        raise UnitError(f"{key_path}: expected a finite value, got {show(text)}")
    if not unit_text:
        # a bare number in quotes (YAML reads 1e5 as a string) counts like a plain number
        return number
    try:
        given = _parse_unit(unit_text)
    except UnitSyntaxError as exc:
        reason = str(exc)
        hint = f" ({reason})" if reason.startswith("unknown unit") else f": {reason}"
        raise UnitError(f"{key_path}: cannot read the unit of {show(text)}{hint}; "
                        f"expected {expected_text(unit)}") from None
    if _signature(given) != _signature(unit):
        hint = ""
        if _signature(unit) == _signature("m/s^2") and _signature(given) == _signature("kg"):
            hint = " ('g' is the gram; write 'g0' for standard gravity)"
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got {show(text)} "
                        f"({_found(given)}){hint}")
    try:
        return float(Quantity(number, given).to(unit).magnitude)
    except (ArithmeticError, ValueError):
        # a float product past the largest float; the range check words it
        return math.inf if number > 0 else -math.inf


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
    if isinstance(value, float) and not math.isfinite(value):
        raise UnitError(f"{key_path}: expected a finite value, got {show(value)}")
    if isinstance(value, (int, float)):
        result = _plain_float(value)
    elif isinstance(value, str):
        result = _parse_string(value, unit, key_path)
    elif value is None:
        raise UnitError(f"{key_path}: no value given; expected {expected_text(unit)}")
    elif isinstance(value, (list, tuple)):
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got a list {show(value)}")
    elif isinstance(value, dict):
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got a mapping "
                        f"{show(value)}")
    else:
        raise UnitError(f"{key_path}: expected {expected_text(unit)}, got {show(value)}")
    check_plausible(result, unit, key_path, value)
    return result


def _plain_float(value: int | float) -> float:
    """A plain number as a float; a whole number beyond the float range is infinite
    (the range check then refuses it by name)."""
    try:
        return float(value)
    except OverflowError:
        return math.inf if value > 0 else -math.inf


@cache
def plausible_range(unit: str) -> tuple[float, float, str, str]:
    """Plausible magnitudes of a quantity in ``unit``.

    Parameters
    ----------
    unit : str
        A pint unit expression, "" for a plain number.

    Returns
    -------
    smallest, largest : float
        Magnitudes in ``unit`` (zero is allowed besides).
    kind, kind_unit : str
        What the quantity is ("a force") and the unit the range is stated in ("N").
    """
    sig = _signature(unit)
    for kind_unit, description, _ in _KINDS:
        if _signature(kind_unit) == sig:
            low, high = PLAUSIBLE[kind_unit]
            factor = float(Quantity(1.0, unit).to(kind_unit).magnitude) if kind_unit else 1.0
            return low / factor, high / factor, description, kind_unit
    low, high = _PLAUSIBLE_OTHER
    factor = float(ureg.get_root_units(unit)[0])
    return low / factor, high / factor, f"a quantity in {unit}", str(ureg.get_root_units(unit)[1])


def check_plausible(result: float, unit: str, key_path: str, raw: Any) -> None:
    """Refuse a value (in ``unit``) outside :data:`PLAUSIBLE`, naming the range.

    Raises
    ------
    UnitError
        Starting with ``key_path``.
    """
    low, high, kind, kind_unit = plausible_range(unit)
    size = abs(result)
    if result == 0.0 or low <= size <= high:
        return
    kind_low, kind_high = PLAUSIBLE.get(kind_unit, _PLAUSIBLE_OTHER)
    shown_unit = f" {kind_unit}" if kind_unit else ""
    raise UnitError(f"{key_path}: {show(raw)} is outside the plausible range of {kind}: "
                    f"0 or a magnitude from {kind_low:g}{shown_unit} to {kind_high:g}"
                    f"{shown_unit}")


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
            given = _parse_unit(list_unit) if list_unit else ureg.dimensionless
        except UnitSyntaxError as exc:
            raise UnitError(f"{key_path}.unit: cannot read the unit {show(list_unit)} "
                            f"({exc}); expected {expected_text(unit)}") from None
        if _signature(given) != _signature(unit):
            raise UnitError(f"{key_path}.unit: expected {expected_text(unit)}, got "
                            f"{show(list_unit)} ({_found(given)})")
        return _unit_list_to_si(items, given, unit, f"{key_path}.values")
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


def _unit_list_to_si(items: list, given, unit: str, key_path: str) -> tuple[float, ...]:
    """Plain numbers in the unit ``given`` converted to ``unit``, each finite and plausible."""
    if any(isinstance(raw, float) and not math.isfinite(raw) for raw in items):
        raise UnitError(f"{key_path}: expected finite values, got {show(items)}")
    # whole numbers past the float range become infinite here and the range check names them
    numbers = np.asarray([_plain_float(v) for v in items], dtype=float)
    with np.errstate(over="ignore", invalid="ignore"):
        converted = Quantity(numbers, given).to(unit).magnitude
    errors = []
    for i, v in enumerate(converted):
        try:
            check_plausible(float(v), unit, f"{key_path}[{i}]", items[i])
        except UnitError as exc:
            errors.append(str(exc))
    if errors:
        raise UnitError("\n".join(errors))
    return tuple(float(v) for v in converted)


def from_si(value: float, si_unit: str, unit: str) -> float:
    """Express ``value`` given in ``si_unit`` in ``unit`` (for reports)."""
    return float(Quantity(value, si_unit).to(unit).magnitude)
