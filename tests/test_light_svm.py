"""SVM against its definition and the threshold function, and the light-metrics bundle.

Sources: IEC TR 63158:2018 / CIE TN 006:2016, SVM = (sum_m (C_m / T_m)^3.7)^(1/3.7) over the
Fourier components from 80 Hz to 2000 Hz (the formula seen in a public secondary copy; the
range from secondary summaries); the threshold function of the standard observer
T(f) = 2.865e-5 f^1.543 + 0.225 (Perz et al., J. Opt. Soc. Am. A 35(2):309, 2018; seen in a
secondary copy). The expected values below are computed by hand from those formulas,
independently of pqcalc.light.svm. A single sine modulation C at f has SVM = C / T(f).
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.errors import InputError
from pqcalc.light import light_metrics, stroboscopic_threshold, svm, svm_of_components


def T(f):  # the standard observer's threshold, transcribed from the paper's fit
    return 2.865e-5 * f ** 1.543 + 0.225


def wave(components, n=20000, period=0.1):
    """1 + sum C sin(2 pi f t + phase) over `period` seconds (whole periods of each f)."""
    t = np.arange(n) / n * period
    x = np.ones(n)
    for k, (f, c) in enumerate(components):
        x += c * np.sin(2 * np.pi * f * t + 0.7 * k)
    return x, period


def test_threshold_values():
    # T(f) at a few frequencies, by hand: 100 Hz: 2.865e-5 * 1218.9 + 0.225 = 0.2599
    assert stroboscopic_threshold(100.0) == pytest.approx(0.25992, rel=1e-4)
    for f in (80.0, 300.0, 1000.0, 2000.0):
        assert stroboscopic_threshold(f) == pytest.approx(T(f), rel=1e-12)
    # the threshold rises with frequency: the eye is most sensitive at the low end
    fs = np.linspace(80, 2000, 50)
    assert np.all(np.diff(stroboscopic_threshold(fs)) > 0)


@pytest.mark.parametrize("f,c", [(80.0, 0.1), (100.0, 0.3), (120.0, 0.05), (300.0, 0.5),
                                 (1000.0, 0.9), (2000.0, 1.0)])
def test_pure_sine_is_c_over_threshold(f, c):
    # definition: one component -> SVM = C / T(f) (exact FFT line: whole periods in 0.1 s)
    x, period = wave([(f, c)])
    assert svm(x, period).svm == pytest.approx(c / T(f), rel=1e-9)


def test_multi_tone_minkowski_sum_by_hand():
    # components at 100, 200, 350 Hz count; 50 Hz (below 80 Hz) and 2500 Hz (above 2 kHz)
    # do not. By hand: r = C/T = 0.2/0.25992, 0.1/T(200), 0.3/T(350);
    # SVM = (r1^3.7 + r2^3.7 + r3^3.7)^(1/3.7)
    comps = [(50.0, 0.2), (100.0, 0.2), (200.0, 0.1), (350.0, 0.3), (2500.0, 0.15)]
    x, period = wave(comps, n=40000)
    r = [0.2 / T(100.0), 0.1 / T(200.0), 0.3 / T(350.0)]
    expected = sum(v ** 3.7 for v in r) ** (1 / 3.7)
    res = svm(x, period)
    assert res.svm == pytest.approx(expected, rel=1e-9)
    assert sorted(round(f) for f, _, _ in res.components) == [100, 200, 350]
    assert res.dominant_hz == pytest.approx(100.0)  # largest C/T: 0.77 (350 Hz: 0.64)
    assert svm_of_components([50.0, 100.0, 200.0, 350.0, 2500.0],
                             [0.2, 0.2, 0.1, 0.3, 0.15]) == pytest.approx(expected, rel=1e-12)


def test_steady_100hz_ripple():
    # a steady 100 Hz ripple of depth m: SVM = m / T(100) (1.154 at m = 0.3), while its
    # Pst_LM is near 0 (tests/test_light_pst.py gives the closed form)
    t = np.arange(4096) / 4096 * 0.02
    m = light_metrics(1 + 0.3 * np.sin(2 * np.pi * 100 * t), 0.02)
    assert m.svm == pytest.approx(0.3 / T(100.0), rel=1e-9)
    assert m.pst_lm < 0.05
    assert m.percent_flicker == pytest.approx(0.3, rel=1e-9)  # IES percent flicker / 100


def test_steady_light_and_dark_light():
    m = light_metrics(np.ones(4096), 0.02)
    assert m.svm == 0.0 and m.pst_lm == pytest.approx(0.0, abs=1e-12)
    d = light_metrics(np.zeros(4096), 0.02)
    assert d.dark and d.svm is None and d.pst_lm is None and d.ieee1789 == "dark"


def test_scale_invariance():
    # SVM uses ratios to the mean: the light's unit does not matter
    x, period = wave([(100.0, 0.2), (300.0, 0.1)])
    assert svm(7.5 * x, period).svm == pytest.approx(svm(x, period).svm, rel=1e-12)


# ------------------------------------------------------------------ bad input
def test_frequency_outside_the_method_range():
    with pytest.raises(InputError, match=r"frequency_hz: .* 80 to 2000 Hz"):
        stroboscopic_threshold(50.0)
    with pytest.raises(InputError, match="frequency_hz"):
        stroboscopic_threshold(2500.0)


def test_too_few_samples_for_2khz():
    with pytest.raises(InputError, match="at least 4000 samples/s"):
        svm(np.ones(64) + 0.1 * np.sin(np.arange(64)), 0.02)


def test_record_shorter_than_one_second():
    x, period = wave([(100.0, 0.2)], n=5000, period=0.5)
    with pytest.raises(InputError, match=r"record of 0.5 s is shorter than the 1 s"):
        svm(x, period, periodic=False)
    assert svm(x, period, periodic=True).svm > 0


def test_negative_light():
    with pytest.raises(InputError, match="negative"):
        svm(np.array([1.0, -0.5] * 100), 0.001)
