"""IEC 61000-4-7 windows, groups, subgroups, smoothing and summaries of long records.

References: IEC 61000-4-7:2002+AMD1:2008, 4.4 (10 cycles at 50 Hz, 12 at 60 Hz), eq. 8
(group: lines k-N/2+1..k+N/2-1 in full, the two lines at k +- N/2 at half weight), eq. 9
(subgroup: lines k-1..k+1; from memory), 5.5.1 (first-order smoothing, 1.5 s; from memory).
Expected values are the closed forms of the synthetic signals.
"""

from __future__ import annotations

import numpy as np
import pytest

from pqcalc.errors import InputError
from pqcalc.io.windows import (
    analyze_windows,
    blocks_from_arrays,
    iter_windows,
    smoothing_alpha,
    window_cycles,
)


def tones(fs, duration_s, comps, f_v=None):
    """Sum of sines; comps = [(frequency_hz, rms, phase_rad)]."""
    t = np.arange(int(round(duration_s * fs))) / fs
    x = sum(a * np.sqrt(2) * np.sin(2 * np.pi * f * t + ph) for f, a, ph in comps)
    v = None if f_v is None else 230 * np.sqrt(2) * np.sin(2 * np.pi * f_v * t)
    return x, v


def test_window_width_10_and_12_cycles():
    # IEC 61000-4-7 4.4: 10 cycles on 50 Hz systems, 12 cycles on 60 Hz systems (200 ms)
    assert window_cycles(50.0) == 10 and window_cycles(60.0) == 12
    for f, want in ((50.0, 10), (60.0, 12)):
        i, v = tones(12000.0, 2.0, [(f, 1.0, 0.0), (3 * f, 0.3, 1.0)], f_v=f)
        wa = analyze_windows(blocks_from_arrays(i, 12000.0, v))
        assert wa.cycles == want
        # consecutive windows 200 ms apart: 10 (12) cycles of 50 (60) Hz
        assert np.allclose(np.diff(wa.windows.start_s), want / f, atol=1 / 12000.0)
        assert wa.windows.n_windows == 10


def test_group_collects_interharmonic_halfway_at_half_weight():
    # 50 Hz, 10-cycle windows, 5 Hz lines. An interharmonic at 175 Hz sits on line 35,
    # exactly between orders 3 (line 30) and 4 (line 40): each group takes half its power
    # (eq. 8), the subgroups (lines k-1..k+1) none of it. One at 260 Hz (line 52) is inside
    # the group of order 5 (lines 46..54 in full) and outside its subgroup (49..51).
    fs = 10000.0
    i, _ = tones(fs, 1.0, [(50, 1.0, 0), (150, 0.4, 0.5), (175, 0.2, 1.1), (250, 0.3, 2.0),
                           (260, 0.1, 0.3)])
    b = next(iter_windows(blocks_from_arrays(i, fs), nominal_hz=50.0, frequency_hz=50.0))
    g, sg = b.i_group_a[0], b.i_subgroup_a[0]
    assert g[1] == pytest.approx(1.0, rel=1e-9)
    assert g[3] == pytest.approx(np.sqrt(0.4**2 + 0.5 * 0.2**2), rel=1e-9)
    assert g[4] == pytest.approx(np.sqrt(0.5 * 0.2**2), rel=1e-9)
    assert g[5] == pytest.approx(np.hypot(0.3, 0.1), rel=1e-9)
    assert sg[3] == pytest.approx(0.4, rel=1e-9)
    assert sg[5] == pytest.approx(0.3, rel=1e-9)
    # THD of groups, orders 2..40 over group 1 (IEC 61000-4-7 Annex / THDG)
    want = np.sqrt(g[3] ** 2 + g[4] ** 2 + g[5] ** 2) / g[1]
    assert b.thd_i_group[0] == pytest.approx(want, rel=1e-12)


def test_60_hz_group_uses_six_lines_each_side():
    # 60 Hz: 12-cycle windows, lines 5 Hz apart; an interharmonic at 210 Hz (line 42) is
    # halfway between orders 3 (36) and 4 (48): half of its power in each group.
    fs = 15360.0
    i, _ = tones(fs, 0.4, [(60, 1.0, 0), (210, 0.2, 0.7)])
    b = next(iter_windows(blocks_from_arrays(i, fs), nominal_hz=60.0, frequency_hz=60.0))
    assert b.cycles == 12
    assert b.i_group_a[0, 3] == pytest.approx(np.sqrt(0.5) * 0.2, rel=1e-9)
    assert b.i_group_a[0, 4] == pytest.approx(np.sqrt(0.5) * 0.2, rel=1e-9)


