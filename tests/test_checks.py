"""Circuit and panel checks against the tables and rules they come from.

The tables themselves (IEC 60364-5-52 Table E.52.1, NEC 210.20(A), IEC 60898-1 bands) are
tested in test_regions.py; here the installation's checks that read them.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from pqcalc import metrics
from pqcalc.installation import checks as ck
from pqcalc.installation.model import Circuit, FixtureGroup
from pqcalc.installation.results import LineResult, NeutralResult
from pqcalc.standards.regions import rule_set

IEC, US = rule_set("IEC"), rule_set("US")


def _line(i_rms: float, i3_pct: float) -> LineResult:
    return LineResult(i_rms, i_rms, i_rms * 1.4, 0.3, i3_pct, 0.0, None, None, 0.0, 230.0,
                      np.zeros(51))


def _neutral(i_n: float, max_line: float) -> NeutralResult:
    return NeutralResult(i_n, i_n * 1.4, i_n / max_line, 1.0, np.zeros(51))


def test_neutral_conductor_sizing_current_iec():
    # IEC 60364-5-52:2009 Annex E, Table E.52.1 arithmetic (a case like the annex's own
    # example, from memory): 40 % third harmonic, line 39 A: the neutral 3 x 0.4 x 39 =
    # 46.8 A, sized on 46.8 / 0.86 = 54.4 A; a 50 A neutral fails.
    lines = {ln: _line(39.0, 40.0) for ln in ("L1", "L2", "L3")}
    c = ck.neutral_conductor(IEC, "three-phase-wye", lines, _neutral(46.8, 39.0), 1.0, 50.0)
    assert c.value == pytest.approx(54.42, abs=0.01)
    assert c.status == "fail"


def test_neutral_above_the_tables_figure_is_sized_on_itself():
    # Table E.52.1 sizes an 18 % third-harmonic cable on the line current / 0.86 (IEC
    # 60364-5-52 Annex E); a neutral that carries more (9th, 15th ... add too) is sized on
    # its own current (conservative, common practice): an ampacity between the two fails.
    lines = {ln: _line(3.0, 18.0) for ln in ("L1", "L2", "L3")}
    c = ck.neutral_conductor(IEC, "three-phase-wye", lines, _neutral(4.3, 3.0), 1.0, 4.0)
    assert c.value == pytest.approx(4.3)
    assert c.status == "fail"


def test_neutral_under_nec_counts_as_current_carrying():
    # NFPA 70 (NEC) 2023, 310.15(E)(3): on a 4-wire wye circuit whose major portion of load
    # is non-linear the neutral counts: 4 current-carrying conductors, Table 310.15(C)(1)
    # factor 0.8 (80 %).
    lines = {ln: _line(10.0, 40.0) for ln in ("L1", "L2", "L3")}
    c = ck.neutral_conductor(US, "three-phase-wye", lines, _neutral(12.0, 10.0), 0.9, 20.0)
    assert c.details["factor"] == pytest.approx(0.8)
    assert c.limit == pytest.approx(16.0) and c.status == "pass"


def _circuit(**kw) -> Circuit:
    base = Circuit("c1", "P1", "L1", (FixtureGroup("lamp", 1),), breaker_a=20.0,
                   breaker_curve="B")
    return replace(base, **kw)


def test_breaker_load_by_region():
    # NEC 210.20(A): the device at least 125 % of the continuous load: 16.5 A of lighting on
    # 20 A needs 20.6 A -> fail; IEC 60364-4-43 433.1 (IB <= In): 16.5 A on 20 A passes.
    us = ck.breaker_load(US, _circuit(breaker_curve="TM"), 16.5)
    iec = ck.breaker_load(IEC, _circuit(), 16.5)
    assert [c.status for c in us] == ["fail"] and us[0].value == pytest.approx(20.625)
    assert [c.status for c in iec] == ["pass"]
    # the steady bound: 20 A / 1.25 = 16 A of 0.1 A lamps -> 160 (US); 200 (IEC)
    assert ck.steady_bound(US, 20.0, 0.1) == 160 and ck.steady_bound(IEC, 20.0, 0.1) == 200


def test_transformer_derating_c57110():
    # IEEE C57.110 worked example spectrum: F_HL = 8.3476; with P_EC-R = 0.1 pu the maximum
    # load is sqrt(1.1 / (1 + 0.83476)) = 0.7743 pu of rated current.
    m = np.zeros(26)
    m[[1, 5, 7, 11, 13, 17, 19, 23, 25]] = [1, .20, .14, .091, .077, .058, .056, .043, .040]
    f = float(metrics.harmonic_loss_factor(m))
    c = ck.transformer_derating(f, float(metrics.k_factor(m)), 100.0, 145.0, 0.1)
    assert c.details["i_max_pu"] == pytest.approx(np.sqrt(1.1 / (1 + 0.1 * 8.3476)), rel=1e-6)
    assert c.details["i_max_pu"] == pytest.approx(0.7743, abs=1e-4)
    assert c.details["k_rating_needed"] == 9  # common practice: next K rating above 8.35
    assert c.status == "pass"


def test_transformer_status_agrees_with_its_advice():
    # A spectrum no K rating covers (K above 50: UL 1561 ratings end at K-50, common
    # practice) never passes, though the derated capacity still carries the load.
    c = ck.transformer_derating(99.0, 99.0, 10.0, 1000.0, 0.1)
    assert c.details["k_rating_needed"] is None and c.status == "warn"


def test_dimmer_rating_counts_filament_and_derated_led_load():
    # Common practice: filament watts at face value, LED watts at 1 / derating. The issue's
    # case: 900 W halogen + 200 W LED on a 1000 W dimmer (derating 0.25) is 900 + 800 =
    # 1700 W of the rating: fail (today's check looked at the LED watts alone and passed).
    assert ck.dimmer_load(200, 1000, 0.25, None, 1100).status == "fail"
    assert ck.dimmer_load(200, 1000, 0.25, None, 1100).value == pytest.approx(1700.0)
    assert ck.dimmer_load(100, 600, 0.25, None, 100).status == "pass"
    assert ck.dimmer_load(200, 600, 0.25, None, 200).status == "fail"
    assert ck.dimmer_load(10, 600, 0.25, 25.0, 10).status == "warn"


def test_dimmer_compatibility_is_judged_by_the_light():
    # IEC TR 61547-1: Pst_LM = 1 is the visibility threshold of the average observer. A triac
    # that releases after the charging pulse ('no-latch') with steady light is information,
    # not a failure (normal for capacitive-input drivers); the same flag with visible
    # flicker fails.
    steady = ck.dimmer_compatibility(("no-latch",), {"mean": 1.0, "pst_lm": 0.0}, "leading-edge")
    assert [c.status for c in steady] == ["info"]
    bad = ck.dimmer_compatibility(("no-latch", "subharmonic"), {"mean": 0.6, "pst_lm": 3.2},
                                  "leading-edge")
    assert [c.status for c in bad] == ["fail"] and bad[0].value == pytest.approx(3.2)
    assert [c.status for c in ck.dimmer_compatibility(("glow-when-off",), None,
                                                      "leading-edge")] == ["warn"]


def test_an_unsolved_circuit_is_not_judged_against_its_breaker():
    # a circuit without a solution has no current: its breaker load is information ("not
    # judged"), never a pass at 0.00 A (what the CSV export used to carry)
    from types import SimpleNamespace

    from pqcalc.installation.model import Installation, ModelledFixture, Panel, SupplySpec

    c = _circuit()
    inst = Installation(None, SupplySpec("single-phase", 230.0, 50.0),  # type: ignore[arg-type]
                        {"lamp": ModelledFixture("lamp", 10.0, model="bulk-cap")},
                        (Panel("P1", (c,)),))
    groups = (SimpleNamespace(fixture="lamp", count=1, i_rms_one_a=0.05, p_w=10.0),)
    cs = SimpleNamespace(groups=groups, flags=("no-solution",), light=None)
    checks, _, _ = ck.circuit_checks(inst, IEC, c, cs, 0.0, None, ())
    load = [x for x in checks if x.name == "breaker load"]
    assert [x.status for x in load] == ["info"] and "not judged" in load[0].message
    solved = SimpleNamespace(groups=groups, flags=(), light=None)
    checks, _, _ = ck.circuit_checks(inst, IEC, c, solved, 0.0, None, ())
    assert [x.status for x in checks if x.name == "breaker load"] == ["pass"]


def test_a_circuit_without_a_repeating_state_is_said_loudly():
    # The solver's long-transient fallback keeps the circuit in every sum (its mean cycle);
    # the compatibility check says so: a warning, never silence (the project's rule that a
    # result computed another way is marked).
    c = ck.dimmer_compatibility(("long-transient",), {"mean": 0.9, "pst_lm": 0.5},
                                "leading-edge")
    assert [x.status for x in c] == ["warn"] and "long transient" in c[0].message
