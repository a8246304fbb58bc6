"""Read and validate an installation file (TOML, written by hand).

Errors name the file, the line where the field stands (found by a small scan of the TOML
text, since the standard TOML reader keeps no positions), the field path and what was
expected: ``site.toml:42: panels[1].circuits[3].phase: expected one of L1, L2, L3, got 'L4'``.

The layout of the file is documented by the commented example
``demo_installations/harbour_school.toml``; the dataclasses of
:mod:`pqcalc.installation` hold what it says.
"""

from __future__ import annotations

import re
import sys
from collections.abc import Collection
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import InputError
from .text import has_control, printable, shown

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["read_toml", "Fields", "Bounds", "MAX_FILE_BYTES"]

#: The largest installation file read [bytes]: written by hand, a large campus is well
#: under 1 MB; past this the file is not an installation file.
MAX_FILE_BYTES = 16 * 1024 * 1024

# a key: bare (A-Za-z0-9_-) or quoted ("..." with escapes, '...' literal), dotted
_KEYPART = r"""(?:[A-Za-z0-9_\-]+|"(?:[^"\\]|\\.)*"|'[^']*')"""
_DOTTED = rf"{_KEYPART}(?:[ \t]*\.[ \t]*{_KEYPART})*"
_HEADER = re.compile(rf"^\s*(\[\[?)\s*({_DOTTED})\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(rf"^\s*({_DOTTED})\s*=")
_PART = re.compile(_KEYPART)
# the last step of a field path: ".name", ".\"quoted.name\"" or "[index]"
_LAST_STEP = re.compile(r"(\.[^.\[\]]+|\[\d+\])$")


def _split_key(k: str) -> list[str]:
    """The parts of a dotted key, quotes removed (``a."b.c"`` -> ``a``, ``b.c``)."""
    parts = []
    for m in _PART.finditer(k):
        p = m.group(0)
        if p[:1] in "\"'":
            p = p[1:-1]
        parts.append(p)
    return parts or [k.strip()]


@dataclass(frozen=True)
class Bounds:
    """The physically sensible range of a numeric field, declared once beside the field
    (``field(metadata={"bounds": Bounds(...)})`` or a reader's table) with its reason.

    ``lo_open``: the lower end is excluded (``> lo``); ``whole``: a whole number.
    """

    lo: float
    hi: float
    why: str
    lo_open: bool = False
    whole: bool = False

    def contains(self, v: float) -> bool:
        above = v > self.lo if self.lo_open else v >= self.lo
        return above and v <= self.hi and (not self.whole or v == int(v))

    def expected(self) -> str:
        kind = "a whole number" if self.whole else "a number"
        lo = f"above {self.lo:g}" if self.lo_open else f"from {self.lo:g}"
        return f"{kind} {lo} to {self.hi:g} ({self.why})"


def _line_index(text: str) -> dict[str, int]:
    """Map field paths like ``panels[0].circuits[2].phase`` to 1-based line numbers.

    Handles table headers, arrays of tables, dotted keys and the first line of inline
    tables/arrays; entries inside inline arrays (``fixtures = [{...}, {...}]``) map to the
    line of each ``{`` where they start on their own line.
    """
    index: dict[str, int] = {}
    counters: dict[str, int] = {}
    prefix = ""
    inline_key: str | None = None
    inline_count = 0
    depth = 0
    for n, line in enumerate(text.splitlines(), start=1):
        stripped = line.split("#", 1)[0] if '"' not in line else line
        if depth > 0:
            if inline_key is not None and stripped.lstrip().startswith("{"):
                index.setdefault(f"{inline_key}[{inline_count}]", n)
                for km in re.finditer(r"([A-Za-z0-9_]+)\s*=", stripped):
                    index.setdefault(f"{inline_key}[{inline_count}].{km.group(1)}", n)
                inline_count += 1
            depth += stripped.count("[") - stripped.count("]")
            if depth <= 0:
                inline_key, depth = None, 0
            continue
        m = _HEADER.match(line)
        if m:
            parts = _split_key(m.group(2))
            path = ""
            for i, p in enumerate(parts):
                path = f"{path}.{p}" if path else p
                last = i == len(parts) - 1
                if last and m.group(1) == "[[":
                    c = counters.get(path, -1) + 1
                    counters[path] = c
                    # a new element resets the counters of arrays nested inside it
                    for k in [k for k in counters if k.startswith(path + "[")]:
                        del counters[k]
                    path = f"{path}[{c}]"
                elif path in counters:
                    path = f"{path}[{counters[path]}]"
            # nested arrays of tables are counted per parent element
            prefix = path
            index.setdefault(prefix, n)
            continue
        key_match = _KEY.match(line)
        if key_match:
            key = ".".join(_split_key(key_match.group(1)))
            full = f"{prefix}.{key}" if prefix else key
            index.setdefault(full, n)
            rest = line[key_match.end():]
            opened = rest.count("[") - rest.count("]") + rest.count("{") - rest.count("}")
            if opened > 0:
                depth = opened
                inline_key, inline_count = full, 0
                if rest.strip().startswith("[") and "{" in rest:
                    # first inline table on the same line
                    index.setdefault(f"{full}[0]", n)
                    inline_count = rest.count("{") - rest.count("}") + rest.count("}")
            elif rest.strip().startswith("[") and "{" in rest:
                for i in range(rest.count("{")):
                    index.setdefault(f"{full}[{i}]", n)
    return index


def read_toml(path: str | Path) -> tuple[dict, Fields]:
    """Parse a TOML file; return the data and a :class:`Fields` helper for validation.

    UTF-8 with or without a byte-order mark; nesting deeper than the reader can follow,
    and files past :data:`MAX_FILE_BYTES`, are refused with a one-line message.
    """
    p = Path(path)
    if not p.exists():
        raise InputError(f"{p}: no such file")
    if p.is_dir():
        raise InputError(f"{p}: is a directory; expected an installation file (.toml)")
    if p.stat().st_size > MAX_FILE_BYTES:
        raise InputError(f"{p}: {p.stat().st_size} bytes; expected an installation file "
                         f"under {MAX_FILE_BYTES // (1024 * 1024)} MB")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as e:
        line = raw[: e.start].count(b"\n") + 1
        raise InputError(f"{p}:{line}: not UTF-8 text; expected a TOML installation file "
                         "(save it as UTF-8)") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise InputError(f"{p}: not valid TOML: {printable(str(e), 200)}") from None
    except RecursionError:
        raise InputError(f"{p}: arrays or tables nested too deep for a TOML reader; expected "
                         "an installation file (a few levels of nesting)") from None
    if not data:
        raise InputError(f"{p}: the file is empty; expected [supply], [fixtures] and [[panels]]")
    fields = Fields(p, _line_index(text))
    _check_text(data, "", fields)
    return data, fields


#: The longest text a field may hold [characters] (notes included): past it, the value is
#: not something a person wrote for a report.
MAX_TEXT_CHARS = 10_000
#: The longest key [characters].
MAX_KEY_CHARS = 200


def _check_text(node: Any, path: str, fld: Fields) -> None:
    """Every key and text value of the document: no control characters (a line break or a
    tab in a text value is fine), nothing longer than a person writes. Text is shown on a
    terminal and in reports; it must never act on them."""
    if isinstance(node, dict):
        for k, v in node.items():
            f = f"{path}.{k}" if path else str(k)
            if len(k) > MAX_KEY_CHARS or has_control(k):
                raise fld.error(printable(f, 120), f"a field name of at most {MAX_KEY_CHARS} "
                                "printable characters")
            _check_text(v, f, fld)
    elif isinstance(node, list):
        for i, v in enumerate(node):
            _check_text(v, f"{path}[{i}]", fld)
    elif isinstance(node, str):
        fld.check_text(node, path, MAX_TEXT_CHARS, allow="\t\n\r")


class Fields:
    """Typed access to fields of a parsed TOML document with precise error messages."""

    def __init__(self, path: Path, index: dict[str, int]):
        self.path = path
        self.index = index

    def line(self, field: str) -> int | None:
        f = field
        while f:
            if f in self.index:
                return self.index[f]
            if "." not in f and "[" not in f:
                return None
            shorter = _LAST_STEP.sub("", f)
            if shorter == f:  # a name this scan cannot take apart: no line rather than a loop
                return None
            f = shorter
        return None

    def error(self, field: str, expected: str, got: Any = ...) -> InputError:
        ln = self.line(field)
        loc = f"{self.path}:{ln}" if ln else f"{self.path}"
        tail = "" if got is ... else f", got {shown(got)}"
        return InputError(f"{loc}: {printable(field, 120)}: expected {expected}{tail}")

    # --- typed getters -------------------------------------------------------------------
    def table(self, d: dict, key: str, field: str, required: bool = True) -> dict:
        v = d.get(key)
        if v is None:
            if required:
                raise self.error(field, "a table [" + field + "]", None)
            return {}
        if not isinstance(v, dict):
            raise self.error(field, "a table", v)
        return v

    def str_(self, d: dict, key: str, field: str, default: Any = ...,
             choices: Collection[str] | None = None, max_chars: int = 200) -> Any:
        """A text field: one of ``choices``, or free text of at most ``max_chars``
        characters without control characters (never a terminal escape sequence)."""
        if key not in d:
            if default is ...:
                raise self.error(field, "a value (required)" if not choices else
                                 "one of " + ", ".join(choices))
            return default
        v = d[key]
        if not isinstance(v, str):
            raise self.error(field, "text" if not choices else "one of " + ", ".join(choices), v)
        if choices is not None and v not in choices:
            raise self.error(field, "one of " + ", ".join(choices), v)
        return self.check_text(v, field, max_chars)

    def check_text(self, v: str, field: str, max_chars: int = 200, allow: str = "") -> str:
        """``v`` when it is free text pqcalc can show: at most ``max_chars`` characters, no
        control characters but those in ``allow`` (such as a line break in notes)."""
        if len(v) > max_chars:
            raise self.error(field, f"text of at most {max_chars} characters", v)
        if has_control(v, allow):
            raise self.error(field, "text without control characters (escape sequences, "
                             "NUL)", v)
        return v

    def num(self, d: dict, key: str, field: str, default: Any = ..., positive: bool = False,
            nonneg: bool = False, lo: float | None = None, hi: float | None = None,
            bounds: Bounds | None = None) -> Any:
        """A finite number within ``bounds`` (or the older ``positive``/``nonneg``/``lo``,
        ``hi``); ``default`` when the key is absent (``...``: required)."""
        if key not in d:
            if default is ...:
                what = bounds.expected() if bounds is not None else "a number"
                raise self.error(field, f"{what} (required)")
            return default
        v = d[key]
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise self.error(field, bounds.expected() if bounds is not None else "a number", v)
        try:
            x = float(v)
        except OverflowError:  # an integer past the float range
            x = float("inf") if v > 0 else float("-inf")
        if x != x or x in (float("inf"), float("-inf")):
            raise self.error(field, bounds.expected() if bounds is not None
                             else "a finite number", v)
        if bounds is not None and not bounds.contains(x):
            raise self.error(field, bounds.expected(), v)
        if positive and not x > 0:
            raise self.error(field, "a positive number", v)
        if nonneg and x < 0:
            raise self.error(field, "a number >= 0", v)
        if lo is not None and x < lo or hi is not None and x > hi:
            raise self.error(field, f"a number from {lo:g} to {hi:g}", v)
        return int(x) if bounds is not None and bounds.whole else x

    def count(self, d: dict, key: str, field: str, bounds: Bounds | None = None) -> int:
        what = "a whole number of fixtures >= 1" if bounds is None else bounds.expected()
        if key not in d:
            raise self.error(field, f"{what} (required)")
        v = d[key]
        if (isinstance(v, bool) or not isinstance(v, int) or v < 1
                or bounds is not None and not bounds.contains(v)):
            raise self.error(field, what, v)
        return int(v)

    def list_(self, d: dict, key: str, field: str, default: Any = ...) -> list:
        if key not in d:
            if default is ...:
                raise self.error(field, "a list (required)")
            return default
        v = d[key]
        if not isinstance(v, list):
            raise self.error(field, "a list", v)
        return v

    def unknown(self, d: dict, allowed: Collection[str], field: str) -> None:
        for k in d:
            if k not in allowed:
                f = f"{field}.{k}" if field else k
                raise self.error(f, "no such field here; known fields: "
                                 + ", ".join(sorted(allowed)))
