"""Reading values out of a parsed problem file: the strict YAML loader, the reader that
converts and bound-checks one value at a time, and the wording of its messages.

Every message starts with the key path of the value it is about (``vehicle.stages[0].
dry_mass: ...``), says what was found and what was expected, and suggests the name that
was probably meant when a name is misspelt.
"""

from __future__ import annotations

import difflib
from typing import Any

import yaml

from ascentplan.problem.screen import (
    MAX_ALIASES,
    MAX_DEPTH,
    MAX_NODES,
    MAX_NUMBER_DIGITS,
    at,
    too_deep,
    too_many_aliases,
    too_many_values,
)
from ascentplan.problem.units import UnitError, describe_unit, expected_text, from_si, show, to_si


def _join(path: str, key: Any) -> str:
    """Key path of ``key`` inside the section at ``path`` ("" for the top level)."""
    return f"{path}.{key}" if path else str(key)


def _fmt(value: float) -> str:
    return f"{value:.6g}"


def _unit_text(unit: str) -> str:
    """A unit as messages write it: factors joined by '*' (``"kPa deg"`` -> ``"kPa*deg"``)."""
    return "*".join(unit.split())


def _closest(word: Any, names) -> str | None:
    """The valid name a misspelt ``word`` most likely meant, or None.

    Shared underscore-separated words count first (``max_speed`` means
    ``max_burnout_speed`` rather than ``max_apogee``), then difflib's similarity.
    """
    if not isinstance(word, str):
        return None
    tokens = set(word.lower().split("_"))
    best, best_score = None, None
    for name in names:
        shared = len(tokens & set(name.split("_")))
        ratio = difflib.SequenceMatcher(None, word.lower(), name).ratio()
        if ratio < 0.6 and shared < 2:
            continue
        score = (shared, ratio)
        if best_score is None or score > best_score:
            best, best_score = name, score
    return best


def _did_you_mean(word: Any, names) -> str:
    close = _closest(word, names)
    return f"; did you mean '{close}'?" if close else ""


def _kind_of(value: Any) -> str:
    """What a YAML value is, in words for messages ("a mapping", "text", ...)."""
    if isinstance(value, bool):
        return "a yes/no value"
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, str):
        return "text"
    if isinstance(value, (int, float)):
        return "a number"
    return type(value).__name__


def _in_unit(value: float, unit: str, shown: str) -> str:
    """``value`` (in ``unit``) written in the unit ``shown`` to users, e.g. ``"35 kPa"``."""
    if shown == unit or unit == "":
        return f"{_fmt(value)} {shown}".rstrip()
    return f"{_fmt(from_si(value, unit, shown))} {shown}"


def _unknown_choice(what: str, raw: Any, names) -> str:
    return (f"unknown {what} {show(raw)}{_did_you_mean(raw, names)} "
            f"(valid names: {', '.join(names)})")


def _is_number(value: Any) -> bool:
    """A plain number, or text that is only a number."""
    if isinstance(value, bool):
        return False
    if isinstance(value, (int, float)):
        return True
    if isinstance(value, str):
        try:
            float(value)
        except ValueError:
            return False
        return True
    return False


def _raw(data: dict, *keys) -> str:
    """The value at ``keys`` as written in the file, for messages."""
    node: Any = data
    for key in keys:
        node = node.get(key) if isinstance(node, dict) else None
    return show(node)


