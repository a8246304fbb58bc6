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
        ("time_s,current_a\n0,1\n0.001,abc\n", r":3: column 2: expected a number, found 'abc'"),
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
