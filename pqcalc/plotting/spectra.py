"""Spectrum figures: harmonic currents per order against their limits; the neutral spectrum."""

from __future__ import annotations

import textwrap
from collections.abc import Collection, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, TypeAlias, get_args

import numpy as np
import numpy.typing as npt

from ..errors import InputError
from ..spectrum import Spectrum
from .style import (
    DARK,
    INK,
    LIGHT,
    MID,
    STYLE,
    SpectrumUnit,
    _caution,
    _finite,
    _legend_below,
    _mpl,
    new_figure,
)

if TYPE_CHECKING:
    import xarray as xr
    from matplotlib.figure import Figure

    from ..standards.results import FixtureResult, RuleResult

__all__ = ["order_magnitudes", "exceeding_orders", "LimitMarks", "limit_marks",
           "spectrum_figure", "neutral_spectrum_figure", "OrderSeries"]

#: The spectrum forms the figures take: a Spectrum (its current), a DataArray over the one
#: dimension ``order``, a mapping order -> value, or values indexed by order (index 0 = DC).
OrderSeries: TypeAlias = "Spectrum | xr.DataArray | Mapping[int, complex] | npt.ArrayLike"


def order_magnitudes(x: OrderSeries, name: str = "spectrum") -> tuple[np.ndarray, np.ndarray]:
    """Harmonic orders and RMS magnitudes from any of pqcalc's spectrum forms.

    ``x`` is a :class:`~pqcalc.spectrum.Spectrum` (its current), a one-dimensional
    :class:`xarray.DataArray` with an ``order`` dimension, a mapping ``order -> value``, or
    an array indexed by order (index 0 = DC); complex phasors give their magnitudes.

    Returns
    -------
    orders, magnitudes
        Integer orders [-] and magnitudes [same unit as ``x``], sorted by order.
    """
    if isinstance(x, Spectrum):
        return x.orders.astype(int), x.i_h_a.astype(float)
    if hasattr(x, "dims") and hasattr(x, "coords"):  # xarray.DataArray, or alike
        da: Any = x
        if tuple(da.dims) != ("order",):
            raise InputError(f"{name}: expected a DataArray over the single dimension 'order', "
                             f"got dimensions {tuple(da.dims)}")
        orders = np.asarray(da["order"].values)
        vals = np.abs(np.asarray(da.values))
    elif isinstance(x, Mapping):
        orders = np.array(sorted(x), dtype=float)
        vals = np.abs(np.array([x[k] for k in sorted(x)], dtype=complex))
    else:
        vals = np.abs(np.asarray(x, dtype=complex))
        if vals.ndim != 1:
            raise InputError(f"{name}: expected magnitudes indexed by order, "
                             f"got shape {vals.shape}")
        orders = np.arange(vals.size)
    orders = _finite(orders, f"{name} orders")
    if np.any(orders < 0) or np.any(orders != np.round(orders)):
        raise InputError(f"{name}: harmonic orders must be whole numbers >= 0")
    vals = _finite(vals.astype(float), name)
    o = np.argsort(orders, kind="stable")
    return orders[o].astype(int), vals[o]


def exceeding_orders(orders: npt.ArrayLike, values: npt.ArrayLike,
                     limits: Mapping[int, float | None] | None) -> np.ndarray:
    """Boolean mask: which ``values`` lie strictly above the limit of their order.

    Orders absent from ``limits`` (or mapped to ``None``/NaN) have no limit and never exceed.
    ``values`` and ``limits`` share one unit.

    >>> exceeding_orders([1, 2, 3], [1.0, 0.5, 0.1], {2: 0.4, 3: 0.2}).tolist()
    [False, True, False]
    """
    orders = np.asarray(orders, dtype=int)
    values = np.asarray(values, dtype=float)
    out = np.zeros(orders.shape, dtype=bool)
    if not limits:
        return out
    for k, h in enumerate(orders):
        lim = limits.get(int(h))
        if lim is not None and np.isfinite(lim) and values[k] > lim:
            out[k] = True
    return out


@dataclass(frozen=True)
class LimitMarks:
    """Per-order limits ready for :func:`spectrum_figure`.

    Attributes
    ----------
    limits
        Order -> limit in ``unit`` ([A rms] or [% of fundamental]).
    unit
        ``"A"`` or ``"pct"``.
    label
        The rule and its source, for the legend.
    disregarded
        Orders the rule disregards (below its threshold of significance).
    failed
        Orders whose check failed (over the limit and not disregarded): the orders a
        compliance table marks FAIL, for :func:`spectrum_figure`'s ``failed``.
    """

    limits: dict[int, float]
    unit: str
    label: str
    disregarded: tuple[int, ...] = ()
    failed: tuple[int, ...] = ()


