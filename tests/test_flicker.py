"""Flicker figures against closed forms and the IEEE Std 1789-2015 lines.

Sources: IES Lighting Handbook, 10th ed. (percent flicker = (max - min)/(max + min); flicker
index = area above the mean / total area, over whole periods); IEEE Std 1789-2015, clause 8
(low risk: Mod% < 0.025 f below 90 Hz, < 0.08 f from 90 to 1250 Hz; no observable effect:
Mod% < 0.01 f below 90 Hz, < 0.0333 f up to 3000 Hz; exempt above). The closed forms of the
test waveforms are derived in the comments.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pqcalc.errors import InputError
from pqcalc.flicker import (
    dominant_modulation,
    flicker,
    flicker_index,
    ieee1789_limits,
    ieee1789_region,
    percent_flicker,
)

N = 8192
F_MAINS = 50.0
T = 1.0 / F_MAINS


def _t(n=N, period=T):
    return np.arange(n) / n * period


@pytest.mark.parametrize("m", [0.01, 0.2, 0.5, 1.0])
def test_sine_modulation_closed_forms(m):
    # light 1 + m sin(2 w t) over one mains cycle (ripple at twice mains frequency)
    light = 1.0 + m * np.sin(2 * np.pi * 2 * F_MAINS * _t())
    f = flicker(light, T)
    # closed form: max 1 + m, min 1 - m -> percent flicker = m. Sampled at N points the peak
    # is hit exactly (N divisible by 8), so only rounding remains.
    assert f.percent_flicker == pytest.approx(m, rel=1e-12)
    # closed form: area above the mean 1 over one ripple period P is m P / pi, total area P
    # -> flicker index m / pi. The rectangle sum of a smooth periodic function over whole
    # periods is exact to rounding, except at the kink where (x - mean)+ starts: 1e-6.
    assert f.flicker_index == pytest.approx(m / np.pi, rel=1e-6)
    # the only component is at 2 x 50 Hz, with peak amplitude m of the mean (exact line)
    assert f.modulation_frequency_hz == pytest.approx(100.0, rel=1e-12)
    assert f.modulation_amplitude == pytest.approx(m, rel=1e-9)
    assert f.mean_light == pytest.approx(1.0, rel=1e-12)


def test_full_wave_rectified_sine():
    # light |sin(w t)| (a lamp following the rectified line, no smoothing)
    light = np.abs(np.sin(2 * np.pi * F_MAINS * _t()))
    f = flicker(light, T)
    # closed form: min 0 -> percent flicker = 1 (100 %)
    assert f.percent_flicker == pytest.approx(1.0, abs=1e-12)
    # closed form: mean 2/pi; sin > 2/pi on (t1, pi - t1), t1 = asin(2/pi); area above the
    # mean over a half period = 2 cos t1 - (2/pi)(pi - 2 t1), total area 2
    # -> index = cos t1 - 1 + 2 t1/pi = 0.210514
    t1 = np.arcsin(2 / np.pi)
    expected = np.cos(t1) - 1 + 2 * t1 / np.pi
    # rectangle rule over 8192 samples: the error sits at the crossings, below 1e-6
    assert f.flicker_index == pytest.approx(expected, abs=1e-6)
    assert expected == pytest.approx(0.2105, abs=1e-4)  # the textbook value, 4 digits
    # Fourier series of |sin|: only even multiples of f, the largest at 2 f with amplitude
    # 4/(3 pi) against the mean 2/pi -> 2/3
    assert f.modulation_frequency_hz == pytest.approx(100.0, rel=1e-12)
    assert f.modulation_amplitude == pytest.approx(2.0 / 3.0, rel=1e-6)
    # 100 % at 100 Hz is far above the 8 % low-risk line of IEEE 1789
    assert f.ieee1789 == "above-low-risk"


@pytest.mark.parametrize("duty", [0.1, 0.25, 0.5, 0.8])
def test_pwm_square_light(duty):
    # light on/off at 1 kHz with duty D over one 50 Hz cycle (20 whole PWM periods)
    fp = 1000.0
    t = _t()
    light = (((t * fp) % 1.0) < duty).astype(float)
    f = flicker(light, T)
    # closed form: min 0 -> percent flicker 1
    assert f.percent_flicker == 1.0
    # closed form: mean D; area above the mean D(1 - D) per PWM period, total D -> 1 - D.
    # On 8192 samples a PWM period has 409.6 samples: the duty is quantised to one sample in
    # 409.6 (2.4e-3), the bound below.
    assert f.flicker_index == pytest.approx(1 - duty, abs=2.5e-3)
    # the fundamental of a rectangular wave, 2 sin(pi D)/pi over D, is its largest line
    assert f.modulation_frequency_hz == pytest.approx(fp, rel=1e-12)
    assert f.modulation_amplitude == pytest.approx(2 * np.sin(np.pi * duty) / np.pi / duty,
                                                   rel=5e-3)
    # IEEE 1789: 1000 Hz is inside the low-risk band, where the line is 0.08 x 1000 = 80 %:
    # 100 % modulation is above it
    assert f.ieee1789 == "above-low-risk"


def test_pwm_above_3000_hz_is_exempt():
    # IEEE 1789-2015: above 3000 Hz both lines are exempt -> no observable effect at 100 %
    t = _t(1 << 15)
    light = (((t * 5000.0) % 1.0) < 0.5).astype(float)
    f = flicker(light, T)
    assert f.modulation_frequency_hz == pytest.approx(5000.0)
    assert f.ieee1789 == "no-observable-effect"
    assert f.low_risk_limit is None and f.noe_limit is None


def test_pwm_between_1250_and_3000_hz_is_low_risk():
    # IEEE 1789-2015: exempt from the low-risk line above 1250 Hz; NOE line 0.0333 x 2000 = 66.6 %
    t = _t(1 << 15)
    light = (((t * 2000.0) % 1.0) < 0.5).astype(float)
    f = flicker(light, T)
    assert f.modulation_frequency_hz == pytest.approx(2000.0)
    assert f.ieee1789 == "low-risk"
    assert f.low_risk_limit is None
    assert f.noe_limit == pytest.approx(0.666, rel=1e-9)


def test_dominant_component_picked_among_several():
    # 1 + 0.1 sin(w t) + 0.3 sin(2 w t + 1) + 0.05 sin(7 w t): the largest line is at 2 f
    wt = 2 * np.pi * F_MAINS * _t()
    light = 1 + 0.1 * np.sin(wt) + 0.3 * np.sin(2 * wt + 1) + 0.05 * np.sin(7 * wt)
    f_hz, amp = dominant_modulation(light, T)
    assert f_hz == pytest.approx(100.0) and amp == pytest.approx(0.3, rel=1e-9)


def test_subharmonic_period_gives_a_frequency_below_mains():
    # a light that repeats every 3 mains cycles (a triac firing every third half cycle pair):
    # over its true period of 3 T, the dominant line sits at f / 3
    P = 3 * T
    t = _t(3 * 4096, P)
    light = 1 + 0.4 * np.sin(2 * np.pi * t / P)
    f = flicker(light, P)
    assert f.modulation_frequency_hz == pytest.approx(F_MAINS / 3)
    # IEEE 1789 below 90 Hz: low-risk line 0.025 x 16.7 = 0.42 %: 40 % is far above it
    assert f.ieee1789 == "above-low-risk"


def test_steady_and_dark_light():
    f = flicker(np.full(256, 0.7), T)
    # constant light: no modulation at all (definitions give 0 exactly)
    assert f.percent_flicker == 0.0 and f.flicker_index == 0.0
    assert f.modulation_frequency_hz is None and f.ieee1789 == "no-observable-effect"
    d = flicker(np.zeros(256), T)
    assert d.ieee1789 == "dark" and d.percent_flicker is None and d.flicker_index is None
    assert d.to_dict()["percent_flicker_pct"] is None


# ---------------------------------------------------------------- IEEE 1789 line edges
@pytest.mark.parametrize("f_hz,low,noe", [
    # IEEE Std 1789-2015, clause 8: slopes 0.025 / 0.01 %/Hz below 90 Hz ...
    (60.0, 0.025 * 60 / 100, 0.01 * 60 / 100),
    (89.9, 0.025 * 89.9 / 100, 0.01 * 89.9 / 100),
    # ... 0.08 / 0.0333 %/Hz from 90 Hz (the line steps up at 90 Hz)
    (90.0, 0.08 * 90 / 100, 0.0333 * 90 / 100),
    (100.0, 0.08, 0.0333),
    (120.0, 0.096, 0.0333 * 1.2),
    (1250.0, 1.0, 0.0333 * 12.5),  # the low-risk line ends at 1250 Hz (100 %)
    (1250.1, None, 0.0333 * 12.501),  # exempt from the low-risk line above 1250 Hz
    (3000.0, None, 0.999),  # the NOE line ends at 3000 Hz (99.9 %)
    (3000.1, None, None),  # exempt from both
])
def test_ieee1789_limits_at_the_band_edges(f_hz, low, noe):
    lo, no = ieee1789_limits(f_hz)
    if low is None:
        assert lo is None
    else:
        assert lo == pytest.approx(low, rel=1e-12)
    if noe is None:
        assert no is None
    else:
        assert no == pytest.approx(noe, rel=1e-12)


@pytest.mark.parametrize("mod,f_hz,region", [
    # IEEE 1789-2015 at 100 Hz (50 Hz mains ripple): NOE below 3.33 %, low risk below 8 %
    (0.0332, 100.0, "no-observable-effect"),
    (0.0334, 100.0, "low-risk"),
    (0.0799, 100.0, "low-risk"),
    (0.0801, 100.0, "above-low-risk"),
    # at 120 Hz (60 Hz mains): NOE below 3.996 %, low risk below 9.6 %
    (0.0399, 120.0, "no-observable-effect"),
    (0.0401, 120.0, "low-risk"),
    (0.0959, 120.0, "low-risk"),
    (0.0961, 120.0, "above-low-risk"),
    # below 90 Hz at 50 Hz: NOE below 0.5 %, low risk below 1.25 %
    (0.0049, 50.0, "no-observable-effect"),
    (0.0124, 50.0, "low-risk"),
    (0.0126, 50.0, "above-low-risk"),
    (1.0, 1300.0, "low-risk"),  # exempt from low risk, above the NOE line (43.3 %)
    (0.40, 1300.0, "no-observable-effect"),
    (1.0, 3500.0, "no-observable-effect"),  # exempt from both
])
def test_ieee1789_regions_either_side_of_the_lines(mod, f_hz, region):
    assert ieee1789_region(mod, f_hz) == region


def test_ieee1789_line_itself_is_outside():
    # the recommended practice's inequalities are strict: Mod% exactly on the line is not below
    low, noe = ieee1789_limits(100.0)
    assert ieee1789_region(noe, 100.0) == "low-risk"
    assert ieee1789_region(low, 100.0) == "above-low-risk"


# ---------------------------------------------------------------- properties and errors
@settings(max_examples=40, deadline=None)
@given(m=st.floats(0.0, 0.99), scale=st.floats(1e-3, 1e3), shift=st.integers(0, 1023))
def test_figures_do_not_depend_on_scale_or_time_origin(m, scale, shift):
    # definitions: both figures are ratios of the light (unit-free) over whole periods
    # (invariant under a circular time shift)
    base = 1 + m * np.sin(2 * np.pi * 3 * np.arange(1024) / 1024)
    a = flicker(base, T)
    b = flicker(scale * np.roll(base, shift), T)
    assert b.percent_flicker == pytest.approx(a.percent_flicker, rel=1e-9, abs=1e-12)
    assert b.flicker_index == pytest.approx(a.flicker_index, rel=1e-9, abs=1e-12)
    # and percent flicker bounds the index: area above the mean <= (max - mean) / 2 / mean...
    # the general bound from the definitions is index <= percent flicker
    assert a.flicker_index <= a.percent_flicker + 1e-12


@pytest.mark.parametrize("bad,match", [
    ([1.0, np.nan, 1.0, 1.0], "finite"),
    ([1.0, -0.5, 1.0, 1.0], "negative"),
    ([1.0, 1.0], "at least 4"),
    (np.ones((4, 4)), "1-D"),
])
def test_bad_light(bad, match):
    with pytest.raises(InputError, match=match):
        flicker(bad, T)


def test_bad_period_and_frequency_and_dark_figures():
    with pytest.raises(InputError, match="period_s"):
        dominant_modulation(np.ones(8), 0.0)
    with pytest.raises(InputError, match="frequency_hz"):
        ieee1789_limits(-5.0)
    with pytest.raises(InputError, match="modulation"):
        ieee1789_region(1.5, 100.0)
    with pytest.raises(InputError, match="dark"):
        percent_flicker(np.zeros(8))
    with pytest.raises(InputError, match="dark"):
        flicker_index(np.zeros(8))


# ---------------------------------------------------------------- the lamp models' light
def _lamp(model, power_w, f_hz=50.0, dimmer=None, **params):
    from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, solve_circuit

    v = 230.0 if f_hz == 50.0 else 120.0
    sol = solve_circuit(Supply(v, f_hz, 0.0, 0.0), dimmer or DimmerSpec("none"),
                        [LoadGroup(model, power_w, params=params)])
    g = sol.groups[0]
    return g, flicker(g.light, sol.period_cycles / f_hz)


@pytest.mark.parametrize("f_hz", [50.0, 60.0])
def test_filament_thermal_inertia_closed_form(f_hz):
    from pqcalc.circuits.solve import FILAMENT_LIGHT_EXPONENT

    g, fl = _lamp("resistive", 60.0, f_hz)
    tau = dict(g.params)["tau_thermal_s"]
    e = FILAMENT_LIGHT_EXPONENT
    # closed form: on a sine the filament power is P0 (1 - cos 2wt); a first-order thermal
    # low-pass of time constant tau leaves the ripple m = 1 / sqrt(1 + (2 w tau)^2), and the
    # light ~ (1 + m cos)^e has percent flicker ((1+m)^e - (1-m)^e) / ((1+m)^e + (1-m)^e).
    # Inertia brings a bare 100 % down to about 11-13 %. Tolerance: the 0.05 ohm switch and
    # sampling, well under 1 % of the figure.
    m = 1 / np.sqrt(1 + (2 * 2 * np.pi * f_hz * tau) ** 2)
    expected = ((1 + m) ** e - (1 - m) ** e) / ((1 + m) ** e + (1 - m) ** e)
    assert fl.percent_flicker == pytest.approx(expected, rel=0.01)
    assert fl.percent_flicker < 0.2
    # common practice: the ripple of a lamp on the mains sits at twice mains frequency
    assert fl.modulation_frequency_hz == pytest.approx(2 * f_hz)


def test_sine_following_driver_modulates_near_100_percent():
    # behaviour that must emerge (issue): no bulk capacitor, the light follows the rectified
    # line: modulation near 100 % at twice mains frequency
    _, fl = _lamp("sine-follow", 8.0)
    assert fl.percent_flicker > 0.95
    assert fl.modulation_frequency_hz == pytest.approx(100.0)
    assert fl.ieee1789 == "above-low-risk"


def test_pwm_driver_light_at_its_pwm_frequency():
    from pqcalc.circuits import DimmerSpec

    dim = DimmerSpec("trailing-edge", conduction_deg=100.0)
    g, fl = _lamp("pwm-detect", 9.0, dimmer=dim)
    # the LEDs are switched at the driver's PWM frequency: that line dominates
    assert fl.modulation_frequency_hz == pytest.approx(dict(g.params)["pwm_frequency_hz"])
    # closed form of on/off light: percent flicker 1, flicker index 1 - duty (duty = mean)
    assert fl.percent_flicker == 1.0
    assert fl.flicker_index == pytest.approx(1 - fl.mean_light, abs=1e-9)
    # common practice: PWM far above the mains ripple is much less visible; IEEE 1789 exempts
    # modulation above 3000 Hz
    _, fast = _lamp("pwm-detect", 9.0, dimmer=dim, pwm_frequency_hz=3500.0)
    assert fast.modulation_frequency_hz == pytest.approx(3500.0)
    assert fast.ieee1789 == "no-observable-effect"


def test_dark_below_threshold():
    # a glow of 1e-9 of full output (a solver's off-state leakage) with full modulation:
    # below the given dark level it is dark, not "above low risk"
    light = 1e-9 * np.abs(np.sin(2 * np.pi * F_MAINS * _t()))
    assert flicker(light, T).ieee1789 == "above-low-risk"
    d = flicker(light, T, dark_below=1e-6)
    assert d.ieee1789 == "dark" and d.percent_flicker is None
    assert d.mean_light == pytest.approx(1e-9 * 2 / np.pi, rel=1e-6)  # mean of |sin| = 2/pi
    with pytest.raises(InputError, match="dark_below"):
        flicker(light, T, dark_below=-1.0)
