"""Figures over time and over settings: waveforms, dimming curves, panel currents, light."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Literal

import numpy as np
import numpy.typing as npt

from ..errors import InputError
from ..waveform import Waveform
from .spectra import _title
from .style import (
    DARK,
    INK,
    LIGHT,
    MID,
    PHASE_NAMES,
    SHADE,
    STYLE,
    _caution,
    _finite,
    _legend_below,
    _mpl,
    new_figure,
)

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["cut_intervals_deg", "waveform_figure", "dimming_curve_figure", "panel_figure",
           "light_figure"]


# ---------------------------------------------------------------------- waveforms
def _fundamental_phase_rad(x: np.ndarray, cycles: int) -> float:
    """Sine-basis phase of the fundamental of ``x`` at sample 0 [rad] (x1 = sin(wt + psi))."""
    n = x.size
    c = np.fft.rfft(x)[cycles] / n
    return float(np.angle(c)) + np.pi / 2


def cut_intervals_deg(angle_deg: npt.ArrayLike, v: npt.ArrayLike, threshold: float = 0.03,
                      min_width_deg: float = 2.0) -> list[tuple[float, float]]:
    """Angle intervals where a phase-cut voltage is held near zero by the dimmer [deg].

    A sample counts as cut when ``|v|`` is below ``threshold`` times the record's peak while
    the fundamental, ``sin(angle)``, is more than 0.1 away from its own zero crossings.
    Intervals narrower than ``min_width_deg`` are dropped. ``angle_deg`` increases.
    """
    a = np.asarray(angle_deg, dtype=float)
    v = np.asarray(v, dtype=float)
    peak = float(np.max(np.abs(v))) if v.size else 0.0
    if peak <= 0:
        return []
    cut = np.abs(v) < threshold * peak
    # near a zero crossing every sine is small; a sample there joins the interval it touches
    near0 = np.abs(np.sin(np.radians(a))) <= 0.1
    core = cut & ~near0
    if not core.any():
        return []
    grown = cut & (core | near0)
    out = []
    k, n = 0, a.size
    while k < n:
        if grown[k]:
            j = k
            while j + 1 < n and grown[j + 1]:
                j += 1
            if core[k : j + 1].any():
                step = (a[-1] - a[0]) / max(n - 1, 1)
                lo, hi = a[k] - step / 2, a[j] + step / 2
                if hi - lo >= min_width_deg:
                    out.append((float(lo), float(hi)))
            k = j + 1
        else:
            k += 1
    return out


def waveform_figure(
    waveform: Waveform,
    cycles: int = 1,
    cut_deg: Sequence[tuple[float, float]] | None = None,
    title: str | None = None,
) -> Figure:
    """Voltage and current over ``cycles`` cycles against the angle from the voltage zero.

    The angle axis runs 0..360 deg per cycle from the positive-going zero crossing of the
    voltage fundamental (of the current fundamental when there is no voltage), the phase
    origin of all of pqcalc. Current is on the left axis [A], voltage on the right [V], with
    their zeros aligned. Where the dimmer holds the voltage at zero the band is shaded: the
    intervals come from ``cut_deg`` (angle pairs within one cycle, repeated every cycle) or
    are found in the voltage samples by :func:`cut_intervals_deg`.
    """
    if not isinstance(waveform, Waveform):
        raise InputError("waveform: expected a pqcalc Waveform")
    if not (isinstance(cycles, (int, np.integer)) and 1 <= cycles <= waveform.cycles):
        raise InputError(f"cycles: expected a whole number 1..{waveform.cycles} (the record "
                         f"holds {waveform.cycles}), got {cycles!r}")
    ref = waveform.voltage_v if waveform.voltage_v is not None else waveform.current_a
    if not np.any(ref):
        raise InputError("waveform: the reference channel is all zeros; no phase origin")
    spc = waveform.samples_per_cycle
    psi = _fundamental_phase_rad(ref, waveform.cycles)
    phase_deg = np.degrees(2 * np.pi * np.arange(waveform.n_samples) / spc + psi)
    k0 = int(np.argmin(np.mod(phase_deg, 360.0)))  # first sample at or after a zero crossing
    n_show = int(round(cycles * spc))
    idx = (k0 + np.arange(n_show)) % waveform.n_samples
    angle = np.mod(phase_deg[k0], 360.0) + 360.0 * np.arange(n_show) / spc
    i = waveform.current_a[idx]
    v = None if waveform.voltage_v is None else waveform.voltage_v[idx]

    if cut_deg is not None:
        one = [(float(a), float(b)) for a, b in cut_deg]
        for a, b in one:
            if not (0 <= a < b <= 360):
                raise InputError(f"cut_deg: expected 0 <= start < end <= 360, got ({a}, {b})")
        bands = [(a + 360 * c, b + 360 * c) for c in range(cycles) for a, b in one]
    else:
        bands = cut_intervals_deg(angle, v) if v is not None else []

    fig = new_figure()
    with _mpl().rc_context(STYLE):
        ax = fig.add_subplot()
        handles = []
        for k, (a, b) in enumerate(bands):
            ax.axvspan(a, b, color=SHADE, lw=0, zorder=0, gid=f"cut-{k}")
        if bands:
            handles.append(_mpl().Patch(facecolor=SHADE, label="voltage cut by the dimmer"))
        handles += ax.plot(angle, i, color=INK, ls="-", lw=1.5, label="current", zorder=3)
        ax.axhline(0, color="#888888", lw=0.6, zorder=1)
        ax.set_xlabel("angle from the zero crossing of the voltage fundamental [deg]" if waveform.has_voltage
                      else "angle from the current zero crossing [deg]")
        ax.set_ylabel("current [A]")
        ax.set_xlim(0, 360 * cycles)
        ax.xaxis.set_major_locator(_mpl().MultipleLocator(90 if cycles <= 2 else 180))
        ax.xaxis.set_minor_locator(_mpl().MultipleLocator(30 if cycles <= 2 else 90))
        imax = float(np.max(np.abs(i))) or 1.0
        ax.set_ylim(-1.1 * imax, 1.1 * imax)
        if v is not None:
            ax2 = ax.twinx()
            ax2.spines["right"].set_visible(True)
            ax2.grid(False)
            handles += ax2.plot(angle, v, color=MID, ls="--", lw=1.2, label="voltage", zorder=2)
            vmax = float(np.max(np.abs(v))) or 1.0
            ax2.set_ylim(-1.1 * vmax, 1.1 * vmax)
            ax2.set_ylabel("voltage [V]")
            ax2.yaxis.set_major_locator(_mpl().MaxNLocator(7, symmetric=True))
        ax.yaxis.set_major_locator(_mpl().MaxNLocator(7, symmetric=True))
        _legend_below(fig, handles)
        ttl = title if title is not None else _title("Voltage and current", waveform)
        ax.set_title(f"{ttl} ({waveform.frequency_hz:.4g} Hz)")
    return fig


# ---------------------------------------------------------------------- dimming curves
def dimming_curve_figure(
    settings: npt.ArrayLike,
    light: npt.ArrayLike,
    power_w: npt.ArrayLike,
    thd: npt.ArrayLike,
    pf: npt.ArrayLike,
    setting_label: str = "dimmer setting [%]",
    thd_max_order: int = 40,
    title: str | None = None,
) -> Figure:
    """Light output, input power, current THD and power factor against the dimmer setting.

    Parameters
    ----------
    settings
        Dimmer settings, in the unit named by ``setting_label`` (percent of travel,
        conduction angle in degrees ...).
    light
        Relative light output [-] (fraction of full output; shown in percent).
    power_w
        Active input power [W].
    thd
        Current THD over orders 2..``thd_max_order`` as a fraction [-] (shown in percent).
    pf
        True power factor [-].

    NaN marks a setting with no value (the lamp is off, no fundamental): the point is left
    out and the panel says how many are missing.
    """
    x = _finite(settings, "settings")
    series = {
        "light": _finite(light, "light", allow_nan=True),
        "power_w": _finite(power_w, "power_w", allow_nan=True),
        "thd": _finite(thd, "thd", allow_nan=True),
        "pf": _finite(pf, "pf", allow_nan=True),
    }
    for name, s in series.items():
        if s.size != x.size:
            raise InputError(f"{name}: expected {x.size} values (one per setting), got {s.size}")
    if x.size < 2:
        raise InputError(f"settings: expected at least 2 settings, got {x.size}")
    o = np.argsort(x, kind="stable")
    x = x[o]
    panels = [
        ("light", 100.0, "light output [% of full]"),
        ("power_w", 1.0, "input power [W]"),
        ("thd", 100.0, f"current THD (2..{thd_max_order}) [%]"),
        ("pf", 1.0, "power factor [-]"),
    ]
    fig = new_figure(figsize=(6.4, 4.8))
    with _mpl().rc_context(STYLE):
        axs = fig.subplots(2, 2, sharex=True)
        for ax, (name, scale, label) in zip(axs.flat, panels, strict=True):
            y = series[name][o] * scale
            ax.plot(x, y, color=INK, ls="-", marker="o", ms=3.2, mfc="white", mew=1.0,
                    label=name)
            ax.set_ylabel(label)
            missing = int(np.isnan(y).sum())
            if missing:
                ax.text(0.02, 0.04, f"no value at {missing} setting(s)", transform=ax.transAxes,
                        fontsize=7, color="#555555")
            if name == "pf":
                ax.set_ylim(0, 1.05)
            else:
                finite = y[np.isfinite(y)]
                top = float(finite.max()) if finite.size else 1.0
                ax.set_ylim(min(0.0, float(finite.min()) if finite.size else 0.0),
                            1.08 * top if top > 0 else 1.0)
        for ax in axs[1]:
            ax.set_xlabel(setting_label)
        fig.suptitle(title or "Dimming curves", x=0.01, ha="left", fontweight="bold",
                     fontsize=STYLE["axes.titlesize"])
    return fig


# ---------------------------------------------------------------------- panels
def panel_figure(
    phase_rms: Mapping[str, float],
    triplen_share_of_neutral: float | None = None,
    title: str | None = None,
) -> Figure:
    """Phase and neutral rms currents of a panel side by side, with the triplen share.

    Parameters
    ----------
    phase_rms
        Mapping of conductor name (``L1``, ``L2``, ``L3``, ``N``) to rms current [A]; the
        neutral is required, any of the lines may be absent (single- or two-phase panels).
    triplen_share_of_neutral
        ``I_N,triplen / I_N``: the rms of the triplen orders as a fraction of the neutral
        rms [-]; drawn as an inner bar in the neutral column and written above it.

    The neutral-to-highest-line ratio is printed. The figure carries the caution that it
    supports, and never replaces, the local code and a licensed professional's design.
    """
    if not isinstance(phase_rms, Mapping):
        raise InputError("phase_rms: expected a mapping of L1/L2/L3/N to rms current [A]")
    unknown = [k for k in phase_rms if k not in PHASE_NAMES]
    if unknown:
        raise InputError(f"phase_rms: unknown conductor {unknown[0]!r}; expected some of "
                         f"{', '.join(PHASE_NAMES)}")
    if "N" not in phase_rms or not any(k in phase_rms for k in PHASE_NAMES[:3]):
        raise InputError("phase_rms: expected the neutral N and at least one line L1/L2/L3")
    names = [k for k in PHASE_NAMES if k in phase_rms]
    vals = _finite([phase_rms[k] for k in names], "phase_rms")
    if np.any(vals < 0):
        raise InputError(f"phase_rms: {names[int(np.argmin(vals))]}: expected a current >= 0")
    share = None
    if triplen_share_of_neutral is not None:
        share = float(triplen_share_of_neutral)
        if not (0.0 <= share <= 1.0 + 1e-9):
            raise InputError(f"triplen_share_of_neutral: expected a fraction 0..1, got {share}")
    i_n = float(vals[-1])
    i_line = float(np.max(vals[:-1]))
    fig = new_figure(figsize=(5.2, 3.8))
    with _mpl().rc_context(STYLE):
        ax = fig.add_subplot()
        x = np.arange(len(names))
        colors = [LIGHT] * (len(names) - 1) + [MID]
        bars = ax.bar(x, vals, width=0.62, color=colors, edgecolor=INK, linewidth=0.6, zorder=2)
        for b, nm in zip(bars, names, strict=True):
            b.set_gid(f"bar-{nm}")
        handles = [_mpl().Patch(facecolor=LIGHT, edgecolor=INK, label="line conductors"),
                   _mpl().Patch(facecolor=MID, edgecolor=INK, label="neutral")]
        top = float(vals.max()) if vals.max() > 0 else 1.0
        if share is not None:
            inner = ax.bar(x[-1], share * i_n, width=0.30, color=DARK, edgecolor="white",
                           hatch="////", linewidth=0.6, zorder=3, gid="bar-N-triplen")
            handles.append(_mpl().Patch(facecolor=DARK, edgecolor="white", hatch="////",
                                 label="triplen orders in the neutral (rms)"))
            del inner
        for xi, val in zip(x, vals, strict=True):
            ax.text(float(xi), val + 0.015 * top, f"{val:.3g} A", ha="center", va="bottom", fontsize=8)
        ax.set_xticks(x, names)
        ax.grid(False, axis="x")
        ax.set_xlabel("conductor")
        ax.set_ylabel("rms current [A]")
        ax.set_ylim(0, 1.35 * top)
        ratio = f"$I_N$ / $I_{{line,max}}$ = {i_n / i_line:.2f}" if i_line > 0 else ""
        if share is not None:
            ratio += f"\ntriplen share of $I_N$ = {100 * share:.1f} %"
        ax.legend(handles=handles, loc="upper left")
        ax.text(0.99, 0.98, ratio, transform=ax.transAxes, ha="right", va="top", fontsize=8,
                bbox=dict(facecolor="white", edgecolor="none", alpha=0.85, pad=1.5),
                parse_math=True)  # pqcalc's own formula text, never free text
        ax.set_title(title or "Panel currents")
    _caution(fig)
    return fig


# ---------------------------------------------------------------------- light output
def light_figure(
    time_or_angle: npt.ArrayLike,
    light_rel: npt.ArrayLike,
    percent_flicker: float,
    flicker_index: float,
    freq_hz: float | None,
    x_unit: Literal["s", "deg"] = "s",
    title: str | None = None,
    *,
    svm: float | None = None,
    pst_lm: float | None = None,
) -> Figure:
    """Relative light output over a cycle, with its flicker figures.

    Parameters
    ----------
    time_or_angle
        Sample instants [s] (``x_unit="s"``, shown in ms) or angles [deg] (``x_unit="deg"``).
    light_rel
        Light output [-], in any consistent normalisation (to full output, to the mean).
    percent_flicker
        The IES percent flicker, ``(max - min) / (max + min)``, as a fraction [-].
    flicker_index
        The IES flicker index, area above the mean over total area [-].
    freq_hz
        Frequency of the largest light modulation component [Hz]; 0 or None for a steady
        (flicker-free) light, shown as "none".
    svm, pst_lm
        The stroboscopic visibility measure (IEC TR 63158) and the light flicker severity
        (IEC TR 61547-1) [-], shown when given (:func:`pqcalc.light.light_metrics`).

    The mean is drawn and the area above it shaded (the numerator of the flicker index).

    References
    ----------
    IES Lighting Handbook, 10th ed.: percent flicker and flicker index definitions.
    IEC TR 63158:2018 (SVM); IEC TR 61547-1:2015 (Pst_LM).
    """
    if x_unit not in ("s", "deg"):
        raise InputError(f"x_unit: expected 's' or 'deg', got {x_unit!r}")
    x = _finite(time_or_angle, "time_or_angle")
    y = _finite(light_rel, "light_rel")
    if x.size != y.size or x.size < 2:
        raise InputError(f"light_rel: expected one value per instant ({x.size}), got {y.size}")
    for name, val in (("percent_flicker", percent_flicker), ("flicker_index", flicker_index)):
        if not (np.isfinite(val) and 0 <= val <= 1):
            raise InputError(f"{name}: expected a fraction 0..1 (percent / 100), got {val}")
    if freq_hz is not None and not (np.isfinite(freq_hz) and freq_hz >= 0):
        raise InputError(f"freq_hz: expected a frequency >= 0 [Hz] (0: steady light), got "
                         f"{freq_hz}")
    for name, fig_val in (("svm", svm), ("pst_lm", pst_lm)):
        if fig_val is not None and not (np.isfinite(fig_val) and fig_val >= 0):
            raise InputError(f"{name}: expected a value >= 0, got {fig_val}")
    xs = x * 1e3 if x_unit == "s" else x
    mean = float(np.trapezoid(y, x) / (x[-1] - x[0])) if x[-1] != x[0] else float(y.mean())
    fig = new_figure(figsize=(6.4, 3.4))
    with _mpl().rc_context(STYLE):
        ax = fig.add_subplot()
        ax.fill_between(xs, y, mean, where=y > mean, interpolate=True, color=SHADE, lw=0,
                        label="area above the mean", zorder=1)
        ax.plot(xs, y, color=INK, ls="-", lw=1.5, label="light output", zorder=3)
        ax.axhline(mean, color=MID, ls="--", lw=1.0, label="mean", zorder=2)
        ax.set_xlim(xs[0], xs[-1])
        top = float(y.max())
        ax.set_ylim(0, 1.25 * top if top > 0 else 1.0)
        ax.set_xlabel("time [ms]" if x_unit == "s" else "angle [deg]")
        ax.set_ylabel("relative light output [-]")
        _legend_below(fig, ax.get_legend_handles_labels()[0])
        fmod = f"{freq_hz:.4g} Hz" if freq_hz else "none (steady)"
        lines = [f"percent flicker = {100 * percent_flicker:.1f} %",
                 f"flicker index = {flicker_index:.3f}",
                 f"modulation frequency = {fmod}"]
        if svm is not None:
            lines.append(f"SVM = {svm:.3g}")
        if pst_lm is not None:
            lines.append(f"Pst_LM = {pst_lm:.3g}")
        ax.text(0.99, 0.98, "\n".join(lines), transform=ax.transAxes,
                ha="right", va="top", fontsize=8,
                bbox=dict(facecolor="white", edgecolor="none", alpha=0.85, pad=1.5))
        ax.set_title(title or "Light output")
    return fig


