"""Temporal light modulation: percent flicker, flicker index, modulation frequency, and the
IEEE Std 1789-2015 risk regions.

Pure functions on a light waveform that covers whole periods (uniform samples, the last
sample one step before the period ends, as :class:`~pqcalc.waveform.Waveform` holds them).
The light may be in any unit (relative output, lumens, LED current): every figure is a ratio.

A filament's thermal inertia already smooths the light the lamp models return
(:attr:`pqcalc.circuits.GroupResult.light`); pass that light, not the lamp current.

References
----------
IES Lighting Handbook, 10th ed. (IES, 2011): percent flicker and flicker index.
IEEE Std 1789-2015, *Recommended Practices for Modulating Current in High-Brightness LEDs for
Mitigating Health Risks to Viewers*, clause 8 (recommended practice): the low-risk and
no-observable-effect lines of modulation depth against modulation frequency.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from .errors import InputError

__all__ = [
    "Flicker",
    "Ieee1789Region",
    "IEEE1789_REGIONS",
    "flicker",
    "percent_flicker",
    "flicker_index",
    "dominant_modulation",
    "ieee1789_limits",
    "ieee1789_region",
]

#: IEEE Std 1789-2015 reading of one light waveform: ``no-observable-effect`` (below the
#: NOE line, or above 3000 Hz), ``low-risk`` (below the low-risk line, or above 1250 Hz),
#: ``above-low-risk`` (outside both), ``dark`` (no light: the figures do not apply)
Ieee1789Region = Literal["no-observable-effect", "low-risk", "above-low-risk", "dark"]
IEEE1789_REGIONS: tuple[str, ...] = get_args(Ieee1789Region)

#: IEEE Std 1789-2015, clause 8: Mod% limit = slope x f [Hz], per frequency band.
#: Low risk: 0.025 f below 90 Hz, 0.08 f from 90 to 1250 Hz, exempt above 1250 Hz.
#: No observable effect: 0.01 f below 90 Hz, 0.0333 f from 90 to 3000 Hz, exempt above.
LOW_RISK_SLOPES = ((90.0, 0.025), (1250.0, 0.08))  # (band upper edge [Hz], %/Hz)
NOE_SLOPES = ((90.0, 0.01), (3000.0, 0.0333))

#: negative light down to this fraction of the largest |sample| is read as 0: a circuit
#: model's off-state leakage (a string's tiny reverse power) gives such values; below it
#: the input is refused
NEGATIVE_TOLERANCE = 1e-3

#: relative size of the largest modulation component below which the light counts as
#: steady (no dominant frequency): numerical noise of the solver and the FFT
STEADY_FRACTION = 1e-9


@dataclass(frozen=True)
class Flicker:
    """Flicker figures of one light waveform.

    Attributes
    ----------
    percent_flicker
        ``(max - min) / (max + min)`` as a fraction [-] (the IES percent flicker over 100;
        the same quantity as the modulation depth Mod% of IEEE Std 1789-2015 over 100).
        ``None`` when the lamp is dark.
    flicker_index
        Area above the mean over the total area, over whole periods [-]. ``None`` when dark.
    modulation_frequency_hz
        Frequency of the largest Fourier component of the light above DC [Hz]; ``None``
        when the light is steady or dark.
    modulation_amplitude
        Peak amplitude of that component over the mean light [-] (0 when steady).
    mean_light
        Mean of the light, in the unit given.
    ieee1789
        The region of IEEE Std 1789-2015 at the dominant frequency and ``percent_flicker``.
    low_risk_limit, noe_limit
        The low-risk and no-observable-effect limits of the modulation depth at the dominant
        frequency, as fractions [-]; ``None`` where exempt or steady.
    """

    percent_flicker: float | None
    flicker_index: float | None
    modulation_frequency_hz: float | None
    modulation_amplitude: float
    mean_light: float
    ieee1789: str
    low_risk_limit: float | None
    noe_limit: float | None

    def to_dict(self) -> dict:
        """JSON form: percentages where the key says ``_pct``."""

        def pct(x):
            return None if x is None else 100.0 * x

        return {
            "percent_flicker_pct": pct(self.percent_flicker),
            "flicker_index": self.flicker_index,
            "modulation_frequency_hz": self.modulation_frequency_hz,
            "modulation_amplitude_pct": pct(self.modulation_amplitude),
            "mean_light": self.mean_light,
            "ieee1789_region": self.ieee1789,
            "ieee1789_low_risk_limit_pct": pct(self.low_risk_limit),
            "ieee1789_noe_limit_pct": pct(self.noe_limit),
        }


def _light(light, name: str = "light") -> np.ndarray:
    x = np.asarray(light, dtype=float)
    if x.ndim != 1 or x.size < 4:
        raise InputError(f"{name}: expected a 1-D waveform of at least 4 samples, got shape "
                         f"{x.shape}")
    if not np.all(np.isfinite(x)):
        raise InputError(f"{name}: the samples must be finite numbers")
    lo = float(np.min(x))
    if lo < -NEGATIVE_TOLERANCE * max(float(np.max(np.abs(x))), 1e-300):
        raise InputError(f"{name}: light cannot be negative, got a minimum of {lo:g}")
    return np.maximum(x, 0.0)


def _dark(x: np.ndarray) -> bool:
    return not float(np.max(x)) > 0.0


def percent_flicker(light) -> float:
    """IES percent flicker as a fraction: ``(max - min) / (max + min)`` [-].

    >>> round(percent_flicker([1.0, 1.5, 1.0, 0.5]), 6)
    0.5
    """
    x = _light(light)
    if _dark(x):
        raise InputError("light: the lamp is dark (all samples 0); percent flicker is undefined")
    hi, lo = float(np.max(x)), float(np.min(x))
    return (hi - lo) / (hi + lo)


def flicker_index(light) -> float:
    """IES flicker index: area above the mean over the total area, whole periods [-].

    >>> flicker_index([0.0, 0.0, 0.0, 1.0])
    0.75
    """
    x = _light(light)
    if _dark(x):
        raise InputError("light: the lamp is dark (all samples 0); flicker index is undefined")
    if float(np.max(x)) == float(np.min(x)):
        return 0.0  # steady light (the mean's rounding would leave a few 1e-16)
    m = float(np.mean(x))
    return float(np.sum(np.maximum(x - m, 0.0)) / np.sum(x))


def dominant_modulation(light, period_s: float) -> tuple[float | None, float]:
    """Frequency [Hz] and relative peak amplitude [-] of the largest Fourier component of the
    light above DC, the waveform covering exactly ``period_s`` seconds.

    Returns ``(None, 0.0)`` for a steady or dark light.
    """
    x = _light(light)
    if not (np.isfinite(period_s) and period_s > 0):
        raise InputError(f"period_s: expected a positive duration [s], got {period_s}")
    X = np.fft.rfft(x) / x.size
    mean = float(X[0].real)
    if mean <= 0:
        return None, 0.0
    amp = 2.0 * np.abs(X[1:])
    if x.size % 2 == 0:
        amp[-1] /= 2.0  # the Nyquist line is not doubled
    k = int(np.argmax(amp))
    a = float(amp[k]) / mean
    if a <= STEADY_FRACTION:
        return None, 0.0
    return (k + 1) / period_s, a


def ieee1789_limits(frequency_hz: float) -> tuple[float | None, float | None]:
    """Low-risk and no-observable-effect limits of the modulation depth at a frequency, as
    fractions [-]; ``None`` where the recommended practice exempts the frequency (above
    1250 Hz for low risk, above 3000 Hz for no observable effect).

    References
    ----------
    IEEE Std 1789-2015, clause 8, recommended practices 1 and 2.

    >>> ieee1789_limits(100.0)
    (0.08, 0.0333)
    """
    f = float(frequency_hz)
    if not (np.isfinite(f) and f > 0):
        raise InputError(f"frequency_hz: expected a positive frequency, got {frequency_hz}")

    def limit(slopes):
        for top, slope in slopes:
            if f < top or (top == slopes[-1][0] and f <= top):
                return slope * f / 100.0
        return None

    return limit(LOW_RISK_SLOPES), limit(NOE_SLOPES)


def ieee1789_region(modulation: float, frequency_hz: float | None) -> str:
    """The IEEE Std 1789-2015 region of a modulation depth (fraction, the percent flicker over
    100) at a frequency [Hz]; ``frequency_hz=None`` means steady light.

    The limits are strict (``Mod% < slope x f``). A frequency above 3000 Hz is exempt from
    both lines (no observable effect); from 1250 to 3000 Hz only the NOE line applies
    (exempt from the low-risk line, so at worst low risk).

    >>> ieee1789_region(0.05, 100.0)
    'low-risk'
    >>> ieee1789_region(0.05, 60.0)
    'above-low-risk'
    """
    m = float(modulation)
    if not (np.isfinite(m) and 0 <= m <= 1):
        raise InputError(f"modulation: expected a fraction 0..1, got {modulation}")
    if frequency_hz is None or m == 0:
        return "no-observable-effect"
    low, noe = ieee1789_limits(frequency_hz)
    if noe is None or m < noe:
        return "no-observable-effect"
    if low is None or m < low:
        return "low-risk"
    return "above-low-risk"


def flicker(light, period_s: float, dark_below: float = 0.0) -> Flicker:
    """All flicker figures of a light waveform over exactly ``period_s`` seconds (whole
    periods of the light; for a lamp, the solution's period, ``period_cycles / f``).

    A light whose mean is at or below ``dark_below`` (in the light's unit; default 0: only
    no light at all) counts as dark: region ``dark``, no figures. For the lamp models'
    relative light, :data:`pqcalc.circuits.curve.NUMERIC_DARK` separates a solver's
    off-state leakage from light.

    The IEEE 1789 region uses the whole waveform's modulation depth at its dominant frequency
    (the usual reading of the recommended practice for one dominant component).

    >>> import numpy as np
    >>> t = np.arange(1000) / 1000 * 0.01
    >>> f = flicker(1 + 0.2 * np.sin(2 * np.pi * 100 * t), 0.01)
    >>> round(f.percent_flicker, 4), round(f.flicker_index, 4), f.modulation_frequency_hz
    (0.2, 0.0637, 100.0)
    >>> f.ieee1789  # 20 % at 100 Hz is above the 8 % low-risk line
    'above-low-risk'
    """
    x = _light(light)
    if not (np.isfinite(dark_below) and dark_below >= 0):
        raise InputError(f"dark_below: expected a level >= 0, got {dark_below}")
    if _dark(x) or float(np.mean(x)) <= dark_below:
        return Flicker(None, None, None, 0.0, float(np.mean(x)), "dark", None, None)
    pf = percent_flicker(x)
    fi = flicker_index(x)
    f_mod, amp = dominant_modulation(x, period_s)
    low = noe = None
    if f_mod is not None:
        low, noe = ieee1789_limits(f_mod)
    region = ieee1789_region(min(pf, 1.0), f_mod)
    return Flicker(pf, fi, f_mod, amp, float(np.mean(x)), region, low, noe)
