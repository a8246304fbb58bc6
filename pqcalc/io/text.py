"""Free text on its way into messages and outputs: never interpreted, never too long.

Text from a user's file (a project name, a column header, a field name, a value that could
not be read) reaches error messages, the terminal, CSV exports and figures. Here it is made
harmless once: control characters (terminal escape sequences among them) are shown escaped,
and anything long is cut, so that a message stays one readable line.
"""

from __future__ import annotations

import re
from typing import Any

__all__ = ["MESSAGE_TEXT_CHARS", "shown", "printable", "has_control", "quote_cell"]

#: The longest piece of user text an error message quotes [characters].
MESSAGE_TEXT_CHARS = 60

# C0 and C1 controls, DEL, and the bidirectional overrides that reorder a terminal line
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def has_control(s: str, allow: str = "") -> bool:
    """Whether ``s`` holds a control character (other than those in ``allow``)."""
    return any(ch not in allow for ch in _CONTROL.findall(s))


def printable(s: str, limit: int | None = None) -> str:
    """``s`` with every control character shown as an escape (``\\x1b``), cut to ``limit``
    characters (with an ellipsis) when given.

    >>> printable("red\\x1b[31m")
    'red\\\\x1b[31m'
    """
    out = _CONTROL.sub(lambda m: m.group(0).encode("unicode_escape").decode("ascii"), s)
    if limit is not None and len(out) > limit:
        out = out[: max(limit - 1, 1)] + "\u2026"
    return out


def shown(value: Any, limit: int = MESSAGE_TEXT_CHARS) -> str:
    """A value as an error message quotes it: its ``repr``, control characters escaped,
    cut to ``limit`` characters.

    >>> shown("x" * 100, 10)
    "'xxxxxxxx\\u2026"
    """
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) > 10**15:
        digits = len(str(abs(value)))
        return f"{'-' if value < 0 else ''}an integer of {digits} digits"
    return printable(repr(value), limit)


# text an error may quote from a data file: a short number-like cell, nothing else (an
# error must never print a file's content: the file may not be what it claims to be)
_NUMBERISH = re.compile(r"[-+0-9.,eE \t]{1,24}|[-+]?(nan|inf|infinity)", re.IGNORECASE)


def quote_cell(cell: str) -> str:
    """A cell of a data file as an error message may show it: a number-like cell as
    written, otherwise only what kind of cell it is.

    >>> quote_cell("1,5"), quote_cell("root:x:0:0"), quote_cell(" ")
    ("'1,5'", 'text (10 characters)', 'an empty cell')
    """
    c = cell.strip()
    if not c:
        return "an empty cell"
    if _NUMBERISH.fullmatch(c):
        return repr(c)
    return f"text ({len(c)} characters)"
