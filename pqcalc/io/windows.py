"""Long records through consecutive IEC 61000-4-7 windows, read in blocks (bounded memory).

The measurement method of IEC 61000-4-7 cuts a record into consecutive rectangular windows
of 10 fundamental cycles on 50 Hz systems and 12 on 60 Hz systems (about 200 ms), each
synchronised to the actual mains frequency, takes the DFT of each (5 Hz lines) and
collects the lines into harmonic groups and subgroups. pqcalc does this:

1. The frequency is first estimated on the opening half second of the record
   (:func:`pqcalc.waveform.estimate_frequency`), then tracked window by window from the
   phase advance of the fundamental line of the reference channel (voltage when present).
2. Each window spans ``round(cycles * fs / f)`` samples of the latest estimate; window starts
   advance by the exact (fractional) length, rounded to the nearest sample, so the windows
   are consecutive without gap or overlap beyond one sample.
3. Per window: RMS, harmonic groups and subgroups of current (and voltage), group and
   subgroup THD (orders 2..40), active power, power factor, displacement factor.
4. Optionally the group and subgroup values pass the first-order 1.5 s smoothing filter.
5. :class:`WindowSummary` keeps mean, maximum and 95th percentile of every per-window value
   with memory that does not grow with the record.

Memory: samples are read in blocks (:func:`pqcalc.io.capture.open_capture`) and each block
of windows is handed on and dropped; only the summary accumulators persist.

References
----------
IEC 61000-4-7:2002+AMD1:2008, 4.4 (window width 10/12 cycles, synchronisation), 3.2.2 and
3.3.2 (harmonic group and subgroup, eqs. 8 and 9), 5.5.1 (smoothing, first-order filter
with a 1.5 s time constant). Subgroup and smoothing details recalled from memory.
"""

from __future__ import annotations

import os
import warnings
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from ..errors import InputError, PqcalcWarning
from ..waveform import estimate_frequency
from .record import CaptureStream, check_floor

if TYPE_CHECKING:
    from .capture import CsvOptions

__all__ = [
    "WindowBlock",
    "WindowSummary",
    "WindowAnalysis",
    "window_cycles",
    "smoothing_alpha",
    "iter_windows",
    "analyze_windows",
    "SUMMARY_FIELDS",
    "blocks_from_arrays",
]

SMOOTHING_TAU_S = 1.5  # IEC 61000-4-7 5.5.1 (from memory)


def window_cycles(frequency_hz: float) -> int:
    """Window width of IEC 61000-4-7 [cycles]: 10 on 50 Hz systems, 12 on 60 Hz systems.

    The choice follows the nominal system nearest ``frequency_hz`` (below 55 Hz: 50 Hz).

    >>> window_cycles(49.9), window_cycles(60.0)
    (10, 12)
    """
    if not (np.isfinite(frequency_hz) and frequency_hz > 0):
        raise InputError(f"frequency_hz: expected a positive frequency, got {frequency_hz}")
    return 10 if frequency_hz < 55.0 else 12


def smoothing_alpha(window_s: float, tau_s: float = SMOOTHING_TAU_S) -> float:
    """Coefficient of the first-order smoothing filter, ``y += (x - y) / alpha`` [-].

    ``alpha = 1 / (1 - exp(-T_w / tau))``: 8.011 for 200 ms windows and tau = 1.5 s.

    >>> round(smoothing_alpha(0.2), 3)
    8.011
    """
    return 1.0 / (1.0 - np.exp(-window_s / tau_s))


