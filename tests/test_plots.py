"""Figures: the plotted numbers against closed forms and standard tables; valid image files.

Reference values come from outside the plotting code:
- harmonic magnitudes of an ideal phase-cut resistive load from numerical integration of
  its Fourier integrals with ``scipy.integrate.quad`` (independent of pqcalc's FFT);
- IEC 61000-3-2:2018+AMD1:2020, Table 2 (Class C limits), typed in below;
- balanced three-phase sums: triplen orders add arithmetically, the others cancel
  (symmetrical-components closed form);
- the PNG file layout (ISO/IEC 15948:2004 / W3C PNG, clauses 5.2 signature and 11.2.2 IHDR),
  PDF (ISO 32000-1, clause 7.5.2 header) and SVG 1.1 (width/height attributes);
- relative luminance from ITU-R BT.709 primaries (the weights of WCAG 2.x).
"""

from __future__ import annotations

import math
import struct
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import to_rgb
from scipy.integrate import quad

from pqcalc import plots
from pqcalc.errors import InputError
from pqcalc.plotting import style
from pqcalc.spectrum import spectrum
from pqcalc.waveform import Waveform
from tests.conftest import phase_cut_resistive

V_RMS, R_OHM = 230.0, 100.0
I_PK = math.sqrt(2) * V_RMS / R_OHM


# ---------------------------------------------------------------------- reference values
def cut_harmonic_pct(h: int, alpha: float) -> float:
    """|I_h| / |I_1| [%] of sin(theta) conducted on [alpha, pi] and [pi + alpha, 2 pi],
    by numerical quadrature of the Fourier integrals (half-wave symmetry: odd h only)."""

    def mag(k: int) -> float:
        a = quad(lambda t: math.sin(t) * math.cos(k * t), alpha, math.pi, limit=200)[0]
        b = quad(lambda t: math.sin(t) * math.sin(k * t), alpha, math.pi, limit=200)[0]
        return math.hypot(a, b)

    return 0.0 if h % 2 == 0 else 100.0 * mag(h) / mag(1)


def class_c_limits_pct(pf: float) -> dict[int, float]:
    """IEC 61000-3-2:2018 (ed. 5.0), Table 2 (Class C, active input power > 25 W), % of the
    fundamental: h2 2, h3 30*lambda, h5 10, h7 7, h9 5, odd 11..39 3."""
    lim = {2: 2.0, 3: 30.0 * pf, 5: 10.0, 7: 7.0, 9: 5.0}
    lim.update({h: 3.0 for h in range(11, 40, 2)})
    return lim


