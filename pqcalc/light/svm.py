"""Stroboscopic visibility measure (SVM) of a light waveform.

``SVM = (sum_m (C_m / T_m)^3.7)^(1/3.7)``: ``C_m`` is the relative amplitude (peak, over
the mean) of the m-th Fourier component of the light, ``T_m`` the stroboscopic-effect
contrast threshold of a sine modulation at that component's frequency. ``SVM = 1`` is the
visibility threshold of the average observer; a single sine modulation of relative
amplitude ``C`` at frequency ``f`` has ``SVM = C / T(f)``.

What is used here, and how sure it is:

- **Summation**: the Minkowski sum with exponent 3.7 over the trigonometric Fourier series
  of the relative illuminance, IEC TR 63158:2018 / CIE TN 006:2016 (seen in a public
  secondary copy of the formula: the encyclopaedia article on the stroboscopic effect,
  citing IEC TR 63158).
- **Threshold function**: the stroboscopic-effect contrast threshold function of the
  "standard observer", a power function fitted through the aggregated results of five
  perception experiments (Perz et al., J. Opt. Soc. Am. A 35(2):309, 2018, open access):
  ``T(f) = 2.865e-5 f^1.543 + 0.225`` with ``f`` in Hz (the form "power function" is seen in
  the paper's abstract; the coefficients are seen in a secondary copy, the encyclopaedia
  article on the stroboscopic effect). An earlier threshold function of CIE TN 006:2016 (a
  logistic shape) is not used: its coefficients could not be confirmed publicly.
- **Frequency range**: components from 80 Hz to 2000 Hz inclusive; below 80 Hz the light
  is judged as flicker (Pst_LM), above 2 kHz the stroboscopic effect is not visible in
  general lighting (seen in secondary summaries of CIE TN 006:2016 and IEC TR 63158: the
  stroboscopic effect covers about 80 Hz to 2000 Hz; certainty: secondary). The
  components are those of the waveform as given: a periodic waveform over whole periods
  (its lines fall exactly on the harmonics of its period), or a record of at least 1 s
  (CIE TN 006's window; rectangular window, no leakage correction).

References
----------
IEC TR 63158:2018 + COR1, *Equipment for general lighting purposes - Objective test method
for stroboscopic effects of lighting equipment*.
CIE TN 006:2016, *Visual aspects of time-modulated lighting systems - Definitions and
measurement models*.
M. Perz, D. Sekulovski, I. Vogels, I. Heynderickx, *Stroboscopic effect: contrast threshold
function and dependence on illumination level*, J. Opt. Soc. Am. A 35(2):309-319 (2018).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError

__all__ = [
    "SvmResult",
    "svm",
    "svm_of_components",
    "stroboscopic_threshold",
    "SVM_EXPONENT",
    "SVM_F_MIN_HZ",
    "SVM_F_MAX_HZ",
    "THRESHOLD_COEFFS",
    "MIN_RECORD_S",
]

#: Minkowski exponent of the summation (IEC TR 63158, CIE TN 006; seen, secondary)
SVM_EXPONENT = 3.7
#: frequency range of the summation [Hz], both ends included (secondary)
SVM_F_MIN_HZ = 80.0
SVM_F_MAX_HZ = 2000.0
#: T(f) = a f^b + c of the standard observer (Perz et al. 2018; seen, secondary copy)
THRESHOLD_COEFFS = (2.865e-5, 1.543, 0.225)
#: shortest non-periodic record [s] (CIE TN 006 observation window, secondary)
MIN_RECORD_S = 1.0
#: components below this fraction of the mean are numerical noise of a steady light
NOISE_FRACTION = 1e-9


@dataclass(frozen=True)
class SvmResult:
    """SVM of one light waveform and the components behind it.

    Attributes
    ----------
    svm
        Stroboscopic visibility measure [-] (0 for a light without components in range).
    components
        ``(frequency_hz, relative_amplitude, threshold)`` of every component in
        80..2000 Hz that contributes (relative amplitude above numerical noise).
    dominant_hz
        Frequency of the component with the largest ``C/T``, or None.
    """

    svm: float
    components: tuple[tuple[float, float, float], ...]
    dominant_hz: float | None

    def to_dict(self) -> dict:
        return {
            "svm": self.svm,
            "dominant_hz": self.dominant_hz,
            "components": [{"frequency_hz": f, "relative_amplitude": c, "threshold": t}
                           for f, c, t in self.components],
        }


def stroboscopic_threshold(frequency_hz):
    """Stroboscopic-effect contrast threshold ``T(f)`` of the standard observer [-]:
    the relative amplitude of a sine modulation at ``f`` that is just visible.

    ``T(f) = 2.865e-5 f^1.543 + 0.225`` (Perz et al. 2018); defined here for
    80 Hz <= f <= 2000 Hz, the range of the SVM summation. Outside it: InputError.

    >>> round(stroboscopic_threshold(100.0), 4)
    0.2599
    """
    f = np.asarray(frequency_hz, dtype=float)
    if not np.all(np.isfinite(f)) or np.any(f < SVM_F_MIN_HZ) or np.any(f > SVM_F_MAX_HZ):
        raise InputError(
            f"frequency_hz: the stroboscopic-effect threshold is defined from {SVM_F_MIN_HZ:g} "
            f"to {SVM_F_MAX_HZ:g} Hz, got {frequency_hz}")
    a, b, c = THRESHOLD_COEFFS
    t = a * f ** b + c
    return float(t) if t.ndim == 0 else t


def svm_of_components(frequencies_hz, relative_amplitudes) -> float:
    """The Minkowski sum over given sine components (``C_m`` relative peak amplitudes at
    ``f_m``); components outside 80..2000 Hz do not count.

    >>> round(svm_of_components([100.0], [0.2599]), 3)
    1.0
    """
    f = np.atleast_1d(np.asarray(frequencies_hz, dtype=float))
    c = np.atleast_1d(np.asarray(relative_amplitudes, dtype=float))
    if f.shape != c.shape:
        raise InputError("relative_amplitudes: expected one amplitude per frequency")
    if np.any(~np.isfinite(c)) or np.any(c < 0):
        raise InputError("relative_amplitudes: expected finite amplitudes >= 0")
    if np.any(~np.isfinite(f)) or np.any(f <= 0):
        raise InputError("frequencies_hz: expected positive frequencies [Hz]")
    keep = (f >= SVM_F_MIN_HZ) & (f <= SVM_F_MAX_HZ)
    if not np.any(keep):
        return 0.0
    r = c[keep] / stroboscopic_threshold(f[keep])
    return float(np.sum(r ** SVM_EXPONENT) ** (1.0 / SVM_EXPONENT))


def _light(light) -> np.ndarray:
    x = np.asarray(light, dtype=float)
    if x.ndim != 1 or x.size < 8:
        raise InputError(f"light: expected a 1-D waveform of at least 8 samples, got shape "
                         f"{x.shape}")
    if not np.all(np.isfinite(x)):
        raise InputError("light: the samples must be finite numbers")
    peak = float(np.max(np.abs(x)))
    if float(np.min(x)) < -1e-3 * peak:
        raise InputError(f"light: light cannot be negative, got a minimum of {np.min(x):g}")
    x = np.maximum(x, 0.0)
    if not float(np.mean(x)) > 0:
        raise InputError("light: the lamp is dark (mean light 0); SVM is undefined")
    return x


def svm(light, period_s: float, periodic: bool = True) -> SvmResult:
    """SVM of a light waveform over ``period_s`` seconds.

    Parameters
    ----------
    light
        Light samples, any unit (the measure uses ratios to the mean), uniform over
        ``period_s`` with the last sample one step before its end.
    period_s
        Duration the samples cover [s]: whole periods of a periodic light (a solved steady
        state: ``period_cycles / frequency_hz``), or the length of a record.
    periodic
        True: the samples are whole periods (any length). False: a record, which must
        last at least :data:`MIN_RECORD_S`.

    The samples must resolve 2 kHz: at least 4000 samples per second.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(2000) / 2000 * 0.02
    >>> round(svm(1 + 0.3 * np.sin(2 * np.pi * 100 * t), 0.02).svm, 3)   # 0.3 / T(100)
    1.154
    """
    x = _light(light)
    if not (np.isfinite(period_s) and period_s > 0):
        raise InputError(f"period_s: expected a positive duration [s], got {period_s}")
    rate = x.size / period_s
    if rate < 2 * SVM_F_MAX_HZ:
        raise InputError(
            f"light: {x.size} samples over {period_s:g} s is {rate:g} samples/s; SVM needs "
            f"components up to {SVM_F_MAX_HZ:g} Hz, i.e. at least {2 * SVM_F_MAX_HZ:g} "
            "samples/s")
    if not periodic and period_s < MIN_RECORD_S:
        raise InputError(
            f"light: a record of {period_s:g} s is shorter than the {MIN_RECORD_S:g} s SVM "
            "needs (pass whole periods with periodic=True instead)")
    X = np.fft.rfft(x) / x.size
    mean = float(X[0].real)
    amp = 2.0 * np.abs(X[1:]) / mean
    if x.size % 2 == 0:
        amp[-1] /= 2.0
    f = np.arange(1, X.size) / period_s
    keep = (f >= SVM_F_MIN_HZ - 1e-9) & (f <= SVM_F_MAX_HZ + 1e-9) & (amp > NOISE_FRACTION)
    fk = np.clip(f[keep], SVM_F_MIN_HZ, SVM_F_MAX_HZ)
    ck = amp[keep]
    if fk.size == 0:
        return SvmResult(0.0, (), None)
    tk = stroboscopic_threshold(fk)
    r = ck / tk
    value = float(np.sum(r ** SVM_EXPONENT) ** (1.0 / SVM_EXPONENT))
    comps = tuple((float(a), float(b), float(c)) for a, b, c in zip(fk, ck, tk, strict=True))
    return SvmResult(value, comps, float(fk[int(np.argmax(r))]))