@dataclass(frozen=True)
class WindowBlock:
    """Per-window values of consecutive windows (one row per window).

    Attributes
    ----------
    start_s
        Start of each window from the start of the record [s].
    frequency_hz
        Fundamental frequency measured in each window [Hz].
    cycles
        Window width [cycles] (10 or 12).
    i_rms_a
        Current RMS over the window [A].
    i_group_a, i_subgroup_a
        Harmonic groups / subgroups of the current [A rms], shape (windows, orders);
        column h = order h, column 0 = DC.
    thd_i_group, thd_i_subgroup
        Group / subgroup THD of the current, orders 2..``thd_max_order`` over group 1 [-].
    v_rms_v, v_group_v, v_subgroup_v, thd_v_group
        The same for the voltage, or None.
    p_w, pf, dpf
        Active power [W], true power factor [-] and cos phi1 [-] per window, or None.
    smoothed
        Whether group and subgroup values passed the 1.5 s smoothing filter.
    """

    start_s: np.ndarray
    frequency_hz: np.ndarray
    cycles: int
    i_rms_a: np.ndarray
    i_group_a: np.ndarray
    i_subgroup_a: np.ndarray
    thd_i_group: np.ndarray
    thd_i_subgroup: np.ndarray
    v_rms_v: np.ndarray | None = None
    v_group_v: np.ndarray | None = None
    v_subgroup_v: np.ndarray | None = None
    thd_v_group: np.ndarray | None = None
    p_w: np.ndarray | None = None
    pf: np.ndarray | None = None
    dpf: np.ndarray | None = None
    smoothed: bool = False

    @property
    def n_windows(self) -> int:
        return int(self.start_s.size)

    @property
    def i1_a(self) -> np.ndarray:
        """Fundamental group of the current [A rms]."""
        return self.i_group_a[:, 1]

    def rows(self, first_index: int = 0) -> list[dict[str, Any]]:
        """JSON-ready rows, one per window (ratios in percent where the key says _pct)."""
        out = []
        for k in range(self.n_windows):
            r = {
                "window": first_index + k,
                "start_s": float(self.start_s[k]),
                "frequency_hz": float(self.frequency_hz[k]),
                "i_rms_a": float(self.i_rms_a[k]),
                "i1_rms_a": float(self.i_group_a[k, 1]),
                "thd_i_pct": 100.0 * float(self.thd_i_group[k]),
                "thd_i_subgroup_pct": 100.0 * float(self.thd_i_subgroup[k]),
                "i_group_a": [float(x) for x in self.i_group_a[k, 1:]],
            }
            if self.v_rms_v is not None:
                # the voltage fields are all present or all None (iter_windows)
                assert self.thd_v_group is not None and self.p_w is not None
                assert self.pf is not None and self.dpf is not None
                r.update(
                    v_rms_v=float(self.v_rms_v[k]),
                    thd_v_pct=100.0 * float(self.thd_v_group[k]),
                    p_w=float(self.p_w[k]),
                    pf=float(self.pf[k]),
                    dpf=float(self.dpf[k]),
                )
            out.append(r)
        return out

    @staticmethod
    def concatenate(blocks: list[WindowBlock]) -> WindowBlock:
        """One block holding the windows of several consecutive blocks."""
        if not blocks:
            raise InputError("no windows to join")
        b0 = blocks[0]

        def cat(name: str) -> Any:  # the field's array, or None where the first has none
            if getattr(b0, name) is None:
                return None
            return np.concatenate([getattr(b, name) for b in blocks], axis=0)

        names = [f for f in b0.__dataclass_fields__ if f not in ("cycles", "smoothed")]
        return WindowBlock(**{n: cat(n) for n in names}, cycles=b0.cycles,
                           smoothed=b0.smoothed)


# --------------------------------------------------------------------------- the kernel
def _groups(P: np.ndarray, cycles: int, top: int) -> tuple[np.ndarray, np.ndarray]:
    """Groups and subgroups [rms] from the line powers ``P`` (windows x lines).

    ``P`` needs lines 0..``top * cycles + cycles // 2``. With N = ``cycles`` (even), the
    lines k - N/2 .. k + N/2 - 1 of order h (k = h N) form one block of a reshape; the
    group is that block's sum less half its first line plus half the line at k + N/2.
    """
    half = cycles // 2
    m = P.shape[0]
    blocks = P[:, half : half + top * cycles].reshape(m, top, cycles).sum(axis=2)
    k = np.arange(1, top + 1) * cycles
    g2 = blocks - 0.5 * P[:, k - half] + 0.5 * P[:, k + half]
    sg2 = P[:, k - 1] + P[:, k] + P[:, k + 1]
    groups = np.empty((m, top + 1))
    sub = np.empty_like(groups)
    groups[:, 0] = sub[:, 0] = np.sqrt(P[:, 0])
    groups[:, 1:] = np.sqrt(np.maximum(g2, 0.0))
    sub[:, 1:] = np.sqrt(sg2)
    return groups, sub