class _Reader:
    """Collects messages while reading one problem; helpers return None for bad values."""

    def __init__(self):
        self.messages: list[str] = []

    def error(self, path: str, text: str) -> None:
        self.messages.append(f"{path}: {text}" if path else text)

    def unit_error(self, exc: UnitError) -> None:
        self.messages.extend(str(exc).split("\n"))

    # -- structure ---------------------------------------------------------------
    def section(self, parent: dict | None, key: str, path: str, required: bool = False,
                what: str = "a mapping of keys (key: value)") -> dict | None:
        """The mapping under ``key``; None when absent, null, or not a mapping."""
        p = _join(path, key)
        if parent is None or parent.get(key) is None:
            if required:
                self.error(p, f"missing; expected {what}")
            return None
        value = parent[key]
        if not isinstance(value, dict):
            self.error(p, f"expected {what}, got {_kind_of(value)} {show(value)}")
            return None
        return value

    def keys(self, section: dict | None, path: str, allowed) -> None:
        """Report every key of ``section`` that is not in ``allowed``."""
        if section is None:
            return
        allowed = list(allowed)
        for key in section:
            if not isinstance(key, str):
                hint = (" (YAML reads unquoted yes/no/on/off as yes/no values; quote the "
                        "key)" if isinstance(key, bool) else "")
                self.error(_join(path, show(key)),
                           f"keys must be names, got {show(key)} ({_kind_of(key)}){hint}; "
                           f"valid keys: {', '.join(allowed)}")
                continue
            if key in allowed:
                continue
            self.error(_join(path, key), f"unknown key{_did_you_mean(key, allowed)} "
                                         f"(valid keys: {', '.join(allowed)})")

    # -- values --------------------------------------------------------------------
    def quantity(self, section: dict | None, key: str, path: str, unit: str, *,
                 required: bool = False, default: float | None = None,
                 gt: float | None = None, ge: float | None = None,
                 lt: float | None = None, le: float | None = None,
                 show_unit: str | None = None) -> float | None:
        """A scalar converted to ``unit`` and checked against the bounds (in ``unit``)."""
        p = _join(path, key)
        if section is None or section.get(key) is None:
            if required:
                self.error(p, f"missing; expected {expected_text(unit)}")
                return None
            return default
        raw = section[key]
        try:
            value = to_si(raw, unit, p)
        except UnitError as exc:
            self.unit_error(exc)
            return None
        if not self.bounds(value, raw, p, unit, gt=gt, ge=ge, lt=lt, le=le,
                           show_unit=show_unit):
            return None
        return value

    def bounds(self, value: float, raw: Any, path: str, unit: str, *, gt=None, ge=None,
               lt=None, le=None, show_unit=None) -> bool:
        """Check ``value`` (in ``unit``) against bounds; report and return False if out."""
        ok = ((gt is None or value > gt) and (ge is None or value >= ge)
              and (lt is None or value < lt) and (le is None or value <= le))
        if ok:
            return True
        shown = show_unit if show_unit is not None else unit
        parts = []
        lower = (">", gt) if gt is not None else (">=", ge) if ge is not None else None
        upper = ("<", lt) if lt is not None else ("<=", le) if le is not None else None
        for side in (lower, upper):
            if side is not None:
                parts.append(f"{side[0]} {_in_unit(side[1], unit, shown)}")
        hint = ""
        if (describe_unit(unit)[0] == "an angle" and isinstance(raw, (int, float))
                and not isinstance(raw, bool)):
            hint = (f" (a plain number is in radians; write e.g. '{_fmt(raw)} deg' "
                    f"for degrees)")
        self.error(path, f"must be {' and '.join(parts)}, got {show(raw)}{hint}")
        return False

    def integer(self, section: dict | None, key: str, path: str, default: int,
                minimum: int) -> int | None:
        """A whole number >= ``minimum``; ``default`` when absent."""
        p = _join(path, key)
        if section is None or section.get(key) is None:
            return default
        raw = section[key]
        if isinstance(raw, bool) or not isinstance(raw, int):
            self.error(p, f"expected a whole number >= {minimum}, got {show(raw)}")
            return None
        if raw < minimum:
            self.error(p, f"must be >= {minimum}, got {show(raw)}")
            return None
        return raw

    def text(self, section: dict | None, key: str, path: str, required: bool = False,
             default: str | None = None) -> str | None:
        p = _join(path, key)
        if section is None or section.get(key) is None:
            if required:
                self.error(p, "missing; expected text")
            return default
        raw = section[key]
        if not isinstance(raw, str):
            self.error(p, f"expected text, got {show(raw)} ({_kind_of(raw)})")
            return None
        return raw

    def choice(self, section: dict | None, key: str, path: str, names, default: str | None,
               what: str) -> str | None:
        """One of ``names``; ``default`` when absent (missing is an error if it is None)."""
        p = _join(path, key)
        if section is None or section.get(key) is None:
            if default is None:
                self.error(p, f"missing; expected one of: {', '.join(names)}")
            return default
        raw = section[key]
        if isinstance(raw, str) and raw in names:
            return raw
        self.error(p, _unknown_choice(what, raw, names))
        return None


