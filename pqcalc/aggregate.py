"""Summing lamp and circuit currents with phase alignment; the neutral; diversity.

Currents of circuits on one line are added sample by sample (they share that line's voltage
reference). Lines of a polyphase supply are then moved to a common reference, L1's voltage:
a record on a line whose fundamental voltage sits at ``theta`` is delayed by ``-theta``
(order h turns by ``h * theta``). For a four-wire wye supply L1 is at 0 deg, L2 at -120 deg
and L3 at +120 deg; for a split-phase three-wire supply L1 at 0 and L2 at 180 deg.

The neutral current of a wye or split-phase system is the sum of the line currents (all
loads line-to-neutral). Fundamental, 5th and 7th of a balanced set cancel; triplens add.

Circuits dimmed independently at unknown settings: :func:`summation_law` applies the
IEC TR 61000-3-6 general summation law with its exponents.
"""

from __future__ import annotations

from dataclasses import dataclass
from math import gcd

import numpy as np

from .errors import InputError
from .spectrum import Spectrum, spectrum
from .waveform import Waveform

__all__ = [
    "SYSTEMS",
    "LINE_ANGLES_DEG",
    "PhaseSums",
    "to_grid",
    "common_period",
    "sum_lines",
    "triplen_share",
    "summation_exponent",
    "summation_law",
]

#: Supply systems and the voltage angle of each line [deg] on the L1 reference.
LINE_ANGLES_DEG: dict[str, dict[str, float]] = {
    "single-phase": {"L1": 0.0},
    "split-phase": {"L1": 0.0, "L2": 180.0},
    "three-phase-wye": {"L1": 0.0, "L2": -120.0, "L3": 120.0},
}
SYSTEMS = tuple(LINE_ANGLES_DEG)

#: Samples per fundamental cycle on the aggregation grid; divisible by 2 and 3 so that
#: shifts of 120 and 180 deg are whole samples (exact, no interpolation).
GRID_SAMPLES = 6144


