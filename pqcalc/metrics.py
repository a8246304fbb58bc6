"""Power-quality figures of a harmonic spectrum: pure functions, SI units, fractions.

Every function that takes ``x`` accepts either a :class:`~pqcalc.spectrum.Spectrum` or an
array of RMS magnitudes (or complex RMS phasors) indexed by harmonic order (index 0 = DC).
Ratios are returned as fractions [-]; the command line and reports show percent.

:func:`summarize` bundles the usual figures of one record into a :class:`Summary`.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from .errors import InputError
from .spectrum import Spectrum

__all__ = [
    "thd",
    "tdd",
    "pwhd",
    "crest_factor",
    "distortion_factor",
    "displacement_power_factor",
    "power_factor",
    "fundamental_reactive_power",
    "harmonic_loss_factor",
    "k_factor",
    "factor_k",
    "rms_from_orders",
    "Summary",
    "summarize",
    "OrderValues",
]

#: What the functions of this module take as ``x``: a Spectrum, or RMS magnitudes (or complex
#: RMS phasors) indexed by harmonic order, optionally stacked along leading axes.
OrderValues = Spectrum | npt.ArrayLike


def _mags(x: OrderValues) -> np.ndarray:
    if isinstance(x, Spectrum):
        return np.abs(x.current_a)
    a = np.abs(np.asarray(x))
    if a.ndim < 1 or a.shape[-1] < 2:
        raise InputError("expected magnitudes indexed by order, with at least orders 0 and 1")
    return a.astype(float)


def _fundamental(m: np.ndarray) -> np.ndarray:
    i1 = m[..., 1]
    if np.any(i1 <= 0):
        raise InputError("the spectrum has no fundamental (order 1 is zero)")
    return i1


def rms_from_orders(x: OrderValues, max_order: int | None = None) -> float | np.ndarray:
    """RMS from the orders 0..max_order (Parseval) [A].

    ``sqrt(I_0^2 + sum_h |I_h|^2)``; equals the time-domain RMS for a record band-limited to
    ``max_order``.
    """
    m = _mags(x)
    top = m.shape[-1] - 1 if max_order is None else min(max_order, m.shape[-1] - 1)
    return np.sqrt(np.sum(m[..., : top + 1] ** 2, axis=-1))


def thd(x: OrderValues, max_order: int = 40, relative_to: str = "fundamental") -> float | np.ndarray:
    """Total harmonic distortion of orders 2..max_order [-].

    ``sqrt(sum_{h=2}^{H} I_h^2) / I_1`` (``relative_to="fundamental"``, the IEC definition),
    or divided by ``sqrt(sum_{h=1}^{H} I_h^2)`` (``relative_to="rms"``, sometimes written
    THD-R or THD_F).

    References
    ----------
    IEC 61000-2-2:2002, 3.2.5 (THD, H = 40 by default in IEC 61000-3-2);
    IEEE Std 519-2022, clause 3.

    >>> round(float(thd([0, 1.0, 0, 0.3, 0, 0.4])), 6)
    0.5
    """
    m = _mags(x)
    top = min(max_order, m.shape[-1] - 1)
    h2 = np.sum(m[..., 2 : top + 1] ** 2, axis=-1)
    if relative_to == "fundamental":
        return np.sqrt(h2) / _fundamental(m)
    if relative_to == "rms":
        return np.sqrt(h2 / (h2 + _fundamental(m) ** 2))
    raise InputError(f"relative_to: expected 'fundamental' or 'rms', got {relative_to!r}")


def tdd(x: OrderValues, demand_current_a: float, max_order: int = 50) -> float | np.ndarray:
    """Total demand distortion ``sqrt(sum_{h=2}^{50} I_h^2) / I_L`` [-].

    ``demand_current_a`` is I_L, the maximum demand load current (fundamental) at the point
    of common coupling [A].

    References
    ----------
    IEEE Std 519-2022, clause 3 (definition; the order range 2..50 is recalled from memory).
    """
    if not demand_current_a > 0:
        raise InputError(f"demand_current_a: expected a positive current, got {demand_current_a}")
    m = _mags(x)
    top = min(max_order, m.shape[-1] - 1)
    return np.sqrt(np.sum(m[..., 2 : top + 1] ** 2, axis=-1)) / demand_current_a


def pwhd(x: OrderValues, min_order: int = 14, max_order: int = 40) -> float | np.ndarray:
    """Partial weighted harmonic distortion ``sqrt(sum_{h=14}^{40} h (I_h/I_1)^2)`` [-].

    References
    ----------
    IEC 61000-3-2:2018, 3.x (PWHD; order range 14..40, recalled from memory).
    """
    m = _mags(x)
    top = min(max_order, m.shape[-1] - 1)
    h = np.arange(min_order, top + 1)
    r = m[..., min_order : top + 1] / _fundamental(m)[..., None]
    return np.sqrt(np.sum(h * r**2, axis=-1))


def crest_factor(samples: npt.ArrayLike) -> float:
    """Peak over RMS of a sampled waveform [-] (sqrt 2 for a sine)."""
    s = np.asarray(samples, dtype=float)
    rms = np.sqrt(np.mean(s**2))
    if rms == 0:
        raise InputError("crest factor of an all-zero record is undefined")
    return float(np.max(np.abs(s)) / rms)


def distortion_factor(x: OrderValues) -> float:
    """``I_1 / I_rms`` [-], the share of the power factor lost to distortion.

    With a Spectrum the time-domain RMS is used; with magnitudes, the RMS of the orders.
    """
    if isinstance(x, Spectrum):
        return x.i1_a / x.i_rms_a
    m = _mags(x)
    return float(_fundamental(m) / rms_from_orders(m))


def _phase_diff(s: Spectrum) -> float:
    """Angle by which the current fundamental lags the voltage fundamental [rad]."""
    if s.voltage_v is None:
        raise InputError("this figure needs a voltage channel")
    return float(np.angle(s.voltage_v[1]) - np.angle(s.current_a[1]))


def displacement_power_factor(s: Spectrum) -> float:
    """``cos(phi_1)``, the cosine of the angle between V_1 and I_1 [-].

    References
    ----------
    IEEE Std 1459-2010, 3.1.2.3 (fundamental power factor).
    """
    return float(np.cos(_phase_diff(s)))


def fundamental_reactive_power(s: Spectrum) -> float:
    """``Q_1 = V_1 I_1 sin(phi_1)`` [var]; positive when the current lags (inductive).

    References
    ----------
    IEEE Std 1459-2010, 3.1.2.3.
    """
    phi = _phase_diff(s)
    assert s.voltage_v is not None  # _phase_diff raised otherwise
    return float(abs(s.voltage_v[1]) * abs(s.current_a[1]) * np.sin(phi))


def power_factor(s: Spectrum) -> float:
    """True power factor ``P / (V_rms I_rms)`` from the time-domain values [-].

    References
    ----------
    IEEE Std 1459-2010, 3.1.2.2 (power factor).
    """
    if s.p_w is None or s.v_rms_v is None:
        raise InputError("the power factor needs a voltage channel")
    sva = s.v_rms_v * s.i_rms_a
    if sva == 0:
        raise InputError("the power factor of a record with zero current is undefined")
    return float(s.p_w / sva)


def harmonic_loss_factor(x: OrderValues, max_order: int = 50) -> float | np.ndarray:
    """IEEE C57.110 harmonic loss factor for winding eddy-current losses ``F_HL`` [-].

    ``F_HL = sum_h (I_h/I_1)^2 h^2 / sum_h (I_h/I_1)^2`` over h = 1..max_order.

    References
    ----------
    IEEE Std C57.110-2018, 5.2, eq. (10) (equation number recalled from memory).

    >>> f = np.zeros(26); f[[1, 5, 7, 11, 13, 17, 19, 23, 25]] = [
    ...     1, .20, .14, .091, .077, .058, .056, .043, .040]
    >>> round(float(harmonic_loss_factor(f)), 4)
    8.3476
    """
    m = _mags(x)
    top = min(max_order, m.shape[-1] - 1)
    h = np.arange(1, top + 1)
    r2 = (m[..., 1 : top + 1] / _fundamental(m)[..., None]) ** 2
    return np.sum(r2 * h**2, axis=-1) / np.sum(r2, axis=-1)


def k_factor(x: OrderValues, max_order: int = 50) -> float | np.ndarray:
    """The transformer K-factor ``K = sum_h (I_h/I_rms)^2 h^2`` [-] (orders 1..max_order).

    Numerically equal to :func:`harmonic_loss_factor` when I_rms is the RMS of the same
    orders; the rating of a replacement "K-rated" transformer is chosen at or above it.

    References
    ----------
    UL 1561 / UL 1562 (K-factor rating; attribution recalled from memory);
    IEEE Std C57.110-2018, clause 5.
    """
    m = _mags(x)
    top = min(max_order, m.shape[-1] - 1)
    h = np.arange(1, top + 1)
    p = m[..., 1 : top + 1] ** 2
    return np.sum(p * h**2, axis=-1) / np.sum(p, axis=-1)


def factor_k(x: OrderValues, e: float = 0.1, q: float = 1.7, max_order: int = 50) -> float | np.ndarray:
    """The transformer derating "factor K" of BS 7821 / EN 50464-3 style [-].

    ``K = [1 + e/(1+e) (I_1/I)^2 sum_{n>=2} n^q (I_n/I_1)^2]^0.5``, where I is the RMS of
    orders 1..max_order, ``e`` the eddy-current loss at the fundamental relative to the
    resistive loss and ``q`` the exponent (1.7 for round conductors, 1.5 for foil windings).
    The transformer's rated current is divided by K.

    References
    ----------
    BS 7821-4 / EN 50464-3:2007, clause 4 (form of the formula, e and q recalled from memory).
    """
    m = _mags(x)
    top = min(max_order, m.shape[-1] - 1)
    i1 = _fundamental(m)
    total = np.sqrt(np.sum(m[..., 1 : top + 1] ** 2, axis=-1))
    n = np.arange(2, top + 1)
    s = np.sum(n**q * (m[..., 2 : top + 1] / i1[..., None]) ** 2, axis=-1)
    return np.sqrt(1 + e / (1 + e) * (i1 / total) ** 2 * s)


@dataclass(frozen=True)
class Summary:
    """The usual figures of one record; ``None`` where the voltage is needed but absent."""

    frequency_hz: float
    i_rms_a: float
    i1_rms_a: float
    i_dc_a: float
    i_peak_a: float
    thd_i: float
    thd_i_rms: float
    pwhd_i: float
    crest_factor: float
    distortion_factor: float
    k_factor: float
    harmonic_loss_factor: float
    v_rms_v: float | None = None
    v1_rms_v: float | None = None
    thd_v: float | None = None
    p_w: float | None = None
    s_va: float | None = None
    q1_var: float | None = None
    pf: float | None = None
    dpf: float | None = None

    def to_dict(self) -> dict[str, Any]:
        """The figures by field name (None where absent)."""
        return asdict(self)


def summarize(s: Spectrum, max_order: int = 40) -> Summary:
    """All the figures of :class:`Summary` for a spectrum, THD over orders 2..max_order."""
    if s.i1_a <= 0:
        raise InputError("the record has no fundamental current")
    kw: dict[str, float | None] = {}
    if s.voltage_v is not None:
        v, v_rms = s.voltage_v, s.v_rms_v
        kw = dict(
            v_rms_v=v_rms,
            v1_rms_v=float(abs(v[1])),
            thd_v=float(thd(np.abs(v), max_order)) if abs(v[1]) > 0 else None,
            p_w=s.p_w,
            s_va=None if v_rms is None else v_rms * s.i_rms_a,  # power_factor() then raises
            q1_var=fundamental_reactive_power(s),
            pf=power_factor(s),
            dpf=displacement_power_factor(s),
        )
    return Summary(
        frequency_hz=s.frequency_hz,
        i_rms_a=s.i_rms_a,
        i1_rms_a=s.i1_a,
        i_dc_a=float(s.current_a[0].real),
        i_peak_a=s.i_peak_a,
        thd_i=float(thd(s, max_order)),
        thd_i_rms=float(thd(s, max_order, "rms")),
        pwhd_i=float(pwhd(s, 14, min(40, s.max_order))) if s.max_order >= 14 else 0.0,
        crest_factor=s.i_peak_a / s.i_rms_a,
        distortion_factor=distortion_factor(s),
        k_factor=float(k_factor(s)),
        harmonic_loss_factor=float(harmonic_loss_factor(s)),
        **kw,
    )
