"""One summing path: circuits -> panel lines -> feeders -> the service, and the neutral.

Currents of circuits on one line are added sample by sample on the aggregation grid (they
share that line's voltage reference). Lines of a polyphase supply are then moved to a common
reference, L1's voltage: a record on a line whose fundamental voltage sits at ``theta`` is
delayed by ``-theta`` (order h turns by ``h * theta``). For a four-wire wye supply L1 is at 0
deg, L2 at -120 deg and L3 at +120 deg; for a split-phase three-wire supply L1 at 0 and L2 at
180 deg.

The neutral current of a wye or split-phase system is the sum of the line currents (all
loads line-to-neutral): fundamental, 5th and 7th of a balanced set cancel; triplens add. On a
two-wire single-phase supply the neutral returns the line current.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from math import gcd

import numpy as np

from ..errors import InputError
from ..metrics import thd
from ..spectrum import period_phasors
from ..waveform import Waveform, shift_periodic
from .model import LINE_ANGLES_DEG, Installation
from .results import LineResult, NeutralResult

__all__ = ["GRID_SAMPLES", "MAX_ORDER", "MAX_COMMON_PERIOD", "to_grid", "common_period",
           "sum_period", "on_period", "to_l1_frame", "NodeSum", "InstallationSums",
           "sum_installation", "line_result", "neutral_result", "triplen_share"]

#: Highest harmonic order carried in results [-].
MAX_ORDER = 50

#: Samples per fundamental cycle on the aggregation grid; divisible by 2 and 3 so that
#: shifts of 120 and 180 deg are whole samples (exact, no interpolation).
GRID_SAMPLES = 6144

#: Longest common period [cycles] the sums are carried over; circuits whose own period
#: (a triac firing every few half cycles) does not divide it enter as their mean cycle.
MAX_COMMON_PERIOD = 12


def to_grid(w: Waveform, cycles: int, samples_per_cycle: int = GRID_SAMPLES) -> np.ndarray:
    """Current of ``w`` on the aggregation grid over ``cycles`` cycles [A].

    The record is resampled to ``samples_per_cycle`` by Fourier interpolation (exact for a
    band-limited periodic record) and tiled when its period is shorter than ``cycles``.
    """
    if cycles % w.cycles:
        raise InputError(f"cannot tile a {w.cycles}-cycle record onto {cycles} cycles")
    n = samples_per_cycle * w.cycles
    x = w.current_a
    if x.size != n:
        x = _fourier_resample(x, n)
    return np.tile(x, cycles // w.cycles)


def _fourier_resample(x: np.ndarray, n: int) -> np.ndarray:
    """Periodic record resampled to ``n`` points by truncating or zero-padding its DFT."""
    X = np.fft.rfft(x)
    Y = np.zeros(n // 2 + 1, dtype=complex)
    m = min(X.size, Y.size)
    Y[:m] = X[:m]
    if n % 2 == 0 and m == Y.size:
        Y[-1] = Y[-1].real  # the new Nyquist line of a real record is real
    if x.size % 2 == 0 and m == X.size and X.size < Y.size:
        Y[m - 1] *= 0.5  # the old Nyquist line splits into +-f
    return np.fft.irfft(Y, n) * (n / x.size)


def common_period(periods: Iterable[int]) -> int:
    """Least common multiple of the records' periods in cycles (1 for ordinary records)."""
    p = 1
    for q in periods:
        p = p * int(q) // gcd(p, int(q))
    if p > 24:
        raise InputError(f"the records' periods have a common period of {p} cycles (over 24)")
    return p


def sum_period(periods: Iterable[int]) -> int:
    """The period the sums are carried over: the common period of the records, or 1 when
    it would exceed :data:`MAX_COMMON_PERIOD`."""
    try:
        p = common_period(periods)
    except InputError:
        return 1
    return p if p <= MAX_COMMON_PERIOD else 1


