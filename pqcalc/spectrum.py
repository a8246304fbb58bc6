"""Harmonic phasors of a :class:`~pqcalc.waveform.Waveform` by FFT over whole cycles.

Phasor convention (used everywhere in pqcalc)
---------------------------------------------
A quantity is written as a sum of sines,

    i(t) = I_0 + sum_h sqrt(2) |I_h| sin(h w t + phi_h),

with the time origin at the positive-going zero crossing of the *reference* fundamental:
the voltage fundamental when a voltage is given (the reference the IEC 61000-3-2 waveform
test uses), else the current fundamental. ``I_h = |I_h| exp(j phi_h)`` is the RMS phasor of
order h [A]. A current in phase with the voltage has ``phi_1 = 0``; a lagging current has
``phi_1 < 0``. Phasors of records that share a reference add; a line on phase L2 of a wye
supply (fundamental at -120 deg) has its order-h phasors turned by ``h * (-120 deg)``.

IEC 61000-4-7 harmonic groups and subgroups of a 10/12-cycle window are computed by
:func:`harmonic_groups`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .waveform import Waveform

__all__ = [
    "Spectrum",
    "spectrum",
    "harmonic_groups",
    "rotate_phasors",
    "period_phasors",
    "phasor_samples",
    "DEFAULT_MAX_ORDER",
]

DEFAULT_MAX_ORDER = 50


def period_phasors(x: np.ndarray, cycles: int = 1, max_order: int = DEFAULT_MAX_ORDER
                   ) -> np.ndarray:
    """RMS phasors (sine basis) of orders 0..max_order of a record over whole cycles [A or V].

    The phase origin is the record's own first sample; index 0 is the signed DC value. The
    last axis is time, so a stack of records gives a stack of spectra. This is the one place
    the FFT-to-phasor convention lives: order h of an N-cycle record sits on bin ``h*N``; a
    cosine-basis peak amplitude ``c`` is the sine-basis RMS phasor ``j c / sqrt(2)``.

    >>> t = np.arange(64) / 64
    >>> p = period_phasors(np.sqrt(2) * 3.0 * np.sin(2 * np.pi * t), 1, 3)
    >>> np.round(p, 12)
    array([0.+0.j, 3.+0.j, 0.+0.j, 0.+0.j])
    """
    x = np.asarray(x, dtype=float)
    n = x.shape[-1]
    X = np.fft.rfft(x, axis=-1) / n
    bins = np.arange(max_order + 1) * cycles
    c = 2.0 * X[..., bins]
    if n % 2 == 0 and bins[-1] == n // 2:  # order at the Nyquist bin is not doubled
        c[..., -1] /= 2.0
    p = c * (1j / np.sqrt(2))
    p[..., 0] = X[..., 0].real
    return p


def phasor_samples(p: np.ndarray, n: int, cycles: int = 1) -> np.ndarray:
    """The ``n`` samples over ``cycles`` cycles of the sinusoids whose RMS phasors (sine
    basis, orders 0..len(p) - 1, index 0 the DC value) are ``p``: the inverse of
    :func:`period_phasors` for a record holding those orders only.

    >>> x = phasor_samples(np.array([0.5, 3.0, 0.0, 1j]), 64)
    >>> np.round(period_phasors(x, 1, 3), 12)
    array([0.5+0.j, 3. +0.j, 0. +0.j, 0. +1.j])
    """
    p = np.asarray(p, dtype=complex)
    X = np.zeros(n // 2 + 1, dtype=complex)
    bins = np.arange(p.size) * cycles
    if bins[-1] > n // 2:
        raise ValueError(f"order {p.size - 1} over {cycles} cycles needs more than {n} samples")
    c = p * (np.sqrt(2) / 1j)  # the cosine-basis peak amplitude
    X[bins] = c / 2.0
    if n % 2 == 0 and bins[-1] == n // 2:  # the Nyquist bin holds its amplitude once
        X[bins[-1]] = c[-1]
    X[0] = p[0].real
    return np.fft.irfft(X * n, n)


@dataclass(frozen=True)
class Spectrum:
    """Harmonic phasors of a current (and voltage) record, orders 0..max_order.

    Attributes
    ----------
    current_a
        RMS phasors ``I_h`` [A], index = order; index 0 is the (signed, real) DC value.
    voltage_v
        RMS phasors ``V_h`` [V] on the same reference, or None.
    frequency_hz
        Fundamental frequency [Hz].
    i_rms_a
        Time-domain RMS of the current record [A]; it includes content above ``max_order``
        and between orders, so it can exceed ``sqrt(sum |I_h|^2)`` slightly.
    v_rms_v, p_w
        Time-domain voltage RMS [V] and active power [W], or None without a voltage.
    i_peak_a
        Largest absolute current sample [A] (of the recorded samples for a capture resampled
        onto whole cycles, :attr:`pqcalc.waveform.Waveform.i_peak_a`).
    reference
        ``"voltage"`` or ``"current"``: whose fundamental zero crossing is the phase origin.
    """

    current_a: np.ndarray
    frequency_hz: float
    i_rms_a: float
    i_peak_a: float
    voltage_v: np.ndarray | None = None
    v_rms_v: float | None = None
    v_peak_v: float | None = None
    p_w: float | None = None
    reference: str = "current"
    label: str = ""

    @property
    def max_order(self) -> int:
        return int(self.current_a.size - 1)

    @property
    def orders(self) -> np.ndarray:
        """Harmonic orders 0..max_order [-]."""
        return np.arange(self.current_a.size)

    @property
    def i_h_a(self) -> np.ndarray:
        """RMS magnitude per order [A] (index = order)."""
        return np.abs(self.current_a)

    @property
    def v_h_v(self) -> np.ndarray | None:
        """RMS voltage magnitude per order [V], or None."""
        return None if self.voltage_v is None else np.abs(self.voltage_v)

    @property
    def i1_a(self) -> float:
        """Fundamental current [A rms]."""
        return float(abs(self.current_a[1]))

    @property
    def phase_rad(self) -> np.ndarray:
        """Phase of each current order on the reference [rad]."""
        return np.angle(self.current_a)

    @property
    def has_voltage(self) -> bool:
        return self.voltage_v is not None

    def scaled(self, factor: float) -> Spectrum:
        """The spectrum of ``factor`` identical records (the lamps add in phase)."""
        return Spectrum(
            self.current_a * factor,
            self.frequency_hz,
            self.i_rms_a * abs(factor),
            self.i_peak_a * abs(factor),
            self.voltage_v,
            self.v_rms_v,
            self.v_peak_v,
            None if self.p_w is None else self.p_w * factor,
            self.reference,
            self.label,
        )


def spectrum(
    waveform: Waveform,
    max_order: int = DEFAULT_MAX_ORDER,
    reference: str = "auto",
) -> Spectrum:
    """Harmonic phasors of a whole-cycle record by FFT.

    Parameters
    ----------
    waveform
        The record; it spans a whole number of cycles, so order h sits on bin ``h*cycles``.
    max_order
        Highest order kept [-]; lowered to what the sample rate allows (Nyquist).
    reference
        ``"auto"`` (voltage if present, else current), ``"voltage"`` or ``"current"``.

    Returns
    -------
    Spectrum

    References
    ----------
    IEC 61000-4-7:2002+AMD1:2008, clause 3 (DFT over a synchronised rectangular window).

    Examples
    --------
    >>> from pqcalc.waveform import sine
    >>> s = spectrum(sine(230, 50, amplitude_a=np.sqrt(2), phase_rad=np.pi / 6))
    >>> round(s.i1_a, 6), round(float(np.degrees(s.phase_rad[1])), 3)
    (1.0, -30.0)
    """
    if max_order < 1:
        raise InputError(f"max_order: expected an order >= 1, got {max_order}")
    nyquist_order = int((waveform.n_samples / 2) // waveform.cycles)
    if 2 * nyquist_order * waveform.cycles == waveform.n_samples:
        nyquist_order -= 1  # keep orders strictly below Nyquist
    max_order = int(min(max_order, nyquist_order))
    if max_order < 1:
        raise InputError("the record has too few samples per cycle to resolve the fundamental")

    ci = period_phasors(waveform.current_a, waveform.cycles, max_order)
    cv = None
    if waveform.voltage_v is not None:
        cv = period_phasors(waveform.voltage_v, waveform.cycles, max_order)

    if reference == "auto":
        reference = "voltage" if cv is not None else "current"
    if reference == "voltage":
        if cv is None:
            raise InputError("reference: 'voltage' needs a voltage channel")
        ref1 = cv[1]
    elif reference == "current":
        ref1 = ci[1]
    else:
        raise InputError(f"reference: expected 'auto', 'voltage' or 'current', got {reference!r}")
    if abs(ref1) == 0:
        # nothing to align to: keep the record's own time origin
        psi1 = 0.0
    else:
        psi1 = float(np.angle(ref1))  # phase of the reference in the sine basis

    def to_phasors(p: np.ndarray) -> np.ndarray:
        # origin moved to the reference's positive-going zero crossing: phi_h -= h * psi_1
        return rotate_phasors(p, -psi1)

    return Spectrum(
        current_a=to_phasors(ci),
        frequency_hz=waveform.frequency_hz,
        i_rms_a=waveform.i_rms_a,
        i_peak_a=waveform.i_peak_a,  # of the recorded samples for a resampled capture
        voltage_v=None if cv is None else to_phasors(cv),
        v_rms_v=waveform.v_rms_v,
        v_peak_v=waveform.v_peak_v,
        p_w=waveform.p_w,
        reference=reference,
        label=waveform.label,
    )


def rotate_phasors(phasors: np.ndarray, angle_rad: float) -> np.ndarray:
    """Turn order-h phasors by ``h * angle_rad`` (a record moved to another phase).

    A line current on L2 of an L1-L2-L3 wye supply is the L1 current with
    ``angle_rad = -2*pi/3``; on L3 ``+2*pi/3``. Triplen orders (3, 9, 15, ...) turn by whole
    turns and so add arithmetically in the neutral.

    >>> p = np.array([0, 1, 0, 1], dtype=complex)
    >>> np.round(np.degrees(np.angle(rotate_phasors(p, -2 * np.pi / 3)))[[1, 3]], 6)
    array([-120.,   -0.])
    """
    p = np.asarray(phasors, dtype=complex)
    h = np.arange(p.shape[-1])
    out = p * np.exp(1j * h * angle_rad)
    out[..., 0] = p[..., 0]
    return out


def harmonic_groups(
    x: np.ndarray, cycles: int, kind: str = "group", max_order: int = DEFAULT_MAX_ORDER
) -> np.ndarray:
    """IEC 61000-4-7 harmonic groups or subgroups of one window [rms, same unit as ``x``].

    ``x`` is one window of ``cycles`` fundamental cycles (10 at 50 Hz, 12 at 60 Hz), so the
    spectral lines are ``f1 / cycles`` (5 Hz) apart and order h sits on line ``k = h*cycles``.

    - group: ``G_h^2 = C_{k-N/2}^2 / 2 + sum_{|i| < N/2} C_{k+i}^2 + C_{k+N/2}^2 / 2``
      with N = ``cycles``;
    - subgroup: ``G_sg,h^2 = sum_{i=-1..1} C_{k+i}^2``.

    Index 0 holds the DC value in both cases.

    References
    ----------
    IEC 61000-4-7:2002+AMD1:2008, 3.2 (harmonic group, eq. 8; subgroup, eq. 9); the
    subgroup formula is recalled from memory.
    """
    x = np.asarray(x, dtype=float)
    n = x.size
    X = np.fft.rfft(x) / n
    C = np.abs(X) * np.sqrt(2)  # rms of each spectral line
    C[0] = np.abs(X[0])
    if n % 2 == 0:
        C[-1] = np.abs(X[-1])
    half = cycles // 2
    top = int(min(max_order, (C.size - 1 - half) // cycles))
    out = np.zeros(top + 1)
    out[0] = C[0]
    for h in range(1, top + 1):
        k = h * cycles
        if kind == "group":
            inner = C[k - half + 1 : k + half]
            g2 = np.sum(inner**2) + 0.5 * (C[k - half] ** 2 + C[k + half] ** 2)
            if cycles % 2:  # odd N: lines at +-N/2 do not exist; sum the inner ones only
                g2 = np.sum(C[k - half : k + half + 1] ** 2)
        elif kind == "subgroup":
            g2 = np.sum(C[k - 1 : k + 2] ** 2)
        else:
            raise InputError(f"kind: expected 'group' or 'subgroup', got {kind!r}")
        out[h] = np.sqrt(g2)
    return out
