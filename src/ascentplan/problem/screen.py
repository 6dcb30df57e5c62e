"""Limits on the size and content of a problem, checked before any value is read.

A problem file may come from anywhere; these limits keep a malformed or hostile one
from costing more time or memory than a normal one, and keep text that cannot be
written (a NUL, a lone surrogate) or shown (a terminal escape) out of the results. The
YAML reader counts against the same limits while it builds the document
(:class:`~ascentplan.problem.reader._StrictLoader`), so an alias bomb or a deep nest is
refused before it is expanded; :func:`screen` checks an already-parsed dict.

The example problems use about 200 values, nest 5 deep and have no list longer than 10,
so every limit leaves a wide margin for real problems.
"""

from __future__ import annotations

import unicodedata
from typing import Any

from ascentplan.problem.units import printable, show

#: the largest problem file [bytes] (1 MiB); the examples are 2 to 3 kB
MAX_FILE_BYTES = 1_048_576
#: the deepest nesting of mappings and lists, the top mapping being level 1 (the
#: examples reach 5: atmosphere > altitude > values > one value)
MAX_DEPTH = 16
#: the most aliases (``*name``) a YAML file may use
MAX_ALIASES = 16
#: the most values a problem may hold, each use of an alias counting its whole content
MAX_NODES = 50_000
#: the most entries of one list or mapping: the longest table a problem may hold
MAX_ENTRIES = 10_000
#: the longest text value [characters]; ``description`` may be longer
MAX_TEXT = 1_000
MAX_DESCRIPTION = 10_000
#: the longest number a YAML file may write [digits]; a float has 17 significant digits
MAX_NUMBER_DIGITS = 4_000
#: ``name`` names the results folder (with a suffix such as ``-sweep-max_q_alpha`` for a
#: study); common file systems allow 255 bytes per name, so the name gets half
MAX_NAME_CHARS = 64
MAX_NAME_BYTES = 128
#: the most messages a problem reports, and the longest message [characters]
MAX_MESSAGES = 100
MAX_MESSAGE = 1_000

#: device names that Windows reserves whatever the extension (common practice)
_RESERVED_NAMES = frozenset(["CON", "PRN", "AUX", "NUL", *(f"COM{i}" for i in range(10)),
                             *(f"LPT{i}" for i in range(10))])
#: characters that Windows refuses in a file name; '/' and '\\' separate folders
_FORBIDDEN_IN_NAMES = '<>:"|?*'
#: control characters that text may hold: tab and line breaks
_ALLOWED_CONTROLS = frozenset("\t\n\r")


def at(path: str, text: str) -> str:
    """A message about the value at key ``path`` ("" for the whole problem)."""
    return f"{path}: {text}" if path else text


def too_deep(path: str) -> str:
    return at(path, f"nested more than {MAX_DEPTH} levels deep (mappings and lists inside "
                    f"each other); a problem needs about 5")


def too_many_values(path: str) -> str:
    return at(path, f"the problem holds more than {MAX_NODES} values (an alias counts its "
                    f"whole content each time it is used); refused before reading further")


def too_many_aliases(path: str) -> str:
    return at(path, f"more than {MAX_ALIASES} aliases (*name); a problem file needs few or "
                    f"none")


def too_many_entries(path: str, count: int) -> str:
    return at(path, f"has {count} entries; a list or mapping (a table) may have at most "
                    f"{MAX_ENTRIES}")


def screen(data: Any) -> list[str]:
    """Faults of a parsed problem beyond the input limits, one message each.

    Walks the whole document once, without recursion, and stops at the first value
    past :data:`MAX_NODES` (so a structure that refers to itself is refused too).

    Parameters
    ----------
    data : object
        The parsed problem (a dict of dicts, lists, text and numbers).

    Returns
    -------
    list of str
        Empty when the problem is within every limit.
    """
    faults: list[str] = []
    stack = [(data, "", 1)]
    count = 0
    while stack:
        value, path, depth = stack.pop()
        count += 1
        if count > MAX_NODES:
            faults.append(too_many_values(""))
            break
        if depth > MAX_DEPTH:
            faults.append(too_deep(path))
        elif isinstance(value, dict):
            faults.extend(_screen_mapping(value, path, depth, stack))
        elif isinstance(value, (list, tuple, set, frozenset)):
            if len(value) > MAX_ENTRIES:
                faults.append(too_many_entries(path, len(value)))
                continue
            stack.extend((item, f"{path}[{i}]", depth + 1)
                         for i, item in reversed(list(enumerate(value))))
        elif isinstance(value, (str, bytes)) and path != "name":
            # the name has stricter rules of its own (see name_fault)
            fault = _text_fault(value, MAX_DESCRIPTION if path == "description" else MAX_TEXT)
            if fault:
                faults.append(at(path, fault))
    return faults


