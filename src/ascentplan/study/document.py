"""Changes of a trade study applied to the problem document (the parsed problem file) and
read back by the problem loader, so that a changed value is read, converted and checked
exactly as the same value written in the file would be.

A change key is a problem-file key path: ``limits.max_dynamic_pressure``,
``vehicle.stages[0].isp_vacuum``, ``vehicle.payload_mass``. A change value is anything
the file could hold there: text with a unit (``"30 kPa"``, ``"296 s"``) or a plain
number, which the loader reads in its SI unit for the key (for a limit, the ``si_unit``
of its :class:`~ascentplan.problem.limits.LimitSpec`: Pa, g0, Pa rad, m).

Quantities that the file derives follow a change because the loader derives them again:
a stage written with a structural ratio keeps it when its propellant mass changes (the
dry mass follows), a stage written with a thrust-to-weight ratio keeps it when the masses
change (the thrust follows).
"""

from __future__ import annotations

import copy
import numbers
import re
from typing import Any

import pint

from ascentplan.problem.limits import LIMITS
from ascentplan.problem.loader import ProblemError, problem_from_dict, read_problem_file
from ascentplan.problem.model import Problem
from ascentplan.problem.units import PLAUSIBLE, UnitError, describe_unit, to_si, ureg
from ascentplan.study.errors import StudyError

__all__ = ["apply_changes", "changed_problem", "check_keys", "checked_problem", "file_number",
           "holds_whole_number", "is_number", "parse_key", "pint_unit", "plain_unit",
           "read_document", "show_path", "unit_of_text"]

_STEP = re.compile(r"^([A-Za-z_][A-Za-z0-9_]*)((?:\[\d+\])*)$")
#: text that starts with a number is a quantity ('90 kN'); other text is a name ('booster')
_QUANTITY_TEXT = re.compile(r"^\s*[-+]?\.?\d")


# --------------------------------------------------------------------------------------
# key paths


def parse_key(key: Any) -> list:
    """'vehicle.stages[1].thrust_vacuum' -> ['vehicle', 'stages', 1, 'thrust_vacuum']."""
    if not isinstance(key, str) or not key:
        raise StudyError(f"{key!r}: a change key must be a dotted path such as "
                         f"'limits.max_dynamic_pressure' or 'vehicle.stages[0].dry_mass'")
    steps: list = []
    for part in key.split("."):
        match = _STEP.match(part)
        if match is None:
            raise StudyError(f"{key}: cannot read {part!r} as a key name with optional "
                             f"[index]; expected a path such as 'vehicle.stages[0].dry_mass'")
        steps.append(match.group(1))
        steps.extend(int(i) for i in re.findall(r"\[(\d+)\]", match.group(2)))
    return steps


def show_path(steps) -> str:
    """['vehicle', 'stages', 1] -> 'vehicle.stages[1]'."""
    text = ""
    for step in steps:
        text += f"[{step}]" if isinstance(step, int) else (f".{step}" if text else step)
    return text


def is_number(value: Any) -> bool:
    """A real number that is not a yes/no value."""
    return isinstance(value, numbers.Real) and not isinstance(value, bool)


def _describe(node: Any) -> str:
    if node is None:
        return "nothing"
    if isinstance(node, bool):
        return f"the yes/no value {node}"
    if isinstance(node, str):
        return f"the text {node!r}"
    if isinstance(node, dict):
        return "a mapping"
    if isinstance(node, list):
        return f"a list of {len(node)}"
    return f"the number {node!r}" if is_number(node) else f"a {type(node).__name__}"


# --------------------------------------------------------------------------------------
# walking the document


def _entry(node: Any, key: str, steps: list, depth: int) -> Any:
    """``node[steps[depth]]`` for an index step; StudyError when there is no such entry."""
    step, here = steps[depth], show_path(steps[:depth])
    if not isinstance(node, list):
        raise StudyError(f"{key}: {here} holds {_describe(node)}, not a list; [{step}] "
                         f"cannot index it")
    if step >= len(node):
        count = len(node)
        held = (f"has {count} entr{'y' if count == 1 else 'ies'} (0 to {count - 1})"
                if count else "has no entries")
        raise StudyError(f"{key}: index {step} is out of range, {here} {held}")
    return node[step]


def _mapping(node: Any, key: str, steps: list, depth: int) -> dict:
    if not isinstance(node, dict):
        here = show_path(steps[:depth]) or "the problem"
        raise StudyError(f"{key}: {here} holds {_describe(node)}, which has no key "
                         f"{steps[depth]!r}")
    return node


def _parent(document: dict, key: str, steps: list, create: bool):
    """The mapping or list holding the last step of ``key``.

    Where a mapping on the way lacks the next key: with ``create``, an empty mapping is
    made (a section the file leaves out); without, the key is set to None, which the
    loader reads as absent while still checking its name, and None is returned.
    """
    node: Any = document
    for depth, step in enumerate(steps[:-1]):
        if isinstance(step, int):
            node = _entry(node, key, steps, depth)
            continue
        node = _mapping(node, key, steps, depth)
        if node.get(step) is None:
            if not create:
                node[step] = None
                return None
            if isinstance(steps[depth + 1], int):
                _entry([], key, steps, depth + 1)
            node[step] = {}
        node = node[step]
    return node