def limit_marks(result: FixtureResult | RuleResult, i1_a: float, unit: SpectrumUnit = "pct"
                ) -> LimitMarks:
    """The per-order limits of a compliance result, in the unit of a spectrum figure.

    Parameters
    ----------
    result
        A :class:`pqcalc.standards.FixtureResult` (its deciding rule is used) or a
        :class:`pqcalc.standards.RuleResult`.
    i1_a
        Fundamental current of the spectrum [A rms], to convert between absolute limits
        and limits relative to the fundamental.
    unit
        ``"A"`` or ``"pct"``, the unit of the figure.

    A result with no rule (the standard sets no limits here) gives no limits.
    """
    if unit not in get_args(SpectrumUnit):
        raise InputError(f"unit: expected one of {', '.join(get_args(SpectrumUnit))}, got {unit!r}")
    if not (np.isfinite(i1_a) and i1_a > 0):
        raise InputError(f"i1_a: expected a positive fundamental current, got {i1_a}")
    rule = result.deciding if hasattr(result, "deciding") else result
    if rule is None:
        return LimitMarks({}, unit, str(getattr(result, "rule", "no limits")))
    limits, skip, bad = {}, [], []
    for c in rule.order_checks():
        if c.order is None:  # order_checks() holds orders only; this narrows the type
            continue
        if c.unit == "A":
            lim = c.limit if unit == "A" else 100.0 * c.limit / i1_a
        elif c.unit == "fraction of I1":
            lim = c.limit * i1_a if unit == "A" else 100.0 * c.limit
        else:
            raise InputError(f"{rule.rule}: order {c.order} has a limit in {c.unit!r}; "
                             "expected A or a fraction of I1")
        limits[int(c.order)] = float(lim)
        if c.disregarded:
            skip.append(int(c.order))
        if c.status == "fail":
            bad.append(int(c.order))
    return LimitMarks(limits, unit, f"{rule.reference}, {rule.rule}", tuple(skip), tuple(bad))


def _clean_limits(limits, name: str = "limits") -> dict[int, float]:
    if limits is None:
        return {}
    if not isinstance(limits, Mapping):
        raise InputError(f"{name}: expected a mapping order -> limit value")
    out = {}
    for k, v in limits.items():
        if v is None:
            continue
        try:
            h, lim = int(k), float(v)
        except (TypeError, ValueError):
            raise InputError(f"{name}: order {k!r}: expected a whole order and a number") from None
        if h != k or h < 0:
            raise InputError(f"{name}: {k!r} is not a harmonic order (a whole number >= 0)")
        if np.isnan(lim):
            continue
        if not lim >= 0:
            raise InputError(f"{name}: order {h}: expected a limit >= 0, got {lim}")
        out[h] = lim
    return out


def _order_axis(ax, max_order: int, min_order: int) -> None:
    ax.set_xlim(min_order - 0.7, max_order + 0.7)
    if max_order - min_order <= 16:
        ax.xaxis.set_major_locator(_mpl().MultipleLocator(1))
    else:
        ax.xaxis.set_major_locator(_mpl().MultipleLocator(5))
        ax.xaxis.set_minor_locator(_mpl().MultipleLocator(1))
    ax.grid(False, axis="x")
    ax.set_xlabel("harmonic order h [-]")


def _log_axis(ax, values) -> float:
    """Make the value axis logarithmic; return its floor, a decade at most 1000x below the
    largest value (smaller components are drawn at the floor)."""
    pos = np.asarray(values, dtype=float)
    pos = pos[pos > 0]
    top = float(pos.max()) if pos.size else 1.0
    low = float(pos.min()) if pos.size else top
    floor = 10.0 ** np.floor(np.log10(max(low, top * 1e-3)))
    ax.set_yscale("log")
    ax.yaxis.set_major_formatter(_mpl().FuncFormatter(lambda v, _pos: f"{v:g}"))
    ax.set_ylim(floor, 10.0 ** np.ceil(np.log10(top * 1.5)))
    return floor


def _draw_limit_marks(ax, orders, limits: Mapping[int, float], width: float, label: str):
    """A short level line per limited order, dark with a white halo (visible on any bar)."""
    xs, ys = [], []
    for h in orders:
        lim = limits.get(int(h))
        if lim is not None:
            xs.append(int(h))
            ys.append(lim)
    if not xs:
        return None
    halo = [_mpl().withStroke(linewidth=4.2, foreground="white")]
    for x, y in zip(xs, ys, strict=True):
        ax.plot([x - width / 2 - 0.12, x + width / 2 + 0.12], [y, y], color="black",
                lw=2.0, ls="-", solid_capstyle="butt", path_effects=halo, zorder=4,
                gid=f"limit-{x}")
    return ax.plot([], [], color="black", lw=2.0, ls="-", label=textwrap.fill(label, 56))[0]

