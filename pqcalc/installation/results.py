"""The results of an installation study and their JSON form.

Frozen dataclasses, innermost first: a circuit, a line and the neutral of a node (a panel, a
feeder or the service), a scenario, the whole assessment. Values inside are SI and
fractions; :meth:`to_dict` gives the JSON form, where ratios are percent (keys ending
``_pct``) as at every edge of pqcalc.

Words: a *line* is L1, L2 or L3; a *conductor* is a line or N; a *setting* is a dimmer
setting; a *scenario* is a named set of settings across the installation.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

from ..standards.results import CAUTION, Check, Status
from .model import Installation

__all__ = ["CAUTION", "Status", "Check", "Verdict", "CircuitResult", "LineResult", "NeutralResult",
           "NodeResult", "ScenarioResult", "Assessment"]


#: The basis of a scenario whose supply interaction was asked for and did not settle.
UNSETTLED = "ideal supply, interaction unsettled"

#: The verdict of a scenario or a study.
Verdict = Literal["pass", "fail", "not assessed"]


def _verdict(checks: list[Check], unsolved: bool) -> Verdict:
    if any(c.status == "fail" and c.details.get("flag") != "no-solution" for c in checks):
        return "fail"
    return "not assessed" if unsolved else "pass"


@dataclass(frozen=True)
class CircuitResult:
    """One branch circuit at one scenario: currents [A], THD [-], power [W], checks."""

    id: str
    panel: str
    line: str
    setting_deg: float | None
    knob: float | None
    i_rms_a: float
    i1_a: float
    i_peak_a: float
    thd_i: float
    p_w: float
    pf: float | None
    dpf: float | None
    inrush_peak_a: float
    flags: tuple[str, ...]
    checks: tuple[Check, ...]
    max_fixtures: dict[str, dict[str, Any]]
    notes: tuple[str, ...] = ()
    #: RMS magnitude per order 0..50 of the circuit current [A] (for the exports).
    magnitudes_a: np.ndarray | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id, "panel": self.panel, "line": self.line,
            "setting_deg": self.setting_deg, "knob": self.knob,
            "i_rms_a": self.i_rms_a, "i1_rms_a": self.i1_a, "i_peak_a": self.i_peak_a,
            "thd_i_pct": 100 * self.thd_i, "p_w": self.p_w, "pf": self.pf, "dpf": self.dpf,
            "inrush_peak_a": (self.inrush_peak_a if np.isfinite(self.inrush_peak_a) else None),
            "flags": list(self.flags),
            "checks": [c.to_dict() for c in self.checks],
            "max_fixtures_per_breaker": self.max_fixtures, "notes": list(self.notes),
        }


@dataclass(frozen=True)
class LineResult:
    """One line of a node: current [A], THD [-], third-harmonic share [% of rms], power [W],
    power factors [-], the line-to-neutral voltage [V] and its THD [-]."""

    i_rms_a: float
    i1_a: float
    i_peak_a: float
    thd_i: float
    i3_pct_of_rms: float
    p_w: float
    pf: float | None
    dpf: float | None
    thd_v: float
    v_rms_v: float
    magnitudes_a: np.ndarray

    def to_dict(self) -> dict[str, Any]:
        return {"i_rms_a": self.i_rms_a, "i1_rms_a": self.i1_a, "i_peak_a": self.i_peak_a,
                "thd_i_pct": 100 * self.thd_i, "i3_pct_of_rms": self.i3_pct_of_rms,
                "p_w": self.p_w, "pf": self.pf, "dpf": self.dpf, "v_rms_v": self.v_rms_v,
                "thd_v_pct": 100 * self.thd_v}


@dataclass(frozen=True)
class NeutralResult:
    """The neutral of a node: current [A], its ratio to the highest line current [-] and
    the share of triplen orders in it [-]."""

    i_rms_a: float
    i_peak_a: float
    ratio_to_max_line: float
    triplen_share: float
    magnitudes_a: np.ndarray

    def to_dict(self) -> dict[str, Any]:
        return {"i_rms_a": self.i_rms_a, "i_peak_a": self.i_peak_a,
                "ratio_to_max_line": self.ratio_to_max_line,
                "triplen_share_pct": 100 * self.triplen_share,
                "spectrum_a": [float(x) for x in self.magnitudes_a[:41]]}


@dataclass(frozen=True)
class NodeResult:
    """A panel, a feeder or the service: its lines, its neutral, K-factor, F_HL, checks."""

    id: str
    kind: str  # "panel", "feeder" or "transformer"
    lines: dict[str, LineResult]
    neutral: NeutralResult | None
    checks: tuple[Check, ...] = ()
    k_factor: float = 1.0
    harmonic_loss_factor: float = 1.0
    #: circuits whose current could not be solved and is missing from these totals
    left_out: tuple[str, ...] = ()

    @property
    def max_line_a(self) -> float:
        return max(r.i_rms_a for r in self.lines.values())

    @property
    def complete(self) -> bool:
        return not self.left_out

    def to_dict(self) -> dict[str, Any]:
        return {"id": self.id, "kind": self.kind, "complete": self.complete,
                "left_out": list(self.left_out),
                "lines": {k: v.to_dict() for k, v in self.lines.items()},
                "neutral": None if self.neutral is None else self.neutral.to_dict(),
                "k_factor": self.k_factor, "harmonic_loss_factor": self.harmonic_loss_factor,
                "checks": [c.to_dict() for c in self.checks]}


@dataclass(frozen=True)
class ScenarioResult:
    """Every circuit and node of one scenario, on the interacting supply when it was
    solved (``ideal`` then holds the stiff-supply result)."""

    name: str
    circuits: tuple[CircuitResult, ...]
    panels: tuple[NodeResult, ...]
    feeders: tuple[NodeResult, ...]
    transformer: NodeResult
    interaction_iterations: int
    ideal: ScenarioResult | None = None
    checks: tuple[Check, ...] = ()
    #: what the figures stand on: ``"interacting supply"``, ``"ideal supply"`` (no
    #: interaction asked for, or no source impedance) or ``"ideal supply, interaction
    #: unsettled"`` (asked for, but the iteration diverged: the verdict is the
    #: ideal-supply figures', and says so)
    basis: str = "ideal supply"

    @property
    def basis_note(self) -> str:
        """A few words for a verdict line when the figures are not what was asked for."""
        return (" on the ideal-supply figures (the supply interaction did not settle)"
                if self.basis == UNSETTLED else "")

    @property
    def unsolved(self) -> tuple[str, ...]:
        """Circuits without a solution in this scenario (missing from every total)."""
        return tuple(c.id for c in self.circuits if "no-solution" in c.flags)

    @property
    def verdict(self) -> Verdict:
        """``fail`` when a check fails for a reason other than a missing solution;
        else ``not assessed`` when a circuit could not be solved; else ``pass``."""
        return _verdict(list(self.all_checks()), bool(self.unsolved))

    def all_checks(self) -> Iterator[Check]:
        for c in self.circuits:
            yield from c.checks
        for p in self.panels + self.feeders + (self.transformer,):
            yield from p.checks
        yield from self.checks

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {
            "name": self.name, "circuits": [c.to_dict() for c in self.circuits],
            "panels": [p.to_dict() for p in self.panels],
            "feeders": [p.to_dict() for p in self.feeders],
            "transformer": self.transformer.to_dict(),
            "supply_interaction_iterations": self.interaction_iterations,
            "basis": self.basis,
            "checks": [c.to_dict() for c in self.checks]}
        if self.ideal is not None:
            d["ideal_supply"] = {"panels": [p.to_dict() for p in self.ideal.panels],
                                 "transformer": self.ideal.transformer.to_dict()}
        return d


@dataclass(frozen=True)
class Assessment:
    """The study of one installation: every scenario, the design scenario (the one with
    the highest panel currents), diversity, the number of distinct solves."""

    installation: Installation
    scenarios: tuple[ScenarioResult, ...]
    design_index: int
    diversity: Any = None  # a diversity result of pqcalc.installation.diversity, or None
    solves: int = 0
    caution: str = field(default=CAUTION)

    @property
    def design(self) -> ScenarioResult:
        return self.scenarios[self.design_index]

    @property
    def failed(self) -> bool:
        return self.verdict == "fail"

    @property
    def verdict(self) -> Verdict:
        """Over every scenario: ``fail``, ``not assessed`` (a circuit could not be solved
        and nothing else failed: never a pass), or ``pass``."""
        return _verdict([c for s in self.scenarios for c in s.all_checks()],
                        any(s.unsolved for s in self.scenarios))

    @property
    def connected_load_w(self) -> float:
        """The rated connected load: every fixture at its declared power [W]."""
        inst = self.installation
        return float(sum(g.count * inst.fixtures[g.fixture].power_w
                         for c in inst.circuits for g in c.groups))

    def to_dict(self) -> dict[str, Any]:
        inst = self.installation
        d = self.design.to_dict()
        sup = inst.supply
        return {
            "project": inst.project.to_dict(),
            "installation": inst.path,
            "supply": {"system": sup.system, "voltage_ln_v": sup.voltage_ln_v,
                       "frequency_hz": sup.frequency_hz,
                       "source_r_ohm": sup.impedance.r_ohm,
                       "source_l_h": sup.impedance.l_h,
                       "short_circuit_a": (sup.short_circuit_a
                                           if np.isfinite(sup.short_circuit_a) else None)},
            "lamps": inst.n_lamps, "distinct_solves": self.solves,
            "design_scenario": self.design.name,
            "circuits": d["circuits"], "panels": d["panels"], "feeders": d["feeders"],
            "transformer": d["transformer"],
            "scenarios": [s.to_dict() for s in self.scenarios],
            "diversity": None if self.diversity is None else self.diversity.to_dict(),
            "connected_load_w": self.connected_load_w,
            "verdict": self.verdict,
            "scenario_verdicts": {s.name: s.verdict for s in self.scenarios},
            "caution": self.caution,
        }