def test_49_9_hz_tracked_windows():
    # The non-synchronous record through the windows: 49.9 Hz at 12 345 Hz. The
    # tracked frequency within 0.01 Hz and every group within 0.1 % of the fundamental.
    fs, f = 12345.0, 49.9
    harm = {1: 1.0, 3: 0.62, 5: 0.38, 7: 0.21, 9: 0.12, 11: 0.08, 13: 0.05, 39: 0.015}
    i, v = tones(fs, 6.0, [(h * f, a, 0.7 * h) for h, a in harm.items()], f_v=f)
    wa = analyze_windows(blocks_from_arrays(i, fs, v), chunk_samples=20000)
    w = wa.windows
    assert wa.cycles == 10
    assert np.max(np.abs(w.frequency_hz - f)) < 0.01
    for h, a in harm.items():
        assert np.max(np.abs(w.i_group_a[:, h] - a)) < 1e-3, h
    # voltage in phase with the current's fundamental at 0.7 rad: dpf = cos(0.7)
    np.testing.assert_allclose(w.dpf, np.cos(0.7), atol=1e-4)


def test_frequency_step_is_tracked():
    # mains at 49.95 Hz for 3 s then 50.08 Hz (phase continuous): after one block of lag
    # the per-window frequency reads the new value within 0.01 Hz.
    fs = 8000.0
    t = np.arange(int(6 * fs)) / fs
    f = np.where(t < 3, 49.95, 50.08)
    phase = 2 * np.pi * np.cumsum(f) / fs
    v = 325 * np.sin(phase)
    i = 2 * np.sin(phase - 0.2) + 0.5 * np.sin(3 * phase)
    w = analyze_windows(blocks_from_arrays(i, fs, v), chunk_samples=8000).windows
    early = w.frequency_hz[(w.start_s > 0.5) & (w.start_s < 2.7)]
    late = w.frequency_hz[w.start_s > 4.0]
    assert np.max(np.abs(early - 49.95)) < 0.01
    assert np.max(np.abs(late - 50.08)) < 0.01


def test_smoothing_step_response():
    # First-order filter y_k = y_{k-1} + (x_k - y_{k-1}) / alpha, alpha = 1/(1-e^{-0.2/1.5})
    # = 8.011 (IEC 61000-4-7 5.5.1): a third harmonic that jumps from 0.1 to 0.5 A at a
    # window boundary reads 0.5 - 0.4 (1 - 1/alpha)^k k windows later.
    assert smoothing_alpha(0.2) == pytest.approx(8.011, abs=5e-4)
    fs = 10000.0
    t = np.arange(int(4 * fs)) / fs
    a3 = np.where(t < 2.0, 0.1, 0.5)
    i = np.sqrt(2) * (np.sin(2 * np.pi * 50 * t) + a3 * np.sin(2 * np.pi * 150 * t))
    w = analyze_windows(blocks_from_arrays(i, fs), smoothing=True, chunk_samples=7000,
                        nominal_hz=50.0).windows
    assert w.smoothed
    k0 = int(np.argmin(np.abs(w.start_s - 2.0)))
    alpha = smoothing_alpha(0.2)
    for k in range(0, 9):
        want = 0.5 - 0.4 * (1 - 1 / alpha) ** (k + 1)
        assert w.i_group_a[k0 + k, 3] == pytest.approx(want, abs=2e-4)
    assert w.i_group_a[:k0, 3] == pytest.approx(0.1, abs=2e-4)  # starts at the first value


def test_summary_mean_max_p95():
    # mean and max exact; the 95th percentile within 0.2 % of the largest value of numpy's
    # percentile (linear interpolation) over the same per-window values
    fs = 6400.0
    rng = np.random.default_rng(4)
    n_win = 150
    amp3 = rng.uniform(0.05, 0.6, n_win)
    # one spare cycle at the end, so the last window fits whatever the tracked frequency
    t = np.arange(int((n_win * 0.2 + 0.02) * fs)) / fs
    a3 = np.concatenate([np.repeat(amp3, int(0.2 * fs)), np.full(int(0.02 * fs), amp3[-1])])
    i = np.sqrt(2) * (np.sin(2 * np.pi * 50 * t) + a3 * np.sin(2 * np.pi * 150 * t))
    wa = analyze_windows(blocks_from_arrays(i, fs), nominal_hz=50.0, chunk_samples=5000)
    d = wa.summary.to_dict()
    g3 = wa.windows.i_group_a[:, 3]
    # the groups equal the per-window amplitudes (synchronous: 128 samples per cycle)
    np.testing.assert_allclose(g3, amp3, atol=1e-6)
    assert d["mean"]["i_group_a"][3] == pytest.approx(np.mean(amp3), abs=1e-6)
    assert d["max"]["i_group_a"][3] == pytest.approx(np.max(amp3), abs=1e-6)
    assert d["p95"]["i_group_a"][3] == pytest.approx(np.percentile(amp3, 95), abs=2e-3 * 0.6)
    assert d["p95"]["thd_i_pct"] == pytest.approx(
        100 * np.percentile(wa.windows.thd_i_group, 95), abs=0.2 * 0.6)
    assert d["windows"] == n_win