def on_period(current_a: np.ndarray, cycles: int, cyc: int) -> np.ndarray:
    """A record over ``cyc`` cycles: tiled, or its mean cycle when its own period does not
    divide ``cyc`` (the sub-harmonic content is then averaged out; the circuit keeps its
    'subharmonic' flag and its own figures)."""
    if cyc % cycles == 0:
        return np.tile(current_a, cyc // cycles)
    mean = current_a.reshape(cycles, -1).mean(axis=0)
    return np.tile(mean, cyc)


def to_l1_frame(x: np.ndarray, system: str, line: str, cycles: int = 1) -> np.ndarray:
    """A record on ``line``'s own voltage reference moved to L1's reference (exact on the
    aggregation grid)."""
    return shift_periodic(x, -np.radians(LINE_ANGLES_DEG[system][line]), cycles)


@dataclass
class NodeSum:
    """Summed line currents (L1 frame) and powers of a panel, feeder or the service."""

    x: dict[str, np.ndarray | None]
    p: dict[str, float] = field(default_factory=dict)

    @classmethod
    def empty(cls, lines: Iterable[str]) -> NodeSum:
        ls = tuple(lines)
        return cls({ln: None for ln in ls}, {ln: 0.0 for ln in ls})

    def add(self, line: str, x: np.ndarray, p_w: float) -> None:
        cur = self.x[line]
        self.x[line] = x.copy() if cur is None else cur + x
        self.p[line] += p_w

    def add_node(self, other: NodeSum) -> None:
        for ln, x in other.x.items():
            if x is not None:
                self.add(ln, x, other.p[ln])

    def fill(self, n: int) -> None:
        """Lines that carry nothing as zeros of ``n`` samples."""
        for ln, x in self.x.items():
            if x is None:
                self.x[ln] = np.zeros(n)

    def line(self, ln: str) -> np.ndarray:
        x = self.x[ln]
        if x is None:
            raise InputError(f"internal: line {ln} of a node was never filled")
        return x

    @property
    def neutral(self) -> np.ndarray:
        """The neutral current: the sum of the line currents [A]."""
        xs = [self.line(ln) for ln in self.x]
        out = xs[0].copy()
        for y in xs[1:]:
            out += y
        return out

    def phasors(self, cycles: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
        """Line phasors and the neutral (return) phasors, L1 frame. On a two-wire
        single-phase supply the neutral returns the line current."""
        xs = {ln: period_phasors(self.line(ln), cycles, MAX_ORDER) for ln in self.x}
        return xs, sum(xs.values(), np.zeros(MAX_ORDER + 1, dtype=complex))


@dataclass
class InstallationSums:
    """Every node's sums of one pass: panels, feeders, the service; ``cycles`` is the
    period they span."""

    panels: dict[str, NodeSum]
    feeders: dict[str, NodeSum]
    total: NodeSum
    cycles: int


def sum_installation(inst: Installation,
                     cases: Mapping[str, tuple[np.ndarray, int, float]]) -> InstallationSums:
    """Sum circuit currents into panels, feeders and the service (L1 frame).

    ``cases`` maps circuit id to (current on its own line's reference on the aggregation
    grid [A], the cycles it spans, its power [W]).
    """
    sys_ = inst.supply.system
    lines = inst.supply.lines
    cyc = sum_period(c[1] for c in cases.values())
    panels = {}
    for p in inst.panels:
        node = NodeSum.empty(lines)
        for c in p.circuits:
            x, cycles, p_w = cases[c.id]
            node.add(c.line, to_l1_frame(on_period(x, cycles, cyc), sys_, c.line, cyc), p_w)
        node.fill(GRID_SAMPLES * cyc)
        panels[p.id] = node
    feeders = {f: NodeSum.empty(lines) for f in inst.feeders}
    total = NodeSum.empty(lines)
    for p in inst.panels:
        if p.feeder is not None:
            feeders[p.feeder].add_node(panels[p.id])
        total.add_node(panels[p.id])
    for node in [*feeders.values(), total]:
        node.fill(GRID_SAMPLES * cyc)
    return InstallationSums(panels, feeders, total, cyc)


def triplen_share(m: np.ndarray, max_order: int = MAX_ORDER) -> float:
    """Share of the RMS of orders 1..max_order carried by triplen orders (3, 9, ...) [-]:
    ``sqrt(sum_triplen I_h^2) / sqrt(sum_h I_h^2)``."""
    m = np.abs(np.asarray(m))
    top = min(max_order, m.size - 1)
    h = np.arange(top + 1)
    tot = np.sum(m[1: top + 1] ** 2)
    if tot == 0:
        return 0.0
    trip = np.sum(m[: top + 1][(h % 3 == 0) & (h > 0)] ** 2)
    return float(np.sqrt(trip / tot))


def line_result(x: np.ndarray, cycles: int, v_phasors: np.ndarray, p_w: float) -> LineResult:
    """The figures of one line current ``x`` [A] under its voltage phasors [V] (same frame)."""
    ph = period_phasors(x, cycles, MAX_ORDER)
    m = np.abs(ph)
    i_rms = float(np.sqrt(np.mean(x**2)))
    i1 = float(m[1])
    v1 = v_phasors[1]
    v_rms = float(np.sqrt(np.sum(np.abs(v_phasors[1:]) ** 2)))
    dpf = float(np.cos(np.angle(v1) - np.angle(ph[1]))) if i1 > 0 else None
    pf = p_w / (v_rms * i_rms) if i_rms > 0 else None
    return LineResult(
        i_rms, i1, float(np.max(np.abs(x))), float(thd(m, 40)) if i1 > 0 else 0.0,
        100 * float(m[3] / i_rms) if i_rms > 0 else 0.0, p_w, pf, dpf,
        float(thd(np.abs(v_phasors), 40)), v_rms, m)


def neutral_result(x: np.ndarray, cycles: int, max_line_a: float) -> NeutralResult:
    """The figures of a neutral current ``x`` [A] against the highest line current [A]."""
    m = np.abs(period_phasors(x, cycles, MAX_ORDER))
    rms = float(np.sqrt(np.mean(x**2)))
    return NeutralResult(rms, float(np.max(np.abs(x))),
                         rms / max_line_a if max_line_a > 0 else 0.0, triplen_share(m), m)
