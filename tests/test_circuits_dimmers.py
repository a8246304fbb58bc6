"""Dimmers: triac latching and holding, RC-knob firing, sub-harmonic firing, glow when off.

Sources beside each check: closed forms (a resistor behind an ideal cut; the constant-power
discharge of a capacitor), the project's acceptance behaviour (issue 3) and common practice
(triac holding current about 50 mA, trigger diode breakover about 32 V).
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit

SUP = Supply(230.0, 50.0)
STIFF = Supply(230.0, 50.0, source_r_ohm=0.0, source_l_h=0.0)
IDEAL_TRIAC = {"holding_current_a": 0.0, "latching_current_a": 0.0}
VPK = np.sqrt(2) * 230.0


def test_ideal_triac_on_a_resistor_matches_the_closed_form():
    # closed form (REFERENCES.md): I_rms = (Ipk/sqrt2) sqrt(1 - a/pi + sin(2a)/(2pi)),
    # a = 90 deg; holding and latching 0 make an ideal switch opening at current zero.
    # 2e-3: the 0.05 ohm on-resistance and the 20 us gate timing, well under 0.1 %
    dim = DimmerSpec("leading-edge", conduction_deg=90.0, params=IDEAL_TRIAC)
    sol = solve_circuit(STIFF, dim, [LoadGroup("resistive", 100.0, params={"r_ohm": 529.0})],
                        extras=False)
    a = np.pi / 2
    expected = VPK / 529.0 / np.sqrt(2) * np.sqrt(1 - a / np.pi + np.sin(2 * a) / (2 * np.pi))
    assert sol.waveform.i_rms_a == pytest.approx(expected, rel=2e-3)
    assert sol.conduction_deg == pytest.approx((90.0, 90.0), abs=0.1)
    assert sol.flags == ()


def test_tiny_led_load_does_not_keep_the_triac_latched():
    # issue 3 acceptance: a triac with a tiny LED load fails to latch. A 0.5 W dropper
    # draws a few mA, far below the 50 mA holding current (common practice value)
    dim = DimmerSpec("leading-edge", conduction_deg=90.0)
    sol = solve_circuit(SUP, dim, [LoadGroup("dropper", 0.5)], extras=False)
    assert "no-latch" in sol.flags
    assert max(sol.conduction_deg) < 5.0  # it drops out right after the gate pulse
    # the same load behind an ideal switch conducts until its (leading) current's zero
    ideal = solve_circuit(SUP, DimmerSpec("leading-edge", conduction_deg=90.0,
                                          params=IDEAL_TRIAC), [LoadGroup("dropper", 0.5)],
                          extras=False)
    assert "no-latch" not in ideal.flags and min(ideal.conduction_deg) > 45.0


def test_knob_fires_later_as_it_turns_down():
    # the RC network and trigger diode set the firing angle from the knob: less
    # resistance, earlier breakover, more conduction (common practice; monotonic)
    conds = []
    for knob in (0.2, 0.5, 0.8, 1.0):
        sol = solve_circuit(SUP, DimmerSpec("leading-edge", knob=knob),
                            [LoadGroup("resistive", 60.0)], extras=False)
        assert sol.period_cycles == 1 and sol.firings == (1, 1)
        conds.append(np.mean(sol.conduction_deg))
    assert np.all(np.diff(conds) > 5.0)
    assert 30.0 < conds[0] and conds[-1] < 180.0


def test_triac_firing_every_third_half_cycle_is_reported_over_its_true_period():
    # Closed form (constant-power discharge, v^2 = v0^2 - 2 P t / C): after charging to
    # about the crest, the 9 W lamp's 9 uF capacitor needs
    # t = C (v0^2 - v_fire^2) / (2 P) to fall below the line at the firing instant
    # (45 deg after the zero crossing, v_fire = Vpk sin 45 deg); before that the triac
    # finds no current to latch on. t / (T/2) between 2 and 3 -> it fires every third
    # half cycle, alternating polarity: a true period of three mains cycles.
    v0 = VPK - 5.0  # crest less the diode and resistor drops (a few volts)
    t = 9e-6 * (v0 ** 2 - (VPK * np.sin(np.pi / 4)) ** 2) / (2 * 9.0)
    assert 2.0 < t / 0.01 < 3.0
    sol = solve_circuit(SUP, DimmerSpec("leading-edge", conduction_deg=135.0),
                        [LoadGroup("bulk-cap", 9.0)], extras=False)
    assert "subharmonic" in sol.flags and sol.period_cycles == 3
    assert sol.waveform.cycles == 3  # reported over the true period, not folded
    conducting = [c > 5.0 for c in sol.conduction_deg]
    assert sum(conducting) == 2 and conducting in ([True, False, False] * 2,
                                                   [False, True, False] * 2,
                                                   [False, False, True] * 2)
    # the triac is fired every half cycle (ideal trigger) but latches only every third
    assert sol.firings == (1,) * 6 and "no-latch" in sol.flags


def test_glow_when_off_from_the_two_wire_dimmer_supply():
    # a two-wire dimmer draws its own supply through the load while off (330 kohm and
    # its 47 nF snubber, common practice values): a dropper lamp glows
    off = DimmerSpec("leading-edge", conduction_deg=0.0)
    sol = solve_circuit(SUP, off, [LoadGroup("dropper", 2.0)], extras=False)
    assert "glow-when-off" in sol.flags
    assert 1e-3 < sol.groups[0].light_mean < 0.5
    # without the leakage paths the lamp stays dark
    dark = DimmerSpec("leading-edge", conduction_deg=0.0,
                      params={"r_supply_ohm": 0.0, "c_snubber_f": 0.0})
    sol = solve_circuit(SUP, dark, [LoadGroup("dropper", 2.0)], extras=False)
    assert "glow-when-off" not in sol.flags and sol.groups[0].light_mean < 1e-3


def test_trailing_edge_conducts_the_set_angle():
    # the transistor is on from the zero crossing to the set angle, then ramps off over
    # turn_off_s (20 us = 0.36 deg at 50 Hz; the ramp's three steps count as on)
    sol = solve_circuit(SUP, DimmerSpec("trailing-edge", conduction_deg=120.0),
                        [LoadGroup("resistive", 60.0)], extras=False)
    ramp_deg = 20e-6 * 50.0 * 360.0
    assert sol.conduction_deg == pytest.approx((120.0 + ramp_deg,) * 2, abs=0.05)
