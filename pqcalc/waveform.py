"""The :class:`Waveform` value: uniformly sampled current (and voltage) over whole cycles.

Everything pqcalc analyses, whether simulated by a circuit model or imported from a recorder,
becomes a ``Waveform`` first. It holds samples over a *whole number* of fundamental cycles,
so the discrete Fourier transform of the record has each harmonic order exactly on a bin
(order ``h`` at bin ``h * cycles``) and no leakage.

Records that are not synchronous with the mains (every real one) are brought onto whole
cycles by :func:`resample_whole_cycles` after the fundamental frequency has been estimated
by :func:`estimate_frequency`. The resampling interpolates between the recorded samples; the
peaks and the crest factor of such a record are those of the recorded samples themselves
(:class:`RecordedFigures`), never of the interpolant.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from .errors import InputError

__all__ = [
    "RecordedFigures",
    "Waveform",
    "estimate_frequency",
    "interpolate_limited",
    "resample_whole_cycles",
    "sine",
    "shift_periodic",
]


def _as_samples(x, name: str) -> np.ndarray:
    a = np.asarray(x, dtype=float)
    if a.ndim != 1:
        raise InputError(f"{name}: expected a one-dimensional array of samples, got shape {a.shape}")
    if a.size < 2:
        raise InputError(f"{name}: expected at least 2 samples, got {a.size}")
    if not np.all(np.isfinite(a)):
        bad = int(np.flatnonzero(~np.isfinite(a))[0])
        raise InputError(f"{name}: sample {bad} is not a finite number")
    return a


@dataclass(frozen=True)
class RecordedFigures:
    """Figures of the recorded samples themselves, over the span a resampled record covers.

    A record resampled onto whole cycles holds interpolated values; its peak and crest factor
    are taken here, from the samples the recorder stored, over the same whole cycles.

    Attributes
    ----------
    i_peak_a
        Largest absolute recorded current sample in the span [A].
    i_rms_a
        RMS of the recorded current samples over the span [A]; each sample stands for the
        interval to the next one, the last one for the part of it inside the span.
    samples_per_cycle
        Recorded samples per fundamental cycle [-]: a step (a dimmer firing) is located only
        to within one recorded sample interval, so a crest factor is known to about
        ``2 / samples_per_cycle`` relative (``tests/test_capture.py``).
    v_peak_v, v_rms_v
        The same for the voltage [V], or None.
    """

    i_peak_a: float
    i_rms_a: float
    samples_per_cycle: float
    v_peak_v: float | None = None
    v_rms_v: float | None = None

    def scaled(self, factor: float) -> RecordedFigures:
        """The figures of ``factor`` identical records (the currents scale, the voltage not)."""
        return replace(self, i_peak_a=self.i_peak_a * abs(factor),
                       i_rms_a=self.i_rms_a * abs(factor))


@dataclass(frozen=True)
class Waveform:
    """Current, and voltage where known, sampled uniformly over whole fundamental cycles.

    Parameters
    ----------
    current_a
        Current samples [A].
    sample_rate_hz
        Sampling rate [Hz].
    frequency_hz
        Fundamental (mains) frequency [Hz].
    voltage_v
        Voltage samples on the same time grid [V], or ``None``.
    cycles
        Number of whole fundamental cycles the record spans (``len(current_a)`` samples
        cover exactly ``cycles / frequency_hz`` seconds).
    label
        Free text carried into reports (fixture name, file name, ...).
    recorded
        For a record resampled from a capture, the figures of the recorded samples (peaks,
        RMS); ``None`` when the samples are the record itself (a model, a synthetic signal).

    Examples
    --------
    >>> w = sine(230.0, 50.0, amplitude_a=1.0, samples_per_cycle=256)
    >>> round(w.i_rms_a, 4)
    0.7071
    """

    current_a: np.ndarray
    sample_rate_hz: float
    frequency_hz: float
    voltage_v: np.ndarray | None = None
    cycles: int = 1
    label: str = ""
    meta: dict = field(default_factory=dict, compare=False)
    recorded: RecordedFigures | None = field(default=None, compare=False)

    def __post_init__(self) -> None:
        i = _as_samples(self.current_a, "current")
        object.__setattr__(self, "current_a", i)
        if self.voltage_v is not None:
            v = _as_samples(self.voltage_v, "voltage")
            if v.shape != i.shape:
                raise InputError(
                    f"voltage: expected as many samples as the current ({i.size}), got {v.size}"
                )
            object.__setattr__(self, "voltage_v", v)
        if not (np.isfinite(self.sample_rate_hz) and self.sample_rate_hz > 0):
            raise InputError(f"sample_rate_hz: expected a positive rate, got {self.sample_rate_hz}")
        if not (np.isfinite(self.frequency_hz) and self.frequency_hz > 0):
            raise InputError(f"frequency_hz: expected a positive frequency, got {self.frequency_hz}")
        cycles = int(self.cycles)
        if cycles < 1 or cycles != self.cycles:
            raise InputError(f"cycles: expected a whole number >= 1, got {self.cycles}")
        object.__setattr__(self, "cycles", cycles)
        spanned = i.size * self.frequency_hz / self.sample_rate_hz
        if abs(spanned - cycles) > 0.5 * self.frequency_hz / self.sample_rate_hz + 1e-9 * cycles:
            raise InputError(
                f"{i.size} samples at {self.sample_rate_hz:g} Hz span {spanned:.6g} cycles of "
                f"{self.frequency_hz:g} Hz, not the whole number {cycles}; resample first "
                "(pqcalc.waveform.resample_whole_cycles)"
            )
        object.__setattr__(self, "sample_rate_hz", float(self.sample_rate_hz))
        object.__setattr__(self, "frequency_hz", float(self.frequency_hz))

    # ------------------------------------------------------------------ derived values
    @property
    def n_samples(self) -> int:
        """Number of samples [-]."""
        return int(self.current_a.size)

    @property
    def samples_per_cycle(self) -> float:
        """Samples per fundamental cycle [-]."""
        return self.n_samples / self.cycles

    @property
    def duration_s(self) -> float:
        """Record length [s]."""
        return self.cycles / self.frequency_hz

    @property
    def time_s(self) -> np.ndarray:
        """Sample instants from 0 [s]."""
        return np.arange(self.n_samples) / self.sample_rate_hz

    @property
    def has_voltage(self) -> bool:
        return self.voltage_v is not None

    @property
    def i_rms_a(self) -> float:
        """Current RMS from the samples [A]."""
        return float(np.sqrt(np.mean(self.current_a**2)))

    @property
    def v_rms_v(self) -> float | None:
        """Voltage RMS from the samples [V], or None."""
        if self.voltage_v is None:
            return None
        return float(np.sqrt(np.mean(self.voltage_v**2)))

    @property
    def i_peak_a(self) -> float:
        """Largest absolute current [A]: of the recorded samples when the record was
        resampled from a capture (:attr:`recorded`), else of the samples here."""
        if self.recorded is not None:
            return self.recorded.i_peak_a
        return float(np.max(np.abs(self.current_a)))

    @property
    def v_peak_v(self) -> float | None:
        """Largest absolute voltage [V] (recorded samples where known), or None."""
        if self.voltage_v is None:
            return None
        if self.recorded is not None and self.recorded.v_peak_v is not None:
            return self.recorded.v_peak_v
        return float(np.max(np.abs(self.voltage_v)))

    @property
    def crest_factor(self) -> float:
        """Current peak over RMS [-], both of the recorded samples when the record was
        resampled from a capture, else of the samples here (sqrt 2 for a sine)."""
        peak, rms = ((self.recorded.i_peak_a, self.recorded.i_rms_a)
                     if self.recorded is not None else (self.i_peak_a, self.i_rms_a))
        if rms == 0:
            raise InputError("crest factor of an all-zero record is undefined")
        return float(peak / rms)

    @property
    def p_w(self) -> float | None:
        """Active power, the mean of v(t)·i(t) over the record [W], or None."""
        if self.voltage_v is None:
            return None
        return float(np.mean(self.voltage_v * self.current_a))

    # ------------------------------------------------------------------ transformations
    def scaled(self, factor: float) -> Waveform:
        """The same record with the current multiplied by ``factor`` (n identical lamps)."""
        return Waveform(
            self.current_a * factor,
            self.sample_rate_hz,
            self.frequency_hz,
            self.voltage_v,
            self.cycles,
            self.label,
            dict(self.meta),
            None if self.recorded is None else self.recorded.scaled(factor),
        )

    def shifted(self, angle_rad: float) -> Waveform:
        """Delay current and voltage by ``angle_rad`` of the fundamental.

        Exact for records over whole cycles (circular shift by Fourier interpolation): the
        phasor of order h turns by ``-h * angle_rad``. A line on phase L2 of a wye supply is
        the L1 waveform shifted by 120 deg (2*pi/3).
        """

        def shift(x: np.ndarray) -> np.ndarray:
            return shift_periodic(x, angle_rad, self.cycles)

        return Waveform(
            shift(self.current_a),
            self.sample_rate_hz,
            self.frequency_hz,
            None if self.voltage_v is None else shift(self.voltage_v),
            self.cycles,
            self.label,
            dict(self.meta),
            self.recorded,  # a delay changes neither the peaks nor the RMS
        )

    def __add__(self, other: Waveform) -> Waveform:
        """Sample-by-sample sum of the currents of two records on the same grid (the sum's
        peak is that of its samples: the recorded figures of the parts do not add)."""
        if not isinstance(other, Waveform):
            return NotImplemented
        if (
            other.n_samples != self.n_samples
            or other.cycles != self.cycles
            or not np.isclose(other.frequency_hz, self.frequency_hz)
        ):
            raise InputError("cannot add waveforms on different time grids; resample one first")
        return Waveform(
            self.current_a + other.current_a,
            self.sample_rate_hz,
            self.frequency_hz,
            self.voltage_v if self.voltage_v is not None else other.voltage_v,
            self.cycles,
            self.label,
            dict(self.meta),
        )

    def cycle(self, index: int = -1) -> Waveform:
        """One fundamental cycle of the record (default the last one); its peak is that of its
        samples (the recorded figures cover the whole record)."""
        spc = self.samples_per_cycle
        if spc != int(spc):
            raise InputError("the record has a fractional number of samples per cycle")
        spc = int(spc)
        idx = range(self.cycles)[index]
        sl = slice(idx * spc, (idx + 1) * spc)
        return Waveform(
            self.current_a[sl],
            self.sample_rate_hz,
            self.frequency_hz,
            None if self.voltage_v is None else self.voltage_v[sl],
            1,
            self.label,
            dict(self.meta),
        )


# ---------------------------------------------------------------------- constructors
def sine(
    v_rms_v: float,
    frequency_hz: float,
    amplitude_a: float = 0.0,
    phase_rad: float = 0.0,
    samples_per_cycle: int = 1024,
    cycles: int = 1,
) -> Waveform:
    """A sinusoidal voltage ``sqrt(2) V sin(wt)`` and current ``A sin(wt - phase)``.

    A helper for examples and tests: ``phase_rad > 0`` makes the current lag.
    """
    n = samples_per_cycle * cycles
    wt = 2 * np.pi * np.arange(n) / samples_per_cycle
    return Waveform(
        amplitude_a * np.sin(wt - phase_rad),
        samples_per_cycle * frequency_hz,
        frequency_hz,
        np.sqrt(2) * v_rms_v * np.sin(wt),
        cycles,
    )


#: How far the fundamental's spectral peak must stand above the median of the record's
#: spectrum [-] for :func:`estimate_frequency` to take it as the mains: a periodic record's
#: fundamental is orders of magnitude above the leakage floor, a spike or white noise is
#: flat (a ratio of a few).
FUNDAMENTAL_PROMINENCE = 20.0


def estimate_frequency(
    x: np.ndarray, sample_rate_hz: float, nominal_hz: float | None = None
) -> float:
    """Estimate the fundamental frequency of a mains record [Hz].

    Method: the strongest spectral peak between 40 and 70 Hz (or within 10 % of
    ``nominal_hz``) of a Hann-windowed FFT, refined by a least-squares fit of the fundamental
    and its harmonics (up to order 25, fewer where the sample rate or a very long record
    limits it) with Gauss-Newton iterations on the frequency. Fitting the harmonics too keeps
    them from biasing the estimate over a record that is not a whole number of cycles: with
    harmonics up to 90 % of the fundamental and 5 % noise, 5 to 50 cycles at 3 to 25 kS/s
    give errors below 0.002 Hz (``tests/test_capture.py``).

    Parameters
    ----------
    x
        Samples, preferably the voltage (it is the cleaner signal) [V or A].
    sample_rate_hz
        Sampling rate [Hz].
    nominal_hz
        Expected mains frequency [Hz] to narrow the search, or None for 40..70 Hz.
    """
    x = np.asarray(x, dtype=float)
    n = x.size
    fs = float(sample_rate_hz)
    peak = float(np.max(np.abs(x))) if n else 0.0
    if not (np.isfinite(peak) and peak > 0):
        raise InputError("the record is zero throughout; no mains fundamental to find")
    x = x / peak  # the fit is scale-free; unit peak keeps its normal equations from underflow
    if n / fs * 40.0 < 1.0:
        raise InputError(
            f"the record lasts {n / fs * 1e3:.3g} ms, less than one mains cycle; "
            "expected at least one whole cycle"
        )
    # A long record is estimated from its central 2**16 samples (2.6 s at 25 kS/s, 130 cycles)
    # to bound the work; its frequency is then the mean over that span.
    if n > 1 << 16:
        mid = (n - (1 << 16)) // 2
        x, n = x[mid : mid + (1 << 16)], 1 << 16
    lo, hi = (40.0, 70.0) if nominal_hz is None else (0.9 * nominal_hz, 1.1 * nominal_hz)
    xc = x - x.mean()
    nfft = max(int(2 ** np.ceil(np.log2(n))) * 4, 1 << 14)
    spec = np.abs(np.fft.rfft(xc * np.hanning(n), nfft))
    f = np.fft.rfftfreq(nfft, 1 / fs)
    band = (f >= lo) & (f <= hi)
    if not np.any(band) or spec[band].max() <= 0:
        raise InputError(f"no mains fundamental found between {lo:g} and {hi:g} Hz")
    # a fundamental stands far above the spectrum's typical level (its leakage floor); a
    # spike or noise spreads evenly and has none: no peak to refine
    if spec[band].max() < FUNDAMENTAL_PROMINENCE * float(np.median(spec[1:])):
        raise InputError(f"no mains fundamental stands out between {lo:g} and {hi:g} Hz (the "
                         "record looks like noise, a step or a single spike)")
    f0 = float(f[band][np.argmax(spec[band])])
    # Gauss-Newton refinement of a least-squares fit of a DC term plus harmonics 1..H on a
    # common fundamental frequency: first the fundamental alone (wide capture range), then
    # with the harmonics, which are not orthogonal to the fundamental over a record that is
    # not a whole number of cycles and would otherwise bias the estimate.
    t = np.arange(n) / fs
    t = t - t.mean()
    h_max = int(min(25, (fs / 2) / (1.1 * f0) - 1, max(1, 8e6 // (2 * n + 2))))
    try:
        for orders in (1, max(1, h_max)):
            f0 = _fit_frequency(x, t, f0, orders)
    except np.linalg.LinAlgError:
        raise InputError("no mains fundamental could be fitted to the record (it holds no "
                         f"sinusoid near {f0:.4g} Hz)") from None
    if not (np.isfinite(f0) and lo / 2 < f0 < 2 * hi):
        raise InputError(f"no mains fundamental found between {lo:g} and {hi:g} Hz (the fit "
                         "wandered off)")
    return f0


def _fit_frequency(x: np.ndarray, t: np.ndarray, f0: float, orders: int) -> float:
    """Gauss-Newton on the frequency of ``c + sum_h a_h cos(h w t) + b_h sin(h w t)``.

    Solved through the normal equations (the columns are near-orthogonal sines and cosines,
    so they are well conditioned); stops when the step is below 1e-7 Hz.
    """
    hs = np.arange(1, orders + 1, dtype=float)
    for _ in range(30):
        ph = (2 * np.pi * f0) * np.outer(t, hs)
        C, S = np.cos(ph), np.sin(ph)
        A = np.column_stack([np.ones(t.size), C, S])
        G = A.T @ A
        coef = np.linalg.solve(G, A.T @ x)
        a, b = coef[1 : orders + 1], coef[orders + 1 :]
        d = (2 * np.pi) * t * ((C * (b * hs)).sum(axis=1) - (S * (a * hs)).sum(axis=1))
        r = x - A @ coef
        J = np.column_stack([A, d])
        step = np.linalg.solve(J.T @ J, J.T @ r)
        df = float(step[-1])
        f0 += df
        if abs(df) < 1e-7:
            break
    return f0


def resample_whole_cycles(
    current_a: np.ndarray,
    sample_rate_hz: float,
    frequency_hz: float,
    voltage_v: np.ndarray | None = None,
    samples_per_cycle: int = 1024,
    cycles: int | None = None,
    start: int = 0,
) -> Waveform:
    """Resample a record that is not synchronous with the mains onto whole cycles.

    The record is interpolated at ``samples_per_cycle`` points per cycle of ``frequency_hz``,
    over the largest whole number of cycles it holds (or ``cycles``), by
    :func:`interpolate_limited`: a cubic spline wherever it stays within what the samples
    allow, a monotone piecewise cubic elsewhere, so the result does not ring at a step (a
    dimmer firing) and its peak never exceeds the recorded samples'. With a sample rate well
    above the highest harmonic of interest (>= 20 samples per cycle of that harmonic) the
    harmonic error stays far below 0.1 % of the fundamental (``tests/test_capture.py``).

    The peaks and RMS of the recorded samples over the same cycles are kept in
    ``waveform.recorded`` (:class:`RecordedFigures`): the crest factor comes from them.

    Parameters
    ----------
    current_a, voltage_v
        Samples [A], [V].
    sample_rate_hz
        Original sampling rate [Hz].
    frequency_hz
        Fundamental frequency, e.g. from :func:`estimate_frequency` [Hz].
    samples_per_cycle
        Samples per cycle of the result [-].
    cycles
        Number of cycles to keep; default all whole cycles in the record.
    start
        First sample of the original record to use.
    """
    i = np.asarray(current_a, dtype=float)[start:]
    n = i.size
    t_end = (n - 1) / sample_rate_hz
    available = int(np.floor(t_end * frequency_hz + 1e-9))
    if available < 1:
        raise InputError(
            f"the record holds {t_end * frequency_hz:.3g} cycles of {frequency_hz:.4g} Hz; "
            "expected at least one whole cycle"
        )
    if cycles is None:
        cycles = available
    elif cycles > available:
        raise InputError(f"asked for {cycles} cycles but the record holds {available}")
    tn = np.arange(cycles * samples_per_cycle) * (sample_rate_hz / (samples_per_cycle * frequency_hz))
    ci = interpolate_limited(i, tn)
    # the recorded samples over the span [0, cycles / f): sample k stands for [k, k+1)
    span = cycles * sample_rate_hz / frequency_hz  # [recorded sample intervals]
    m = min(n, int(np.ceil(span - 1e-9)))
    weight = np.ones(m)
    weight[-1] = span - (m - 1)

    def peak_rms(x: np.ndarray) -> tuple[float, float]:
        x = x[:m]
        return float(np.max(np.abs(x))), float(np.sqrt(np.dot(weight, x * x) / span))

    i_pk, i_rms = peak_rms(i)
    cv, v_pk, v_rms = None, None, None
    if voltage_v is not None:
        v = np.asarray(voltage_v, dtype=float)[start:]
        cv = interpolate_limited(v, tn)
        v_pk, v_rms = peak_rms(v)
    rec = RecordedFigures(i_pk, i_rms, sample_rate_hz / frequency_hz, v_pk, v_rms)
    return Waveform(ci, samples_per_cycle * frequency_hz, frequency_hz, cv, cycles,
                    recorded=rec)


def interpolate_limited(x: np.ndarray, at: np.ndarray) -> np.ndarray:
    """Values of uniformly sampled ``x`` at fractional sample positions ``at`` [same unit].

    A not-a-knot cubic spline (fourth-order accurate, as good as band-limited interpolation
    for the harmonics of a well-sampled record) is used on every sample interval where it
    stays within a bound the samples set; on the others, the monotone piecewise cubic
    Hermite interpolant (PCHIP, Fritsch and Carlson 1980, derivatives by Fritsch and
    Butland 1984 as in :class:`scipy.interpolate.PchipInterpolator`), which on each interval
    lies between its two end samples.

    The bound on the interval from sample k to k+1: between ``x[k]`` and ``x[k+1]``, widened
    on the side of the curvature by ``|c| / 4`` where ``c`` is the smaller of the second
    differences ``x[j-1] - 2 x[j] + x[j+1]`` at ``j = k, k+1`` when they have the same sign,
    and 0 otherwise (minmod). A smooth peak between two samples exceeds them by at most
    ``|x''| T^2 / 8`` (a parabola through the samples), so a well-sampled sine keeps its
    spline; at a step the second differences on either side have opposite signs or one side
    is flat, the bound is the two samples themselves, and the spline's ringing (about 10 % of
    the step for a cubic spline) is replaced. Every result therefore lies within the
    bound of its interval: the overshoot beyond the neighbouring samples is at most a quarter
    of the smaller neighbouring second difference, zero at a step, and the largest value
    never exceeds the largest sample by more than that.

    Parameters
    ----------
    x
        Samples on a uniform grid (positions 0, 1, ..., n-1).
    at
        Positions to interpolate at, within ``[0, n-1]`` [sample intervals].

    References
    ----------
    F. N. Fritsch, R. E. Carlson, "Monotone piecewise cubic interpolation", SIAM J. Numer.
    Anal. 17 (1980) 238-246; F. N. Fritsch, J. Butland, "A method for constructing local
    monotone piecewise cubic interpolants", SIAM J. Sci. Stat. Comput. 5 (1984) 300-304.

    Examples
    --------
    >>> step = np.r_[np.zeros(8), np.ones(8)]
    >>> y = interpolate_limited(step, np.linspace(0, 15, 151))
    >>> float(y.min()), float(y.max())
    (0.0, 1.0)
    """
    from scipy.interpolate import CubicSpline, PchipInterpolator

    x = np.asarray(x, dtype=float)
    at = np.asarray(at, dtype=float)
    n = x.size
    pos = np.arange(n, dtype=float)
    y = CubicSpline(pos, x)(at)
    if n < 3:
        return y
    k = np.clip(np.floor(at).astype(np.intp), 0, n - 2)
    d2 = np.zeros(n)
    d2[1:-1] = x[:-2] - 2.0 * x[1:-1] + x[2:]
    a, b = d2[:-1], d2[1:]
    c = np.where(a * b > 0, np.sign(a) * np.minimum(np.abs(a), np.abs(b)), 0.0)
    lo = np.minimum(x[:-1], x[1:]) - np.maximum(c, 0.0) / 4.0
    hi = np.maximum(x[:-1], x[1:]) + np.maximum(-c, 0.0) / 4.0
    # a relative slack of 1e-12 of the record's scale keeps round-off from counting
    slack = 1e-12 * float(np.max(np.abs(x)))
    out = (y < lo[k] - slack) | (y > hi[k] + slack)
    if np.any(out):
        bad = np.zeros(n - 1, dtype=bool)
        bad[k[out]] = True
        sel = bad[k]  # the whole interval, so one interval is never half one, half the other
        y[sel] = PchipInterpolator(pos, x)(at[sel])
    return y


def shift_periodic(x: np.ndarray, angle_rad: float, cycles: int = 1) -> np.ndarray:
    """Delay a periodic record over whole cycles by ``angle_rad`` of the fundamental.

    ``y(t) = x(t - angle/w)``: the phasor of order h turns by ``-h * angle_rad``. A shift of a
    whole number of samples is an exact circular roll; any other shift is exact Fourier
    interpolation (the record is taken as band-limited). The last axis is time. This is the
    one place a waveform is moved in time (a line's current to the L1 reference, a capture
    to its voltage zero crossing, a case to its panel's voltage angle).

    >>> shift_periodic(np.array([0.0, 1.0, 0.0, 0.0]), np.pi / 2)
    array([0., 0., 1., 0.])
    """
    x = np.asarray(x, dtype=float)
    if angle_rad == 0:
        return x
    n = x.shape[-1]
    k = angle_rad / (2 * np.pi) * n / cycles
    if abs(k - round(k)) < 1e-9:
        return np.roll(x, int(round(k)), axis=-1)
    X0 = np.fft.rfft(x, axis=-1)
    turn = np.arange(X0.shape[-1]) * angle_rad / cycles
    X = X0 * np.exp(-1j * turn)
    if n % 2 == 0:  # the Nyquist bin of a real signal stays real
        X[..., -1] = X0[..., -1] * np.cos(turn[-1])
    return np.fft.irfft(X, n, axis=-1)
