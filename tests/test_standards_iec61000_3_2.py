"""IEC 61000-3-2 evaluators: constructed spectra at, under and over each limit; the 30 lambda
rule; Class D per-watt arithmetic; the option b waveform test; dimmed states.

Constructed spectra are built directly as phasors (no FFT), so a value "at the limit" is
exact up to the float round-off of I_h / I_1; "just under" and "just over" are 0.1 % away
from the limit (far outside the 1e-9 comparison tolerance of pqcalc.standards.results and
finer than any measurement would resolve).
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.errors import InputError
from pqcalc.spectrum import Spectrum, spectrum
from pqcalc.standards import evaluate_dimmable, evaluate_fixture, load_limits, waveform_test
from pqcalc.standards.iec61000_3_2 import (
    disregard_level_a,
    evaluate_class_a,
    evaluate_class_b,
    evaluate_class_c,
    evaluate_class_d,
    evaluate_option_a,
    evaluate_option_b,
    evaluate_option_c,
)
from pqcalc.waveform import Waveform
from tests.conftest import phase_cut_resistive

STEP = 1e-3  # "just under / just over": 0.1 % of the limit


def spec(i1_a: float, orders: dict[int, float], max_order: int = 50) -> Spectrum:
    """Phasors [A] with I1 and the given orders; RMS by Parseval (closed form)."""
    p = np.zeros(max_order + 1, complex)
    p[1] = i1_a
    for h, v in orders.items():
        p[h] = v
    rms = float(np.sqrt(np.sum(np.abs(p) ** 2)))
    return Spectrum(p, 50.0, rms, rms * np.sqrt(2))


def order_verdict(rule, h):
    return next(c for c in rule.checks if c.order == h).status


# ------------------------------------------------------------------ at / under / over
CLASS_C_TABLE = load_limits("iec61000-3-2:class-c")


@pytest.mark.parametrize("h", CLASS_C_TABLE.orders)
@pytest.mark.parametrize("factor, verdict", [(1.0, "pass"), (1 - STEP, "pass"),
                                             (1 + STEP, "fail")])
def test_class_c_each_order_at_under_over(h, factor, verdict):
    pf = 0.95
    lim = CLASS_C_TABLE[h].value_at(pf)  # IEC 61000-3-2, Table 2 (fraction of I1)
    r = evaluate_class_c(spec(1.0, {h: factor * lim}), pf, disregard_small=False)
    assert order_verdict(r, h) == verdict  # Table 2: the limit itself is permitted
    assert r.verdict == verdict


@pytest.mark.parametrize("key, fn", [("iec61000-3-2:class-a", evaluate_class_a),
                                     ("iec61000-3-2:class-b", evaluate_class_b)])
@pytest.mark.parametrize("factor, verdict", [(1.0, "pass"), (1 - STEP, "pass"),
                                             (1 + STEP, "fail")])
def test_class_a_b_each_order_at_under_over(key, fn, factor, verdict):
    t = load_limits(key)
    for h in t.orders:
        r = fn(spec(10.0, {h: factor * t[h].limit}), disregard_small=False)
        assert order_verdict(r, h) == verdict, h  # Table 1 (Class B: 1.5 x Table 1) [A]


@pytest.mark.parametrize("factor, verdict", [(1.0, "pass"), (1 - STEP, "pass"),
                                             (1 + STEP, "fail")])
def test_class_d_each_order_at_under_over(factor, verdict):
    t = load_limits("iec61000-3-2:class-d")
    for p_w in (100.0, 600.0):  # per-watt limit binds at 100 W, absolute cap at 600 W
        for h in t.orders:
            lim = min(t[h].per_watt_a_w * p_w, t[h].limit)  # Table 3, columns 2 and 3
            r = evaluate_class_d(spec(2.0, {h: factor * lim}), p_w, disregard_small=False)
            assert order_verdict(r, h) == verdict, (p_w, h)


def test_class_d_cap_binds_at_high_power():
    # Table 3: at 600 W h3 per watt gives 2.04 A < 2.30 A cap; at 700 W 2.38 A > 2.30 A cap
    r = evaluate_class_d(spec(3.0, {3: 2.31}), 700.0, disregard_small=False)
    c = next(c for c in r.checks if c.order == 3)
    assert c.limit == pytest.approx(2.30, rel=1e-12) and c.status == "fail"


@pytest.mark.parametrize("option, orders", [
    ("b", {3: 0.86, 5: 0.61}),  # 7.4.2 b): h3 86 %, h5 61 %
    ("c", {2: 0.05, 3: 0.35, 5: 0.25, 7: 0.30, 9: 0.20, 11: 0.20}),  # 7.4.2 c)
])
@pytest.mark.parametrize("factor, verdict", [(1.0, "pass"), (1 - STEP, "pass"),
                                             (1 + STEP, "fail")])
def test_small_lighting_option_orders_at_under_over(option, orders, factor, verdict):
    for h, lim in orders.items():
        s = spec(0.1, {h: factor * lim * 0.1})
        r = (evaluate_option_b(s, disregard_small=False) if option == "b"
             else evaluate_option_c(s, disregard_small=False))
        assert order_verdict(r, h) == verdict, h


@pytest.mark.parametrize("factor, verdict", [(1.0, "pass"), (1 - STEP, "pass"),
                                             (1 + STEP, "fail")])
def test_option_c_thd_at_under_over(factor, verdict):
    # THD = 70 % spread over orders 13..39 (not individually limited by option c), so the
    # THD check alone decides; closed form sqrt(n x^2) = 0.70 with n = 14 orders
    x = 0.70 / np.sqrt(14) * factor
    s = spec(0.1, {h: 0.1 * x for h in range(13, 40, 2)})
    r = evaluate_option_c(s, disregard_small=False)
    thd_check = next(c for c in r.checks if c.name.startswith("THD"))
    assert thd_check.value == pytest.approx(0.70 * factor, rel=1e-12)
    assert thd_check.status == verdict and r.verdict == verdict


# ------------------------------------------------------------------ the h3 rule by edition
@pytest.mark.parametrize("pf", [0.97, 0.55])
def test_third_order_limit_is_30_lambda_percent_in_edition_5_0(pf):
    lim = 0.30 * pf  # IEC 61000-3-2:2018 (ed. 5.0), Table 2: 30 x lambda %
    for factor, verdict in [(1.0, "pass"), (1 - STEP, "pass"), (1 + STEP, "fail")]:
        r = evaluate_class_c(spec(1.0, {3: factor * lim}), pf, disregard_small=False,
                             edition="5.0")
        c = next(c for c in r.checks if c.order == 3)
        assert c.limit == pytest.approx(lim, rel=1e-12)
        assert c.status == verdict
        assert "5.0 (2018)" in r.reference and "AMD1" not in r.reference


@pytest.mark.parametrize("pf", [0.97, 0.55])
def test_third_order_limit_is_27_percent_in_edition_5_1(pf):
    # IEC 61000-3-2:2018+AMD1:2020 (ed. 5.1), Table 2: h3 27 %, whatever lambda. Source:
    # a test laboratory's public summary of the AMD1 changes ("changed the third harmonic
    # current limit from 30 lambda to 27"); secondary, not read in the standard's text.
    for factor, verdict in [(1.0, "pass"), (1 - STEP, "pass"), (1 + STEP, "fail")]:
        r = evaluate_class_c(spec(1.0, {3: factor * 0.27}), pf, disregard_small=False)
        c = next(c for c in r.checks if c.order == 3)
        assert c.limit == pytest.approx(0.27, rel=1e-12) and c.status == verdict
        assert "AMD1:2020" in r.reference and any("secondary" in n for n in r.notes)


def test_edition_switch_changes_the_verdict():
    # h3 28.5 % at lambda 0.97: ed. 5.0 allows 30 x 0.97 = 29.1 % (pass), ed. 5.1 27 %
    # (fail); at lambda 0.55 the order flips: 16.5 % (fail) vs 27 % (pass) (Table 2 of each)
    hi = spec(1.0, {3: 0.285})
    assert evaluate_class_c(hi, 0.97, edition="5.0").verdict == "pass"
    assert evaluate_class_c(hi, 0.97, edition="5.1").verdict == "fail"
    lo = spec(1.0, {3: 0.20})
    assert evaluate_class_c(lo, 0.55, edition="5.0").verdict == "fail"
    assert evaluate_class_c(lo, 0.55, edition="5.1").verdict == "pass"
    # the default is the consolidated edition 5.1
    assert evaluate_fixture(hi, 40.0, 0.97).verdict == "fail"
    assert evaluate_fixture(hi, 40.0, 0.97, edition="5.0").verdict == "pass"


def test_unknown_edition_is_one_line_naming_the_field_and_the_known_ones():
    s = spec(0.2, {3: 0.02})
    with pytest.raises(InputError) as e:
        evaluate_fixture(s, 40.0, 0.97, edition="4.0")
    msg = str(e.value)
    assert "\n" not in msg and msg.startswith("edition:") and "5.0" in msg and "5.1" in msg
    with pytest.raises(InputError, match="edition"):
        evaluate_dimmable([("full", s, 40.0, 0.97)], edition="2014")


# ------------------------------------------------------------------ Class D per watt
def test_option_a_per_watt_arithmetic_at_20_w():
    # Table 3 column 2 times 20 W: 3.4, 1.9, 1.0, 0.5, 0.35 mA/W and 3.85/13 mA/W
    want_ma = {3: 68.0, 5: 38.0, 7: 20.0, 9: 10.0, 11: 7.0, 13: 5.923}
    r = evaluate_option_a(spec(0.2, {}), 20.0, disregard_small=False)
    got = {c.order: c.limit * 1e3 for c in r.checks}
    for h, v in want_ma.items():
        # 5.923 is 77/13 rounded to 4 digits; the others are exact
        assert got[h] == pytest.approx(v, abs=5e-4), h
    assert got[39] == pytest.approx(3.85 / 39 * 20, rel=1e-12)  # Table 3: 3.85/h mA/W


# ------------------------------------------------------------------ the fixture rule
def test_below_5_w_no_limits():
    r = evaluate_fixture(spec(0.02, {3: 0.02}), 4.9, 0.5)  # 7.4: lighting < 5 W: no limits
    assert r.verdict == "pass" and not r.applicable and "5 W" in r.rule


def test_above_25_w_uses_table_2_and_5_to_25_w_the_options():
    s = spec(0.2, {3: 0.05})  # h3 = 25 % of I1
    above = evaluate_fixture(s, 25.01, 0.95)  # > 25 W: Table 2, 30 x 0.95 = 28.5 %
    assert above.rule.startswith("class C") and above.verdict == "pass"
    within = evaluate_fixture(s, 25.0, 0.95)  # 25 W is inside 5..25 W (7.4.2)
    assert [r.rule for r in within.rules] == ["option a", "option b", "option c"]


def test_small_lighting_passes_by_option_c_and_says_which():
    # 10 W lamp, I1 = 50 mA: h3 34 % (option c allows 35 %), h5 20 %; option a needs
    # h3 <= 34 mA (3.4 mA/W x 10 W) -> 17 mA passes too, so a decides first
    s = spec(0.05, {3: 0.017, 5: 0.010})
    r = evaluate_fixture(s, 10.0, 0.9)
    assert r.verdict == "pass" and r.rule == "option a"
    # make option a fail (h5 over 1.9 mA/W x 10 W = 19 mA) while option c still passes
    s = spec(0.1, {3: 0.034, 5: 0.020})  # h3 34 %, h5 20 % of 100 mA
    r = evaluate_fixture(s, 10.0, 0.9)
    verdicts = {x.rule: x.verdict for x in r.rules}
    assert verdicts["option a"] == "fail" and verdicts["option c"] == "pass"
    assert r.verdict == "pass" and r.rule == "option c"


def test_option_b_needs_the_waveform():
    # h3 80 %, h5 50 %: only option b could pass; a spectrum alone cannot show it
    s = spec(0.1, {3: 0.08, 5: 0.05})
    r = evaluate_fixture(s, 10.0, 0.6)
    b = next(x for x in r.rules if x.rule == "option b")
    assert not b.evaluated and r.verdict == "fail" and r.undetermined


def test_scope_below_220_v():
    # IEC 61000-3-2, clause 1: "for systems with nominal voltages less than 220 V
    # (line-to-neutral), the limits have not yet been considered" (public copies of the
    # scope: the 1995 text and a test laboratory's summary of ed. 5.1)
    s = spec(0.3, {3: 0.4})  # h3 40 %: over every Table 2 h3 limit
    r = evaluate_fixture(s, 30.0, 0.9, nominal_voltage_v=120.0)
    assert not r.applicable and r.informative and "220 V" in r.rule
    assert not r.failed and r.status == "info" and r.to_dict()["verdict"] == "info"
    r2 = evaluate_fixture(s, 30.0, 0.9, nominal_voltage_v=120.0, outside_scope=True)
    assert r2.applicable and r2.verdict == "fail"  # over the limits ...
    assert r2.informative and not r2.failed  # ... for information only: no failure
    assert r2.label == "INFORMATIVE (above limits)" and "220 V" in r2.basis
    assert r2.to_dict()["verdict"] == "info" and r2.to_dict()["limits_met"] is False
    d = evaluate_dimmable([("full", s, 30.0, 0.9), ("dim", spec(0.2, {3: 0.2}), 15.0, 0.9)],
                          nominal_voltage_v=120.0, outside_scope=True)
    assert d.verdict == "pass" and d.informative and all(r.informative for r in d.results)
    assert evaluate_fixture(s, 30.0, 0.9, nominal_voltage_v=230.0).failed  # in scope


@pytest.mark.parametrize("p_w, applies", [(600.0, True), (700.0, False)])
def test_class_d_above_600_w_is_out_of_its_scope(p_w, applies):
    # IEC 61000-3-2:2018+AMD1:2020, 5.1: Class D is "equipment having a specified power
    # less than or equal to 600 W" (public copy of the amendment's text)
    t = load_limits("iec61000-3-2:class-d")
    s = spec(3.0, {3: 2.0 * t[3].limit})  # twice the h3 cap: fails wherever Class D applies
    r = evaluate_fixture(s, p_w, 0.9, "D")
    assert r.applicable is applies and r.failed is applies
    if not applies:
        assert "600 W" in r.rule and r.status == "n/a" and r.label == "NOT APPLICABLE"
        assert any("Class A" in n for n in r.notes)


def test_disregard_rule():
    # max(0.6 % of I_rms, 5 mA) (clause 7, from memory): I1 = 0.1 A -> 5 mA governs
    s = spec(0.1, {2: 0.0049})  # h2 4.9 % > 2 % of Table 2, but under 5 mA
    assert disregard_level_a(s) == pytest.approx(0.005)
    assert evaluate_class_c(s, 0.9).verdict == "pass"
    assert evaluate_class_c(s, 0.9, disregard_small=False).verdict == "fail"


# ------------------------------------------------------------------ option b waveform test
SPC = 3600  # 0.1 deg per sample


def pulse_waveform(start_deg, peak_deg, end_deg, roll=1234, i_pk=0.3, cycles=2):
    """Voltage sine and a current pulse per half-cycle: 0 until start, a linear rise from
    20 % of the peak at start to the peak at peak_deg, a linear fall to 0 at end_deg.
    Mid-sample instants; the record is rolled so that sample 0 is not the zero crossing."""
    th = (np.arange(SPC) + 0.5) * 360.0 / SPC
    ph = th % 180.0
    rise = 0.2 + 0.8 * (ph - start_deg) / max(peak_deg - start_deg, 1e-9)
    fall = (end_deg - ph) / (end_deg - peak_deg)
    x = np.where(ph < start_deg, 0.0, np.where(ph <= peak_deg, rise, np.clip(fall, 0, None)))
    i = i_pk * x * np.where(th < 180.0, 1.0, -1.0)
    v = 325.0 * np.sin(np.radians(th))
    i, v = np.tile(np.roll(i, roll), cycles), np.tile(np.roll(v, roll), cycles)
    return Waveform(i, SPC * 50.0, 50.0, v, cycles, "pulse")


@pytest.mark.parametrize("start, verdict", [(59.0, "pass"), (61.0, "fail")])
def test_waveform_test_reach_by_60_deg(start, verdict):
    # 7.4.2 b): threshold 5 % of peak reached at or before 60 deg
    r = waveform_test(pulse_waveform(start, 63.0, 120.0))
    # the jump from 0 to 20 % of the peak is crossed within one sample (0.1 deg)
    assert r.reach_deg == pytest.approx(start, abs=0.1)
    c = dict((c.name, c.status) for c in r.checks())
    assert c["reach threshold"] == verdict and c["peak"] == "pass"
    assert c["stay above threshold"] == "pass"


@pytest.mark.parametrize("peak, verdict", [(64.0, "pass"), (66.0, "fail")])
def test_waveform_test_peak_by_65_deg(peak, verdict):
    r = waveform_test(pulse_waveform(40.0, peak, 150.0))  # 7.4.2 b): peak at or before 65 deg
    assert r.peak_deg == pytest.approx(peak, abs=0.1)  # one-sample resolution
    assert r.passed == (verdict == "pass")


@pytest.mark.parametrize("drop, verdict", [(91.0, "pass"), (89.0, "fail")])
def test_waveform_test_stays_until_90_deg(drop, verdict):
    # 7.4.2 b): not below the threshold before 90 deg. A linear fall from the peak at
    # 60 deg to 0 at `end` crosses 5 % of the peak at end - 0.05 (end - 60) deg (closed
    # form); choose `end` so that the crossing falls at `drop`.
    end = (drop - 3.0) / 0.95
    r = waveform_test(pulse_waveform(40.0, 60.0, end))
    assert r.drop_deg == pytest.approx(drop, abs=0.1)  # one-sample resolution
    c = dict((c.name, c.status) for c in r.checks())
    assert c["stay above threshold"] == verdict
    assert c["reach threshold"] == "pass" and c["peak"] == "pass"


@pytest.mark.parametrize("roll", [0, 777, 2999])
def test_waveform_test_angle_origin_is_the_voltage_zero_crossing(roll):
    # wherever the record starts, angles are counted from the voltage zero crossing
    r = waveform_test(pulse_waveform(59.0, 63.0, 120.0, roll=roll))
    assert r.reach_deg == pytest.approx(59.0, abs=0.1)


@pytest.mark.parametrize("alpha_deg", [61.0, 75.0, 90.0, 120.0])
def test_resistive_leading_edge_beyond_60_deg_cannot_pass_option_b(alpha_deg):
    # an ideal leading-edge cut does not conduct before alpha (closed form), so the current
    # reaches any threshold after 60 deg
    w = phase_cut_resistive(np.radians(alpha_deg), r_ohm=230.0**2 / 20.0)  # 20 W at full
    r = waveform_test(w)
    assert r.reach_deg == pytest.approx(alpha_deg, abs=0.02)  # 2^16 samples per cycle
    assert not r.passed
    b = evaluate_option_b(spectrum(w), w)
    assert b.evaluated and b.verdict == "fail"


def test_waveform_test_without_voltage_is_refused():
    w = pulse_waveform(50.0, 60.0, 120.0)
    w = Waveform(w.current_a, w.sample_rate_hz, w.frequency_hz, None, w.cycles)
    with pytest.raises(InputError, match="voltage"):
        waveform_test(w)
    assert not evaluate_option_b(spectrum(w), w).evaluated


def test_fixture_passes_by_option_b_on_its_waveform():
    # a peaky current that satisfies the waveform test; its h3/h5 must be under 86 / 61 %
    w = pulse_waveform(45.0, 60.0, 130.0, i_pk=0.2)
    s = spectrum(w)
    assert s.i_h_a[3] / s.i1_a < 0.86 and s.i_h_a[5] / s.i1_a < 0.61
    r = evaluate_fixture(w, 15.0, 0.7)
    verdicts = {x.rule: x.verdict for x in r.rules}
    assert verdicts["option b"] == "pass"
    assert r.verdict == "pass"


# ------------------------------------------------------------------ dimmed states
def test_dimmed_states_held_to_maximum_power_currents():
    # 40 W fixture, lambda 0.95: h3 limit 28.5 % of I1 = 0.18 A -> 51.3 mA (Table 2)
    full = spec(0.18, {3: 0.045, 5: 0.010})  # 25 % and 5.6 %: passes Table 2
    ok = spec(0.09, {3: 0.045, 5: 0.010})  # dimmed: 50 % of I1 but same 45 mA < 51.3 mA
    bad = spec(0.09, {3: 0.052, 5: 0.010})  # 52 mA > 51.3 mA
    d = evaluate_dimmable([("100 %", full, 40.0, 0.95), ("50 %", ok, 20.0, 0.9),
                           ("40 %", bad, 16.0, 0.9)], dimming="builtin", edition="5.0")
    by = {r.state: r for r in d.results}
    assert d.results[0].state == "100 %" and by["100 %"].verdict == "pass"
    c3 = next(c for c in by["50 %"].deciding.checks if c.order == 3)
    assert c3.unit == "A" and c3.limit == pytest.approx(0.30 * 0.95 * 0.18, rel=1e-12)
    assert by["50 %"].verdict == "pass"  # relative 50 % would fail Table 2 itself
    assert by["40 %"].verdict == "fail"
    assert d.verdict == "fail"
    assert any("memory" in n for n in d.notes)  # the dimmed-state rule rests on memory


def _dimmed_series():
    # 40 W, lambda 0.95, ed. 5.1: the full-output h3 limit is 27 % of I1 = 0.18 A -> 48.6 mA
    # (Table 2); the 40 % state draws 52 mA of h3, over it
    full = spec(0.18, {3: 0.045, 5: 0.010})
    bad = spec(0.09, {3: 0.052, 5: 0.010})
    return [("full", full, 40.0, 0.95), ("40 %", bad, 16.0, 0.9)]


def test_independent_dimmer_states_are_informative_and_never_fail_the_verdict():
    # IEC 61000-3-2 (5.1, 5.2 as amended by AMD1:2020): independent phase-control dimmers
    # are Class A equipment and excluded from lighting equipment; the lamp is type-tested
    # at its rated supply. The dimmed state is shown against the full-output limits in A.
    d = evaluate_dimmable(_dimmed_series())
    top, dim = d.results
    assert top.role == "verdict" and top.verdict == "pass"
    assert dim.role == "informative" and dim.verdict == "fail" and not dim.failed
    c3 = next(c for c in dim.deciding.checks if c.order == 3)
    assert c3.unit == "A" and c3.limit == pytest.approx(0.27 * 0.18, rel=1e-12)
    assert c3.value == pytest.approx(0.052, rel=1e-12) and c3.status == "fail"
    assert d.verdict == "pass" and dim.label == "INFORMATIVE (above limits)"
    assert "independent" in dim.basis and dim.to_dict()["verdict"] == "info"
    assert d.to_dict()["verdict"] == "pass" and d.to_dict()["strict_dimmed"] is False


def test_strict_mode_makes_the_same_dimmed_state_fail():
    # the owner's strict requirement: the same state as above now counts
    d = evaluate_dimmable(_dimmed_series(), strict=True)
    dim = d.results[1]
    assert dim.role == "strict" and dim.failed and d.verdict == "fail"
    assert dim.label == "FAIL (strict)" and "strict" in dim.basis


def test_builtin_dimming_is_judged_in_every_state():
    # equipment with built-in dimming: Annex C test conditions (maximum load and five
    # equidistant steps between minimum and maximum power; a public quote of Annex C.5),
    # every state part of the verdict, held to the full-output currents [A] (memory)
    d = evaluate_dimmable(_dimmed_series(), dimming="builtin")
    dim = d.results[1]
    assert dim.role == "verdict" and dim.failed and d.verdict == "fail"
    assert "built-in" in dim.basis and "Annex C" in dim.basis
    with pytest.raises(InputError, match="dimming"):
        evaluate_dimmable(_dimmed_series(), dimming="wall")


def test_dimmed_state_order_of_states_does_not_matter():
    full = spec(0.18, {3: 0.045})
    dim = spec(0.09, {3: 0.045})
    a = evaluate_dimmable([("dim", dim, 20.0, 0.9), ("full", full, 40.0, 0.95)])
    assert a.results[0].state == "full"  # highest power gives the limits


# ------------------------------------------------------------------ bad input
def test_bad_inputs():
    s = spec(0.1, {3: 0.01})
    with pytest.raises(InputError, match="equipment_class"):
        evaluate_fixture(s, 10.0, 0.9, "E")
    with pytest.raises(InputError, match="fundamental"):
        evaluate_fixture(spec(0.0, {3: 0.01}), 10.0, 0.9)
    with pytest.raises(InputError, match="p_w"):
        evaluate_fixture(s, -1.0, 0.9)
    with pytest.raises(InputError, match="pf"):
        evaluate_fixture(s, 10.0, 1.5)
    with pytest.raises(InputError, match="power"):
        evaluate_fixture(s)  # no voltage: the power must be given