def png_size(data: bytes) -> tuple[int, int]:
    """Width and height from a PNG's IHDR chunk (PNG spec, 5.2 and 11.2.2)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"  # the 8-byte PNG signature
    length, ctype = struct.unpack(">I4s", data[8:16])
    assert ctype == b"IHDR" and length == 13  # IHDR comes first and is 13 bytes long
    return struct.unpack(">II", data[16:24])


def luminance(color) -> float:
    """Relative luminance (ITU-R BT.709 weights, sRGB linearised as in WCAG 2.x)."""

    def lin(c):
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

    r, g, b = (lin(c) for c in to_rgb(color))
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def assert_nothing_clipped(fig) -> None:
    """Everything drawn (texts, tick labels, legends) lies inside the figure (common
    practice for print: a clipped label is a reviewer's first complaint)."""
    canvas = FigureCanvasAgg(fig)  # an Agg canvas to measure what is drawn
    canvas.draw()
    tight = fig.get_tightbbox(canvas.get_renderer())  # [in]: union of the drawn artists
    page = fig.bbox_inches
    slack = 1.0 / fig.dpi  # one pixel: antialiasing of glyph edges
    assert tight.x0 >= page.x0 - slack and tight.y0 >= page.y0 - slack, tight
    assert tight.x1 <= page.x1 + slack and tight.y1 <= page.y1 + slack, tight


def bar_heights(ax) -> dict[int, float]:
    """Top of each order's bar, keyed by the order stored in the bar's gid."""
    return {int(p.get_gid().split("-")[1]): p.get_y() + p.get_height()
            for p in ax.patches if (p.get_gid() or "").startswith("order-")}


def bar_hatches(ax) -> dict[int, str | None]:
    return {int(p.get_gid().split("-")[1]): p.get_hatch()
            for p in ax.patches if (p.get_gid() or "").startswith("order-")}


def all_text(fig) -> str:
    texts = [t.get_text() for t in fig.findobj(lambda a: hasattr(a, "get_text"))]
    return "\n".join(texts)


@pytest.fixture(scope="module")
def cut90_spectrum():
    return spectrum(phase_cut_resistive(np.pi / 2, v_rms=V_RMS, r_ohm=R_OHM))


# ---------------------------------------------------------------------- spectrum figure
def test_spectrum_bars_against_quadrature_and_class_c(cut90_spectrum):
    pf = math.sqrt(0.5)  # closed form: PF of a resistive load cut at 90 deg = sqrt(1/2)
    limits = class_c_limits_pct(pf)
    fig = plots.spectrum_figure(cut90_spectrum, limits, unit="pct",
                                limits_label="IEC 61000-3-2 Class C")
    ax = fig.axes[0]
    heights, hatches = bar_heights(ax), bar_hatches(ax)
    assert sorted(heights) == list(range(2, 41))  # orders 2..max_order=40 are drawn
    for h in range(2, 41):
        ref = cut_harmonic_pct(h, math.pi / 2)
        # 2**16 mid-point samples: the step edge costs ~1e-4 of I1 (0.01 points of percent)
        assert heights[h] == pytest.approx(ref, abs=0.01), h
        # Table 2: over-limit bars are hatched, the others are not; unlimited orders never
        expected_over = h in limits and ref > limits[h]
        assert (hatches[h] == "////") == expected_over, h
    # closed form at alpha = 90 deg: I3/I1 = 53.70 %, I5/I1 = I7/I1 = 17.90 %
    assert heights[3] == pytest.approx(53.70, abs=0.01)
    assert heights[5] == pytest.approx(17.90, abs=0.01)
    # a limit marker exactly on the limited orders (Table 2 names no limit for even h >= 4)
    marked = {int(line.get_gid().split("-")[1]) for line in ax.lines
              if (line.get_gid() or "").startswith("limit-")}
    assert marked == set(limits) & set(range(2, 41))
    for h in marked:
        line = next(ln for ln in ax.lines if ln.get_gid() == f"limit-{h}")
        assert line.get_ydata()[0] == pytest.approx(limits[h])
    legend = "\n".join(t.get_text() for t in fig.legends[0].get_texts())
    assert "limit: IEC 61000-3-2 Class C" in legend and "over limit" in legend
    assert_nothing_clipped(fig)


def test_spectrum_in_amperes_and_log_axis(cut90_spectrum):
    i1 = cut90_spectrum.i1_a
    # closed form: I1 of the cut load; |I1| / I_rms,full from quadrature of the fundamental
    a = quad(lambda t: math.sin(t) * math.cos(t), math.pi / 2, math.pi)[0]
    b = quad(lambda t: math.sin(t) ** 2, math.pi / 2, math.pi)[0]
    assert i1 == pytest.approx(I_PK / math.sqrt(2) * 2 / math.pi * math.hypot(a, b), rel=1e-4)
    fig = plots.spectrum_figure(cut90_spectrum, unit="A", log=True, max_order=25)
    ax = fig.axes[0]
    assert ax.get_yscale() == "log"
    heights = bar_heights(ax)
    floor = ax.get_ylim()[0]
    for h in (3, 5, 7, 9, 25):
        ref_a = cut_harmonic_pct(h, math.pi / 2) / 100 * i1
        assert heights[h] == pytest.approx(ref_a, rel=1e-3)  # 0.1 %: FFT vs quadrature
    # even orders are zero (half-wave symmetry): drawn at the floor of the axis, not below
    assert heights[4] == pytest.approx(floor)
    assert floor > 0
    # no limits: no markers, no hatching, no "over limit" entry
    assert not any((ln.get_gid() or "").startswith("limit-") for ln in ax.lines)
    assert not any(bar_hatches(ax).values())
    assert "A rms" in ax.get_ylabel()
    assert_nothing_clipped(fig)


def test_spectrum_accepts_plain_magnitudes_and_dataarray():
    import xarray as xr

    mags = np.array([0.0, 2.0, 0.0, 0.6, 0.0, 0.1])
    lim = {3: 0.5, 5: 0.2}  # invented limits: h3 over, h5 under
    f1 = plots.spectrum_figure(mags, lim, max_order=5)
    da = xr.DataArray(mags, dims="order", coords={"order": np.arange(6)})
    f2 = plots.spectrum_figure(da, lim, max_order=5)
    f3 = plots.spectrum_figure({1: 2.0, 3: 0.6, 5: 0.1}, lim, max_order=5)
    for f in (f1, f2):
        assert bar_hatches(f.axes[0]) == {2: None, 3: "////", 4: None, 5: None}
    assert bar_hatches(f3.axes[0]) == {3: "////", 5: None}
    legend = [t.get_text() for t in f1.legends[0].get_texts()]
    assert legend == ["within limit", "no limit for the order", "over limit", "limit"]
    # only the categories present are named: every limited order over, no unlimited order
    f4 = plots.spectrum_figure({1: 2.0, 3: 0.6}, {3: 0.5}, max_order=3, min_order=3)
    assert [t.get_text() for t in f4.legends[0].get_texts()] == ["over limit", "limit"]
    # THD over 2..5 = sqrt(0.6^2 + 0.1^2) / 2 = 30.41 % (closed form), printed in the title
    assert "30.4 %" in f1.axes[0].get_title(loc="left")


@settings(max_examples=50, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 10), st.one_of(st.none(), st.floats(0, 10))),
                min_size=1, max_size=20))