# -- YAML -------------------------------------------------------------------------
class InputLimitError(yaml.YAMLError):
    """A YAML document past an input limit, found while it was being built.

    Attributes
    ----------
    message : str
        Starting with the key path of the node that went past the limit.
    mark : yaml.Mark
        Where in the file.
    """

    def __init__(self, message: str, mark):
        super().__init__(message)
        self.message, self.mark = message, mark


class _StrictLoader(yaml.SafeLoader):
    """Safe YAML loader that refuses duplicate keys (plain YAML keeps the last silently)
    and counts nesting, aliases and values while composing, so that a deep nest or an
    alias bomb is refused before a single value is built from it."""

    def __init__(self, stream):
        super().__init__(stream)
        self._labels: list[str] = []
        self._values = 0
        self._aliases = 0
        #: values an anchored node holds with its aliases expanded, by id of the node
        self._expanded: dict[int, int] = {}

    def _path(self) -> str:
        path = ""
        for label in self._labels:
            if label.startswith("["):
                path += label
            elif label:
                path = f"{path}.{label}" if path else label
        return path

    def _refuse(self, message: str, mark):
        raise InputLimitError(message, mark)

    def compose_node(self, parent, index):
        event = self.peek_event()
        self._labels.append(_label(index))
        try:
            if isinstance(event, yaml.AliasEvent):
                node = super().compose_node(parent, index)
                self._aliases += 1
                if self._aliases > MAX_ALIASES:
                    self._refuse(too_many_aliases(self._path()), event.start_mark)
                size = self._expanded.get(id(node))
                if size is None:
                    self._refuse(at(self._path(), f"the alias *{event.anchor} refers to a "
                                                  f"node that holds it"), event.start_mark)
                self._count(size, event.start_mark)
                return node
            if len(self._labels) > MAX_DEPTH:
                self._refuse(too_deep(self._path()), event.start_mark)
            before = self._values
            self._count(1, event.start_mark)
            node = super().compose_node(parent, index)
            if event.anchor is not None:
                self._expanded[id(node)] = self._values - before
            return node
        finally:
            self._labels.pop()

    def _count(self, values: int, mark) -> None:
        self._values += values
        if self._values > MAX_NODES:
            self._refuse(too_many_values(self._path()), mark)


def _label(index) -> str:
    """How a node adds to the key path: ``[i]`` in a list, its key in a mapping."""
    if isinstance(index, int):
        return f"[{index}]"
    if isinstance(index, yaml.ScalarNode):
        return index.value if len(index.value) <= 80 else show(index.value)
    return ""


def _construct_int(loader, node):
    # Python refuses to read whole numbers of more than 4300 digits with a ValueError
    # that YAML does not report; refuse them here with the place in the file
    if len(node.value) > MAX_NUMBER_DIGITS:
        raise InputLimitError(f"a number written with {len(node.value)} characters; at most "
                              f"{MAX_NUMBER_DIGITS}", node.start_mark)
    return yaml.constructor.SafeConstructor.construct_yaml_int(loader, node)


def _construct_mapping(loader, node, deep=False):
    loader.flatten_mapping(node)
    mapping, written = {}, {}
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node, deep=True)
        try:
            duplicate = key in mapping
        except TypeError:
            raise yaml.constructor.ConstructorError(
                None, None, f"a key must be a name, got {show(key)}", key_node.start_mark
            ) from None
        if duplicate:
            text = getattr(key_node, "value", key)
            if text != written[key]:
                # YAML 1.1 reads yes/no/on/off as booleans, which equal 1 and 0
                problem = (f"key {show(text)} reads as {show(key)}, the same as the earlier "
                           f"key {show(written[key])}")
            else:
                problem = f"duplicate key {show(key)}"
            raise yaml.constructor.ConstructorError(None, None, problem, key_node.start_mark)
        mapping[key] = loader.construct_object(value_node, deep=True)
        written[key] = getattr(key_node, "value", key)
    return mapping


_StrictLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG,
                              _construct_mapping)
_StrictLoader.add_constructor("tag:yaml.org,2002:int", _construct_int)
