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
from pathlib import Path
from typing import Any

from ..errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["read_toml", "Fields"]

_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-\"'.]+)\s*=")


def _split_key(k: str) -> list[str]:
    return [p.strip().strip("\"'") for p in k.split(".")]


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
    """Parse a TOML file; return the data and a :class:`Fields` helper for validation."""
    p = Path(path)
    if not p.exists():
        raise InputError(f"{p}: no such file")
    if p.is_dir():
        raise InputError(f"{p}: is a directory; expected an installation file (.toml)")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(f"{p}: not UTF-8 text; expected a TOML installation file") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise InputError(f"{p}: not valid TOML: {e}") from None
    if not data:
        raise InputError(f"{p}: the file is empty; expected [supply], [fixtures] and [[panels]]")
    return data, Fields(p, _line_index(text))


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
            f = re.sub(r"(\.[^.\[\]]+|\[\d+\])$", "", f)
        return None

    def error(self, field: str, expected: str, got: Any = ...) -> InputError:
        ln = self.line(field)
        loc = f"{self.path}:{ln}" if ln else f"{self.path}"
        tail = "" if got is ... else f", got {got!r}"
        return InputError(f"{loc}: {field}: expected {expected}{tail}")

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
             choices: Collection[str] | None = None) -> Any:
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
        return v

    def num(self, d: dict, key: str, field: str, default: Any = ..., positive: bool = False,
            nonneg: bool = False, lo: float | None = None, hi: float | None = None) -> Any:
        if key not in d:
            if default is ...:
                raise self.error(field, "a number (required)")
            return default
        v = d[key]
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise self.error(field, "a number", v)
        v = float(v)
        if v != v or v in (float("inf"), float("-inf")):
            raise self.error(field, "a finite number", v)
        if positive and not v > 0:
            raise self.error(field, "a positive number", v)
        if nonneg and v < 0:
            raise self.error(field, "a number >= 0", v)
        if lo is not None and v < lo or hi is not None and v > hi:
            raise self.error(field, f"a number from {lo:g} to {hi:g}", v)
        return v

    def count(self, d: dict, key: str, field: str) -> int:
        if key not in d:
            raise self.error(field, "a whole number of fixtures >= 1 (required)")
        v = d[key]
        if isinstance(v, bool) or not isinstance(v, int) or v < 1:
            raise self.error(field, "a whole number of fixtures >= 1", v)
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
                raise self.error(f, "no such field here; known fields: " + ", ".join(sorted(allowed)))