def test_exceeding_orders_is_strict_comparison(pairs):
    # property: a value exceeds exactly when a limit exists and value > limit (definition)
    orders = np.arange(2, 2 + len(pairs))
    values = [v for v, _ in pairs]
    limits = {int(h): lim for h, (_, lim) in zip(orders, pairs, strict=True)}
    got = plots.exceeding_orders(orders, values, limits)
    want = [lim is not None and v > lim for v, lim in pairs]
    assert got.tolist() == want


@pytest.mark.parametrize("kw, msg", [
    ({"unit": "mA"}, "unit"),
    ({"max_order": 0}, "max_order"),
    ({"limits": {3: -1.0}}, "limit >= 0"),
    ({"limits": {2.5: 1.0}}, "harmonic order"),
])
def test_spectrum_bad_arguments(kw, msg, cut90_spectrum):
    with pytest.raises(InputError, match=msg):
        plots.spectrum_figure(cut90_spectrum, **kw)


def test_spectrum_without_fundamental_is_refused():
    with pytest.raises(InputError, match="fundamental"):
        plots.spectrum_figure(np.array([0.0, 0.0, 0.3]))
    with pytest.raises(InputError, match="finite"):
        plots.spectrum_figure(np.array([0.0, 1.0, np.nan]))


def test_limit_marks_from_the_class_c_and_class_a_evaluators(cut90_spectrum):
    from pqcalc.standards import evaluate_fixture

    w = phase_cut_resistive(np.pi / 2, v_rms=V_RMS, r_ohm=R_OHM)
    i1 = cut90_spectrum.i1_a
    r = evaluate_fixture(w, equipment_class="C", edition="5.0")
    # closed form: P = V^2 / R / 2 = 264.5 W at 90 deg, above 25 W, so Table 2 applies
    assert r.p_w == pytest.approx(V_RMS**2 / R_OHM / 2, rel=1e-4)
    marks = plots.limit_marks(r, i1, "pct")
    want = class_c_limits_pct(math.sqrt(0.5))  # Table 2 at lambda = sqrt(1/2) (closed form)
    assert set(marks.limits) == set(want)
    for h, lim in want.items():
        # the PF of the sampled record differs from sqrt(1/2) by ~1e-5 (step edges)
        assert marks.limits[h] == pytest.approx(lim, rel=1e-4), h
    assert "Table 2" in marks.label
    # even orders are zero here, far below max(0.6 % of I, 5 mA): disregarded
    assert 2 in marks.disregarded
    in_a = plots.limit_marks(r, i1, "A")
    assert in_a.limits[5] == pytest.approx(0.10 * i1, rel=1e-9)  # 10 % of I1 in amperes
    ra = plots.limit_marks(evaluate_fixture(w, equipment_class="A"), i1, "A")
    # IEC 61000-3-2:2018, Table 1 (Class A): h3 2.30 A, h5 1.14 A, h2 1.08 A
    assert (ra.limits[3], ra.limits[5], ra.limits[2]) == pytest.approx((2.30, 1.14, 1.08))
    assert plots.limit_marks(evaluate_fixture(w, equipment_class="A"), i1, "pct").limits[3] \
        == pytest.approx(100 * 2.30 / i1)
    # the long legend label of a real rule wraps and stays inside the figure
    fig = plots.spectrum_figure(cut90_spectrum, in_a.limits, "A", limits_label=in_a.label,
                                disregarded=in_a.disregarded)
    assert_nothing_clipped(fig)
    assert bar_hatches(fig.axes[0])[2] is None


