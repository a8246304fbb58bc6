"""The record every capture reader returns: samples as the file holds them.

It lives apart from the readers so that each reader (delimited text in
:mod:`pqcalc.io.capture`, COMTRADE in :mod:`pqcalc.io.comtrade`) can build it without
importing another reader; :mod:`pqcalc.io.capture` re-exports it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["RawRecord"]


@dataclass(frozen=True)
class RawRecord:
    """Uniformly sampled samples as read from a file, before alignment to the mains.

    Attributes
    ----------
    current_a, voltage_v
        Samples after scaling [A], [V] (voltage may be None).
    sample_rate_hz
        Sampling rate [Hz].
    source
        The file it came from (for messages and reports).
    meta
        Anything else the file said (channel names, station, start time ...).
    """

    current_a: np.ndarray
    sample_rate_hz: float
    voltage_v: np.ndarray | None = None
    source: str = ""
    meta: dict[str, Any] = field(default_factory=dict)

    @property
    def duration_s(self) -> float:
        """Length of the record [s]."""
        return self.current_a.size / self.sample_rate_hz
