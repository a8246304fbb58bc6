"""Measured captures: CSV reading, frequency estimate, resampling onto whole cycles.

The reference values are the synthetic signals' own parameters (the closed form of a sum of
sines); each tolerance says what limits it.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from pqcalc.errors import ClippingWarning, InputError
from pqcalc.io.capture import CsvOptions, CsvStream, read_csv, record_to_waveform
from pqcalc.spectrum import spectrum
from pqcalc.waveform import estimate_frequency

# a dimmed-lamp-like current: strong odd harmonics with arbitrary phases [A rms]
HARMONICS = {1: 1.0, 2: 0.02, 3: 0.62, 5: 0.38, 7: 0.21, 9: 0.12, 11: 0.08, 13: 0.05,
             15: 0.04, 21: 0.03, 31: 0.02, 39: 0.015}


def synthetic(f_hz, fs_hz, duration_s, harmonics=HARMONICS, noise=0.0, seed=0):
    rng = np.random.default_rng(seed)
    t = np.arange(int(duration_s * fs_hz)) / fs_hz
    i = sum(a * np.sqrt(2) * np.sin(2 * np.pi * h * f_hz * t + 0.7 * h)
            for h, a in harmonics.items())
    v = 230 * np.sqrt(2) * (np.sin(2 * np.pi * f_hz * t) - 0.03 * np.sin(2 * np.pi * 5 * f_hz * t))
    if noise:
        i = i + rng.normal(0, noise, t.size)
        v = v + rng.normal(0, 230 * noise, t.size)
    return t, i, v


def write_csv(path, t, i, v=None, delim=",", decimal=".", header=True, comment=None):
    lines = [] if comment is None else [comment]
    if header:
        lines.append(delim.join(["time_s", "current_a"] + ([] if v is None else ["voltage_v"])))
    for k in range(t.size):
        cells = [f"{t[k]:.9f}", f"{i[k]:.9f}"] + ([] if v is None else [f"{v[k]:.6f}"])
        if decimal == ",":
            cells = [c.replace(".", ",") for c in cells]
        lines.append(delim.join(cells))
    path.write_text("\n".join(lines) + "\n")


def test_49_9_hz_non_multiple_rate_recovers_harmonics(tmp_path):
    # Issue check: 49.9 Hz record sampled at 12 345 Hz (247.4 samples per cycle, not a
    # whole number), known harmonics. Every magnitude within 0.1 % of the fundamental and
    # the frequency within 0.01 Hz (IEC 61000-4-7 asks 0.03 % of the fundamental's
    # frequency of a synchronised window; the bound here is the project's requirement).
    t, i, v = synthetic(49.9, 12345.0, 1.0)
    p = tmp_path / "rec.csv"
    write_csv(p, t, i, v)
    w = record_to_waveform(read_csv(p))
    assert w.frequency_hz == pytest.approx(49.9, abs=0.01)
    s = spectrum(w)
    for h, a in HARMONICS.items():
        assert abs(s.current_a[h]) == pytest.approx(a, abs=1e-3 * HARMONICS[1]), h
    # orders absent from the signal stay below 0.1 % too
    for h in (4, 6, 8, 10, 17, 25):
        assert abs(s.current_a[h]) < 1e-3


def test_49_9_hz_current_only_with_noise():
    # Without a voltage the frequency comes from the distorted current itself; 1 % noise.
    _, i, _ = synthetic(49.9, 9871.0, 0.8, noise=0.01, seed=3)
    assert estimate_frequency(i, 9871.0) == pytest.approx(49.9, abs=0.01)


@pytest.mark.parametrize("seed", range(6))
def test_frequency_estimate_strong_harmonics_and_noise(seed):
    # 5 to 50 cycles, 3 to 25 kS/s, third harmonic up to 90 %, 5 % white noise: the fit of
    # fundamental plus harmonics stays within the 0.01 Hz the project asks for.
    rng = np.random.default_rng(100 + seed)
    f, fs = rng.uniform(47, 63), rng.uniform(3000, 25000)
    dur = rng.uniform(0.1, 1.0)
    harm = {1: 1.0, 3: rng.uniform(0, 0.9), 5: rng.uniform(0, 0.6), 7: 0.3, 9: 0.2, 11: 0.1}
    _, i, _ = synthetic(f, fs, dur, harm, noise=0.05, seed=seed)
    assert estimate_frequency(i + 0.1, fs) == pytest.approx(f, abs=0.01)


def test_semicolon_decimal_comma_skip_rows(tmp_path):
    t, i, v = synthetic(50.0, 10000.0, 0.1)
    p = tmp_path / "eu.csv"
    write_csv(p, t, i, v, delim=";", decimal=",")
    p.write_text("Recorder export\nsite: hall B\n" + p.read_text())
    r = read_csv(p, CsvOptions(decimal=",", skip_rows=2))
    np.testing.assert_allclose(r.current_a, i, atol=1e-9)  # 9 decimals written
    np.testing.assert_allclose(r.voltage_v, v, atol=1e-6)
    assert r.sample_rate_hz == pytest.approx(10000.0, rel=1e-9)


def test_tab_columns_by_index_and_scaling(tmp_path):
    # a shunt of 0.01 ohm recorded in volts: current = column / 0.01; a 1:100 divider
    t, i, v = synthetic(60.0, 7680.0, 0.1)
    p = tmp_path / "tab.txt"
    write_csv(p, t, i * 0.01, v / 100, delim="\t", header=False)
    r = read_csv(p, CsvOptions(time_col=0, current_col=1, voltage_col=2,
                               current_scale=100.0, voltage_scale=100.0))
    np.testing.assert_allclose(r.current_a, i, atol=1e-6)
    np.testing.assert_allclose(r.voltage_v, v, atol=1e-3)


def test_sample_rate_without_time_column(tmp_path):
    _, i, _ = synthetic(50.0, 5000.0, 0.2)
    p = tmp_path / "i.csv"
    p.write_text("current_a\n" + "\n".join(f"{x:.9f}" for x in i) + "\n")
    r = read_csv(p, CsvOptions(sample_rate_hz=5000.0))
    assert r.sample_rate_hz == 5000.0 and r.voltage_v is None
    np.testing.assert_allclose(r.current_a, i, atol=1e-9)


def test_stream_chunks_equal_whole(tmp_path):
    t, i, v = synthetic(50.0, 5000.0, 0.5)
    p = tmp_path / "s.csv"
    write_csv(p, t, i, v)
    st = CsvStream(p, first_block=100)
    parts = list(st.chunks(333))
    np.testing.assert_array_equal(np.concatenate([c for c, _ in parts]), read_csv(p).current_a)


def test_clipped_record_warns_and_is_analysed(tmp_path):
    # A recorder input at its limit: flat tops at +-1.2 A over a 2 A peak current
    t, i, v = synthetic(50.0, 10000.0, 0.2, {1: 1.414})
    p = tmp_path / "clip.csv"
    write_csv(p, t, np.clip(i, -1.2, 1.2), v)
    with pytest.warns(ClippingWarning, match="flat tops"):
        w = record_to_waveform(read_csv(p))
    s = spectrum(w)
    # still analysed: the clipped fundamental is below the true 1.414 A and well above 1 A
    assert 1.0 < s.i1_a < 1.414


def test_unclipped_quantised_sine_does_not_warn():
    # a 12-bit quantised sine at 128 samples per cycle meets its extreme once per cycle
    from pqcalc.io.capture import RawRecord

    t = np.arange(6400) / 6400.0
    x = np.round(2047 * np.sin(2 * np.pi * 50 * t)) / 2047
    with warnings.catch_warnings():
        warnings.simplefilter("error", ClippingWarning)
        record_to_waveform(RawRecord(x, 6400.0, None, "q.csv"))


@pytest.mark.parametrize(
    "content,match",
    [
        ("", "empty"),
        ("time_s,current_a\n", "no numeric rows"),
        ("time_s,current_a\n0,1\n0.001,nan\n", r":3: column 2: expected a finite number"),
        ("time_s,current_a\n0,1\n0.001,abc\n",
         r":3: column 2: expected a number, found text \(3 characters\)"),
        ("time_s,current_a\n0,1\n0.001,2\n0.001,3\n", r":4: duplicate time stamp"),
        ("time_s,current_a\n0,1\n0.002,2\n0.001,3\n", r":4: decreasing time stamp"),
        ("time_s,current_a,voltage_v\n0,1,2\n0.001,2\n", r":3: expected 3 columns, found 2"),
    ],
)
def test_bad_csv(tmp_path, content, match):
    p = tmp_path / "bad.csv"
    p.write_text(content)
    with pytest.raises(InputError, match=match):
        read_csv(p)


def test_unknown_column_lists_available(tmp_path):
    p = tmp_path / "c.csv"
    p.write_text("time_s,amps_l1\n0,1\n0.001,2\n")
    with pytest.raises(InputError, match="available: time_s, amps_l1"):
        read_csv(p, CsvOptions(current_col="amps_l2"))


def test_less_than_one_cycle(tmp_path):
    t, i, v = synthetic(50.0, 10000.0, 0.015)
    p = tmp_path / "short.csv"
    write_csv(p, t, i, v)
    with pytest.raises(InputError, match="short.csv.*(less than one|at least one whole cycle)"):
        record_to_waveform(read_csv(p))


# ---------------------------------------------------------------------- steps (dimmer captures)
def cut90_record(fs_hz, f_hz=50.0, duration_s=1.0, t0_s=0.00123, ipk_a=2.0):
    """A resistive load behind an ideal 90 deg leading-edge cut, sampled ideally (no
    anti-aliasing filter) from an arbitrary start: the current steps from 0 to its crest."""
    from pqcalc.io.capture import RawRecord

    t = np.arange(int(round(duration_s * fs_hz))) / fs_hz + t0_s
    wt = 2 * np.pi * f_hz * t
    i = np.where(np.mod(wt, np.pi) >= np.pi / 2, ipk_a * np.sin(wt), 0.0)
    return RawRecord(i, fs_hz, 325.0 * np.sin(wt), "cut90.csv")


def cut_sine_ratio_pct(h, alpha_rad):
    """I_h/I_1 [%] of a sine cut at alpha (leading edge): the Fourier coefficients
    (2/pi) int_alpha^pi sin(th) {cos, sin}(h th) dth of the half-wave symmetric current,
    integrated numerically (textbook AC voltage controller with resistive load)."""
    from scipy.integrate import quad

    def mag(n):
        a = quad(lambda th: np.sin(th) * np.cos(n * th), alpha_rad, np.pi, limit=200)[0]
        b = quad(lambda th: np.sin(th) * np.sin(n * th), alpha_rad, np.pi, limit=200)[0]
        return np.hypot(a, b)

    return 100.0 * mag(h) / mag(1)


def test_cut_sine_closed_form_helper_matches_the_reference_values():
    # REFERENCES.md (AC voltage controller, alpha = 90 deg): I3/I1 = 53.70 %,
    # I5/I1 = I7/I1 = 17.90 %
    assert cut_sine_ratio_pct(3, np.pi / 2) == pytest.approx(53.70, abs=0.005)
    assert cut_sine_ratio_pct(5, np.pi / 2) == pytest.approx(17.90, abs=0.005)
    assert cut_sine_ratio_pct(7, np.pi / 2) == pytest.approx(17.90, abs=0.005)


def test_interpolation_does_not_ring_at_a_step():
    from scipy.interpolate import CubicSpline

    from pqcalc.waveform import interpolate_limited

    # A unit step: a cubic spline through its samples rings by about 10 % of the step
    # (the defect the limited interpolation removes); the limited one stays in [0, 1].
    x = np.r_[np.zeros(20), np.ones(20)]
    at = np.linspace(0, 39, 3901)
    assert CubicSpline(np.arange(40), x)(at).max() > 1.05
    y = interpolate_limited(x, at)
    assert y.min() == 0.0 and y.max() == 1.0
    # It interpolates: the samples themselves are returned unchanged.
    np.testing.assert_allclose(interpolate_limited(x, np.arange(40.0)), x, atol=1e-12)


@pytest.mark.parametrize("seed", range(4))
def test_interpolation_stays_within_its_bound(seed):
    # The documented bound (interpolate_limited): every value on the interval k..k+1 lies
    # between x[k] and x[k+1], widened on the side of the curvature by a quarter of the
    # smaller of the two second differences when they agree in sign (minmod), else not at
    # all. Random steps on a sine plus noise exercise both branches.
    from pqcalc.waveform import interpolate_limited

    rng = np.random.default_rng(seed)
    n = 400
    x = np.sin(2 * np.pi * np.arange(n) / rng.uniform(20, 200)) + 0.01 * rng.normal(size=n)
    x = x + np.cumsum(rng.random(n) < 0.03) * rng.choice([-1.0, 1.0])
    at = np.sort(rng.uniform(0, n - 1, 20000))
    y = interpolate_limited(x, at)
    k = np.clip(np.floor(at).astype(int), 0, n - 2)
    d2 = np.zeros(n)
    d2[1:-1] = x[:-2] - 2 * x[1:-1] + x[2:]
    a, b = d2[k], d2[k + 1]
    c = np.where(a * b > 0, np.sign(a) * np.minimum(abs(a), abs(b)), 0.0)
    lo = np.minimum(x[k], x[k + 1]) - np.maximum(c, 0) / 4
    hi = np.maximum(x[k], x[k + 1]) + np.maximum(-c, 0) / 4
    assert np.all(y >= lo - 1e-12) and np.all(y <= hi + 1e-12)


def test_smooth_record_keeps_the_spline_accuracy():
    # On a record without steps the limited interpolation is the cubic spline wherever a
    # parabola through the samples allows the spline's values: the 49.9 Hz record of the
    # first test at 12 345 Hz (247.4 samples per cycle) keeps every harmonic within
    # 5e-5 of the fundamental (the spline alone gives 2.5e-5; linear interpolation 1.2e-3,
    # 8 % of the 39th order, which is why it is not used).
    t, i, v = synthetic(49.9, 12345.0, 1.0)
    from pqcalc.io.capture import RawRecord

    s = spectrum(record_to_waveform(RawRecord(i, 12345.0, v, "smooth.csv")))
    for h, a in HARMONICS.items():
        assert abs(s.current_a[h]) == pytest.approx(a, abs=5e-5 * HARMONICS[1]), h


# Rates: whole samples per cycle (5000, 10000, 25000 Hz: 100, 200, 500 per cycle, the step
# at the same place in every cycle) and not (7777, 9871, 12345 Hz: 155.54, 197.42, 246.9).
CUT_RATES_HZ = (5000.0, 7777.0, 9871.0, 10000.0, 12345.0, 25000.0)


@pytest.mark.parametrize("fs_hz", CUT_RATES_HZ)
def test_crest_factor_of_a_90_deg_cut_capture(fs_hz):
    # Closed form: the 90 deg cut keeps the sine's crest I_pk and
    # I_rms = I_pk/sqrt2 * sqrt(1 - a/pi + sin 2a/(2 pi)) = I_pk/2 at a = pi/2, so the crest
    # factor is 2.000 (REFERENCES.md, AC voltage controller with resistive load).
    # Tolerance from the sampling: the recorded samples place each firing only within one
    # sample interval T, so the RMS from them is off by at most T/2 of I_pk^2 per step,
    # two steps per cycle of mean square I_pk^2/4: +-4/N in mean square, +-2/N in RMS with N
    # samples per cycle; the largest sample lies within one interval after the crest, at
    # least I_pk cos(2 pi/N). The old cubic-spline record read 2.19 to 2.24 at these rates.
    from pqcalc.analysis import analyze

    n = fs_hz / 50.0
    w = record_to_waveform(cut90_record(fs_hz))
    cf = analyze(w).summary.crest_factor
    tol = 2.0 * (2.0 / n + (1.0 - np.cos(2 * np.pi / n)))
    assert cf == pytest.approx(2.0, abs=tol)
    assert w.crest_factor == cf
    # the peak is a recorded sample's, and the resampled record never exceeds it
    assert w.i_peak_a == pytest.approx(2.0, rel=1 - np.cos(2 * np.pi / n))
    assert np.max(np.abs(w.current_a)) <= w.i_peak_a


@pytest.mark.parametrize("fs_hz", [r for r in CUT_RATES_HZ if r / 50.0 >= 140])
def test_harmonics_of_a_90_deg_cut_capture(fs_hz):
    # Closed form (REFERENCES.md): I3/I1 = 53.70 %, I5/I1 = I7/I1 = 17.90 % at 90 deg.
    # Tolerance from the sampling: a firing is placed only within one sample interval
    # (360/N deg), and the ratios move with the firing angle by dI3/da = 0.85 %-points per
    # degree and dI5/da = dI7/da = 0.28 (the same closed form, differentiated numerically
    # here); rates of at least 20 samples per period of the 7th order (N >= 140) so the
    # interpolation itself costs far less (waveform.resample_whole_cycles).
    s = spectrum(record_to_waveform(cut90_record(fs_hz)))
    step_deg = 360.0 * 50.0 / fs_hz
    for h, ref in ((3, 53.70), (5, 17.90), (7, 17.90)):
        slope = (cut_sine_ratio_pct(h, np.radians(90.5))
                 - cut_sine_ratio_pct(h, np.radians(89.5)))  # per degree
        got = 100 * abs(s.current_a[h]) / s.i1_a
        assert got == pytest.approx(ref, abs=abs(slope) * step_deg + 0.01), h


def test_recorded_figures_follow_scaling_and_shifts():
    # n identical lamps scale the recorded peak and RMS by n; a delay changes neither
    w = record_to_waveform(cut90_record(12345.0))
    assert w.scaled(3.0).i_peak_a == pytest.approx(3 * w.i_peak_a)
    assert w.scaled(3.0).crest_factor == pytest.approx(w.crest_factor)
    assert w.shifted(0.3).i_peak_a == w.i_peak_a
    # a sum of records is a new record: its peak is its own samples'
    both = w + w
    assert both.recorded is None and both.i_peak_a == np.max(np.abs(both.current_a))


def test_a_capture_is_read_once_until_it_changes(tmp_path):
    # the design of load_capture's memo: an installation's capture is read once although
    # three stages ask for it; a changed file (size or time) is read again; the samples
    # of a shared record cannot be written by accident
    import os

    from pqcalc.io.capture import load_capture

    t = np.arange(2000) / 10_000.0
    p = tmp_path / "c.csv"
    write_csv(p, t, np.sin(2 * np.pi * 50 * t))
    a, b = load_capture(p), load_capture(p)
    assert a is b
    with pytest.raises(ValueError):
        a.current_a[0] = 1.0
    write_csv(p, t, 2 * np.sin(2 * np.pi * 50 * t))
    os.utime(p, ns=(1, 1))  # a different modification time whatever the clock's grain
    c = load_capture(p)
    assert c is not a and np.max(c.current_a) == pytest.approx(2 * np.max(a.current_a))