def test_failed_orders_given_are_the_hatched_ones():
    # a compliance table's judgement overrides the figure's own comparison: the hatched bars
    # are exactly the failed orders given (here h3 FAILs in the table though within 1e-12
    # of its line, and h5 over its line is not failed: disregarded by the table)
    mags = np.array([0.0, 1.0, 0.0, 0.1 * (1 + 1e-12), 0.0, 0.003])
    fig = plots.spectrum_figure(mags, {3: 0.1, 5: 0.001}, failed=[3], max_order=5)
    assert bar_hatches(fig.axes[0]) == {2: None, 3: "////", 4: None, 5: None}
    fig = plots.spectrum_figure(mags, {3: 0.1, 5: 0.001}, failed=[3, 5], disregarded=[5],
                                max_order=5)
    assert bar_hatches(fig.axes[0])[5] is None  # a disregarded order is never hatched


def test_disregarded_orders_are_not_flagged():
    mags = np.array([0.0, 1.0, 0.0, 0.2, 0.0, 0.003])
    # invented limits: h5 at 1 mA is exceeded by 3 mA, but h5 is disregarded
    fig = plots.spectrum_figure(mags, {3: 0.1, 5: 0.001}, disregarded=[5], max_order=5)
    assert bar_hatches(fig.axes[0]) == {2: None, 3: "////", 4: None, 5: None}
    assert "disregarded" in all_text(fig) and "h5" in all_text(fig)


# ---------------------------------------------------------------------- waveform figure
def test_waveform_angle_origin_at_voltage_zero_crossing():
    n = 3 * 4096
    w0 = phase_cut_resistive(np.pi / 2, n=n)
    shift = 1234  # start the record at an arbitrary instant
    w = Waveform(np.roll(w0.current_a, -shift), w0.sample_rate_hz, 50.0,
                 np.roll(w0.voltage_v, -shift), 1)
    fig = plots.waveform_figure(w)
    ax_i, ax_v = fig.axes
    (i_line,) = [ln for ln in ax_i.lines if ln.get_label() == "current"]
    (v_line,) = ax_v.lines
    ang, v = v_line.get_xdata(), v_line.get_ydata()
    assert 0 <= ang[0] < 360 / n + 1e-9 and ang[-1] < 360
    vpk = math.sqrt(2) * 230.0
    # v = Vpk sin(angle) by construction of the origin (sine basis, time origin at the
    # positive-going zero crossing); samples sit half a step off the exact angles
    assert np.allclose(v, vpk * np.sin(np.radians(ang)), atol=vpk * 2 * np.pi / n)
    # ideal leading-edge cut at 90 deg: no current on (0, 90) and (180, 270) deg
    i = i_line.get_ydata()
    off = ((ang > 1) & (ang < 89)) | ((ang > 181) & (ang < 269))
    on = ((ang > 91) & (ang < 179)) | ((ang > 271) & (ang < 359))
    assert np.all(i[off] == 0.0)
    assert np.allclose(i[on], v[on] / 100.0)  # Ohm's law while conducting (R = 100 ohm)
    assert ax_i.get_xlim() == (0.0, 360.0)
    assert "[A]" in ax_i.get_ylabel() and "[V]" in ax_v.get_ylabel()
    assert ax_i.get_ylim()[0] == -ax_i.get_ylim()[1]  # zeros of both axes aligned
    assert ax_v.get_ylim()[0] == -ax_v.get_ylim()[1]
    assert_nothing_clipped(fig)


