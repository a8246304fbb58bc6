"""Diversity of independently dimmed circuits: the summation law and Monte Carlo.

The scenarios of an installation fix every dimmer's setting. When occupants dim each room
at will, two estimates bound what the panels see:

- :func:`summation_diversity`: the IEC TR 61000-3-6 general summation law over the circuits
  of a line, each at its largest magnitude per order over the scenarios;
- :func:`monte_carlo_diversity`: settings drawn at random per dimmed circuit, the panel
  currents summed with phase alignment per draw, percentiles over the draws.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..errors import ConvergenceError
from .cases import CaseResult, CaseSolver
from .model import LINE_ANGLES_DEG, Installation
from .sums import GRID_SAMPLES, MAX_ORDER, on_period, sum_period, to_l1_frame, triplen_share

__all__ = ["summation_exponent", "summation_law", "sequence_neutral", "Percentiles", "SummationPanel",
           "SummationDiversity", "MonteCarloPanel", "MonteCarloDiversity",
           "summation_diversity", "monte_carlo_diversity", "diversity"]


def summation_exponent(order: int) -> float:
    """IEC TR 61000-3-6 summation exponent alpha for harmonic order h [-].

    1 for h < 5, 1.4 for 5 <= h <= 10, 2 for h > 10.

    References
    ----------
    IEC TR 61000-3-6:2008, 8.3 (general summation law; exponents recalled from memory).
    """
    if order < 5:
        return 1.0
    if order <= 10:
        return 1.4
    return 2.0


def summation_law(magnitudes: np.ndarray, axis: int = 0) -> np.ndarray:
    """Combine harmonic magnitudes of sources with unknown relative phase [A].

    ``I_h = (sum_i I_{h,i}^alpha)^(1/alpha)`` with :func:`summation_exponent` per order; the
    last axis of ``magnitudes`` is the order (index 0 = DC, summed arithmetically).

    References
    ----------
    IEC TR 61000-3-6:2008, 8.3 (exponents recalled from memory).

    >>> m = np.zeros((2, 12)); m[:, 3] = 1.0; m[:, 5] = 1.0; m[:, 11] = 1.0
    >>> r = summation_law(m)
    >>> [round(float(x), 4) for x in r[[3, 5, 11]]]
    [2.0, 1.6407, 1.4142]
    """
    m = np.abs(np.asarray(magnitudes, dtype=float))
    m = np.moveaxis(m, axis, 0)
    out = np.empty(m.shape[1:])
    for h in range(m.shape[-1]):
        a = 1.0 if h == 0 else summation_exponent(h)
        out[..., h] = np.sum(m[..., h] ** a, axis=0) ** (1.0 / a)
    return out


@dataclass(frozen=True)
class SummationPanel:
    """One panel by the summation law: per line rms and third-harmonic current [A]; the
    neutral's rms [A] and triplen share [-] (None on a two-wire supply)."""

    id: str
    lines: dict[str, tuple[float, float]]  # line -> (i_rms_a, i3_a)
    neutral: tuple[float, float] | None = None  # (i_rms_a, triplen_share)

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {"id": self.id, "lines": {
            ln: {"i_rms_a": v[0], "i3_a": v[1]} for ln, v in self.lines.items()}}
        if self.neutral is not None:
            d["neutral"] = {"i_rms_a": self.neutral[0],
                            "triplen_share_pct": 100 * self.neutral[1]}
        return d


@dataclass(frozen=True)
class SummationDiversity:
    method: str
    panels: tuple[SummationPanel, ...]

    def to_dict(self) -> dict[str, Any]:
        return {"method": self.method, "panels": [p.to_dict() for p in self.panels]}


@dataclass(frozen=True)
class Percentiles:
    """Percentiles of a current over the draws [A]."""

    p50_a: float
    p95_a: float
    p99_a: float
    max_a: float

    @classmethod
    def of(cls, values: list[float]) -> Percentiles:
        a = np.asarray(values)
        return cls(float(np.percentile(a, 50)), float(np.percentile(a, 95)),
                   float(np.percentile(a, 99)), float(a.max()))

    def to_dict(self) -> dict[str, float]:
        return dict(vars(self))


@dataclass(frozen=True)
class MonteCarloPanel:
    id: str
    lines: dict[str, Percentiles]
    neutral: Percentiles | None = None

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {"id": self.id,
                             "lines": {ln: v.to_dict() for ln, v in self.lines.items()}}
        if self.neutral is not None:
            d["neutral"] = self.neutral.to_dict()
        return d


@dataclass(frozen=True)
class MonteCarloDiversity:
    method: str
    panels: tuple[MonteCarloPanel, ...]
    left_out: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        return {"method": self.method, "left_out": list(self.left_out),
                "panels": [p.to_dict() for p in self.panels]}


def sequence_neutral(system: str, line_magnitudes: dict[str, np.ndarray]) -> np.ndarray:
    """The neutral's magnitude per order [A] from the lines' magnitudes per order [A].

    Each line's total is taken at the same angle in its own line's frame (the circuits of
    the lines are alike); on the L1 reference order h of line L then turns by ``h * theta_L``
    (its sequence): ``|I_N,h| = |sum_L I_L,h exp(j h theta_L)|``. On a balanced wye set the
    triplens (zero sequence) add to three times a line's, the others (positive and negative
    sequence) cancel; on a split-phase set the odd orders cancel. Unequal lines leave their
    difference, as they should.

    >>> m = np.zeros(10); m[[3, 5, 9]] = 1.0
    >>> n = sequence_neutral("three-phase-wye", {"L1": m, "L2": m, "L3": m})
    >>> [round(float(x), 9) for x in n[[3, 5, 9]]]
    [3.0, 0.0, 3.0]
    """
    angles = LINE_ANGLES_DEG[system]
    h = np.arange(len(next(iter(line_magnitudes.values()))))
    total = sum((np.asarray(m) * np.exp(1j * h * np.radians(angles[ln]))
                 for ln, m in line_magnitudes.items()), np.zeros(h.size, dtype=complex))
    return np.abs(total)


