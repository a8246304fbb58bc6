"""What the capture readers hand over: a whole record, or a stream of blocks.

These live apart from the readers so that each reader (delimited text in
:mod:`pqcalc.io.capture`, COMTRADE in :mod:`pqcalc.io.comtrade`) and each consumer
(:mod:`pqcalc.io.windows`) can name them without importing another reader;
:mod:`pqcalc.io.capture` re-exports :class:`RawRecord`.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any, Protocol

import numpy as np

__all__ = ["RawRecord", "CaptureStream"]


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


class CaptureStream(Protocol):
    """A capture read in blocks (bounded memory): what :func:`pqcalc.io.capture.open_capture`
    returns and :func:`pqcalc.io.windows.iter_windows` consumes."""

    @property
    def source(self) -> str:
        """The file it came from (for messages)."""
        ...

    @property
    def sample_rate_hz(self) -> float:
        """Sampling rate [Hz]."""
        ...

    @property
    def has_voltage(self) -> bool:
        """Whether the blocks carry a voltage channel."""
        ...

    def chunks(self, size: int) -> Iterator[tuple[np.ndarray, np.ndarray | None]]:
        """``(current_a, voltage_v or None)`` blocks of up to ``size`` samples [A], [V]."""
        ...