def test_block_size_does_not_change_results(tmp_path):
    fs, f = 9000.0, 50.03
    i, v = tones(fs, 5.0, [(f, 1.0, 0.3), (5 * f, 0.2, 0.0)], f_v=f)
    a = analyze_windows(blocks_from_arrays(i, fs, v), chunk_samples=4096).windows
    b = analyze_windows(blocks_from_arrays(i, fs, v), chunk_samples=50000).windows
    assert a.n_windows == b.n_windows
    # the tracked frequency differs slightly between block sizes; groups agree to 1e-5
    np.testing.assert_allclose(a.i_group_a, b.i_group_a, atol=1e-5)


def test_csv_and_comtrade_streams(tmp_path):
    # the file readers feed the same windows as the arrays (16-bit quantisation: 1e-4)
    from pqcalc.io.comtrade import write_comtrade

    fs, f = 5000.0, 50.0
    i, v = tones(fs, 2.0, [(f, 3.0, 0.0), (3 * f, 1.0, 0.4)], f_v=f)
    cfg = tmp_path / "r.cfg"
    write_comtrade(cfg, {"I": ("A", i), "V": ("V", v)}, fs, 2013, "BINARY")
    csv = tmp_path / "r.csv"
    t = np.arange(i.size) / fs
    csv.write_text("time_s,current_a,voltage_v\n"
                   + "\n".join(f"{a:.7f},{b:.7f},{c:.4f}" for a, b, c in zip(t, i, v, strict=True)))
    ref = analyze_windows(blocks_from_arrays(i, fs, v)).windows
    for p in (cfg, csv):
        w = analyze_windows(p, chunk_samples=3000).windows
        np.testing.assert_allclose(w.i_group_a[:, :6], ref.i_group_a[:, :6], atol=1e-3)


def test_shorter_than_a_window():
    fs = 5000.0
    i, _ = tones(fs, 0.15, [(50, 1.0, 0)])
    with pytest.raises(InputError, match="10-cycle window"):
        analyze_windows(blocks_from_arrays(i, fs, source="short.csv"))


@pytest.mark.parametrize("cycles,f", [(10, 50.0), (12, 60.0)])
def test_batched_groups_equal_single_window_function(cycles, f):
    # The streaming kernel and pqcalc.spectrum.harmonic_groups both implement eq. 8/9 of
    # IEC 61000-4-7; on a noisy window they must agree to round-off.
    from pqcalc.spectrum import harmonic_groups

    fs = 128 * f
    rng = np.random.default_rng(11)
    x = rng.normal(size=cycles * 128) + np.sin(2 * np.pi * np.arange(cycles * 128) / 128)
    b = next(iter_windows(blocks_from_arrays(x, fs), nominal_hz=f, frequency_hz=f))
    for kind, got in (("group", b.i_group_a[0]), ("subgroup", b.i_subgroup_a[0])):
        want = harmonic_groups(x, cycles, kind, max_order=got.size - 1)
        np.testing.assert_allclose(got[1:], want[1:], rtol=1e-10)


def test_current_only_dimmed_lamp_is_tracked():
    # No voltage: the frequency is tracked on the current's own fundamental line. A
    # phase-cut resistive current (conduction from 90 deg to 180 deg each half cycle) at
    # 50.04 Hz; its I3/I1 = 53.70 % (Fourier series of the phase-controlled sine, textbook
    # AC voltage controller) must come out of every window within 0.1 % of I1. The step
    # edges fall between samples (their timing is quantised to 1/fs, which moves I3 by ~1e-3
    # of I1 at 10 kS/s), so the record is sampled at 50 kS/s, where that effect is 3e-4.
    fs, f = 50000.0, 50.04
    t = np.arange(int(2 * fs)) / fs
    ph = (2 * np.pi * f * t) % np.pi
    i = np.where(ph >= np.pi / 2, np.sin(2 * np.pi * f * t), 0.0)
    w = analyze_windows(blocks_from_arrays(i, fs), chunk_samples=30000).windows
    assert np.max(np.abs(w.frequency_hz - f)) < 0.01
    ratio = w.i_group_a[:, 3] / w.i_group_a[:, 1]
    assert np.max(np.abs(ratio - 0.5370)) < 1e-3
