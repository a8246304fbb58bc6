"""The flickermeter: IEC 61000-4-15 (voltage in) and IEC TR 61547-1 (light in, Pst_LM).

Both meters share one chain after their input stage:

1. input adaptor: the voltage meter squares the voltage and divides by its mean square
   (block 1 and the square-law demodulator of block 2); the light meter divides the light
   by its mean (block a of IEC TR 61547-1);
2. weighting: a first-order 0.05 Hz high-pass, a 6th-order Butterworth low-pass (35 Hz; the
   voltage meter on 60 Hz mains 42 Hz) and the eye weighting filter. The voltage meter's
   filter is the response of a 60 W gas-filled incandescent lamp and the eye together (the
   lamp is inside it: IEC 61000-4-15 has no separate lamp block); the light meter's filter
   is the eye alone (IEC TR 61547-1, equation A.5: the lamp taken out, the light is the
   input);
3. squaring and a first-order low-pass with a 300 ms time constant, scaled to the
   instantaneous flicker sensation ``P_inst`` (1 = the perceptibility threshold);
4. the cumulative probability of ``P_inst`` over the observation (10 min) and
   ``Pst = sqrt(0.0314 P0.1 + 0.0525 P1s + 0.0657 P3s + 0.28 P10s + 0.08 P50s)``
   with the smoothed percentiles ``P50s = mean(P30, P50, P80)``,
   ``P10s = mean(P6, P8, P10, P13, P17)``, ``P3s = mean(P2.2, P3, P4)``,
   ``P1s = mean(P0.7, P1, P1.5)`` (``Px``: the level exceeded x % of the time).

Two ways through the chain:

- **periodic** (:func:`pst_lm`, :func:`pst_voltage`): the input covers whole periods of a
  periodic signal (a solved steady state, a test fluctuation over its common period). Every
  filter is linear and time-invariant, so in steady state its output is periodic too and is
  computed exactly in the frequency domain (each Fourier line times the analogue transfer
  function); squaring is done on a uniform grid fine enough for the band the filters pass.
  The steady ``P_inst`` repeats with the input's period, so its cumulative probability over
  the standard's 10 min (a whole number of periods plus at most one partial period) equals
  its distribution over one period, to within period/600 s of the probability axis. One
  period is therefore a documented, exact equivalent of the 10 min observation of the
  repeated waveform (a meter that has been running long enough to settle: the standard's
  own assumption). The percentiles are those of the continuous distribution (sorted samples,
  linear interpolation), the limit of the standard's classifier with fine classes.
- **record** (:func:`pst_lm_record`, :func:`pst_voltage_record`): a long record (a transient,
  a random fluctuation) runs through the digital filters (bilinear transform of the same
  analogue filters, second-order sections) at :data:`FS_INTERNAL_HZ`; the first
  ``settle_s`` seconds let the 0.05 Hz high-pass settle and are not classified; the next
  ``observation_s`` (default 600 s, the standard's short-term interval) are.

References
----------
IEC 61000-4-15:2010 (ed. 2.0), *Flickermeter - Functional and design specifications*,
clause 4 (blocks 1 to 5) and the weighting filter of block 3 (coefficients for 230 V and
120 V lamps); Pst formula of the statistical evaluation.
IEC TR 61547-1:2015, *Equipment for general lighting purposes - EMC immunity requirements -
Part 1: An objective voltage fluctuation immunity test method*, Annex A (the light
flickermeter: equation A.5, the eye-only weighting filter; equation A.6, its scaling).

Certainty of the constants (see :data:`CONSTANTS_SOURCE`): the 230 V weighting filter
coefficients and the light meter's filter and scaling were read in public implementations
of the standards (seen, secondary); the 120 V coefficients and the 42 Hz low-pass of the
60 Hz voltage meter are from memory and are checked here against the standard's table of
120 V fluctuations.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Literal, get_args

import numpy as np
from scipy import signal

from ..errors import InputError

__all__ = [
    "FlickerSeverity",
    "Lamp",
    "LAMPS",
    "FS_INTERNAL_HZ",
    "OBSERVATION_S",
    "SETTLE_S",
    "pst_lm",
    "pst_lm_record",
    "pst_voltage",
    "pst_voltage_record",
    "pst_from_pinst",
    "weighting_response",
    "light_gain_of_reference_lamp",
]

#: voltage meter's reference lamp: 230 V or 120 V, 60 W gas-filled incandescent
Lamp = Literal["230V", "120V"]
LAMPS: tuple[str, ...] = get_args(Lamp)

#: sample rate of the record path [Hz] (the filters pass < 40 Hz; squaring doubles it)
FS_INTERNAL_HZ = 2000.0
#: the standard's short-term observation interval [s]
OBSERVATION_S = 600.0
#: record path: seconds before classification starts (the 0.05 Hz high-pass has a 3.2 s
#: time constant; after 30 s its start transient is below 1e-4 of the step)
SETTLE_S = 30.0
#: periodic path: squaring grid of at least this rate [Hz] (the weighted signal is below
#: 1e-6 of its peak above 200 Hz, so its square is resolved without aliasing)
FS_PERIODIC_MIN_HZ = 1000.0
#: lowest sample rate the meter accepts [samples/s]: the chain passes < 40 Hz; 200 Hz keeps
#: that band and its square clear of aliases
MIN_RATE_HZ = 200.0
#: shortest record the record path accepts for its observation [s]
MIN_OBSERVATION_S = 10.0

# ------------------------------------------------------------------ filter constants
#: IEC 61000-4-15 block 3 weighting filter: (K, lambda, omega1..omega4) with the
#: frequencies in Hz (omega = 2 pi f). 230 V: seen in public implementations of ed. 2;
#: 120 V: from memory, checked against Table 1b in tests/test_light_pst.py.
WEIGHTING_COEFFS: dict[str, tuple[float, float, float, float, float, float]] = {
    "230V": (1.74802, 4.05981, 9.15494, 2.27979, 1.22535, 21.9),
    "120V": (1.6357, 4.167375, 9.077169, 2.939902, 1.394468, 17.31512),
}
#: 6th-order Butterworth low-pass of block 3 [Hz] by mains frequency (voltage meter)
LOWPASS_HZ = {50: 35.0, 60: 42.0}
#: first-order high-pass of block 3 [Hz]
HIGHPASS_HZ = 0.05
#: block 4 smoothing time constant [s]
SMOOTHING_S = 0.3
#: IEC 61000-4-15 calibration point: a sinusoidal fluctuation of this relative voltage
#: change dV/V (peak to peak over the mean) at this frequency gives P_inst,max = 1
#: (Table 1a/1b, 8.8 Hz row: 0.250 % at 230 V, 0.321 % at 120 V; seen)
CALIBRATION = {"230V": (8.8, 0.250e-2), "120V": (8.8, 0.321e-2)}

#: IEC TR 61547-1 equation A.5, the eye-only weighting filter of the light flickermeter:
#: numerator and denominator in descending powers of s (seen in a public implementation by
#: the report's co-authors; the printed "44 758" of the s^3 numerator term is 44.758, a
#: known typographical error noted in public summaries)
LIGHT_WEIGHTING_NUM = (0.041661, 44.758, 2715.6, 29839.0, 0.0)
LIGHT_WEIGHTING_DEN = (1.0, 196.32, 11781.0, 534820.0, 3505380.0)
#: IEC TR 61547-1 equation A.6: scaling of the squared, smoothed light to P_inst (derived
#: by its authors from the average of ten 60 W incandescent lamps; seen, secondary)
LIGHT_SCALING = 1.101603155420234e6
#: the light meter's Butterworth low-pass is 35 Hz whatever the mains frequency
LIGHT_LOWPASS_HZ = 35.0

#: the Pst weights and the percentiles behind each smoothed term (IEC 61000-4-15)
PST_TERMS: tuple[tuple[float, tuple[float, ...]], ...] = (
    (0.0314, (0.1,)),
    (0.0525, (0.7, 1.0, 1.5)),
    (0.0657, (2.2, 3.0, 4.0)),
    (0.28, (6.0, 8.0, 10.0, 13.0, 17.0)),
    (0.08, (30.0, 50.0, 80.0)),
)

CONSTANTS_SOURCE = {
    "weighting 230V": "IEC 61000-4-15:2010, block 3 (seen, public implementations)",
    "weighting 120V": "IEC 61000-4-15:2010, block 3 (memory; checked against Table 1b)",
    "light weighting": "IEC TR 61547-1:2015, eq. A.5 (seen, public implementation)",
    "light scaling": "IEC TR 61547-1:2015, eq. A.6 (seen, public implementation)",
    "Pst formula": "IEC 61000-4-15:2010, statistical evaluation (seen)",
}


@dataclass(frozen=True)
class FlickerSeverity:
    """Short-term flicker severity of one input.

    Attributes
    ----------
    pst
        ``Pst`` (voltage meter) or ``Pst_LM`` (light meter) [-]; 1 is the visibility
        threshold of the average observer.
    p_inst_max
        Largest instantaneous flicker sensation over the observation [-].
    percentiles
        ``(x, P_x)`` pairs: the level exceeded ``x`` % of the time, for every percentile the
        Pst formula uses.
    observation_s
        Length of input the statistics stand for [s]: one period for the periodic path
        (equivalent to 10 min of the repeated waveform), the classified record otherwise.
    method
        ``"periodic"`` or ``"record"``.
    meter
        ``"light (IEC TR 61547-1)"`` or ``"voltage (IEC 61000-4-15, 230V lamp)"`` etc.
    """

    pst: float
    p_inst_max: float
    percentiles: tuple[tuple[float, float], ...]
    observation_s: float
    method: str
    meter: str

    def to_dict(self) -> dict:
        return {
            "pst": self.pst,
            "p_inst_max": self.p_inst_max,
            "percentiles": {f"P{x:g}": v for x, v in self.percentiles},
            "observation_s": self.observation_s,
            "method": self.method,
            "meter": self.meter,
        }


# ------------------------------------------------------------------ filters
def _lowpass_for(mains_hz: float) -> float:
    key = 60 if abs(mains_hz - 60.0) < abs(mains_hz - 50.0) else 50
    return LOWPASS_HZ[key]


@functools.lru_cache(maxsize=16)
def _analog_zpk(meter: str, lowpass_hz: float) -> tuple[np.ndarray, np.ndarray, float]:
    """Zeros, poles, gain of high-pass x Butterworth x weighting (rad/s)."""
    zs, ps, k = [np.array([0.0])], [np.array([-2 * np.pi * HIGHPASS_HZ])], 1.0
    zb, pb, kb = signal.butter(6, 2 * np.pi * lowpass_hz, analog=True, output="zpk")
    zs.append(zb)
    ps.append(pb)
    k *= kb
    if meter == "light":
        zw, pw, kw = signal.tf2zpk(LIGHT_WEIGHTING_NUM, LIGHT_WEIGHTING_DEN)
    else:
        kk, lam, f1, f2, f3, f4 = WEIGHTING_COEFFS[meter]
        w1, w2, w3, w4, lm = (2 * np.pi * f for f in (f1, f2, f3, f4, lam))
        # K w1 s (1 + s/w2) / ((s^2 + 2 lambda s + w1^2)(1 + s/w3)(1 + s/w4))
        num = np.polymul([kk * w1, 0.0], [1.0 / w2, 1.0])
        den = np.polymul(np.polymul([1.0, 2 * lm, w1 * w1], [1.0 / w3, 1.0]), [1.0 / w4, 1.0])
        zw, pw, kw = signal.tf2zpk(num, den)
    zs.append(zw)
    ps.append(pw)
    k *= kw
    return np.concatenate(zs), np.concatenate(ps), float(k)


def weighting_response(frequency_hz, meter: str = "light", mains_hz: float = 50.0):
    """Complex response of the chain before squaring (high-pass, Butterworth, weighting)
    at ``frequency_hz`` [Hz]; ``meter`` is ``"light"``, ``"230V"`` or ``"120V"``."""
    f = np.asarray(frequency_hz, dtype=float)
    lp = LIGHT_LOWPASS_HZ if meter == "light" else _lowpass_for(mains_hz)
    z, p, k = _analog_zpk(meter, lp)
    s = 2j * np.pi * f
    num = k * np.prod(s[..., None] - z, axis=-1) if z.size else k * np.ones_like(s)
    den = np.prod(s[..., None] - p, axis=-1)
    return num / den


def _smoothing_response(f):
    return 1.0 / (1.0 + 2j * np.pi * np.asarray(f, dtype=float) * SMOOTHING_S)


@functools.lru_cache(maxsize=8)
def _scaling(meter: str, mains_hz: float) -> float:
    """Block 4 gain: P_inst per (squared, smoothed) unit.

    Light meter: IEC TR 61547-1 eq. A.6. Voltage meter: set so that the calibration
    fluctuation gives P_inst,max = 1 in steady state. A sinusoidal fluctuation of relative
    change d (peak to peak) multiplies u^2 by (1 + (d/2) sin wt)^2, i.e. a fluctuation
    d sin wt of the normalised u^2 (plus d^2/8 terms, 1e-6 here); weighted, it is
    d|H| sin(wt + phi); squared, (d|H|)^2 (1 - cos(2wt + 2phi)) / 2; smoothed, its maximum is
    (d|H|)^2 (1 + |L(2f)|) / 2 with L the 300 ms low-pass.
    """
    if meter == "light":
        return LIGHT_SCALING
    f, d = CALIBRATION[meter]
    h = abs(complex(weighting_response(f, meter, mains_hz)))
    lf = abs(complex(_smoothing_response(2 * f)))
    return 2.0 / ((d * h) ** 2 * (1.0 + lf))


def light_gain_of_reference_lamp(frequency_hz, mains_hz: float = 50.0, lamp: str = "230V"):
    """Relative light amplitude per relative voltage amplitude [-] of the lamp implied by the
    two meters: the voltage meter's weighting (lamp and eye) over the light meter's (eye
    alone), both scaled to P_inst.

    A voltage ``1 + a sin wt`` gives the normalised u^2 fluctuation ``2a sin wt``; a light
    ``1 + c sin wt`` gives ``c sin wt``. Equal P_inst needs
    ``c sqrt(S_L) |H_L| = 2a sqrt(S_V) |H_V|``, so ``c / a = 2 sqrt(S_V/S_L) |H_V| / |H_L|``.
    For a tungsten lamp the quasi-static gain is about 3.4 to 3.7 (light ~ V^3.4..3.7,
    handbook value from memory) and falls with frequency above the filament's thermal
    corner.
    """
    f = np.asarray(frequency_hz, dtype=float)
    sv, sl = _scaling(lamp, mains_hz), _scaling("light", mains_hz)
    hv = np.abs(weighting_response(f, lamp, mains_hz))
    hl = np.abs(weighting_response(f, "light", mains_hz))
    return 2.0 * np.sqrt(sv / sl) * hv / hl


# ------------------------------------------------------------------ statistics
def pst_from_pinst(pinst) -> tuple[float, tuple[tuple[float, float], ...]]:
    """``Pst`` and the percentiles ``(x, P_x)`` of instantaneous flicker samples.

    ``P_x`` is the level exceeded ``x`` % of the time: the (100 - x)-th percentile of the
    samples, linearly interpolated (the continuous limit of the standard's classifier).
    """
    p = np.asarray(pinst, dtype=float)
    if p.size < 2 or not np.all(np.isfinite(p)):
        raise InputError("pinst: expected at least 2 finite samples of P_inst")
    xs = sorted({x for _, grp in PST_TERMS for x in grp})
    levels = np.percentile(p, [100.0 - x for x in xs])
    lv = dict(zip(xs, (float(v) for v in levels), strict=True))
    total = sum(w * float(np.mean([lv[x] for x in grp])) for w, grp in PST_TERMS)
    return math.sqrt(max(total, 0.0)), tuple((x, lv[x]) for x in xs)


# ------------------------------------------------------------------ periodic path
def _periodic_pinst(x_rel: np.ndarray, period_s: float, meter: str, mains_hz: float
                    ) -> np.ndarray:
    """Steady-state P_inst over one period of the normalised input fluctuation ``x_rel``
    (relative to its mean, mean removed), by the exact frequency response."""
    n = x_rel.size
    X = np.fft.rfft(x_rel) / n
    f = np.arange(X.size) / period_s
    m = max(64, int(math.ceil(period_s * FS_PERIODIC_MIN_HZ)))
    m += m % 2
    kmax = min(X.size, m // 2 + 1)
    Y = np.zeros(m // 2 + 1, dtype=complex)
    Xk = X[:kmax].copy()
    if n % 2 == 0 and kmax == X.size and kmax < m // 2 + 1:
        Xk[-1] *= 0.5  # the input's Nyquist line holds one term, not a conjugate pair
    Y[:kmax] = Xk * weighting_response(f[:kmax], meter, mains_hz)
    Y[0] = 0.0  # the high-pass removes the mean exactly
    if m % 2 == 0 and kmax == m // 2 + 1:
        Y[-1] = Y[-1].real  # the Nyquist line of a real signal
    y = np.fft.irfft(Y * m, m)
    q = y * y
    Q = np.fft.rfft(q)
    fq = np.arange(Q.size) / period_s
    pinst = np.fft.irfft(Q * _smoothing_response(fq), m) * _scaling(meter, mains_hz)
    return np.maximum(pinst, 0.0)


def _check_period(n: int, period_s: float, name: str) -> None:
    if not (np.isfinite(period_s) and period_s > 0):
        raise InputError(f"period_s: expected a positive duration [s], got {period_s}")
    if period_s > OBSERVATION_S:
        raise InputError(
            f"period_s: a periodic input longer than the {OBSERVATION_S:g} s observation "
            f"({period_s:g} s) is not a steady flicker; pass it as a record "
            "(pst_lm_record / pst_voltage_record)")
    rate = n / period_s
    if rate < MIN_RATE_HZ:
        raise InputError(
            f"{name}: {n} samples over {period_s:g} s is {rate:g} samples/s; the flickermeter "
            f"needs at least {MIN_RATE_HZ:g} samples/s")


def _as_light(light, name: str = "light") -> np.ndarray:
    x = np.asarray(light, dtype=float)
    if x.ndim != 1 or x.size < 8:
        raise InputError(f"{name}: expected a 1-D waveform of at least 8 samples, got shape "
                         f"{x.shape}")
    if not np.all(np.isfinite(x)):
        raise InputError(f"{name}: the samples must be finite numbers")
    peak = float(np.max(np.abs(x)))
    if float(np.min(x)) < -1e-3 * peak:
        raise InputError(f"{name}: light cannot be negative, got a minimum of {np.min(x):g}")
    x = np.maximum(x, 0.0)
    if not float(np.mean(x)) > 0:
        raise InputError(f"{name}: the lamp is dark (mean light 0); Pst_LM is undefined")
    return x


def pst_lm(light, period_s: float) -> FlickerSeverity:
    """Pst_LM of a periodic light waveform (IEC TR 61547-1 light flickermeter).

    Parameters
    ----------
    light
        Light samples over exactly ``period_s`` (whole periods, uniform, the last sample one
        step before the period ends), in any unit: the meter divides by the mean. For a
        lamp model, :attr:`pqcalc.circuits.GroupResult.light`.
    period_s
        Duration the samples cover [s] (``period_cycles / frequency_hz`` for a solution).

    The waveform stands for itself repeated for the standard's 10 min: the result is the
    steady state of the meter, computed exactly over one period (see the module notes).

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(4000) / 4000 * 2.5          # 2.5 s = 22 periods of 8.8 Hz
    >>> round(pst_lm(1 + 0.1 * np.sin(2 * np.pi * 8.8 * t), 2.5).pst, 1) > 1
    True
    """
    x = _as_light(light)
    _check_period(x.size, period_s, "light")
    return _pst_lm_periodic(x, float(period_s))


def _pst_lm_periodic(x: np.ndarray, period_s: float) -> FlickerSeverity:
    """The periodic light meter on checked samples (a band-limited construction may dip
    below zero near sharp edges; only its mean must be positive)."""
    rel = x / float(np.mean(x)) - 1.0
    pinst = _periodic_pinst(rel, period_s, "light", 50.0)
    pst, pct = pst_from_pinst(pinst)
    return FlickerSeverity(pst, float(np.max(pinst)), pct, period_s, "periodic",
                           "light (IEC TR 61547-1)")


def _voltage_meter(lamp: str) -> str:
    if lamp not in LAMPS:
        raise InputError(f"lamp: expected one of {', '.join(LAMPS)}, got {lamp!r}")
    return lamp


def _check_mains(mains_hz: float) -> float:
    f = float(mains_hz)
    if not (np.isfinite(f) and 45.0 <= f <= 65.0):
        raise InputError(f"mains_hz: expected 50 or 60 Hz (45 to 65), got {mains_hz}")
    return f


def pst_voltage(voltage, period_s: float, mains_hz: float = 50.0, lamp: str = "230V"
                ) -> FlickerSeverity:
    """Pst of a periodic voltage waveform (IEC 61000-4-15 flickermeter, incandescent
    reference lamp ``lamp``).

    ``voltage`` holds instantaneous samples [V] over exactly ``period_s`` (a whole number of
    periods of both the mains and the fluctuation).
    """
    meter = _voltage_meter(lamp)
    mains = _check_mains(mains_hz)
    v = np.asarray(voltage, dtype=float)
    if v.ndim != 1 or v.size < 8 or not np.all(np.isfinite(v)):
        raise InputError("voltage: expected a 1-D waveform of at least 8 finite samples")
    _check_period(v.size, period_s, "voltage")
    if v.size / period_s < 8 * mains:
        raise InputError(f"voltage: {v.size / period_s:g} samples/s cannot resolve the "
                         f"{mains:g} Hz mains; expected at least {8 * mains:g}")
    u2 = v * v
    ms = float(np.mean(u2))
    if not ms > 0:
        raise InputError("voltage: the voltage is zero")
    pinst = _periodic_pinst(u2 / ms - 1.0, float(period_s), meter, mains)
    pst, pct = pst_from_pinst(pinst)
    return FlickerSeverity(pst, float(np.max(pinst)), pct, float(period_s), "periodic",
                           f"voltage (IEC 61000-4-15, {lamp} lamp)")


# ------------------------------------------------------------------ record path
@functools.lru_cache(maxsize=16)
def _digital_sos(meter: str, lowpass_hz: float, fs: float):
    z, p, k = _analog_zpk(meter, lowpass_hz)
    zd, pd, kd = signal.bilinear_zpk(z, p, k, fs)
    pre = signal.zpk2sos(zd, pd, kd)
    zs, ps, ks = signal.bilinear_zpk([], [-1.0 / SMOOTHING_S], 1.0 / SMOOTHING_S, fs)
    smooth = signal.zpk2sos(zs, ps, ks)
    return pre, smooth


def _resample(x: np.ndarray, fs: float) -> tuple[np.ndarray, float]:
    """``x`` at about FS_INTERNAL_HZ (anti-aliased polyphase resampling), and its rate."""
    if abs(fs - FS_INTERNAL_HZ) < 1e-9 * fs:
        return x, fs
    r = Fraction(FS_INTERNAL_HZ / fs).limit_denominator(4096)
    if r.numerator == 0:
        r = Fraction(1, 4096)
    y = signal.resample_poly(x, r.numerator, r.denominator)
    return y, fs * r.numerator / r.denominator


def _record_pinst(x_rel: np.ndarray, fs: float, meter: str, mains_hz: float) -> np.ndarray:
    lp = LIGHT_LOWPASS_HZ if meter == "light" else _lowpass_for(mains_hz)
    pre, smooth = _digital_sos(meter, lp, round(fs, 9))
    y = signal.sosfilt(pre, x_rel)
    return np.maximum(signal.sosfilt(smooth, y * y) * _scaling(meter, mains_hz), 0.0)


def _check_record(n: int, fs: float, name: str, observation_s: float, settle_s: float
                  ) -> None:
    if not (np.isfinite(fs) and fs > 0):
        raise InputError(f"sample_rate_hz: expected a positive rate [Hz], got {fs}")
    if fs < MIN_RATE_HZ:
        raise InputError(f"sample_rate_hz: the flickermeter needs at least {MIN_RATE_HZ:g} "
                         f"samples/s, got {fs:g}")
    if not (np.isfinite(observation_s) and observation_s >= MIN_OBSERVATION_S):
        raise InputError(f"observation_s: expected at least {MIN_OBSERVATION_S:g} s, got "
                         f"{observation_s}")
    if not (np.isfinite(settle_s) and settle_s >= 0):
        raise InputError(f"settle_s: expected a duration >= 0 [s], got {settle_s}")
    need = settle_s + observation_s
    have = n / fs
    if have + 0.5 / fs < need:
        raise InputError(
            f"{name}: the record covers {have:g} s; the flickermeter needs {need:g} s "
            f"({settle_s:g} s to settle + {observation_s:g} s observed). Give a longer record, "
            "a shorter observation_s (not the standard's 10 min), or, for a periodic "
            "waveform, the periodic form (pst_lm / pst_voltage)")


def pst_lm_record(light, sample_rate_hz: float, observation_s: float = OBSERVATION_S,
                  settle_s: float = SETTLE_S) -> FlickerSeverity:
    """Pst_LM of a light record (IEC TR 61547-1), through the digital filters.

    The record must cover ``settle_s + observation_s`` seconds; the light is divided by its
    mean over the whole record (block a), the first ``settle_s`` are not classified, the
    next ``observation_s`` are (the standard's 10 min by default; a shorter observation is
    not the standard's and is labelled so by its ``observation_s``).
    """
    x = _as_light(light)
    fs = float(sample_rate_hz)
    _check_record(x.size, fs, "light", observation_s, settle_s)
    return _pst_lm_record(x, fs, observation_s, settle_s)


def _pst_lm_record(x: np.ndarray, fs: float, observation_s: float, settle_s: float
                   ) -> FlickerSeverity:
    """The record light meter on checked samples (see :func:`_pst_lm_periodic`)."""
    rel = x / float(np.mean(x)) - 1.0
    rel, fsi = _resample(rel, fs)
    pinst = _record_pinst(rel, fsi, "light", 50.0)
    i0 = int(round(settle_s * fsi))
    seg = pinst[i0:i0 + int(round(observation_s * fsi))]
    pst, pct = pst_from_pinst(seg)
    return FlickerSeverity(pst, float(np.max(seg)), pct, seg.size / fsi, "record",
                           "light (IEC TR 61547-1)")


def pst_voltage_record(voltage, sample_rate_hz: float, mains_hz: float = 50.0,
                       lamp: str = "230V", observation_s: float = OBSERVATION_S,
                       settle_s: float = SETTLE_S) -> FlickerSeverity:
    """Pst of a voltage record (IEC 61000-4-15), through the digital filters.

    The square of the voltage is divided by its mean over the record (the input adaptor
    of a stationary record), then filtered at :data:`FS_INTERNAL_HZ`.
    """
    meter = _voltage_meter(lamp)
    mains = _check_mains(mains_hz)
    v = np.asarray(voltage, dtype=float)
    if v.ndim != 1 or v.size < 8 or not np.all(np.isfinite(v)):
        raise InputError("voltage: expected a 1-D waveform of at least 8 finite samples")
    fs = float(sample_rate_hz)
    _check_record(v.size, fs, "voltage", observation_s, settle_s)
    if fs < 8 * mains:
        raise InputError(f"sample_rate_hz: {fs:g} samples/s cannot resolve the {mains:g} Hz "
                         f"mains; expected at least {8 * mains:g}")
    u2 = v * v
    u2 = u2 / float(np.mean(u2)) - 1.0
    u2, fsi = _resample(u2, fs)
    pinst = _record_pinst(u2, fsi, meter, mains)
    i0 = int(round(settle_s * fsi))
    seg = pinst[i0:i0 + int(round(observation_s * fsi))]
    pst, pct = pst_from_pinst(seg)
    return FlickerSeverity(pst, float(np.max(seg)), pct, seg.size / fsi, "record",
                           f"voltage (IEC 61000-4-15, {lamp} lamp)")