# ---------------------------------------------------------------------- spectra
def spectrum_figure(
    spectrum: OrderSeries,
    limits: Mapping[int, float] | None = None,
    unit: SpectrumUnit = "A",
    log: bool = False,
    max_order: int = 40,
    title: str | None = None,
    limits_label: str | None = None,
    min_order: int = 2,
    disregarded: Collection[int] = (),
    failed: Collection[int] | None = None,
) -> Figure:
    """Harmonic spectrum as bars per order, with the applicable limit of each order marked.

    Parameters
    ----------
    spectrum
        A :class:`~pqcalc.spectrum.Spectrum` or magnitudes by order (see
        :func:`order_magnitudes`) [A rms]; the fundamental (order 1) must be present.
    limits
        Mapping order -> limit in the unit of the plot ([A rms] or [% of fundamental]);
        orders absent from it have no limit and get no marker.
    unit
        ``"A"`` for amperes rms, ``"pct"`` for percent of the fundamental.
    log
        Logarithmic value axis (shows small high-order components next to large ones).
    max_order, min_order
        Orders shown [-]. The fundamental is left out by default (``min_order=2``); its
        value is printed in the corner with the THD over orders 2..``max_order``.
    title
        Figure title; default from the spectrum's label.
    limits_label
        Name of the limits in the legend, e.g. ``"IEC 61000-3-2:2018 Class C"``.
    disregarded
        Orders the standard disregards (too small to count): never drawn as over the
        limit; a note names those above their line. :func:`limit_marks` supplies them.
    failed
        The orders a compliance table fails (:attr:`LimitMarks.failed`): when given, these
        and only these bars are drawn as over the limit, so the figure and the table
        agree by construction (the same disregard rule and comparison tolerance).

    Bars above their limit are drawn dark and hatched, the others light, so the two stay
    apart in grayscale.
    """
    if unit not in get_args(SpectrumUnit):
        raise InputError(f"unit: expected one of {', '.join(get_args(SpectrumUnit))}, got {unit!r}")
    if not (isinstance(max_order, (int, np.integer)) and max_order >= 1):
        raise InputError(f"max_order: expected a whole order >= 1, got {max_order!r}")
    if min_order < 0 or min_order > max_order:
        raise InputError(f"min_order: expected 0..{max_order}, got {min_order!r}")
    orders, mags = order_magnitudes(spectrum)
    lims = _clean_limits(limits)
    if 1 not in orders or mags[orders == 1][0] <= 0:
        raise InputError("spectrum: the fundamental (order 1) is missing or zero")
    i1 = float(mags[orders == 1][0])
    keep = (orders >= min_order) & (orders <= max_order)
    h, m = orders[keep], mags[keep]
    if h.size == 0:
        raise InputError(f"spectrum: no orders between {min_order} and {max_order}")
    y = 100.0 * m / i1 if unit == "pct" else m
    skip = {int(k) for k in disregarded}
    over = exceeding_orders(h, y, lims)
    over_but_skipped = [int(k) for k, o in zip(h, over, strict=True) if o and k in skip]
    if failed is not None:
        over = np.isin(h, [int(k) for k in failed])
    over &= ~np.isin(h, list(skip))
    dist = (orders >= 2) & (orders <= max_order)
    thd_pct = 100.0 * float(np.sqrt(np.sum(mags[dist] ** 2))) / i1

    fig = new_figure()
    with _mpl().rc_context(STYLE):
        ax = fig.add_subplot()
        width = 0.72
        y_floor = 0.0
        if log:
            y_floor = _log_axis(ax, np.concatenate([y, [lims[k] for k in h if k in lims]]))
        heights = np.maximum(y, y_floor) - y_floor
        limited = np.isin(h, list(lims))
        colors = np.where(over, DARK, np.where(limited | (not lims), LIGHT, "white"))
        bars = ax.bar(h, heights, width=width, bottom=y_floor, color=colors, edgecolor=INK,
                      linewidth=0.5, zorder=2)
        for b, o, hh in zip(bars, over, h, strict=True):
            b.set_gid(f"order-{hh}")
            if o:
                b.set_hatch("////")
        handles = []
        if not lims or (limited & ~over).any():
            handles.append(_mpl().Patch(facecolor=LIGHT, edgecolor=INK, linewidth=0.5,
                                        label="within limit" if lims else "harmonic current"))
        if lims:
            if not limited.all():
                handles.append(_mpl().Patch(facecolor="white", edgecolor=INK, linewidth=0.5,
                                            label="no limit for the order"))
            if over.any():
                handles.append(_mpl().Patch(facecolor=DARK, edgecolor=INK, hatch="////",
                                            linewidth=0.5, label="over limit"))
            mark = _draw_limit_marks(ax, h, lims, width,
                                     f"limit: {limits_label}" if limits_label else "limit")
            if mark is not None:
                handles.append(mark)
        if not log:
            tops = np.concatenate([y, [lims[k] for k in h if k in lims]])
            ax.set_ylim(0, 1.12 * float(tops.max()) if tops.max() > 0 else 1.0)
        _order_axis(ax, int(h.max()), int(h.min()))
        ax.set_ylabel("harmonic current [% of fundamental]" if unit == "pct"
                      else "harmonic current [A rms]")
        if over_but_skipped:
            ax.text(0.99, 0.97, "above the line but disregarded (below the standard's "
                    f"threshold): h{', h'.join(map(str, over_but_skipped))}",
                    transform=ax.transAxes, ha="right", va="top", fontsize=7, color="#444444")
        _legend_below(fig, handles)
        _titles(fig, ax, title if title is not None else _title("Harmonic spectrum", spectrum),
                f"$I_1$ = {i1:.4g} A rms,  THD (2..{max_order}) = {thd_pct:.1f} %")
    return fig


