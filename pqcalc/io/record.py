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

from .installation_file import Bounds

__all__ = ["RawRecord", "CaptureStream", "SAMPLE_RATE_HZ", "SAMPLE_LIMITS", "check_samples",
           "SIGNAL_FLOORS", "check_floor"]

#: A capture's sample rate [Hz]: below 100 Hz no mains harmonic is left (and the study
#: refuses what its orders need, :func:`pqcalc.analysis.analyze`), above 100 MHz no
#: power-quality recorder samples.
SAMPLE_RATE_HZ = Bounds(100.0, 1e8, "a power-quality recorder's sample rate")

#: The largest magnitude of a recorded sample after scaling, by channel: past any fault
#: current a building sees, past any distribution voltage. Beyond them the scale or the file
#: is wrong, and squares of such values overflow.
SAMPLE_LIMITS: dict[str, tuple[float, str]] = {"current": (1e6, "A"), "voltage": (1e7, "V")}


#: The smallest peak a channel may have to be analysed, by channel: below any recorder's
#: resolution the record is empty (or mis-scaled), and ratios of such values are noise.
SIGNAL_FLOORS: dict[str, tuple[float, str]] = {"current": (1e-9, "A"), "voltage": (1e-6, "V")}


def check_floor(peak: float, channel: str, source: str) -> None:
    """Refuse a channel whose largest magnitude ``peak`` is below :data:`SIGNAL_FLOORS`."""
    from ..errors import InputError

    floor, unit = SIGNAL_FLOORS[channel]
    if not peak >= floor:
        raise InputError(f"{source}: the {channel} peaks at {peak:.3g} {unit}, below "
                         f"{floor:g} {unit}; expected a recorded {channel} (check the channel, "
                         "the scale and the unit)")


def check_samples(x: np.ndarray, channel: str) -> tuple[int, str] | None:
    """None when every sample of ``x`` is finite and within :data:`SAMPLE_LIMITS`; else the
    index of the first bad sample and what is wrong with it."""
    lim, unit = SAMPLE_LIMITS[channel]
    with np.errstate(invalid="ignore"):
        ok = np.abs(x) <= lim
    if ok.all():
        return None
    k = int(np.flatnonzero(~ok)[0])
    v = float(x[k])
    if not np.isfinite(v):
        return k, "not a finite number after scaling; expected a sample"
    return k, (f"{v:.3g} {unit} after scaling; expected at most {lim:g} {unit} in magnitude "
               "(check the scale factor and the unit)")


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
