"""The supply behind a panel: source impedance and the harmonic voltage it lets through.

The source impedance per line is a resistance in series with an inductance, given directly,
from transformer data (kVA, %Z, X/R) or from the short-circuit current at the panel (and
X/R). Harmonic currents flowing through it drop harmonic voltages:
``V_h = E_h - Z_line(h) I_line,h - Z_neutral(h) I_N,h`` with ``Z(h) = R + j h w L``.
Resistance is taken as independent of frequency (skin effect neglected: it would raise R at
high orders and lower the drop's phase angle slightly).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import InputError

__all__ = [
    "SourceImpedance",
    "from_transformer",
    "from_short_circuit",
    "harmonic_impedance",
    "voltage_drop",
]


@dataclass(frozen=True)
class SourceImpedance:
    """Series R-L per line [ohm], [H], and the same for the neutral return path."""

    r_ohm: float = 0.0
    l_h: float = 0.0
    neutral_r_ohm: float = 0.0
    neutral_l_h: float = 0.0

    def __post_init__(self) -> None:
        for name in ("r_ohm", "l_h", "neutral_r_ohm", "neutral_l_h"):
            v = getattr(self, name)
            if not (np.isfinite(v) and v >= 0):
                raise InputError(f"{name}: expected a non-negative number, got {v}")

    def __add__(self, other: SourceImpedance) -> SourceImpedance:
        return SourceImpedance(self.r_ohm + other.r_ohm, self.l_h + other.l_h,
                               self.neutral_r_ohm + other.neutral_r_ohm,
                               self.neutral_l_h + other.neutral_l_h)

    def magnitude_ohm(self, frequency_hz: float) -> float:
        """|Z| of the line at the fundamental [ohm]."""
        return float(abs(self.r_ohm + 2j * np.pi * frequency_hz * self.l_h))

    def short_circuit_current_a(self, v_ln_v: float, frequency_hz: float) -> float:
        """Prospective bolted short-circuit current ``V_LN / |Z_line|`` [A] (line impedance only)."""
        z = self.magnitude_ohm(frequency_hz)
        return float("inf") if z == 0 else v_ln_v / z


def _split(z_ohm: float, x_over_r: float, frequency_hz: float) -> tuple[float, float]:
    if not x_over_r >= 0:
        raise InputError(f"x_over_r: expected a non-negative ratio, got {x_over_r}")
    r = z_ohm / np.sqrt(1 + x_over_r**2)
    return float(r), float(r * x_over_r / (2 * np.pi * frequency_hz))


def from_transformer(
    kva: float, impedance_pct: float, x_over_r: float, v_ln_v: float, frequency_hz: float,
    lines: int = 3,
) -> SourceImpedance:
    """Per-line impedance of a transformer [ohm, H] from its rating.

    ``Z = z% / 100 * V_LN^2 / (S / lines)``: for a three-phase unit this is the usual
    ``V_LL^2 / S`` base. For a split-phase (two-line) unit it refers each half winding to half
    the rating, an approximation: the half-winding impedance of real units differs (common
    practice uses 1.5 to 2 times the full-winding value for line-to-neutral faults).

    References
    ----------
    IEEE Std 141-1993 (Red Book), ch. 4 (per-unit impedance of transformers).
    """
    for name, v in (("kva", kva), ("impedance_pct", impedance_pct), ("v_ln_v", v_ln_v)):
        if not (np.isfinite(v) and v > 0):
            raise InputError(f"transformer.{name}: expected a positive number, got {v}")
    z = impedance_pct / 100.0 * v_ln_v**2 / (kva * 1e3 / lines)
    r, l_h = _split(z, x_over_r, frequency_hz)
    return SourceImpedance(r, l_h)


def from_short_circuit(
    isc_a: float, x_over_r: float, v_ln_v: float, frequency_hz: float
) -> SourceImpedance:
    """Per-line impedance from the prospective short-circuit current at the panel:
    ``|Z| = V_LN / I_sc`` split by X/R."""
    if not (np.isfinite(isc_a) and isc_a > 0):
        raise InputError(f"short_circuit_a: expected a positive current, got {isc_a}")
    r, l_h = _split(v_ln_v / isc_a, x_over_r, frequency_hz)
    return SourceImpedance(r, l_h)


def harmonic_impedance(r_ohm: float, l_h: float, frequency_hz: float, max_order: int) -> np.ndarray:
    """``Z(h) = R + j h w L`` for orders 0..max_order [ohm] (order 0: R)."""
    h = np.arange(max_order + 1)
    return r_ohm + 1j * h * 2 * np.pi * frequency_hz * l_h


def voltage_drop(
    z: SourceImpedance, line_phasors: np.ndarray, neutral_phasors: np.ndarray | None,
    frequency_hz: float,
) -> np.ndarray:
    """Harmonic voltage drop on the line-to-neutral voltage of one line [V rms phasors].

    ``dV_h = Z_line(h) I_line,h + Z_N(h) I_N,h`` where both currents are RMS phasors on the
    same reference, the line current flowing to the load and the neutral current returning.
    Subtract it from the source EMF to get the voltage at the panel.
    """
    p = np.asarray(line_phasors, dtype=complex)
    top = p.size - 1
    dv = harmonic_impedance(z.r_ohm, z.l_h, frequency_hz, top) * p
    if neutral_phasors is not None:
        dv = dv + harmonic_impedance(z.neutral_r_ohm, z.neutral_l_h, frequency_hz, top) * np.asarray(
            neutral_phasors, dtype=complex
        )
    return dv