def test_waveform_shades_the_dimmer_cut_found_in_the_voltage():
    n = 4096
    w0 = phase_cut_resistive(np.pi / 2, n=n)
    v_lamp = np.where(w0.current_a != 0, w0.voltage_v, 0.0)  # the lamp sees the cut voltage
    w = Waveform(w0.current_a, w0.sample_rate_hz, 50.0, v_lamp, 1)
    # the fundamental of the cut voltage lags the supply (its phase on the supply reference)
    rel = spectrum(Waveform(v_lamp, w0.sample_rate_hz, 50.0, w0.voltage_v, 1))
    lag_deg = -math.degrees(float(rel.phase_rad[1]))
    assert 0 < lag_deg < 90
    fig = plots.waveform_figure(w)
    bands = [p for p in fig.axes[0].patches if (p.get_gid() or "").startswith("cut-")]
    cuts = plots.cut_intervals_deg(*fig.axes[1].lines[0].get_data())
    assert len(bands) == len(cuts) == 3  # 0..90 and 180..270, the first split at the origin
    # supply angle = plot angle + lag; the ideal cut holds zero from each supply zero to 90
    # deg after it. A band opens where the conducting sine drops below the 3 % threshold,
    # asin(0.03) = 1.72 deg before the supply zero, or at the plot origin (the wrap).
    step = 360 / n
    thr = math.degrees(math.asin(0.03))
    starts = sorted((a + lag_deg) % 360 for a, _ in cuts)
    ends = sorted((b + lag_deg) % 360 for _, b in cuts)
    assert ends == pytest.approx([lag_deg, 90, 270], abs=2 * step)
    assert starts == pytest.approx([lag_deg, 180 - thr, 360 - thr], abs=2 * step)
    # a supply that is not cut gives no band
    deg = np.arange(360.0)
    assert plots.cut_intervals_deg(deg, 325 * np.sin(np.radians(deg))) == []
    assert_nothing_clipped(fig)


def test_waveform_explicit_cut_and_current_only():
    w = phase_cut_resistive(np.pi / 2, n=2048)
    cur = Waveform(np.tile(w.current_a, 2), w.sample_rate_hz, 50.0, None, 2)
    fig = plots.waveform_figure(cur, cycles=2, cut_deg=[(0, 90), (180, 270)])
    assert len(fig.axes) == 1
    assert "current zero crossing" in fig.axes[0].get_xlabel()
    bands = [p for p in fig.axes[0].patches if (p.get_gid() or "").startswith("cut-")]
    assert len(bands) == 4  # two per cycle, two cycles
    assert fig.axes[0].get_xlim() == (0.0, 720.0)
    with pytest.raises(InputError, match="cycles"):
        plots.waveform_figure(cur, cycles=3)
    with pytest.raises(InputError, match="cut_deg"):
        plots.waveform_figure(cur, cut_deg=[(100, 50)])


