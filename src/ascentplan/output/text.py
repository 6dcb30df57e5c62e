"""Text from a user's input made safe to show on a terminal or in a figure."""

from __future__ import annotations


def printable(text) -> str:
    """``text`` with every character that is not printable written as its escape.

    A control character echoed to a terminal can move the cursor, recolour or retitle
    it, or hide the rest of a message; a NUL or a lone surrogate cannot be drawn in a
    figure. They become ``\\x00``, ``\\x1b``, ``\\u202e``, ``\\udc80`` and the like;
    spaces and printable letters of any script stay as they are.

    Parameters
    ----------
    text : object
        Converted with :class:`str` first.

    Returns
    -------
    str
        One line: a line break is escaped too.
    """
    text = str(text)
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii")
                   for ch in text)


def printable_lines(text) -> str:
    """Each line of a multi-line ``text`` through :func:`printable`; line breaks kept."""
    return "\n".join(printable(line) for line in str(text).split("\n"))
