"""Limit evaluators of the harmonic standards; the limit values live in ``standards_limits/``.

- :mod:`.limits`: :func:`load_limits` reads one table by key; :func:`known_keys` lists them.
- :mod:`.iec61000_3_2`: equipment emission (Classes A to D, small lighting options a, b, c,
  dimmed states; editions 5.0 and 5.1 as data): :func:`evaluate_fixture`,
  :func:`evaluate_dimmable`, :func:`waveform_test`, :func:`editions`.
- :mod:`.ieee519`: the point of common coupling: :func:`evaluate_pcc`,
  :func:`transformer_short_circuit_current`.

Results guide equipment choices: they support, and never replace, the standard's text, the
local electrical code and a licensed professional.
"""

from .iec61000_3_2 import (
    DEFAULT_EDITION,
    DIMMED_RULE_NOTE,
    DIMMING_KINDS,
    EQUIPMENT_CLASSES,
    INDEPENDENT_DIMMER_NOTE,
    DimmableResult,
    Dimming,
    EquipmentClass,
    WaveformTestResult,
    check_edition,
    dimmed_test_powers,
    editions,
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
    "INDEPENDENT_DIMMER_NOTE",
    "Dimming",
    "DIMMING_KINDS",
    "DEFAULT_EDITION",
    "editions",
    "check_edition",
    "CAUTION",
    "evaluate_fixture",
    "evaluate_dimmable",
    "waveform_test",
    "dimmed_test_powers",
    "evaluate_pcc",
    "PccResult",
    "transformer_short_circuit_current",
]
