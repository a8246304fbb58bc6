"""All light metrics of one periodic light waveform in one named result.

:func:`light_metrics` gathers the existing figures of :mod:`pqcalc.flicker` (percent
flicker, flicker index, dominant modulation, IEEE 1789 region) with the two metrics the EU
ecodesign rules use: SVM (:mod:`.svm`) and Pst_LM (:mod:`.flickermeter`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..flicker import Flicker, flicker
from .flickermeter import FlickerSeverity, pst_lm
from .svm import SvmResult, svm

__all__ = ["LightMetrics", "light_metrics"]


@dataclass(frozen=True)
class LightMetrics:
    """Temporal light modulation figures of one lamp at one setting.

    Attributes
    ----------
    svm
        Stroboscopic visibility measure [-] (IEC TR 63158); None when dark.
    pst_lm
        Short-term flicker severity of the light [-] (IEC TR 61547-1); None when dark.
    p_inst_max
        Largest instantaneous flicker sensation [-]; None when dark.
    percent_flicker, flicker_index
        IES figures as fractions [-] (see :class:`pqcalc.flicker.Flicker`); None when dark.
    modulation_frequency_hz
        Frequency of the largest modulation component [Hz]; None when steady or dark.
    mean_light
        Mean of the light in the unit given (relative output for the lamp models).
    ieee1789
        IEEE Std 1789-2015 region.
    period_s
        Duration the waveform covers [s].
    svm_detail, pst_detail, flicker_detail
        The full results behind the figures (None when dark).
    """

    svm: float | None
    pst_lm: float | None
    p_inst_max: float | None
    percent_flicker: float | None
    flicker_index: float | None
    modulation_frequency_hz: float | None
    mean_light: float
    ieee1789: str
    period_s: float
    svm_detail: SvmResult | None
    pst_detail: FlickerSeverity | None
    flicker_detail: Flicker

    @property
    def dark(self) -> bool:
        return self.svm is None

    def to_dict(self) -> dict:
        """JSON form: the figures, percentages where the key says ``_pct``."""
        d = self.flicker_detail.to_dict()
        d.update({
            "svm": self.svm,
            "pst_lm": self.pst_lm,
            "p_inst_max": self.p_inst_max,
            "period_s": self.period_s,
        })
        return d


def light_metrics(light, period_s: float, dark_below: float = 0.0) -> LightMetrics:
    """SVM, Pst_LM and the flicker figures of a periodic light waveform.

    Parameters
    ----------
    light
        Light samples over exactly ``period_s`` seconds (whole periods), in any unit; for a
        lamp model :attr:`pqcalc.circuits.GroupResult.light`.
    period_s
        The duration the samples cover [s]: ``solution.period_cycles / frequency_hz``.
    dark_below
        Mean light at or below which the lamp counts as dark (as in
        :func:`pqcalc.flicker.flicker`): the metrics are then None.

    The waveform must resolve 2 kHz (at least 4000 samples per second, for SVM); Pst_LM
    treats it as repeated for the standard's 10 min (see :func:`.flickermeter.pst_lm`).

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(4096) / 4096 * 0.02
    >>> m = light_metrics(1 + 0.3 * np.sin(2 * np.pi * 100 * t), 0.02)
    >>> round(m.svm, 3), m.pst_lm < 0.05      # 100 Hz ripple: stroboscopic, not flicker
    (1.154, True)
    """
    f = flicker(light, period_s, dark_below)
    if f.ieee1789 == "dark":
        return LightMetrics(None, None, None, None, None, None, f.mean_light, "dark",
                            float(period_s), None, None, f)
    x = np.asarray(light, dtype=float)
    s = svm(x, period_s, periodic=True)
    p = pst_lm(x, period_s)
    return LightMetrics(s.svm, p.pst, p.p_inst_max, f.percent_flicker, f.flicker_index,
                        f.modulation_frequency_hz, f.mean_light, f.ieee1789, float(period_s),
                        s, p, f)
