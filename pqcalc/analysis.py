"""One-call analysis of a record: the figures and the per-order table users ask for first.

:func:`analyze` turns a :class:`~pqcalc.waveform.Waveform` into an :class:`Analysis`
(summary figures and the harmonic table); :meth:`Analysis.to_dict` gives the stable JSON
form printed by ``pqcalc analyze --json``.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, replace

import numpy as np

from .errors import InputError, PqcalcWarning
from .metrics import Summary, summarize
from .spectrum import Spectrum, spectrum
from .waveform import Waveform

__all__ = ["Analysis", "analyze", "harmonic_table", "resolved_order", "OrderLimitWarning"]


class OrderLimitWarning(PqcalcWarning):
    """The record's sample rate does not resolve the orders asked for: the analysis stops
    at the highest order it resolves."""


def resolved_order(samples_per_cycle: float) -> int:
    """The highest harmonic order a record sampled ``samples_per_cycle`` times per cycle
    resolves: order h needs ``h * f < fs / 2`` (the sampling theorem), so
    ``h < samples_per_cycle / 2``.

    >>> resolved_order(4.0), resolved_order(200.0), resolved_order(201.0)
    (1, 99, 100)
    """
    return max(0, math.ceil(samples_per_cycle / 2.0) - 1)


@dataclass(frozen=True)
class Analysis:
    """Summary figures and spectrum of one record."""

    summary: Summary
    spectrum: Spectrum
    max_order: int
    label: str = ""
    notes: tuple[str, ...] = ()

    def to_dict(self, table_max_order: int | None = None) -> dict:
        """The JSON form: SI values, ratios in percent where the key says ``_pct``."""
        s = self.summary

        def pct(x):
            return None if x is None else 100.0 * x

        d = {
            "label": self.label,
            "frequency_hz": s.frequency_hz,
            "i_rms_a": s.i_rms_a,
            "i1_rms_a": s.i1_rms_a,
            "i_dc_a": s.i_dc_a,
            "i_peak_a": s.i_peak_a,
            "thd_i_pct": pct(s.thd_i),
            "thd_i_max_order": self.max_order,
            "thd_i_rms_pct": pct(s.thd_i_rms),
            "pwhd_i_pct": pct(s.pwhd_i),
            "pf": s.pf,
            "dpf": s.dpf,
            "distortion_factor": s.distortion_factor,
            "crest_factor": s.crest_factor,
            "k_factor": s.k_factor,
            "harmonic_loss_factor": s.harmonic_loss_factor,
            "phase_reference": self.spectrum.reference,
        }
        if self.spectrum.has_voltage:
            d.update(
                v_rms_v=s.v_rms_v,
                v1_rms_v=s.v1_rms_v,
                thd_v_pct=pct(s.thd_v),
                p_w=s.p_w,
                s_va=s.s_va,
                q1_var=s.q1_var,
            )
        d["harmonics"] = harmonic_table(self.spectrum, table_max_order or self.max_order)
        if self.notes:
            d["notes"] = list(self.notes)
        return d


def harmonic_table(s: Spectrum, max_order: int = 40) -> list[dict]:
    """Per-order rows ``order, i_rms_a, pct_of_fundamental, phase_deg`` (orders 1..max)."""
    rows = []
    i1 = s.i1_a
    for h in range(1, min(max_order, s.max_order) + 1):
        mag = float(abs(s.current_a[h]))
        row = {
            "order": h,
            "frequency_hz": h * s.frequency_hz,
            "i_rms_a": mag,
            "pct_of_fundamental": 100.0 * mag / i1 if i1 > 0 else None,
            "phase_deg": float(np.degrees(np.angle(s.current_a[h]))),
        }
        if s.voltage_v is not None:
            row["v_rms_v"] = float(abs(s.voltage_v[h]))
        rows.append(row)
    return rows


def analyze(waveform: Waveform, max_order: int = 40) -> Analysis:
    """Spectrum (orders 0..50) and summary (THD over 2..max_order) of one record.

    For a capture resampled onto whole cycles the peak and the crest factor are those of
    the recorded samples (:attr:`Waveform.recorded`), never of the interpolated record; the
    other figures come from the resampled record. The recorded sample rate is held against
    ``max_order``: orders it does not resolve (``h * f >= fs / 2``) are left out with an
    :class:`OrderLimitWarning`, and a record that resolves no harmonic at all is refused.
    """
    rec = waveform.recorded
    notes = []
    if rec is not None:
        top = resolved_order(rec.samples_per_cycle)
        label = waveform.label or "record"
        if top < 2:
            raise InputError(
                f"{label}: {rec.samples_per_cycle:.3g} samples per cycle resolve no harmonic "
                f"(order h needs more than 2h samples per cycle); expected a record sampled "
                f"at more than {2 * max_order * waveform.frequency_hz:.4g} Hz for orders up "
                f"to {max_order}")
        if top < max_order:
            warnings.warn(
                f"{label}: {rec.samples_per_cycle:.3g} samples per cycle resolve orders up to "
                f"{top}; THD and the table stop there (orders up to {max_order} need more "
                f"than {2 * max_order * waveform.frequency_hz:.4g} samples per second)",
                OrderLimitWarning, stacklevel=2)
            notes.append(f"orders above {top} not resolved by the sample rate; THD sums 2..{top}")
            max_order = top
    s = spectrum(waveform, max(50, max_order))
    if not waveform.has_voltage:
        notes.append(
            "no voltage channel: phases refer to the current fundamental; pf, dpf and power "
            "need the voltage"
        )
    summary = summarize(s, max_order)
    if rec is not None:
        summary = replace(summary, crest_factor=waveform.crest_factor)
        notes.append(
            f"peak and crest factor from the recorded samples ({rec.samples_per_cycle:.1f} per "
            "cycle: a step is located to one sample interval, so the crest factor is known to "
            f"about {200.0 / rec.samples_per_cycle:.2g} %)"
        )
    return Analysis(summary, s, max_order, waveform.label, tuple(notes))