def _screen_mapping(value: dict, path: str, depth: int, stack: list) -> list[str]:
    """Faults of one mapping's size and keys; its values go onto ``stack``."""
    if len(value) > MAX_ENTRIES:
        return [too_many_entries(path, len(value))]
    faults = []
    children = []
    for key, item in value.items():
        label = key if isinstance(key, str) and len(key) <= 80 else show(key)
        child = f"{path}.{label}" if path else label
        if isinstance(key, str):
            fault = _text_fault(key, MAX_TEXT)
            if fault:
                faults.append(at(child, f"the key {fault}"))
                continue
        children.append((item, child, depth + 1))
    stack.extend(reversed(children))
    return faults


def _text_fault(text: str | bytes, limit: int) -> str | None:
    """What is wrong with a text value, or None: its length, a control character (other
    than a tab or a line break), a lone surrogate."""
    if len(text) > limit:
        return f"is {len(text)} characters long; at most {limit}"
    if isinstance(text, bytes) or text.isprintable():
        return None
    for c in text:
        category = unicodedata.category(c)
        if category == "Cs":
            return (f"holds a lone surrogate {show(c)}, which is not a character and "
                    f"cannot be written to a file")
        if category == "Cc" and c not in _ALLOWED_CONTROLS:
            return (f"holds the control character {show(c)}; text may hold tabs and line "
                    f"breaks but no other control characters")
    return None


def name_fault(name: str) -> str | None:
    """Which folder-naming rule ``name`` breaks, or None.

    The name names the results folder, so it must be a name that every common file
    system (ext4, APFS, NTFS, FAT) accepts and that means no other folder (common
    practice): printable, no path separator, none of Windows' forbidden characters or
    device names, no trailing dot or space, not ``.`` or ``..``, not too long.
    """
    if not name.strip():
        return "it has no visible character"
    if len(name) > MAX_NAME_CHARS:
        return f"it is {len(name)} characters long; at most {MAX_NAME_CHARS}"
    for c in name:
        if unicodedata.category(c) == "Cs":
            return f"it holds a lone surrogate {show(c)}, which is not a character"
        if c == "\x00":
            return "it holds a NUL character, which ends a file name early"
        if not c.isprintable():
            return f"it holds the non-printing character {show(c)}"
        if c in "/\\":
            return f"it holds {show(c)}, which separates folders in a path"
        if c in _FORBIDDEN_IN_NAMES:
            return f"it holds {show(c)}, which Windows does not allow in file names"
    if len(name.encode("utf-8")) > MAX_NAME_BYTES:
        return f"it takes {len(name.encode('utf-8'))} bytes in UTF-8; at most {MAX_NAME_BYTES}"
    if name in (".", ".."):
        return "'.' and '..' name the current and the parent folder"
    if name != name.strip():
        return "it starts or ends with a space"
    if name.endswith("."):
        return "it ends with a dot, which Windows drops"
    if name.split(".")[0].strip().upper() in _RESERVED_NAMES:
        return f"{name.split('.')[0]!r} is a device name that Windows reserves"
    return None


def tidy_messages(messages) -> list[str]:
    """Messages fit to print: non-printing characters escaped, each at most
    :data:`MAX_MESSAGE` characters, at most :data:`MAX_MESSAGES` of them."""
    messages = list(messages)
    out = []
    for message in messages[:MAX_MESSAGES]:
        text = printable(str(message))
        if len(text) > MAX_MESSAGE:
            text = text[:MAX_MESSAGE - 3] + "..."
        out.append(text)
    if len(messages) > MAX_MESSAGES:
        out.append(f"... and {len(messages) - MAX_MESSAGES} more faults")
    return out