# ---------------------------------------------------------------------- dimming curves
def test_dimming_curves_plot_closed_form_values():
    alpha = np.radians(np.arange(0, 181, 15.0))
    # resistive load behind an ideal leading-edge cut (closed form):
    # P/P0 = 1 - a/pi + sin(2a)/(2 pi); PF = sqrt(P/P0)
    p_rel = 1 - alpha / np.pi + np.sin(2 * alpha) / (2 * np.pi)
    p_rel = np.clip(p_rel, 0, None)
    pf = np.sqrt(p_rel)
    pf[-1] = np.nan  # fully cut: no current, no power factor
    thd = np.full(alpha.size, np.nan)
    thd[6] = 0.6505  # closed form at 90 deg, all orders (well, 65.05 %)
    settings_pct = 100 * (1 - alpha / np.pi)
    p0 = V_RMS**2 / R_OHM
    fig = plots.dimming_curve_figure(settings_pct[::-1], p_rel[::-1], p0 * p_rel[::-1],
                                     thd[::-1], pf[::-1])
    light_ax, power_ax, thd_ax, pf_ax = fig.axes
    x, y = light_ax.lines[0].get_data()
    assert np.all(np.diff(x) > 0)  # sorted by setting
    k50 = int(np.argmin(abs(x - 50)))
    assert y[k50] == pytest.approx(50.0)  # P/P0 = 1/2 at 90 deg, in percent
    assert power_ax.lines[0].get_ydata()[k50] == pytest.approx(p0 / 2)
    assert pf_ax.lines[0].get_ydata()[k50] == pytest.approx(math.sqrt(0.5))
    assert thd_ax.lines[0].get_ydata()[k50] == pytest.approx(65.05)
    assert "no value at 12 setting(s)" in all_text(fig)  # NaN is never silent
    assert "[W]" in power_ax.get_ylabel() and "[%]" in thd_ax.get_ylabel()
    assert_nothing_clipped(fig)


def test_dimming_curves_bad_input():
    with pytest.raises(InputError, match="power_w"):
        plots.dimming_curve_figure([0, 50, 100], [0, 0.5, 1], [1, 2], [0, 0, 0], [1, 1, 1])
    with pytest.raises(InputError, match="thd: value 1"):
        plots.dimming_curve_figure([0, 100], [0, 1], [0, 1], [0, np.inf], [1, 1])
    with pytest.raises(InputError, match="settings"):
        plots.dimming_curve_figure([0, np.nan], [0, 1], [0, 1], [0, 0], [1, 1])


