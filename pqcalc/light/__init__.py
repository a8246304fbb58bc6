"""Temporal light artefacts as the rules measure them: SVM, Pst_LM, voltage-fluctuation
immunity, dimmer jitter and the EU ecodesign limits for light sources.

The surface::

    from pqcalc.light import light_metrics, eu_ecodesign_check

    sol = solve_circuit(supply, dimmer, loads)
    m = light_metrics(sol.groups[0].light, sol.period_cycles / supply.frequency_hz)
    m.svm, m.pst_lm                       # IEC TR 63158 SVM, IEC TR 61547-1 Pst_LM
    eu_ecodesign_check(svm=m.svm, pst_lm=m.pst_lm, power_w=9.0, displacement_factor=0.6)

Modules: :mod:`.svm` (stroboscopic visibility measure), :mod:`.flickermeter` (the
IEC 61000-4-15 voltage flickermeter and the IEC TR 61547-1 light flickermeter),
:mod:`.immunity` (a lamp's Pst_LM under the standard's voltage fluctuation; firing jitter),
:mod:`.metrics` (all figures of one light waveform), :mod:`.limits` (Regulation (EU)
2019/2020 as data, and its verdicts).
"""

from __future__ import annotations

from .flickermeter import (
    FlickerSeverity,
    pst_lm,
    pst_lm_record,
    pst_voltage,
    pst_voltage_record,
)
from .immunity import (
    ImmunityResult,
    JitterResult,
    dimmer_jitter_pst_lm,
    fluctuation_voltage,
    reference_fluctuation,
    voltage_fluctuation_immunity,
)
from .limits import (
    EcodesignResult,
    EcodesignVerdict,
    eu_ecodesign_check,
    load_eu_light_source_limits,
)
from .metrics import LightMetrics, light_metrics
from .svm import SvmResult, stroboscopic_threshold, svm, svm_of_components

__all__ = [
    "LightMetrics",
    "light_metrics",
    "SvmResult",
    "svm",
    "svm_of_components",
    "stroboscopic_threshold",
    "FlickerSeverity",
    "pst_lm",
    "pst_lm_record",
    "pst_voltage",
    "pst_voltage_record",
    "ImmunityResult",
    "JitterResult",
    "voltage_fluctuation_immunity",
    "dimmer_jitter_pst_lm",
    "reference_fluctuation",
    "fluctuation_voltage",
    "EcodesignResult",
    "EcodesignVerdict",
    "eu_ecodesign_check",
    "load_eu_light_source_limits",
]