def _line_powers(X: np.ndarray, n: int, lines: int | None = None) -> np.ndarray:
    """Squared rms of DFT lines 0..lines-1 of real windows of n samples."""
    Xs = X if lines is None else X[:, :lines]
    P = (Xs.real**2 + Xs.imag**2) * (2.0 / (n * n))
    P[:, 0] *= 0.5
    if n % 2 == 0 and P.shape[1] == n // 2 + 1:
        P[:, -1] *= 0.5
    return P


def _thd(groups: np.ndarray, top: int) -> np.ndarray:
    g1 = groups[:, 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.sqrt(np.sum(groups[:, 2 : top + 1] ** 2, axis=1)) / g1
    return np.where(g1 > 0, t, 0.0)


class _Smoother:
    """First-order filter across windows, state kept between blocks (starts at the first
    value: common practice, so the first windows are not pulled towards zero)."""

    def __init__(self, alpha: float):
        self.alpha = alpha
        self.state: dict[str, np.ndarray] = {}

    def __call__(self, name: str, x: np.ndarray) -> np.ndarray:
        a = 1.0 / self.alpha
        y = np.empty_like(x)
        prev = self.state.get(name, x[0])
        for k in range(x.shape[0]):  # a few dozen windows per block, all orders at once
            prev = prev + a * (x[k] - prev)
            y[k] = prev
        self.state[name] = prev
        return y


def iter_windows(
    stream: CaptureStream,
    nominal_hz: float | None = None,
    max_order: int = 50,
    thd_max_order: int = 40,
    smoothing: bool = False,
    chunk_samples: int = 1 << 17,
    frequency_hz: float | None = None,
) -> Iterator[WindowBlock]:
    """Per-window values of consecutive IEC 61000-4-7 windows, one block per read chunk.

    Parameters
    ----------
    stream
        An opened capture (:func:`pqcalc.io.capture.open_capture`), or anything with
        ``sample_rate_hz``, ``has_voltage``, ``source`` and ``chunks(size)`` yielding
        ``(current_a, voltage_v or None)`` arrays.
    nominal_hz
        Nominal system frequency [Hz]: sets the window width (10 or 12 cycles) and narrows
        the first estimate. Default: the nearer of 50 and 60 Hz to the estimate.
    max_order
        Highest order of the groups [-] (lowered where the sample rate does not allow it).
    thd_max_order
        Highest order in the THD [-].
    smoothing
        Pass groups and subgroups through the 1.5 s first-order filter.
    chunk_samples
        Samples read per block [-]; memory in use is a few times this.
    frequency_hz
        Use this fixed frequency [Hz] instead of estimating and tracking it.
    """
    fs = float(stream.sample_rate_hz)
    src = stream.source
    has_v = bool(stream.has_voltage)
    chunks = stream.chunks(int(chunk_samples))
    buf_i = np.empty(0)
    buf_v = np.empty(0)  # stays empty without a voltage channel
    offset = 0  # absolute index of buf[0]
    exhausted = False
    i_lo, i_hi = np.inf, -np.inf  # extremes of the current over the whole record
    v_peak = 0.0

    def refill(need: int) -> bool:
        nonlocal buf_i, buf_v, exhausted, i_lo, i_hi, v_peak
        parts_i, parts_v, have = [buf_i], [buf_v], buf_i.size
        while have < need and not exhausted:
            try:
                c, v = next(chunks)
            except StopIteration:
                exhausted = True
                break
            parts_i.append(np.asarray(c, float))
            if c.size:
                i_lo, i_hi = min(i_lo, float(np.min(c))), max(i_hi, float(np.max(c)))
            if has_v:
                parts_v.append(np.asarray(v, float))
                if v is not None and v.size:
                    v_peak = max(v_peak, float(np.max(np.abs(v))))
            have += c.size
        if len(parts_i) > 1:
            buf_i = np.concatenate(parts_i)
            if has_v:
                buf_v = np.concatenate(parts_v)
        return buf_i.size >= need

    # --- first estimate on the opening half second (25 cycles); it only seeds the tracking
    refill(int(fs))
    ref0 = buf_v if has_v else buf_i
    if ref0.size < 2:
        raise InputError(f"{src}: no samples; expected a record of several cycles")
    if frequency_hz is None:
        try:
            f_est = estimate_frequency(ref0[: int(0.5 * fs)], fs, nominal_hz)
        except InputError as e:
            raise InputError(f"{src}: {e}") from None
    else:
        f_est = float(frequency_hz)
    cycles = window_cycles(nominal_hz if nominal_hz is not None else f_est)
    track = frequency_hz is None
    n_win = int(round(cycles * fs / f_est))
    if ref0.size < n_win and exhausted:
        raise InputError(
            f"{src}: {ref0.size} samples at {fs:g} Hz hold {ref0.size * f_est / fs:.3g} cycles; "
            f"expected at least one {cycles}-cycle window ({n_win} samples)")
    top = int(min(max_order, (n_win // 2 - cycles // 2 - 1) // cycles))
    if top < 2:
        raise InputError(f"{src}: {fs:g} Hz is too slow a sample rate for harmonic groups "
                         f"(they need more than {2 * 2 * f_est + f_est:.4g} samples per second "
                         "for order 2)")
    if top < thd_max_order:
        warnings.warn(f"{src}: {fs:g} samples per second resolve harmonic groups up to order "
                      f"{top}; THD and groups stop there (order {thd_max_order} needs more than "
                      f"{(2 * thd_max_order + 1) * f_est:.4g} samples per second)",
                      PqcalcWarning, stacklevel=2)
    thd_top = min(thd_max_order, top)
    pos = 0.0  # exact start of the next window, absolute samples
    last_phase: tuple[float, int] | None = None  # (fundamental phase, start) of last window
    smoother = _Smoother(smoothing_alpha(cycles / f_est)) if smoothing else None
    windows_done = 0
    while True:
        # all windows that fit in the buffer with the current estimate
        step = cycles * fs / f_est
        n_win = int(round(step))
        avail_end = offset + buf_i.size
        if not exhausted:
            refill(int(pos - offset) + n_win + int(chunk_samples))
            avail_end = offset + buf_i.size
        m = int(np.floor((avail_end - n_win - pos) / step + 1e-9)) + 1
        m = max(0, m)
        while m > 0 and int(round(pos + (m - 1) * step)) + n_win > avail_end:
            m -= 1
        if m == 0:
            if exhausted:
                break
            continue
        starts = np.rint(pos + step * np.arange(m)).astype(np.int64)
        rel = starts - offset
        xi = sliding_window_view(buf_i, n_win)[rel]  # rows copied whole (a gather)
        Xi = np.fft.rfft(xi, axis=1)
        lines = top * cycles + cycles // 2 + 1
        Pi = _line_powers(Xi, n_win, lines)
        gi, sgi = _groups(Pi, cycles, top)
        i_rms = np.sqrt(np.einsum("ij,ij->i", xi, xi) / n_win)
        if has_v:
            xv = sliding_window_view(buf_v, n_win)[rel]
            Xv = np.fft.rfft(xv, axis=1)
            Pv = _line_powers(Xv, n_win, lines)
            gv, sgv = _groups(Pv, cycles, top)
            v_rms = np.sqrt(np.einsum("ij,ij->i", xv, xv) / n_win)
            p = np.einsum("ij,ij->i", xv, xi) / n_win
            with np.errstate(divide="ignore", invalid="ignore"):
                pf = np.where(v_rms * i_rms > 0, p / (v_rms * i_rms), 0.0)
            ang = np.angle(Xv[:, cycles]) - np.angle(Xi[:, cycles])
            dpf = np.where(np.abs(Xi[:, cycles]) > 0, np.cos(ang), 0.0)
            ref_line = Xv[:, cycles]
        else:
            ref_line = Xi[:, cycles]
        # --- frequency per window from the phase advance of the fundamental line
        phase = np.angle(ref_line)
        f_win = np.full(m, f_est)
        if track:
            prev_ph = np.concatenate([[last_phase[0]], phase[:-1]]) if last_phase else None
            prev_st = np.concatenate([[last_phase[1]], starts[:-1]]) if last_phase else None
            if prev_ph is None and m > 1:
                prev_ph, prev_st = phase[:-1], starts[:-1]
                sl = slice(1, None)
            else:
                sl = slice(None)
            if prev_ph is not None and prev_ph.size:
                dt = (starts[sl] - prev_st) / fs
                expected = 2 * np.pi * f_est * dt
                d = np.angle(np.exp(1j * (phase[sl] - prev_ph - expected)))
                f_win[sl] = f_est + d / (2 * np.pi * dt)
            good = np.abs(ref_line) > 0
            if np.any(good):
                f_new = float(np.median(f_win[good]))
                if abs(f_new - f_est) < 0.1 * f_est:
                    f_est = f_new
            last_phase = (float(phase[-1]), int(starts[-1]))
        if smoother is not None:
            gi, sgi = smoother("gi", gi), smoother("sgi", sgi)
            if has_v:
                gv, sgv = smoother("gv", gv), smoother("sgv", sgv)
        yield WindowBlock(
            start_s=starts / fs,
            frequency_hz=f_win,
            cycles=cycles,
            i_rms_a=i_rms,
            i_group_a=gi,
            i_subgroup_a=sgi,
            thd_i_group=_thd(gi, thd_top),
            thd_i_subgroup=_thd(sgi, thd_top),
            v_rms_v=v_rms if has_v else None,
            v_group_v=gv if has_v else None,
            v_subgroup_v=sgv if has_v else None,
            thd_v_group=_thd(gv, thd_top) if has_v else None,
            p_w=p if has_v else None,
            pf=pf if has_v else None,
            dpf=dpf if has_v else None,
            smoothed=smoothing,
        )
        windows_done += m
        pos += m * step
        # drop what no later window needs
        drop = int(np.floor(pos)) - 1 - offset
        if drop > 0:
            buf_i = buf_i[drop:]
            if has_v:
                buf_v = buf_v[drop:]
            offset += drop
    if windows_done == 0:
        raise InputError(
            f"{src}: the record is shorter than one {cycles}-cycle window "
            f"({n_win} samples at {fs:g} Hz)")
    check_floor(max(abs(i_lo), abs(i_hi)), "current", src)
    if has_v:
        check_floor(v_peak, "voltage", src)
    if i_lo == i_hi:
        raise InputError(f"{src}: the current is constant ({i_lo:g} A) throughout; nothing to "
                         "analyse (expected an alternating current)")


# --------------------------------------------------------------------------- summaries
#: Scalar per-window values that :class:`WindowSummary` summarises (besides the groups).
SUMMARY_FIELDS = ("frequency_hz", "i_rms_a", "thd_i_group", "v_rms_v", "thd_v_group", "p_w",
                  "pf", "dpf")


class _Quantiles:
    """Streaming histogram per column over [-R, R]; R doubles as values grow.

    With ``bins`` bins the 95th percentile is within ``2R / bins <= 4 max|x| / bins`` of the
    exact order statistic of the values seen (linear interpolation inside the bin).
    Memory: ``columns x bins`` counts, whatever the number of windows.
    """

    def __init__(self, ncols: int, bins: int = 2048):
        self.bins = bins
        self.R = np.zeros(ncols)
        self.counts = np.zeros((ncols, bins))
        self.n = 0

    def _grow(self, col: int, new_r: float) -> None:
        old = self.R[col]
        if old > 0:
            j = np.arange(self.bins)
            edge = -old + j * (2 * old / self.bins)
            new_idx = np.floor((edge + new_r) / (2 * new_r) * self.bins + 1e-9).astype(int)
            new_idx = np.clip(new_idx, 0, self.bins - 1)
            self.counts[col] = np.bincount(new_idx, weights=self.counts[col],
                                           minlength=self.bins)
        self.R[col] = new_r

    def add(self, x: np.ndarray) -> None:
        m = np.max(np.abs(x), axis=0)
        for col in np.flatnonzero(m >= self.R):
            r = 2.0 ** np.ceil(np.log2(m[col])) if m[col] > 0 else 1e-300
            if r <= m[col]:
                r *= 2
            if self.R[col] > 0:
                r = self.R[col] * 2.0 ** np.ceil(np.log2(r / self.R[col]))
            self._grow(int(col), float(r))
        idx = np.floor((x + self.R) / (2 * self.R) * self.bins).astype(np.int64)
        np.clip(idx, 0, self.bins - 1, out=idx)
        flat = idx + np.arange(x.shape[1]) * self.bins
        self.counts += np.bincount(flat.ravel(), minlength=self.counts.size).reshape(
            self.counts.shape)
        self.n += x.shape[0]

    def quantile(self, q: float, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
        out = np.empty(self.R.size)
        target = q * (self.n - 1) + 0.5
        for col in range(self.R.size):
            c = np.cumsum(self.counts[col])
            k = int(np.searchsorted(c, target))
            k = min(k, self.bins - 1)
            below = c[k - 1] if k > 0 else 0.0
            frac = (target - below) / self.counts[col, k] if self.counts[col, k] else 0.5
            w = 2 * self.R[col] / self.bins
            out[col] = -self.R[col] + (k + frac) * w
        return np.clip(out, lo, hi)


@dataclass
class WindowSummary:
    """Mean, maximum and 95th percentile of the per-window values, updated block by block.

    Columns: the scalar fields of :data:`SUMMARY_FIELDS` present in the record, then the
    current groups of orders 0..max, then the voltage groups. Mean, max and min are exact;
    the 95th percentile comes from a streaming histogram, within 0.2 % of the column's
    largest magnitude of the exact order statistic (``_Quantiles``).
    """

    names: list[str] = field(default_factory=list)
    count: int = 0
    _sum: np.ndarray | None = None
    _max: np.ndarray | None = None
    _min: np.ndarray | None = None
    _q: _Quantiles | None = None
    _pending: list[np.ndarray] = field(default_factory=list)
    _pending_rows: int = 0
    orders: int = 0
    has_voltage: bool = False

    def _matrix(self, b: WindowBlock) -> np.ndarray:
        cols = [getattr(b, f) for f in SUMMARY_FIELDS if getattr(b, f) is not None]
        mats = [np.column_stack(cols), b.i_group_a]
        if b.v_group_v is not None:
            mats.append(b.v_group_v)
        return np.concatenate(mats, axis=1)

    def add(self, b: WindowBlock) -> None:
        x = self._matrix(b)
        if self._sum is None:
            self.names = [f for f in SUMMARY_FIELDS if getattr(b, f) is not None]
            self.orders = b.i_group_a.shape[1]
            self.names += [f"i_group_a[{h}]" for h in range(self.orders)]
            self.has_voltage = b.v_group_v is not None
            if self.has_voltage:
                self.names += [f"v_group_v[{h}]" for h in range(self.orders)]
            self._sum = np.zeros(x.shape[1])
            self._max = np.full(x.shape[1], -np.inf)
            self._min = np.full(x.shape[1], np.inf)
            self._q = _Quantiles(x.shape[1])
        assert self._max is not None and self._min is not None  # set with _sum
        self._sum += x.sum(axis=0)
        self._max = np.maximum(self._max, x.max(axis=0))
        self._min = np.minimum(self._min, x.min(axis=0))
        self.count += x.shape[0]
        # the histogram is updated in batches of >= 256 windows (fewer, larger updates)
        self._pending.append(x)
        self._pending_rows += x.shape[0]
        if self._pending_rows >= 256:
            self._flush()

    def _flush(self) -> None:
        if self._pending:
            assert self._q is not None  # pending rows exist only after the first add()
            self._q.add(np.concatenate(self._pending, axis=0))
            self._pending, self._pending_rows = [], 0

    def result(self) -> dict[str, np.ndarray]:
        """``{"mean": ..., "max": ..., "min": ..., "p95": ...}`` arrays in column order."""
        if self.count == 0:
            raise InputError("no windows to summarise")
        self._flush()
        # count > 0: add() has set every accumulator
        assert self._sum is not None and self._max is not None and self._min is not None
        assert self._q is not None
        return {
            "mean": self._sum / self.count,
            "max": self._max.copy(),
            "min": self._min.copy(),
            "p95": self._q.quantile(0.95, self._min, self._max),
        }

    def to_dict(self) -> dict[str, Any]:
        """JSON form: per statistic, the scalars by name and the groups as lists."""
        r = self.result()
        ns = len(self.names) - self.orders * (2 if self.has_voltage else 1)
        out: dict[str, Any] = {"windows": self.count}
        for stat, vals in r.items():
            d: dict[str, float | list[float]] = {}
            for k in range(ns):
                name = self.names[k]
                v = float(vals[k])
                if name.startswith("thd_"):
                    d[name.replace("_group", "") + "_pct"] = 100.0 * v
                else:
                    d[name] = v
            d["i_group_a"] = [float(v) for v in vals[ns : ns + self.orders]]
            if self.has_voltage:
                d["v_group_v"] = [float(v) for v in vals[ns + self.orders :]]
            out[stat] = d
        return out


@dataclass(frozen=True)
class WindowAnalysis:
    """Result of :func:`analyze_windows`: the summary, and the windows when kept."""

    source: str
    sample_rate_hz: float
    cycles: int
    summary: WindowSummary
    windows: WindowBlock | None = None

    def to_dict(self) -> dict[str, Any]:
        """JSON form: source, window width, the summary and (when kept) the windows."""
        d: dict[str, Any] = {
            "source": self.source,
            "sample_rate_hz": self.sample_rate_hz,
            "window_cycles": self.cycles,
            "smoothed": bool(self.windows.smoothed) if self.windows is not None else None,
            "summary": self.summary.to_dict(),
        }
        if self.windows is not None:
            d["windows"] = self.windows.rows()
        return d


def analyze_windows(
    capture: str | os.PathLike[str] | CaptureStream,
    options: CsvOptions | None = None,
    nominal_hz: float | None = None,
    max_order: int = 50,
    thd_max_order: int = 40,
    smoothing: bool = False,
    keep_windows: bool = True,
    chunk_samples: int = 1 << 17,
) -> WindowAnalysis:
    """Run a capture (a path, or an opened stream) through IEC 61000-4-7 windows.

    With ``keep_windows=False`` only the summary is kept, so memory stays bounded however
    long the record; with True the per-window values are returned as well (they grow with
    the record: about 1 kB per window).
    """
    from .capture import open_capture

    stream: CaptureStream
    if isinstance(capture, (str, os.PathLike)):
        stream = open_capture(capture, options)
    else:
        stream = capture
    summ = WindowSummary()
    kept: list[WindowBlock] = []
    cycles = 0
    for b in iter_windows(stream, nominal_hz, max_order, thd_max_order, smoothing,
                          chunk_samples):
        summ.add(b)
        cycles = b.cycles
        if keep_windows:
            kept.append(b)
    return WindowAnalysis(
        stream.source, float(stream.sample_rate_hz), cycles, summ,
        WindowBlock.concatenate(kept) if keep_windows else None,
    )


def blocks_from_arrays(current_a: np.ndarray, sample_rate_hz: float,
                       voltage_v: np.ndarray | None = None, source: str = "<array>"
                       ) -> CaptureStream:
    """A stream over arrays already in memory (for notebooks and tests)."""
    return _ArrayStream(np.asarray(current_a, float), float(sample_rate_hz),
                        None if voltage_v is None else np.asarray(voltage_v, float), source)


@dataclass
class _ArrayStream:
    current_a: np.ndarray
    sample_rate_hz: float
    voltage_v: np.ndarray | None
    source: str

    @property
    def has_voltage(self) -> bool:
        return self.voltage_v is not None

    def chunks(self, size: int) -> Iterator[tuple[np.ndarray, np.ndarray | None]]:
        for k in range(0, self.current_a.size, size):
            yield (self.current_a[k : k + size],
                   None if self.voltage_v is None else self.voltage_v[k : k + size])

