"""JSON-safe copies of results: numpy scalars and arrays to Python, non-finite refused."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import InputError

__all__ = ["json_safe"]


def json_safe(o: Any) -> Any:
    """A copy of ``o`` that :func:`json.dumps` writes as strict JSON: numpy scalars and
    arrays become Python numbers and lists, mapping keys strings; a non-finite float is
    refused (never written as ``NaN``)."""
    if isinstance(o, dict):
        return {str(k): json_safe(v) for k, v in o.items()}
    if isinstance(o, (list, tuple)):
        return [json_safe(v) for v in o]
    if isinstance(o, (np.floating, float)):
        f = float(o)
        if not math.isfinite(f):
            raise InputError("internal: a non-finite number reached the output")
        return f
    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.bool_):
        return bool(o)
    if isinstance(o, np.ndarray):
        return json_safe(o.tolist())
    return o
