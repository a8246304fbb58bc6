"""Exceptions and warnings shared by the whole package.

Every user mistake raises :class:`InputError` (a ``ValueError``) whose message names the
item at fault (file, line, field or parameter), what was expected and, where one exists,
the fix. The command line prints that message on one line and exits with code 2.
A solver that cannot converge raises :class:`ConvergenceError` (exit code 3: the tool failed).
"""

from __future__ import annotations

__all__ = [
    "InputError",
    "ConvergenceError",
    "PqcalcWarning",
    "ClippingWarning",
    "where",
]


class InputError(ValueError):
    """A user-supplied value, file or option is not what pqcalc expects."""


class ConvergenceError(RuntimeError):
    """A numerical method did not converge; the message says what was tried."""


class PqcalcWarning(UserWarning):
    """Base class of pqcalc's warnings (results are produced, but read them with care)."""


class ClippingWarning(PqcalcWarning):
    """A record shows flat tops at its extremes: the recorder probably clipped."""


def where(path: object = None, line: int | None = None, field: str | None = None) -> str:
    """Format a location prefix ``file:line: field:`` for error messages.

    >>> where("cap.csv", 12, "current")
    'cap.csv:12: current: '
    >>> where(field="fixtures.a.power_w")
    'fixtures.a.power_w: '
    """
    parts = []
    if path is not None:
        parts.append(str(path) if line is None else f"{path}:{line}")
    if field:
        parts.append(field)
    return "".join(p + ": " for p in parts)