def _current(parent: Any, key: str, steps: list) -> Any:
    """The value the document holds at ``key`` (None when absent)."""
    last = len(steps) - 1
    if isinstance(steps[last], int):
        return _entry(parent, key, steps, last)
    return _mapping(parent, key, steps, last).get(steps[last])


def _check_varied(key: str, current: Any) -> None:
    """A study varies numbers: plain, or text with a unit; not names, lists or sections."""
    if current is None or is_number(current):
        return
    if isinstance(current, str) and _QUANTITY_TEXT.match(current):
        return
    raise StudyError(f"{key}: is not a number a study can vary (it holds "
                     f"{_describe(current)})")


def _mark(document: dict, key: str) -> None:
    """Make ``key`` a key of ``document`` without changing what the loader reads."""
    steps = parse_key(key)
    parent = _parent(document, key, steps, create=False)
    if parent is None:
        return
    _check_varied(key, _current(parent, key, steps))
    if isinstance(steps[-1], str):
        parent.setdefault(steps[-1], None)


def _put(document: dict, key: str, value: Any) -> None:
    steps = parse_key(key)
    parent = _parent(document, key, steps, create=True)
    _check_varied(key, _current(parent, key, steps))
    parent[steps[-1]] = value


# --------------------------------------------------------------------------------------
# reading back with the loader


def _ancestors(key: str) -> list:
    steps = parse_key(key)
    return [show_path(steps[:n]) for n in range(len(steps) - 1, 0, -1)]


def _on_key(message: str, keys) -> str:
    """A loader message about a key above a change key (an unknown section or list name)
    told about the change key itself."""
    for key in keys:
        for above in _ancestors(key):
            if message.startswith(above + ": "):
                return f"{key}: {message[len(above) + 2:]}"
    return message


def _load(document: dict, source_path: str | None, keys=()) -> Problem:
    try:
        return problem_from_dict(document, source_path)
    except ProblemError as exc:
        raise StudyError("\n".join(_on_key(m, keys) for m in exc.messages)) from None


def read_document(path) -> tuple[dict, Problem]:
    """The problem document of a file and the problem the loader reads from it.

    Raises
    ------
    ProblemError
        For a file the loader refuses, as for any problem file.
    """
    document = read_problem_file(path)
    return document, problem_from_dict(copy.deepcopy(document), source_path=str(path))


def _document_of(base: Any, source_path: str | None) -> tuple[dict, str | None]:
    if isinstance(base, Problem):
        from ascentplan.study.problem_file import problem_document

        return problem_document(base), source_path or base.source_path
    if isinstance(base, dict):
        return base, source_path
    raise StudyError(f"problem: expected a problem document (the parsed problem file) or a "
                     f"Problem, got {type(base).__name__}")


def checked_problem(document: dict, keys, source_path: str | None = None) -> Problem:
    """The problem of ``document``, once each key is known to name a number of the
    problem file that a study can vary.

    Raises
    ------
    StudyError
        Naming the key: an unknown key (the loader's message, with its suggestion), an
        index out of range, or a key that holds a name, a list or a section.
    """
    marked = copy.deepcopy(document)
    keys = list(keys)
    for key in keys:
        _mark(marked, key)
    return _load(marked, source_path, keys)


def check_keys(base, keys, source_path: str | None = None) -> None:
    """Raise :class:`StudyError` naming the keys that are not numbers of the problem file
    a study can vary.

    Parameters
    ----------
    base : dict or Problem
        The problem document (see :func:`apply_changes`).
    keys : iterable of str
        Problem-file key paths.
    source_path : str, optional
        The file of the document, for the loader's messages.
    """
    document, source_path = _document_of(base, source_path)
    checked_problem(document, keys, source_path)


def holds_whole_number(problem: Problem, key: str) -> bool:
    """Whether the problem holds a whole number where ``key`` points (mesh.nodes_per_phase)."""
    node: Any = problem
    for step in parse_key(key):
        try:
            node = node[step] if isinstance(step, int) else getattr(node, step)
        except (AttributeError, IndexError, KeyError, TypeError):
            return False
    return isinstance(node, numbers.Integral) and not isinstance(node, bool)


def _as_written(problem: Problem, key: str, value: Any) -> Any:
    """``value`` as a file would hold it: a whole number where the loader reads one."""
    if not is_number(value):
        return value
    if isinstance(value, numbers.Integral):
        return int(value)
    if float(value).is_integer() and holds_whole_number(problem, key):
        return int(value)
    return float(value)


def changed_problem(document: dict, problem: Problem, changes: dict,
                    source_path: str | None = None) -> Problem:
    """The problem read from ``document`` with ``changes`` written into it.

    ``problem`` is what the loader reads from the unchanged document, and the keys are
    already checked (:func:`checked_problem`).

    Raises
    ------
    StudyError
        With the loader's messages when it refuses the changed document.
    """
    changed = copy.deepcopy(document)
    for key, value in changes.items():
        _put(changed, key, _as_written(problem, key, value))
    return _load(changed, source_path)


