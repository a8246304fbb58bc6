"""Limit evaluators of the harmonic standards; the limit values live in ``standards_limits/``.

- :mod:`.limits`: :func:`load_limits` reads one table by key; :func:`known_keys` lists them.
- :mod:`.iec61000_3_2`: equipment emission (Classes A to D, small lighting options a, b, c,
  dimmed states): :func:`evaluate_fixture`, :func:`evaluate_dimmable`, :func:`waveform_test`.
- :mod:`.ieee519`: the point of common coupling: :func:`evaluate_pcc`,
  :func:`transformer_short_circuit_current`.

Results guide equipment choices: they support, and never replace, the standard's text, the
local electrical code and a licensed professional.
"""

from .iec61000_3_2 import (
    DIMMED_RULE_NOTE,
    EQUIPMENT_CLASSES,
    DimmableResult,
    EquipmentClass,
    WaveformTestResult,
    dimmed_test_powers,
    evaluate_dimmable,
    evaluate_fixture,
    waveform_test,
)
from .ieee519 import EDITIONS, PccResult, evaluate_pcc, transformer_short_circuit_current
from .limits import known_keys, load_limits
from .results import CAUTION, Check, FixtureResult, RuleResult

__all__ = [
    "load_limits",
    "known_keys",
    "Check",
    "RuleResult",
    "FixtureResult",
    "DimmableResult",
    "WaveformTestResult",
    "EquipmentClass",
    "EQUIPMENT_CLASSES",
    "EDITIONS",
    "DIMMED_RULE_NOTE",
    "CAUTION",
    "evaluate_fixture",
    "evaluate_dimmable",
    "waveform_test",
    "dimmed_test_powers",
    "evaluate_pcc",
    "PccResult",
    "transformer_short_circuit_current",
]