def _titles(fig, ax, title: str, subtitle: str) -> None:
    """Bold title over the figure, key figures in a plain line over the axes."""
    fig.suptitle(title, x=0.01, ha="left", fontweight="bold", fontsize=STYLE["axes.titlesize"])
    # the subtitle is pqcalc's own formula text ($I_1$ ...), never free text
    ax.set_title(subtitle, loc="left", fontsize=8, fontweight="normal", parse_math=True)


def _title(base: str, obj) -> str:
    label = getattr(obj, "label", "") or ""
    return f"{base}: {label}" if label else base


def neutral_spectrum_figure(
    spectrum_or_magnitudes: OrderSeries,
    max_order: int = 40,
    log: bool = False,
    title: str | None = None,
) -> Figure:
    """Spectrum of the neutral current [A rms] by order, triplen orders (3, 9, 15 ...) marked.

    In a balanced wye the non-triplen orders cancel in the neutral and the triplen orders
    add arithmetically, so the triplen bars are drawn darker; the fundamental (from any
    imbalance) is shown too. Input as for :func:`order_magnitudes`.
    """
    orders, mags = order_magnitudes(spectrum_or_magnitudes, "neutral spectrum")
    keep = (orders >= 1) & (orders <= max_order)
    h, m = orders[keep], mags[keep]
    if h.size == 0:
        raise InputError(f"neutral spectrum: no orders between 1 and {max_order}")
    triplen = h % 3 == 0
    total = float(np.sqrt(np.sum(mags[orders >= 1] ** 2)))
    trip = float(np.sqrt(np.sum(mags[(orders >= 1) & (orders % 3 == 0)] ** 2)))
    fig = new_figure()
    with _mpl().rc_context(STYLE):
        ax = fig.add_subplot()
        floor = 0.0
        if log:
            floor = _log_axis(ax, m)
        bars = ax.bar(h, np.maximum(m, floor) - floor, bottom=floor, width=0.72,
                      color=np.where(triplen, MID, LIGHT), edgecolor=INK, linewidth=0.5, zorder=2)
        for b, t, hh in zip(bars, triplen, h, strict=True):
            b.set_gid(f"order-{hh}")
            if t:
                b.set_hatch("\\\\\\\\")
        ax.legend(handles=[  # inside: the caution line takes the space under the axes
            _mpl().Patch(facecolor=MID, edgecolor=INK, hatch="\\\\\\\\", linewidth=0.5,
                  label="triplen orders (add in the neutral)"),
            _mpl().Patch(facecolor=LIGHT, edgecolor=INK, linewidth=0.5, label="other orders"),
        ], loc="upper right")
        if not log:
            ax.set_ylim(0, 1.12 * float(m.max()) if m.max() > 0 else 1.0)
        _order_axis(ax, int(h.max()), int(h.min()))
        ax.set_ylabel("neutral current [A rms]")
        share = f"{100 * trip / total:.1f} %" if total > 0 else "-"
        _titles(fig, ax, title if title is not None
                else _title("Neutral current spectrum", spectrum_or_magnitudes),
                f"$I_N$ = {total:.4g} A rms, triplen orders {share} of it (rms)")
    _caution(fig)
    return fig