def apply_changes(base, changes: dict, source_path: str | None = None) -> Problem:
    """The problem with the values of one study point.

    Parameters
    ----------
    base : dict or Problem
        The problem document, as :func:`ascentplan.problem.loader.read_problem_file`
        returns it; or a :class:`~ascentplan.problem.Problem`, which is first written as
        a document of plain SI numbers (see
        :func:`ascentplan.study.problem_file.problem_document`).
    changes : dict
        Problem-file key path -> value as the file could hold it: text with a unit
        (``"30 kPa"``) or a plain number in the loader's unit for the key, e.g.
        ``{"limits.max_dynamic_pressure": 30000.0, "vehicle.stages[0].dry_mass": 420.0}``.
    source_path : str, optional
        The file of the document, for the loader's messages (default: the problem's).

    Returns
    -------
    Problem

    Raises
    ------
    StudyError
        For an unknown key path or one that holds no number (the message names it), and
        for a changed document the loader refuses (its messages, e.g.
        ``vehicle.stages[0].dry_mass: must be > 0 kg, got -50.0``).
    """
    if not isinstance(changes, dict):
        raise StudyError(f"changes: expected a mapping of key paths to values, got "
                         f"{changes!r}")
    document, source_path = _document_of(base, source_path)
    problem = checked_problem(document, list(changes), source_path)
    return changed_problem(document, problem, changes, source_path)


def file_number(document: dict, key: str) -> float | None:
    """The number the problem file gives at ``key``, as the loader reads a plain number
    there (None when the file gives none).

    Text with a unit is converted to the unit of the key's plain numbers: a limit's
    ``si_unit``, otherwise the SI base units of the quantity.
    """
    steps = parse_key(key)
    node: Any = document
    for step in steps:
        if isinstance(step, int):
            node = node[step] if isinstance(node, list) and step < len(node) else None
        else:
            node = node.get(step) if isinstance(node, dict) else None
        if node is None:
            return None
    if is_number(node):
        return node
    if not isinstance(node, str):
        raise StudyError(f"{key}: is not a number a study can vary (it holds "
                         f"{_describe(node)})")
    try:
        if steps[0] == "limits" and len(steps) == 2 and steps[1] in LIMITS:
            return to_si(node, LIMITS[steps[1]].si_unit, key)
        return float(ureg.Quantity(node).to_base_units().magnitude)
    except (UnitError, pint.errors.PintError, ValueError, TypeError, AttributeError):
        raise StudyError(f"{key}: cannot read {node!r} as a number with a unit") from None


# --------------------------------------------------------------------------------------
# units of a key

#: a quantity no problem-file key holds: the loader's refusal of it names the quantity the
#: key holds
_PROBE = "1 mol"
#: the unit the loader reads plain numbers in, by what its messages call the quantity
_UNIT_OF_KIND = {describe_unit(unit)[0]: unit for unit in PLAUSIBLE}
_NUMBER_AND_UNIT = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*(.*?)\s*$")


def pint_unit(unit: str) -> str:
    """A unit as written in a file or a table ('kPa deg', '%') as pint reads it
    ('kPa*deg', 'percent')."""
    return unit.strip().replace("%", "percent").replace(" ", "*")


def unit_of_text(value: Any) -> str:
    """The unit a value is written in: ``'km'`` of ``'200km'``, ``''`` for a plain number
    or text without a unit."""
    if not isinstance(value, str):
        return ""
    match = _NUMBER_AND_UNIT.match(value)
    return match.group(1) if match else ""


def plain_unit(document: dict, key: str, source_path: str | None = None) -> str | None:
    """The unit the problem loader reads a plain number at ``key`` in.

    A limit reads plain numbers in its ``si_unit``; any other key in the SI unit of its
    quantity, which is asked of the loader itself: a value of a quantity no key holds is
    written at the key, and the loader's refusal names the quantity expected.

    Returns
    -------
    str or None
        A pint unit text (``'m'``, ``'s'``, ``'m/s'``, ``''`` for a plain number), or None
        when the loader's messages do not name one.
    """
    steps = parse_key(key)
    if steps[0] == "limits" and len(steps) == 2 and steps[1] in LIMITS:
        return LIMITS[steps[1]].si_unit
    probe = copy.deepcopy(document)
    try:
        _put(probe, key, _PROBE)
        problem_from_dict(probe, source_path)
    except StudyError:
        return None
    except ProblemError as exc:
        expected = re.compile(re.escape(key) + r": expected (a plain number|[^(,]+?)(?: \(|,)")
        for message in exc.messages:
            match = expected.match(message)
            if match and match.group(1) in _UNIT_OF_KIND:
                return _UNIT_OF_KIND[match.group(1)]
            if message.startswith(f"{key}: expected a whole number"):
                return ""
    return None
