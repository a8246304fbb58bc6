"""Resistive load behind an ideal phase cut: pqcalc's solver against closed forms.

Closed forms (computed, see the project's reference notes): a resistor R behind an ideal
leading-edge cut at firing angle a draws I_rms = (I_pk/sqrt2) sqrt(1 - a/pi + sin(2a)/(2pi));
at a = 90 deg I3/I1 = 53.70 %, I5/I1 = I7/I1 = 17.90 %, PF = 0.7071, cos phi1 = 0.8436.
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.analysis import analyze
from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit

R = 529.0
SUP = Supply(230.0, 50.0, 0.0, 0.0)  # no source impedance: the closed forms assume none
IDEAL = {"r_on_ohm": 1e-6, "r_off_ohm": 1e12}


def _solve(kind, cond, count=1):
    p = dict(IDEAL, turn_off_s=0.0) if kind == "trailing-edge" else IDEAL
    dim = DimmerSpec(kind, conduction_deg=cond, switch="transistor", params=p)
    return solve_circuit(SUP, dim, [LoadGroup("resistive", 100.0, count, {"r_ohm": R})],
                         extras=False)


@pytest.mark.parametrize("cond", [180.0, 150.0, 90.0, 30.0])
@pytest.mark.parametrize("kind", ["leading-edge", "trailing-edge"])
def test_irms_closed_form(kind, cond):
    sol = _solve(kind, cond)
    a = np.radians(180.0 - cond)
    ipk = np.sqrt(2) * 230.0 / R
    expected = ipk / np.sqrt(2) * np.sqrt(1 - a / np.pi + np.sin(2 * a) / (2 * np.pi))
    # closed form; 1e-3: the cut falls on a sample of the 4096-point record, which counts
    # that sample fully on or off: up to 4/N of the mean square, 2/N = 5e-4 of the rms
    assert sol.waveform.i_rms_a == pytest.approx(expected, rel=1e-3)
    assert sol.period_cycles == 1 and sol.converged
    # the measured conduction is the set one (the switch logic, exactly)
    assert sol.conduction_deg == pytest.approx((cond, cond), abs=1e-6)


def test_harmonics_at_90_deg():
    a = analyze(_solve("leading-edge", 90.0).waveform)
    s = a.spectrum
    i1 = s.i1_a
    # closed-form ratios at a = 90 deg; 0.1 % of I1 for the sampled edge
    assert abs(s.i_h_a[3]) / i1 == pytest.approx(0.5370, abs=1e-3)
    assert abs(s.i_h_a[5]) / i1 == pytest.approx(0.1790, abs=1e-3)
    assert abs(s.i_h_a[7]) / i1 == pytest.approx(0.1790, abs=1e-3)
    assert a.summary.pf == pytest.approx(0.7071, abs=1e-3)  # closed form
    assert a.summary.dpf == pytest.approx(0.8436, abs=1e-3)  # closed form
    # trailing edge at the same angle: same magnitudes, reactive part of opposite sign
    b = analyze(_solve("trailing-edge", 90.0).waveform)
    assert b.summary.dpf == pytest.approx(0.8436, abs=1e-3)
    assert np.sign(a.summary.q1_var) == -np.sign(b.summary.q1_var)


def test_count_scales_current_not_cost():
    one, ten = _solve("leading-edge", 90.0), _solve("leading-edge", 90.0, count=10)
    # linearity in lamp count (no source impedance): ten lamps draw ten times the current;
    # 1e-7: the dimmer's 1 uohm on-resistance is shared, 1e-6 / (529 / 10) = 2e-8; while
    # off, the 1e12 ohm leakage (< 1e-9 A) is shared too
    assert ten.waveform.i_rms_a == pytest.approx(10 * one.waveform.i_rms_a, rel=1e-7)
    np.testing.assert_allclose(ten.groups[0].waveform.current_a,
                               one.groups[0].waveform.current_a, rtol=1e-7, atol=1e-9)


def test_distorted_supply_ohms_law():
    # Ohm's law sample by sample: a resistor on a supply with 5th, 7th and 49th harmonics
    # draws i = v / R (closed form); checks the source's harmonic phasors (the orders are
    # built by repeated multiplication) through segments and sampling. 1e-8 of the peak: the
    # 1 uohm link of a zero source impedance and the 1 uohm switch against 529 ohm (4e-9)
    sup = Supply(230.0, 50.0, 0.0, 0.0,
                 voltage_harmonics=[(5, 0.06, 30.0), (7, 0.04, -110.0), (49, 0.01, 77.0)])
    dim = DimmerSpec("none", params={"r_on_ohm": 1e-6})
    sol = solve_circuit(sup, dim, [LoadGroup("resistive", 100.0, params={"r_ohm": R})],
                        extras=False)
    w = sol.waveform
    t = np.arange(w.current_a.size) / w.sample_rate_hz
    vpk = np.sqrt(2) * 230.0
    v = vpk * (np.sin(2 * np.pi * 50 * t) + 0.06 * np.sin(5 * 2 * np.pi * 50 * t
               + np.radians(30.0)) + 0.04 * np.sin(7 * 2 * np.pi * 50 * t - np.radians(110.0))
               + 0.01 * np.sin(49 * 2 * np.pi * 50 * t + np.radians(77.0)))
    np.testing.assert_allclose(w.voltage_v, v, rtol=0, atol=1e-8 * vpk)
    np.testing.assert_allclose(w.current_a, v / R, rtol=0, atol=1e-8 * vpk / R)
