"""The one summing path (lines, the neutral), supply impedance and diversity against closed
forms."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pqcalc.installation.diversity import summation_exponent, summation_law
from pqcalc.installation.interaction import from_short_circuit, from_transformer, voltage_drop
from pqcalc.installation.model import LINE_ANGLES_DEG, SourceImpedance
from pqcalc.installation.sums import GRID_SAMPLES, NodeSum, to_l1_frame, triplen_share
from pqcalc.spectrum import period_phasors as grid_phasors

N = GRID_SAMPLES
WT = 2 * np.pi * (np.arange(N) + 0.5) / N


def cut(alpha_rad: float) -> np.ndarray:
    """Ideal leading-edge cut of a resistive load, 1 A peak, own-line frame."""
    return np.where((WT % np.pi) >= alpha_rad, np.sin(WT), 0.0)


def balanced(x: np.ndarray, system: str = "three-phase-wye") -> NodeSum:
    """The same current on every line of ``system``, summed on the L1 reference."""
    node = NodeSum.empty(LINE_ANGLES_DEG[system])
    for ln in LINE_ANGLES_DEG[system]:
        node.add(ln, to_l1_frame(x, system, ln), 0.0)
    return node


def rms(x):
    return float(np.sqrt(np.mean(x**2)))


def test_neutral_of_balanced_90_deg_cuts_is_sqrt2():
    # Closed form: three resistive loads cut at 90 deg conduct in non-overlapping quarter
    # cycles except at the edges; I_N/I_ph = sqrt(2) (values in the project's reference list,
    # derived from the Fourier series of the phase-controlled sine).
    s = balanced(cut(np.pi / 2))
    ratio = rms(s.neutral) / rms(s.line("L1"))
    assert ratio == pytest.approx(np.sqrt(2), rel=2e-3)  # grid edges: 1 sample in 6144


def test_neutral_of_non_overlapping_pulses_is_sqrt3():
    # Bound: pulses shorter than 60 deg never overlap across the three lines, so the neutral
    # carries all of them: I_N^2 = 3 I_ph^2, I_N/I_ph = sqrt(3).
    x = np.where(np.abs((WT % np.pi) - np.pi / 2) < np.radians(20), np.sign(np.sin(WT)), 0.0)
    s = balanced(x)
    assert rms(s.neutral) / rms(s.line("L1")) == pytest.approx(np.sqrt(3),
                                                                                      rel=1e-9)


def test_non_triplens_cancel_and_triplens_add():
    # Phasor algebra: on a balanced set, orders 1, 5, 7, 11 sum to zero in the neutral and
    # triplens 3, 9 add arithmetically (3 times one line).
    orders = {1: 1.0, 3: 0.6, 5: 0.3, 7: 0.2, 9: 0.1, 11: 0.05}
    x = sum(a * np.sin(h * WT + 0.3 * h) for h, a in orders.items())
    s = balanced(x)
    m = np.abs(grid_phasors(s.neutral, 1))
    line = np.abs(grid_phasors(s.line("L2"), 1))
    for h in (1, 5, 7, 11):
        assert m[h] == pytest.approx(0.0, abs=1e-9)
    for h in (3, 9):
        assert m[h] == pytest.approx(3 * line[h], rel=1e-9)
    assert triplen_share(m) == pytest.approx(1.0)


def test_line_rotation_turns_order_h_by_h_times_angle():
    # Phasor algebra: the L2 record on the L1 reference has its order-h phasor turned by
    # h * (-120 deg); L3 by h * (+120 deg).
    x = np.sin(WT) + 0.5 * np.sin(5 * WT)
    s = balanced(x)
    p1 = grid_phasors(s.line("L1"), 1)
    p2 = grid_phasors(s.line("L2"), 1)
    p3 = grid_phasors(s.line("L3"), 1)
    for h in (1, 5):
        assert np.angle(p2[h] / p1[h]) == pytest.approx(np.angle(np.exp(-1j * h * 2 * np.pi / 3)))
        assert np.angle(p3[h] / p1[h]) == pytest.approx(np.angle(np.exp(1j * h * 2 * np.pi / 3)))


def test_split_phase_balanced_odd_orders_cancel():
    # Phasor algebra: L2 of a split-phase supply is at 180 deg; every odd order of identical
    # half-wave-symmetric loads cancels in the neutral (the 3rd included).
    x = cut(np.pi / 2)
    s = balanced(x, "split-phase")
    assert rms(s.neutral) == pytest.approx(0.0, abs=1e-12)


@settings(max_examples=30, deadline=None)
@given(st.lists(st.floats(0.0, 1.0), min_size=6, max_size=6),
       st.lists(st.floats(-np.pi, np.pi), min_size=6, max_size=6))
def test_balanced_set_neutral_holds_only_triplens(amps, phases):
    # Property (phasor algebra): for any half-wave-symmetric current repeated on three lines,
    # the neutral equals three times the line's triplen content.
    orders = (1, 3, 5, 7, 9, 11)
    x = sum(a * np.sin(h * WT + p) for h, a, p in zip(orders, amps, phases, strict=True))
    s = balanced(x)
    trip = sum(a * np.sin(h * WT + p) for h, a, p in zip(orders, amps, phases, strict=True) if h % 3 == 0)
    np.testing.assert_allclose(s.neutral, 3 * trip, atol=1e-9)


@settings(max_examples=20, deadline=None)
@given(st.integers(1, 500))
def test_linearity_in_lamp_count(n):
    # Linearity: n identical lamps on a stiff supply draw n times one lamp's current, on every
    # line and in the neutral.
    x = cut(np.radians(60))
    one, many = balanced(x), balanced(n * x)
    assert rms(many.neutral) == pytest.approx(n * rms(one.neutral), rel=1e-12)


def test_summation_law_constructed_case():
    # IEC TR 61000-3-6 summation law (exponents 1 / 1.4 / 2, from memory) on three sources of
    # 1, 2 and 3 A: h3 -> 6 A; h7 -> (1 + 2^1.4 + 3^1.4)^(1/1.4); h13 -> sqrt(14).
    m = np.zeros((3, 14))
    m[:, 3] = m[:, 7] = m[:, 13] = [1.0, 2.0, 3.0]
    r = summation_law(m)
    assert r[3] == pytest.approx(6.0)
    assert r[7] == pytest.approx((1 + 2**1.4 + 3**1.4) ** (1 / 1.4))
    assert r[13] == pytest.approx(np.sqrt(14.0))
    assert [summation_exponent(h) for h in (3, 4, 5, 10, 11)] == [1.0, 1.0, 1.4, 1.4, 2.0]


def test_transformer_impedance_per_unit():
    # Per-unit base of a three-phase transformer (IEEE Std 141, ch. 4): Z = z% V_LL^2 / S.
    # 500 kVA, 5 %, 400 V: |Z| = 0.05 * 400^2 / 500e3 = 16.0 mohm; X/R = 4.
    z = from_transformer(500, 5.0, 4.0, 400 / np.sqrt(3), 50.0, lines=3)
    assert z.magnitude_ohm(50.0) == pytest.approx(0.016, rel=1e-9)
    assert 2 * np.pi * 50 * z.l_h / z.r_ohm == pytest.approx(4.0)
    # and back: the bolted short-circuit current V_LN/|Z| = 14.43 kA
    assert z.short_circuit_current_a(400 / np.sqrt(3), 50) == pytest.approx(14434, rel=1e-3)
    z2 = from_short_circuit(10_000, 2.0, 230.0, 50.0)
    assert z2.magnitude_ohm(50) == pytest.approx(0.023)


def test_harmonic_voltage_drop_on_inductance():
    # Ohm's law per order: a 3rd-harmonic current of 10 A through 100 uH drops
    # 3 * 2 pi 50 * 1e-4 * 10 = 0.9425 V; with a neutral of the same impedance carrying 30 A
    # of 3rd harmonic the drop on the line-to-neutral voltage is 4 times that.
    z = SourceImpedance(0.0, 1e-4, 0.0, 1e-4)
    i = np.zeros(10, dtype=complex)
    i[3] = 10.0
    dv = voltage_drop(z, i, 3 * i, 50.0)
    assert abs(dv[3]) == pytest.approx(4 * 0.9425, rel=1e-4)
