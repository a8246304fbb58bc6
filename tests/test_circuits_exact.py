"""Exact figures of the piecewise solution (pqcalc.circuits.exact) against closed forms.

A resistive lamp behind an ideal leading-edge cut on a stiff supply draws
``i = (Vpk / R) sin(theta)`` from the firing angle ``alpha`` to the half cycle's end; its
Fourier coefficients and rms are textbook integrals (closed form, e.g. any power-electronics
text on phase control of a resistive load):

    a_h = (2 / pi) int_alpha^pi (Vpk / R) sin t cos(h t) dt,
    b_h = (2 / pi) int_alpha^pi (Vpk / R) sin t sin(h t) dt      (odd h; even h vanish),
    Irms^2 = (Vpk / R)^2 / pi * ((pi - alpha) / 2 + sin(2 alpha) / 4).
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit
from pqcalc.spectrum import spectrum

V, F, R = 230.0, 50.0, 529.0
#: ideal switch and source: 1 uohm on, 1e15 ohm off (their effect is below 1e-8 of I1)
STIFF = Supply(V, F, 0.0, 0.0)
IDEAL_SWITCH = {"r_on_ohm": 1e-6, "r_off_ohm": 1e15}


def _closed_form(alpha: float, max_order: int = 50):
    """RMS magnitudes |I_h| (h = 0..max_order) and Irms of the cut sine (formulas above)."""
    ipk = np.sqrt(2) * V / R

    def ss(h, t):  # antiderivative of sin t sin ht
        if h == 1:
            return t / 2 - np.sin(2 * t) / 4
        return np.sin((h - 1) * t) / (2 * (h - 1)) - np.sin((h + 1) * t) / (2 * (h + 1))

    def sc(h, t):  # antiderivative of sin t cos ht
        if h == 1:
            return np.sin(t) ** 2 / 2
        return -np.cos((h + 1) * t) / (2 * (h + 1)) + np.cos((h - 1) * t) / (2 * (h - 1))

    mags = np.zeros(max_order + 1)
    for h in range(1, max_order + 1, 2):
        b = 2 / np.pi * ipk * (ss(h, np.pi) - ss(h, alpha))
        a = 2 / np.pi * ipk * (sc(h, np.pi) - sc(h, alpha))
        mags[h] = np.hypot(a, b) / np.sqrt(2)
    irms = ipk * np.sqrt(((np.pi - alpha) / 2 + np.sin(2 * alpha) / 4) / np.pi)
    return mags, irms


@pytest.mark.parametrize("conduction_deg", [150.0, 90.0, 37.0])
def test_cut_sine_phasors_and_rms_closed_form(conduction_deg):
    sol = solve_circuit(STIFF, DimmerSpec("leading-edge", conduction_deg=conduction_deg,
                                          switch="transistor", params=IDEAL_SWITCH),
                        [LoadGroup("resistive", V * V / R, params={"r_ohm": R})], extras=False)
    mags, irms = _closed_form(np.radians(180.0 - conduction_deg))
    i1 = mags[1]
    # closed form: every order 0..50 and the rms to 1e-6 (the exact integration has no grid;
    # the 1 uohm switch and the 1e15 ohm leakage move them by under 1e-8)
    assert np.max(np.abs(np.abs(sol.current_phasors_a) - mags)) < 1e-6 * i1
    assert sol.i_rms_a == pytest.approx(irms, rel=1e-6)
    # closed form: power into a resistor is Irms^2 R; peak: Vpk / R once the cut lies before
    # the crest, Vpk sin(alpha) / R after it
    assert sol.p_w == pytest.approx(irms ** 2 * R, rel=1e-6)
    alpha = np.radians(180.0 - conduction_deg)
    peak = np.sqrt(2) * V / R * (1.0 if alpha <= np.pi / 2 else np.sin(alpha))
    assert sol.i_peak_a == pytest.approx(peak, rel=1e-6)
    # the same numbers through the sampled waveform (SolvedWaveform) and its groups
    s = spectrum(sol.waveform, 50)
    assert np.allclose(s.current_a, sol.current_phasors_a, rtol=0, atol=1e-9 * i1)
    assert sol.groups[0].i_rms_a == pytest.approx(irms, rel=1e-6)
    assert sol.groups[0].waveform.scaled(3.0).i_rms_a == pytest.approx(3 * irms, rel=1e-6)


def test_figures_do_not_depend_on_the_sample_grid():
    """The sine-following lamp behind a 120 deg leading edge: its input capacitor's charging
    pulse (about 10 us) spans two cells of a 4096-point grid. Exact figures are the same at
    any grid (invariance; the ngspice comparison of tests/test_circuits_ngspice.py checks
    their value); the waveform's DFT agrees with them at every grid."""
    dim = DimmerSpec("leading-edge", conduction_deg=120.0, switch="transistor")
    sols = [solve_circuit(Supply(), dim, [LoadGroup("sine-follow", 10.0)], spc, extras=False)
            for spc in (1024, 4096, 6000)]
    i1 = abs(sols[0].current_phasors_a[1])
    for s in sols[1:]:
        assert np.allclose(s.current_phasors_a, sols[0].current_phasors_a, rtol=0,
                           atol=1e-12 * i1)
        assert s.i_rms_a == pytest.approx(sols[0].i_rms_a, rel=1e-12)
        assert s.i_peak_a == pytest.approx(sols[0].i_peak_a, rel=1e-9)
    for s in sols:
        sp = spectrum(s.waveform, 50)
        assert np.allclose(sp.current_a, s.current_phasors_a, rtol=0, atol=1e-9 * i1)
    # the narrow pulse's peak lies well above its cell's mean: the exact peak is not a
    # sample (measured: 1.95 A against a largest cell mean of 1.47 A)
    assert sols[1].i_peak_a > 1.2 * np.max(np.abs(sols[1].waveform.current_a))


def test_parseval_bound():
    """Parseval: the orders 0..50 hold at most the whole mean square (the rest lies above
    order 50); for a smooth current (no dimmer) they hold nearly all of it."""
    for dim in (DimmerSpec("none"), DimmerSpec("trailing-edge", conduction_deg=90.0)):
        sol = solve_circuit(Supply(), dim, [LoadGroup("bulk-cap", 9.0, count=4)],
                            extras=False)
        low = float(np.sum(np.abs(sol.current_phasors_a) ** 2))
        assert low <= sol.i_rms_a ** 2 * (1 + 1e-12)
        assert low >= 0.98 * sol.i_rms_a ** 2