def to_grid(w: Waveform, cycles: int, samples_per_cycle: int = GRID_SAMPLES) -> np.ndarray:
    """Current of ``w`` on the aggregation grid over ``cycles`` cycles [A].

    The record is resampled to ``samples_per_cycle`` by Fourier interpolation (exact for a
    band-limited periodic record) and tiled when its period is shorter than ``cycles``.
    """
    if cycles % w.cycles:
        raise InputError(f"cannot tile a {w.cycles}-cycle record onto {cycles} cycles")
    n = samples_per_cycle * w.cycles
    x = w.current_a
    if x.size != n:
        x = _fourier_resample(x, n)
    return np.tile(x, cycles // w.cycles)


def _fourier_resample(x: np.ndarray, n: int) -> np.ndarray:
    """Periodic record resampled to ``n`` points by truncating or zero-padding its DFT."""
    X = np.fft.rfft(x)
    Y = np.zeros(n // 2 + 1, dtype=complex)
    m = min(X.size, Y.size)
    Y[:m] = X[:m]
    if n % 2 == 0 and m == Y.size:
        Y[-1] = Y[-1].real  # the new Nyquist line of a real record is real
    if x.size % 2 == 0 and m == X.size and X.size < Y.size:
        Y[m - 1] *= 0.5  # the old Nyquist line splits into +-f
    return np.fft.irfft(Y, n) * (n / x.size)


def common_period(periods) -> int:
    """Least common multiple of the records' periods in cycles (1 for ordinary records)."""
    p = 1
    for q in periods:
        p = p * int(q) // gcd(p, int(q))
    if p > 24:
        raise InputError(f"the records' periods have a common period of {p} cycles (over 24)")
    return p


@dataclass(frozen=True)
class PhaseSums:
    """Line and neutral currents of one panel or feeder on the L1 voltage reference.

    ``lines`` maps line names to waveforms of the line current; ``neutral`` is the sum of the
    line currents (None for a single-phase two-wire supply, where it equals L1).
    """

    lines: dict[str, Waveform]
    neutral: Waveform | None
    system: str

    def spectra(self, max_order: int = 50) -> dict[str, Spectrum]:
        out = {k: spectrum(w, max_order, "current" if w.voltage_v is None else "voltage")
               for k, w in self.lines.items()}
        if self.neutral is not None:
            out["N"] = spectrum(self.neutral, max_order, "current")
        return out


def sum_lines(
    per_line: dict[str, np.ndarray],
    system: str,
    frequency_hz: float,
    cycles: int = 1,
    v_rms_v: float | None = None,
) -> PhaseSums:
    """Move per-line current sums (each on its own line's reference) to L1's reference.

    Parameters
    ----------
    per_line
        Line name -> summed current samples on the aggregation grid, each on the voltage
        reference of its own line [A].
    system
        One of :data:`SYSTEMS`.
    frequency_hz
        Fundamental frequency [Hz].
    cycles
        Cycles spanned by the arrays.
    v_rms_v
        Line-to-neutral voltage [V]; when given, each line waveform carries its ideal
        sinusoidal voltage so that power factor and phase angles refer to it.
    """
    if system not in LINE_ANGLES_DEG:
        raise InputError(f"system: expected one of {', '.join(SYSTEMS)}, got {system!r}")
    angles = LINE_ANGLES_DEG[system]
    lines: dict[str, Waveform] = {}
    total = None
    n = None
    for line, x in per_line.items():
        if line not in angles:
            raise InputError(
                f"line {line!r} does not exist on a {system} supply; expected one of "
                + ", ".join(angles)
            )
        x = np.asarray(x, dtype=float)
        n = x.size
        spc = n // cycles
        # a line whose voltage leads L1 by theta is L1's waveform advanced by theta:
        # on L1's time axis it is shifted by -theta, i.e. roll by theta/360 of a cycle
        shift = int(round(angles[line] / 360.0 * spc))
        if abs(shift - angles[line] / 360.0 * spc) > 1e-9:
            raise InputError("internal: the aggregation grid must divide 120 and 180 deg exactly")
        xs = np.roll(x, -shift) if shift else x
        # roll(-k) moves sample k to 0: x_new(t) = x(t + theta/w): a lead of theta
        v = None
        if v_rms_v is not None:
            wt = 2 * np.pi * np.arange(n) / spc + np.radians(angles[line])
            v = np.sqrt(2) * v_rms_v * np.sin(wt)
        lines[line] = Waveform(xs, spc * frequency_hz, frequency_hz, v, cycles, label=line)
        total = xs.copy() if total is None else total + xs
    if total is None:
        raise InputError("no line currents to sum")
    if system == "single-phase":
        neutral = None
    else:
        for line in angles:
            if line not in lines:
                lines[line] = Waveform(np.zeros(n), (n // cycles) * frequency_hz, frequency_hz,
                                       None, cycles, label=line)
        neutral = Waveform(total, (n // cycles) * frequency_hz, frequency_hz, None, cycles,
                           label="N")
    order = [k for k in angles if k in lines]
    return PhaseSums({k: lines[k] for k in order}, neutral, system)


def triplen_share(s: Spectrum | np.ndarray, max_order: int = 50) -> float:
    """Share of the RMS-squared of orders 1..max_order carried by triplen orders (3, 9, ...)
    as a fraction of the total RMS [-]: ``sqrt(sum_triplen I_h^2) / sqrt(sum_h I_h^2)``."""
    m = np.abs(s.current_a if isinstance(s, Spectrum) else np.asarray(s))
    top = min(max_order, m.size - 1)
    h = np.arange(top + 1)
    tot = np.sum(m[1 : top + 1] ** 2)
    if tot == 0:
        return 0.0
    trip = np.sum(m[(h % 3 == 0) & (h > 0)] ** 2)
    return float(np.sqrt(trip / tot))


def summation_exponent(order: int) -> float:
    """IEC TR 61000-3-6 summation exponent alpha for harmonic order h [-].

    1 for h < 5, 1.4 for 5 <= h <= 10, 2 for h > 10.

    References
    ----------
    IEC TR 61000-3-6:2008, 8.3 (general summation law; exponents recalled from memory).
    """
    if order < 5:
        return 1.0
    if order <= 10:
        return 1.4
    return 2.0


def summation_law(magnitudes: np.ndarray, axis: int = 0) -> np.ndarray:
    """Combine harmonic magnitudes of sources with unknown relative phase [A].

    ``I_h = (sum_i I_{h,i}^alpha)^(1/alpha)`` with :func:`summation_exponent` per order; the
    last axis of ``magnitudes`` is the order (index 0 = DC, summed arithmetically).

    References
    ----------
    IEC TR 61000-3-6:2008, 8.3 (exponents recalled from memory).

    >>> m = np.zeros((2, 12)); m[:, 3] = 1.0; m[:, 5] = 1.0; m[:, 11] = 1.0
    >>> r = summation_law(m)
    >>> [round(float(x), 4) for x in r[[3, 5, 11]]]
    [2.0, 1.6407, 1.4142]
    """
    m = np.abs(np.asarray(magnitudes, dtype=float))
    m = np.moveaxis(m, axis, 0)
    out = np.empty(m.shape[1:])
    for h in range(m.shape[-1]):
        a = 1.0 if h == 0 else summation_exponent(h)
        out[..., h] = np.sum(m[..., h] ** a, axis=0) ** (1.0 / a)
    return out
