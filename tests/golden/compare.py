"""Field-by-field comparison of two assessment JSON documents, renamed keys mapped.

Used by ``tests/test_golden.py`` to show that a restructuring changed no number: the
reference JSON in this folder was written by the code before the change.
"""

from __future__ import annotations

import math
from typing import Any

#: Keys renamed since the reference was written (old -> new); see CHANGELOG.md.
RENAMED_KEYS = {
    "phase": "line",
    "phases": "lines",
    "ratio_to_max_phase": "ratio_to_max_line",
    "setting": "state",
}

#: Wording changed with the vocabulary (a line is L1, L2, L3), applied to the old text.
RENAMED_TEXT = {"highest phase": "highest line", "phase conductors": "line conductors"}


def _text(s: str) -> str:
    for a, b in RENAMED_TEXT.items():
        s = s.replace(a, b)
    return s


def differences(old: Any, new: Any, path: str = "", rel: float = 1e-9, abs_: float = 1e-12,
                skip: frozenset[str] = frozenset()) -> list[str]:
    """Every place where ``new`` differs from ``old`` (keys of ``old`` only, renamed keys
    looked up under their new name; numbers within ``rel``/``abs_``)."""
    out: list[str] = []
    if isinstance(old, dict):
        if not isinstance(new, dict):
            return [f"{path}: a mapping became {type(new).__name__}"]
        for k, v in old.items():
            if k in skip:
                continue
            nk = k if k in new else RENAMED_KEYS.get(k, k)
            if nk not in new:
                out.append(f"{path}.{k}: missing")
                continue
            out += differences(v, new[nk], f"{path}.{k}", rel, abs_, skip)
        return out
    if isinstance(old, list):
        if not isinstance(new, list) or len(new) != len(old):
            return [f"{path}: list of {len(old)} became {new!r:.80}"]
        for i, (a, b) in enumerate(zip(old, new, strict=True)):
            out += differences(a, b, f"{path}[{i}]", rel, abs_, skip)
        return out
    if isinstance(old, float) or isinstance(new, float):
        if old is None or new is None or not math.isclose(old, new, rel_tol=rel, abs_tol=abs_):
            return [f"{path}: {old!r} became {new!r}"]
        return []
    if isinstance(old, str) and isinstance(new, str):
        old = _text(old)
    if old != new:
        return [f"{path}: {old!r:.100} became {new!r:.100}"]
    return out