def summation_diversity(inst: Installation, solver: CaseSolver) -> SummationDiversity:
    """IEC TR 61000-3-6 summation law over circuits at their worst listed setting."""
    angles = inst.supply.lines
    panels = []
    for p in inst.panels:
        per_line: dict[str, list[np.ndarray]] = {ln: [] for ln in angles}
        fund = {ln: 0j for ln in angles}
        for c in p.circuits:
            phs = [solver.case(c, k).phasors for k in range(inst.n_scenarios)]
            mags = np.abs(phs)
            per_line[c.line].append(np.max(mags, axis=0))
            # the fundamental keeps its phase (displacement) from the scenario of largest I1
            p1 = phs[int(np.argmax(mags[:, 1]))][1]
            fund[c.line] += p1 * np.exp(1j * np.radians(
                LINE_ANGLES_DEG[inst.supply.system][c.line]))
        lines = {}
        for ln, ms in per_line.items():
            s = summation_law(np.array(ms)) if ms else np.zeros(MAX_ORDER + 1)
            lines[ln] = (float(np.sqrt(np.sum(s**2))), float(s[3]))
        neutral = None
        if inst.supply.system != "single-phase" and any(per_line.values()):
            sn = sequence_neutral(inst.supply.system, {
                ln: summation_law(np.array(ms)) if ms else np.zeros(MAX_ORDER + 1)
                for ln, ms in per_line.items()})
            # the fundamental as the phasor sum of the lines (set by the load balance and the
            # displacement, not by the dimmer settings)
            sn[1] = abs(sum(fund.values()))
            neutral = (float(np.sqrt(np.sum(sn**2))), triplen_share(sn))
        panels.append(SummationPanel(p.id, lines, neutral))
    return SummationDiversity(
        "IEC TR 61000-3-6 summation law, exponents 1 (h<5), 1.4 (5..10), 2 (h>10) (from "
        "memory); each circuit at the largest magnitude per order over its scenarios, per line; "
        "the neutral per order from the lines' totals turned by the order's sequence (triplens "
        "add, balanced non-triplens cancel), its fundamental from the phasor sum of the lines",
        tuple(panels))


def monte_carlo_diversity(inst: Installation, solver: CaseSolver) -> MonteCarloDiversity:
    """Settings drawn uniformly in [low, high] per dimmed circuit, quantised to step_deg;
    each circuit's case at each grid setting is solved once."""
    d = inst.diversity
    rng = np.random.default_rng(d.seed)
    grid = np.arange(d.low_deg, d.high_deg + 1e-9, d.step_deg)
    sys_ = inst.supply.system
    lines = inst.supply.lines
    table: dict[str, list[CaseResult]] = {}
    skipped: list[str] = []
    for c in inst.circuits:
        if c.dimmer == "none":
            table[c.id] = [solver.case(c, 0)]
            continue
        opts = []
        for a in grid:
            try:
                opts.append(solver.case(replace(c, conduction_deg=(float(a),), knob=None), 0))
            except ConvergenceError:
                skipped.append(f"{c.id} at {a:g} deg")
        if not opts:
            raise ConvergenceError(f"Monte Carlo: circuit {c.id} has no steady state at "
                                   f"any setting of {d.low_deg:g}..{d.high_deg:g} deg")
        table[c.id] = opts
    cyc = sum_period(cs.cycles for v in table.values() for cs in v)
    line_draws: dict[str, dict[str, list[float]]] = {p.id: {ln: [] for ln in lines}
                                                     for p in inst.panels}
    neutral_draws: dict[str, list[float]] = {p.id: [] for p in inst.panels}
    for _ in range(d.draws):
        for p in inst.panels:
            acc = {ln: np.zeros(GRID_SAMPLES * cyc) for ln in lines}
            for c in p.circuits:
                opts = table[c.id]
                cs = opts[rng.integers(len(opts))] if len(opts) > 1 else opts[0]
                acc[c.line] += to_l1_frame(on_period(cs.current_a, cs.cycles, cyc), sys_,
                                           c.line, cyc)
            for ln in lines:
                line_draws[p.id][ln].append(float(np.sqrt(np.mean(acc[ln] ** 2))))
            if sys_ != "single-phase":
                neutral_draws[p.id].append(float(np.sqrt(np.mean(sum(acc.values()) ** 2))))
    panels = tuple(
        MonteCarloPanel(p.id, {ln: Percentiles.of(v) for ln, v in line_draws[p.id].items()},
                        Percentiles.of(neutral_draws[p.id]) if neutral_draws[p.id] else None)
        for p in inst.panels)
    left = (("settings without a steady state, left out of the draws: " + ", ".join(skipped),)
            if skipped else ())
    return MonteCarloDiversity(
        f"Monte Carlo, {d.draws} draws, settings uniform in {d.low_deg:g}..{d.high_deg:g} deg "
        f"conduction (step {d.step_deg:g} deg), seed {d.seed}; ideal supply", panels, left)


def diversity(inst: Installation, solver: CaseSolver
              ) -> SummationDiversity | MonteCarloDiversity | None:
    """The diversity estimate the installation file asks for, or None."""
    if inst.diversity.mode == "summation":
        return summation_diversity(inst, solver)
    if inst.diversity.mode == "monte-carlo":
        return monte_carlo_diversity(inst, solver)
    return None
