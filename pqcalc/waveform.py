"""The :class:`Waveform` value: uniformly sampled current (and voltage) over whole cycles.

Everything pqcalc analyses, whether simulated by a circuit model or imported from a recorder,
becomes a ``Waveform`` first. It holds samples over a *whole number* of fundamental cycles,
so the discrete Fourier transform of the record has each harmonic order exactly on a bin
(order ``h`` at bin ``h * cycles``) and no leakage.

Records that are not synchronous with the mains (every real one) are brought onto whole
cycles by :func:`resample_whole_cycles` after the fundamental frequency has been estimated
by :func:`estimate_frequency`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError

__all__ = [
    "Waveform",
    "estimate_frequency",
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
        )

    def __add__(self, other: Waveform) -> Waveform:
        """Sample-by-sample sum of the currents of two records on the same grid."""
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
        """One fundamental cycle of the record (default the last one)."""
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
    f0 = float(f[band][np.argmax(spec[band])])
    # Gauss-Newton refinement of a least-squares fit of a DC term plus harmonics 1..H on a
    # common fundamental frequency: first the fundamental alone (wide capture range), then
    # with the harmonics, which are not orthogonal to the fundamental over a record that is
    # not a whole number of cycles and would otherwise bias the estimate.
    t = np.arange(n) / fs
    t = t - t.mean()
    h_max = int(min(25, (fs / 2) / (1.1 * f0) - 1, max(1, 8e6 // (2 * n + 2))))
    for orders in (1, max(1, h_max)):
        f0 = _fit_frequency(x, t, f0, orders)
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

    The record is interpolated with a cubic spline at ``samples_per_cycle`` points per cycle
    of ``frequency_hz``, over the largest whole number of cycles it holds (or ``cycles``).
    With a sample rate well above the highest harmonic of interest (>= 20 samples per cycle
    of that harmonic) the interpolation error stays far below 0.1 % of the fundamental.

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
    from scipy.interpolate import CubicSpline

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
    t = np.arange(n) / sample_rate_hz
    tn = np.arange(cycles * samples_per_cycle) / (samples_per_cycle * frequency_hz)
    ci = CubicSpline(t, i)(tn)
    cv = None
    if voltage_v is not None:
        v = np.asarray(voltage_v, dtype=float)[start:]
        cv = CubicSpline(t, v)(tn)
    return Waveform(ci, samples_per_cycle * frequency_hz, frequency_hz, cv, cycles)


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
