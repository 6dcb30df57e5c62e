"""The grammar of the unit part of a problem-file quantity, checked before pint reads it.

A unit is written with unit names, ``*``, ``/``, a space for a product, ``^`` or ``**``
with a small whole-number exponent, parentheses, and the number 1 (as in ``1/s``)::

    unit     := product
    product  := power (("*" | "/" | " ") power)*
    power    := factor [("^" | "**") exponent]
    factor   := NAME | "1" | "(" product ")"
    exponent := ["-" | "+"] DIGITS          with |exponent| <= MAX_EXPONENT

pint evaluates its unit expressions as arithmetic, so a stray operator, an unmatched
bracket, a number or a huge exponent reached it as an exception of its tokenizer or
evaluator, or as an endless power (``9**9**9``). Anything outside this grammar is
refused here with a reason in words, so pint only ever sees a short, well-formed product
of known names.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from functools import lru_cache

#: the longest unit part of a value [characters]; the longest an example writes is 9
MAX_UNIT_LENGTH = 64
#: the largest magnitude of an exponent; units of the trade need at most 3 (m^3/s^2)
MAX_EXPONENT = 4

_TOKEN = re.compile(r"""
    (?P<space>\s+)
  | (?P<name>[^\W\d]\w*|%)
  | (?P<number>\d+(?:\.\d*)?(?:[eE][-+]?\d+)?|\.\d+(?:[eE][-+]?\d+)?)
  | (?P<power>\*\*|\^)
  | (?P<op>[*/()+-])
""", re.VERBOSE)


class UnitSyntaxError(ValueError):
    """A unit text outside the grammar; the text says why, in words for the user."""


def _tokens(text: str) -> list[tuple[str, str, int]]:
    """``(kind, text, position)`` of each token, spaces included (a space between two
    factors is a product, which the parser decides by their order alone)."""
    out, pos = [], 0
    while pos < len(text):
        match = _TOKEN.match(text, pos)
        if match is None:
            raise UnitSyntaxError(f"unexpected {text[pos]!r} at character {pos + 1} of the unit")
        kind = match.lastgroup
        out.append((kind, match.group(), pos))
        pos = match.end()
    return out


class _Parser:
    """Recursive descent over the tokens of one unit text; records the names it meets."""

    def __init__(self, text: str):
        self.tokens = [t for t in _tokens(text) if t[0] != "space"]
        self.at = 0
        self.names: list[str] = []

    def peek(self) -> tuple[str, str, int] | None:
        return self.tokens[self.at] if self.at < len(self.tokens) else None

    def take(self) -> tuple[str, str, int]:
        token = self.tokens[self.at]
        self.at += 1
        return token

    def product(self) -> bool:
        """One product; True when it holds a power (a bracket around it cannot take one)."""
        powered = self.power()
        while True:
            token = self.peek()
            if token is None or token[1] == ")":
                return powered
            if token[1] in ("*", "/"):
                self.take()
                following = self.peek()
                if following is None or following[1] == ")":
                    raise UnitSyntaxError(f"{token[1]!r} at character {token[2] + 1} needs a "
                                          f"unit after it")
            elif not (token[0] in ("name", "number") or token[1] == "("):
                raise UnitSyntaxError(f"unexpected {token[1]!r} at character {token[2] + 1} "
                                      f"of the unit")
            powered = self.power() or powered

    def power(self) -> bool:
        powered = self.factor()
        token = self.peek()
        if token is None or token[0] != "power":
            return powered
        self.take()
        if powered:
            raise UnitSyntaxError("a power of a power; write the exponent once")
        self.exponent(token[1])
        following = self.peek()
        if following is not None and following[0] == "power":
            raise UnitSyntaxError("a power of a power; write the exponent once")
        return True

    def factor(self) -> bool:
        token = self.peek()
        if token is None:
            raise UnitSyntaxError("a unit is missing where one was expected")
        self.take()
        kind, text, pos = token
        if kind == "name":
            self.names.append(text)
            return False
        if kind == "number":
            if text != "1":
                raise UnitSyntaxError(f"the number {text!r} cannot stand in a unit; only 1 "
                                      f"can (as in '1/s')")
            return False
        if text == "(":
            powered = self.product()
            closing = self.peek()
            if closing is None:
                raise UnitSyntaxError(f"'(' at character {pos + 1} without its ')'")
            self.take()
            return powered
        if text == ")":
            raise UnitSyntaxError(f"')' at character {pos + 1} without its '('")
        raise UnitSyntaxError(f"unexpected {text!r} at character {pos + 1} of the unit")

    def exponent(self, operator: str) -> None:
        sign = ""
        token = self.peek()
        if token is not None and token[1] in ("-", "+"):
            sign = self.take()[1]
            token = self.peek()
        if token is None:
            raise UnitSyntaxError(f"{operator!r} at the end needs an exponent")
        self.take()
        text = sign + token[1]
        whole = token[0] == "number" and token[1].isdigit()
        if not whole or abs(int(token[1])) > MAX_EXPONENT:
            raise UnitSyntaxError(f"the exponent {text[:20]!r} is not a whole number from "
                                  f"-{MAX_EXPONENT} to {MAX_EXPONENT}")


@lru_cache(maxsize=1024)
def unit_names(text: str, is_unit_name: Callable[[str], bool]) -> tuple[str, ...]:
    """Check a unit text against the grammar and return the unit names it uses.

    Parameters
    ----------
    text : str
        The unit part of a value, e.g. ``"m^3/s^2"`` or ``"kPa deg"``.
    is_unit_name : callable
        ``is_unit_name(name)``: whether the unit registry knows a name.

    Returns
    -------
    tuple of str
        The names, in order.

    Raises
    ------
    UnitSyntaxError
        For a text longer than :data:`MAX_UNIT_LENGTH`, outside the grammar, or naming
        a unit the registry does not know (the message then starts ``unknown unit``).
    """
    if len(text) > MAX_UNIT_LENGTH:
        raise UnitSyntaxError(f"the unit is longer than {MAX_UNIT_LENGTH} characters")
    parser = _Parser(text)
    if not parser.tokens:
        raise UnitSyntaxError("no unit given")
    parser.product()
    if parser.peek() is not None:
        _, stray, pos = parser.peek()
        raise UnitSyntaxError(f"')' at character {pos + 1} without its '('" if stray == ")"
                              else f"unexpected {stray!r} at character {pos + 1} of the unit")
    for name in parser.names:
        if not is_unit_name(name):
            raise UnitSyntaxError(f"unknown unit {name!r}")
    return tuple(parser.names)
