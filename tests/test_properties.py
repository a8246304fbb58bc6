"""Property tests (hypothesis): Parseval, linearity, time-shift invariance of magnitudes.

These are identities of the discrete Fourier transform (any signal-processing textbook, e.g.
Oppenheim & Schafer, Discrete-Time Signal Processing, ch. 8: Parseval's relation, linearity,
circular shift) applied to pqcalc's spectrum over whole cycles and to the IEC 61000-4-7
groups. Tolerances are floating-point round-off on sums of a few thousand terms (1e-9
relative, with an absolute floor for near-zero values).
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from pqcalc import metrics
from pqcalc.io.windows import blocks_from_arrays, iter_windows
from pqcalc.spectrum import spectrum
from pqcalc.waveform import Waveform

SPC = 128  # samples per cycle: orders up to 63 resolvable, 50 kept
CYCLES = 2
finite = st.floats(-100.0, 100.0, allow_nan=False, allow_infinity=False)


def band_limited(coef: np.ndarray, cycles: int = CYCLES, spc: int = SPC) -> np.ndarray:
    """A record holding orders 0..len(coef)//2 only: coef = [dc, a1, b1, a2, b2, ...]."""
    n = cycles * spc
    wt = 2 * np.pi * np.arange(n) / spc
    x = np.full(n, coef[0])
    for h in range(1, (coef.size - 1) // 2 + 1):
        x += coef[2 * h - 1] * np.cos(h * wt) + coef[2 * h] * np.sin(h * wt)
    return x


def wf(i, v=None):
    return Waveform(i, SPC * 50.0, 50.0, v, CYCLES)


@settings(max_examples=40, deadline=None)
@given(arrays(float, 2 * 50 + 1, elements=finite))
def test_parseval_band_limited(coef):
    # Parseval: the time-domain RMS equals sqrt(I0^2 + sum |I_h|^2) for a record holding
    # orders up to 50 only
    x = band_limited(coef)
    s = spectrum(wf(x), max_order=50)
    rms_t = np.sqrt(np.mean(x**2))
    assert np.isclose(metrics.rms_from_orders(s), rms_t, rtol=1e-9, atol=1e-9)


@settings(max_examples=40, deadline=None)
@given(arrays(float, CYCLES * SPC, elements=finite))
def test_parseval_groups_any_signal(x):
    # IEC 61000-4-7 eq. 8 splits the line at k +- N/2 in halves between neighbouring groups,
    # so the groups of orders 1..top hold exactly the power of lines N/2+1..top*N+N/2-1
    # plus half of each end line: a Parseval identity for arbitrary (noisy) windows.
    fs, cycles = 50.0 * SPC, 10
    sig = np.tile(x, 5)  # 10 cycles of 50 Hz
    b = next(iter_windows(blocks_from_arrays(sig, fs), nominal_hz=50.0, frequency_hz=50.0,
                          max_order=50))
    g = b.i_group_a[0]
    top = g.size - 1
    n = sig.size
    X = np.fft.rfft(sig)
    P = np.abs(X) ** 2 * 2 / n**2
    lo, hi = cycles // 2, top * cycles + cycles // 2
    want = P[lo + 1 : hi].sum() + 0.5 * (P[lo] + P[hi])
    assert np.isclose(np.sum(g[1:] ** 2), want, rtol=1e-9, atol=1e-12)


@settings(max_examples=40, deadline=None)
@given(arrays(float, 2 * 20 + 1, elements=finite), arrays(float, 2 * 20 + 1, elements=finite),
       finite, finite)
def test_linearity_on_a_common_voltage_reference(c1, c2, a, b):
    # Linearity of the DFT: with a fixed voltage as phase reference, the phasors of
    # a*x + b*y are a*X + b*Y order by order.
    v = 325 * np.sin(2 * np.pi * np.arange(CYCLES * SPC) / SPC + 0.4)
    x, y = band_limited(c1), band_limited(c2)
    sx, sy = spectrum(wf(x, v)), spectrum(wf(y, v))
    sz = spectrum(wf(a * x + b * y, v))
    scale = 1e-9 * (1 + abs(a) * np.abs(sx.current_a).max() + abs(b) * np.abs(sy.current_a).max())
    assert np.allclose(sz.current_a, a * sx.current_a + b * sy.current_a, rtol=1e-9, atol=scale)


@settings(max_examples=40, deadline=None)
@given(arrays(float, CYCLES * SPC, elements=finite), st.integers(0, CYCLES * SPC - 1),
       st.floats(-7.0, 7.0, allow_nan=False))
def test_time_shift_keeps_magnitudes(x, k, angle):
    # Circular shift theorem: a delay multiplies line k by a unit phasor, so every order's
    # magnitude (and the THD) is unchanged, for an integer-sample roll and for the Fourier
    # interpolated shift by any angle (Waveform.shifted).
    w = wf(x)
    m0 = np.abs(spectrum(w, reference="current").current_a)
    m1 = np.abs(spectrum(wf(np.roll(x, k)), reference="current").current_a)
    m2 = np.abs(spectrum(w.shifted(angle), reference="current").current_a)
    tol = 1e-9 * (1 + m0.max())
    assert np.allclose(m1, m0, atol=tol)
    assert np.allclose(m2, m0, atol=tol)