# ---------------------------------------------------------------------- panel, neutral
@pytest.fixture(scope="module")
def balanced_cut90():
    """Three identical cut-90 resistive loads on a balanced wye: line and neutral records."""
    n = 3 * 2**14  # divisible by 3: the 120 deg shifts are exact sample rolls
    w = phase_cut_resistive(np.pi / 2, n=n)
    i1 = w.current_a
    i2, i3 = np.roll(i1, n // 3), np.roll(i1, 2 * n // 3)
    i_n = i1 + i2 + i3
    return w, Waveform(i_n, w.sample_rate_hz, 50.0, w.voltage_v, 1)


def test_panel_figure_neutral_ratio(balanced_cut90):
    w, neutral = balanced_cut90
    i_ph, i_n = w.i_rms_a, neutral.i_rms_a
    # closed form: dimmed resistive loads at 90 deg on three phases give I_N / I_ph = sqrt 2
    assert i_n / i_ph == pytest.approx(math.sqrt(2), rel=1e-3)
    s_n = spectrum(neutral)
    m = s_n.i_h_a
    share = math.sqrt(np.sum(m[3::3] ** 2)) / math.sqrt(np.sum(m[1:] ** 2))
    # balanced set: non-triplen orders cancel in the neutral, so the triplen share is 1
    assert share == pytest.approx(1.0, abs=1e-9)
    fig = plots.panel_figure({"L1": i_ph, "L2": i_ph, "L3": i_ph, "N": i_n}, share)
    ax = fig.axes[0]
    tops = {p.get_gid(): p.get_height() for p in ax.patches if p.get_gid()}
    assert tops["bar-N"] == pytest.approx(i_n) and tops["bar-L2"] == pytest.approx(i_ph)
    assert tops["bar-N-triplen"] == pytest.approx(share * i_n)
    text = all_text(fig)
    assert "= 1.41" in text and "100.0 %" in text
    # sizing figure: defers to the code and a professional
    assert " ".join(plots.CAUTION.split()) in " ".join(text.split())
    assert_nothing_clipped(fig)


@pytest.mark.parametrize("phase_rms, share, msg", [
    ({"L1": 1.0, "L4": 1.0, "N": 1.0}, None, "unknown conductor 'L4'"),
    ({"L1": 1.0, "L2": 1.0}, None, "neutral"),
    ({"L1": 1.0, "N": -1.0}, None, "N: expected a current >= 0"),
    ({"L1": 1.0, "N": 1.0}, 1.5, "fraction"),
])
def test_panel_figure_bad_input(phase_rms, share, msg):
    with pytest.raises(InputError, match=msg):
        plots.panel_figure(phase_rms, share)


def test_neutral_spectrum_triplens_add(balanced_cut90, cut90_spectrum):
    w, neutral = balanced_cut90
    phase = spectrum(w)
    fig = plots.neutral_spectrum_figure(spectrum(neutral))
    ax = fig.axes[0]
    heights, hatches = bar_heights(ax), bar_hatches(ax)
    for h in range(1, 41):
        # balanced three-phase set: triplen phasors add in phase (3x), others cancel
        want = 3 * phase.i_h_a[h] if h % 3 == 0 else 0.0
        assert heights[h] == pytest.approx(want, abs=1e-9 + 1e-9 * want), h
        assert (hatches[h] is not None) == (h % 3 == 0)
    text = all_text(fig)
    assert " ".join(plots.CAUTION.split()) in " ".join(text.split())
    # non-triplens cancel, so the triplen orders carry all of the neutral (orders 1..50)
    assert "triplen orders 100.0 %" in text
    assert_nothing_clipped(fig)
    # the same from complex phasors (magnitudes are taken)
    fig2 = plots.neutral_spectrum_figure(spectrum(neutral).current_a, log=True)
    assert fig2.axes[0].get_yscale() == "log"


# ---------------------------------------------------------------------- light figure
def test_light_figure_shows_closed_form_flicker():
    m, f = 0.2, 100.0
    t = np.linspace(0.0, 0.02, 801)
    light = 1 + m * np.sin(2 * np.pi * f * t)
    # closed forms for 1 + m sin: percent flicker = m; flicker index = (m T / pi) / T = m / pi
    fig = plots.light_figure(t, light, m, m / math.pi, f)
    ax = fig.axes[0]
    text = all_text(fig)
    assert "percent flicker = 20.0 %" in text and "flicker index = 0.064" in text
    (mean_line,) = [ln for ln in ax.lines if ln.get_label() == "mean"]
    assert mean_line.get_ydata()[0] == pytest.approx(1.0, abs=1e-6)  # mean over whole periods
    x = [ln for ln in ax.lines if ln.get_label() == "light output"][0].get_xdata()
    assert x[-1] == pytest.approx(20.0)  # shown in ms
    assert_nothing_clipped(fig)
    fig_deg = plots.light_figure(np.linspace(0, 360, 361), 1 + 0 * np.arange(361), 0, 0, 100,
                                 x_unit="deg")
    assert "[deg]" in fig_deg.axes[0].get_xlabel()


def test_light_figure_refuses_percent_given_as_percent():
    t = np.linspace(0, 0.02, 11)
    with pytest.raises(InputError, match="percent_flicker: expected a fraction"):
        plots.light_figure(t, np.ones(11), 20.0, 0.1, 100.0)
    with pytest.raises(InputError, match="freq_hz"):
        plots.light_figure(t, np.ones(11), 0.2, 0.1, -100.0)
    # a steady (flicker-free) light has no modulation frequency: 0 or None is drawn, not refused
    for f0 in (0.0, None):
        fig = plots.light_figure(t, np.ones(11), 0.0, 0.0, f0, svm=0.0, pst_lm=0.0)
        assert "none (steady)" in fig.axes[0].texts[0].get_text()


# ---------------------------------------------------------------------- files and style
def _all_figures(cut90_spectrum, balanced_cut90):
    w, neutral = balanced_cut90
    t = np.linspace(0, 0.02, 201)
    return {
        "spectrum": plots.spectrum_figure(cut90_spectrum, class_c_limits_pct(0.7071), "pct"),
        "waveform": plots.waveform_figure(phase_cut_resistive(np.pi / 2, n=2048)),
        "dimming": plots.dimming_curve_figure([0, 50, 100], [0, 0.5, 1], [0, 30, 60],
                                              [0.9, 0.6, 0.1], [0.4, 0.7, 0.95]),
        "panel": plots.panel_figure({"L1": 1, "L2": 1, "L3": 1, "N": 1.41}, 1.0),
        "neutral": plots.neutral_spectrum_figure(spectrum(neutral)),
        "light": plots.light_figure(t, 1 + 0.1 * np.sin(2 * np.pi * 100 * t), 0.1, 0.03, 100),
    }


def test_every_figure_writes_png_svg_pdf(tmp_path, cut90_spectrum, balanced_cut90):
    for name, fig in _all_figures(cut90_spectrum, balanced_cut90).items():
        w_in, h_in = fig.get_size_inches()
        png = plots.save_figure(fig, tmp_path / f"{name}.png", dpi=100)
        # pixel size = inches x dpi; no tight bounding box, so the page size is exact
        assert png_size(png.read_bytes()) == (round(w_in * 100), round(h_in * 100)), name
        svg = plots.save_figure(fig, tmp_path / f"{name}.svg")
        root = ET.parse(svg).getroot()
        assert root.tag.endswith("svg")
        assert float(root.get("width").removesuffix("pt")) == pytest.approx(72 * w_in)
        pdf = plots.save_figure(fig, tmp_path / f"{name}.pdf")
        data = pdf.read_bytes()
        assert data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF")
        assert_nothing_clipped(fig)
    # no temporary files are left beside the outputs
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_default_png_resolution(tmp_path, cut90_spectrum):
    p = plots.save_figure(plots.spectrum_figure(cut90_spectrum), tmp_path / "s.png")
    # house style: 6.4 x 3.8 in at 200 dpi
    assert png_size(p.read_bytes()) == (1280, 760)


def test_save_figure_refuses_bad_paths(tmp_path, cut90_spectrum, monkeypatch):
    fig = plots.spectrum_figure(cut90_spectrum)
    with pytest.raises(InputError, match="does not exist"):
        plots.save_figure(fig, tmp_path / "missing" / "s.png")
    with pytest.raises(InputError, match=r"\.png, \.svg, \.pdf"):
        plots.save_figure(fig, tmp_path / "s.jpg")
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        import os

        if os.access(ro, os.W_OK):  # running as root: permission bits do not bind
            monkeypatch.setattr(os, "access", lambda p, mode: Path(p) != ro)
        with pytest.raises(InputError, match="not writable"):
            plots.save_figure(fig, ro / "s.png")
    finally:
        ro.chmod(0o755)
    assert list(ro.iterdir()) == []


def test_style_is_grayscale_safe():
    # fills that must be told apart differ in relative luminance by a clear step
    # (0.1 is a visible difference on paper; common practice, no standard threshold)
    lum = {c: luminance(c) for c in (style.INK, style.DARK, style.MID, style.LIGHT, style.SHADE)}
    values = sorted(lum.values())
    assert all(b - a > 0.05 for a, b in zip(values, values[1:], strict=False))
    assert lum[style.LIGHT] - lum[style.DARK] > 0.3  # within vs over limit bars
    assert lum[style.LIGHT] - lum[style.MID] > 0.1  # other vs triplen orders


def test_no_pyplot_state():
    # figures come from the object-oriented API: pyplot is never imported
    code = (
        "import sys, numpy as np\n"
        "from pqcalc import plots\n"
        "fig = plots.spectrum_figure(np.array([0, 1.0, 0, 0.3]))\n"
        "fig.canvas.draw()\n"
        "assert 'matplotlib.pyplot' not in sys.modules, 'pyplot was imported'\n"
    )
    subprocess.run([sys.executable, "-c", code], check=True, timeout=120)
