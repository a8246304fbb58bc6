"""The fixture lineup: every fixture type of an installation against IEC 61000-3-2.

For each fixture type (and each dimmer kind it is used behind), the lamp alone is solved on
the installation's nominal voltage behind an ideal phase cut (a reference dimmer: the switch
opens and closes exactly at the setting, so the result is the lamp's own emission, not the
wall dimmer's), over its dimming range. The states evaluated are the maximum-power state and
five settings whose powers lie equidistant between minimum and maximum power (IEC 61000-3-2,
Annex C test conditions for dimmable lighting). Measured fixture types are evaluated on
their record.

The verdict of a fixture type is its state at the rated supply and full output. Its dimmed
states behind an independent phase-cut dimmer are an informative emission assessment
(shown against the full-output limits in amperes, never failing the verdict) unless the
installation asks for strict mode (``[compliance] strict_dimmed = true``); a fixture type
with ``builtin_dimming`` is judged in every state. Below 220 V line-to-neutral the whole
lineup is information only (the standard sets no limits there).

:func:`evaluate_lineup` returns one :class:`LineupEntry` per fixture type and dimmer kind.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from ..spectrum import Spectrum, spectrum
from ..waveform import Waveform
from .model import Installation, MeasuredFixture, ModelledFixture

if TYPE_CHECKING:  # pragma: no cover
    from ..standards import DimmableResult, FixtureResult
    from ..standards.iec61000_3_2 import EquipmentClass

__all__ = ["LineupState", "LineupEntry", "evaluate_lineup", "fixture_states", "limits_in_amps"]


@dataclass(frozen=True)
class LineupState:
    """One compliance test state of a fixture type: the record, its spectrum, the verdict and
    the applicable limit per order [A]."""

    state: str
    conduction_deg: float | None
    waveform: Waveform
    spectrum: Spectrum
    p_w: float
    result: FixtureResult
    limits_a: dict[int, float]

    @property
    def magnitudes_a(self) -> np.ndarray:
        """Harmonic current magnitudes [A rms], index = order."""
        return np.asarray(self.spectrum.i_h_a, dtype=float)

    @property
    def role(self) -> str:
        """``"verdict"``, ``"informative"`` or ``"strict"`` (see FixtureResult.role)."""
        return self.result.role


@dataclass(frozen=True)
class LineupEntry:
    """A fixture type's IEC 61000-3-2 results behind one dimmer kind: the full-output state
    first, then the dimmed states. ``verdict`` is ``"pass"``, ``"fail"`` (a state that counts
    failed) or ``"info"`` (nothing counts: outside the standard's scope)."""

    fixture: str
    description: str
    source: str  # "model bulk-cap" or "capture file.csv"
    dimmer: str
    verdict: str
    rule: str
    states: tuple[LineupState, ...]
    result: FixtureResult | DimmableResult
    notes: tuple[str, ...] = ()

    @property
    def title(self) -> str:
        """Fixture name, with the dimmer kind when it was evaluated behind one."""
        d = self.dimmer
        return self.fixture + (f" behind {d} dimmer" if d and d not in ("none", "as recorded")
                               else "")

    def to_dict(self) -> dict[str, Any]:
        return {"fixture": self.fixture, "description": self.description, "source": self.source,
                "dimmer": self.dimmer, "verdict": self.verdict, "rule": self.rule,
                "states": [{"state": s.state, "conduction_deg": s.conduction_deg,
                            "p_w": s.p_w, "role": s.role, "basis": s.result.basis,
                            "verdict": "info" if s.result.informative else s.result.verdict,
                            "limits_met": s.result.verdict == "pass", "rule": s.result.rule,
                            "limits_a": {str(k): v for k, v in s.limits_a.items()}}
                           for s in self.states],
                "result": self.result.to_dict(), "notes": list(self.notes)}


def limits_in_amps(result: FixtureResult, s: Spectrum) -> dict[int, float]:
    """Per-order upper limits [A] of a FixtureResult's deciding rule (fractions of I1 are
    turned into amperes with the spectrum's fundamental)."""
    rule = result.deciding
    out: dict[int, float] = {}
    if rule is None:
        return out
    for c in rule.checks:
        if c.order is None or c.bound != "max":
            continue
        if c.unit == "A":
            out[c.order] = float(c.limit)
        elif c.unit == "fraction of I1":
            out[c.order] = float(c.limit) * s.i1_a
    return out


def _solve_one(ft: ModelledFixture, v: float, f: float, kind: str, cond: float | None) -> Waveform:
    from ..circuits import DimmerSpec, LoadGroup, Supply, solve_circuit

    if kind == "none" or cond is None or cond >= 180.0:
        dim = DimmerSpec(kind="none")
    elif kind == "leading-edge":
        dim = DimmerSpec(kind="leading-edge", conduction_deg=cond, switch="transistor")
    else:
        dim = DimmerSpec(kind=kind, conduction_deg=cond)
    sol = solve_circuit(Supply(v_rms_v=v, frequency_hz=f), dim,
                        [LoadGroup(model=ft.model, power_w=ft.power_w, count=1,
                                   params=ft.params)])
    return sol.waveform


def fixture_states(ft: ModelledFixture, v: float, f: float, kind: str, grid: int = 19,
                   notes: list[str] | None = None) -> list[tuple[str, float | None, Waveform]]:
    """The maximum-power state and five equidistant-power dimmed states of a modelled
    fixture behind a reference phase cut of ``kind``.

    A setting the circuit model cannot solve is left out (and named in ``notes``); when the
    input power stays within 2 % of its maximum over the whole range (a constant-power
    driver) there is no dimmed state to test, and ``notes`` says so.
    """
    from ..errors import ConvergenceError
    from ..standards import dimmed_test_powers

    notes = [] if notes is None else notes
    full = _solve_one(ft, v, f, "none", None)
    states: list[tuple[str, float | None, Waveform]] = [("full", 180.0, full)]
    if kind == "none":
        return states
    angles = np.linspace(ft.min_conduction_deg, 180.0, grid)[:-1]
    solved, failed = [], []
    for a in angles:
        try:
            solved.append((a, _solve_one(ft, v, f, kind, float(a))))
        except ConvergenceError:
            failed.append(f"{a:.0f}")
    if failed:
        notes.append(f"{ft.id}: no steady state behind the {kind} cut at {', '.join(failed)} "
                     "deg; those settings were left out")
    if not solved:
        return states
    powers = np.array([_power(w) for _, w in solved])
    p_max = _power(full)
    working = powers > 0.02 * p_max
    if not np.any(working):
        notes.append(f"{ft.id}: the lamp draws almost no power at every dimmed setting")
        return states
    p_min = float(powers[working].min())
    if p_max - p_min < 0.02 * p_max:
        notes.append(f"{ft.id}: the input power stays within 2 % of its maximum from "
                     f"{ft.min_conduction_deg:g} to 180 deg (a constant-power driver): no "
                     "dimmed state differs from full output")
        return states
    targets = dimmed_test_powers(p_min, p_max, 5)
    used = set()
    for t in targets:
        k = int(np.argmin(np.where(working, np.abs(powers - t), np.inf)))
        if k in used:
            continue
        used.add(k)
        a, w = solved[k]
        states.append((f"{a:.0f} deg ({_power(w):.1f} W)", float(a), w))
    return states


def evaluate_lineup(inst: Installation, equipment_class: EquipmentClass = "C", *,
                    strict_dimmed: bool | None = None, edition: str | None = None
                    ) -> list[LineupEntry]:
    """IEC 61000-3-2 for every fixture type of an installation, at full output and dimmed.

    Parameters
    ----------
    strict_dimmed
        Hold dimmed states behind independent dimmers to pass/fail; None takes the
        installation's ``[compliance] strict_dimmed`` (default False: informative).
    edition
        ``"5.0"`` or ``"5.1"``; None: the default edition (5.1).
    """
    from ..standards import DEFAULT_EDITION, check_edition, evaluate_dimmable, evaluate_fixture
    from ..standards.iec61000_3_2 import SCOPE_MIN_VOLTAGE_V

    ed = check_edition(DEFAULT_EDITION if edition is None else edition)
    strict = inst.compliance.strict_dimmed if strict_dimmed is None else bool(strict_dimmed)
    sup = inst.supply
    v, f = sup.voltage_ln_v, sup.frequency_hz
    outside = v < SCOPE_MIN_VOLTAGE_V
    kinds: dict[str, list[str]] = {fid: [] for fid in inst.fixtures}
    for c in inst.circuits:
        for g in c.groups:
            if c.dimmer not in kinds[g.fixture]:
                kinds[g.fixture].append(c.dimmer)
    entries = []
    for fid, ft in inst.fixtures.items():
        notes = []
        if outside:
            notes.append(f"IEC 61000-3-2 sets no limits below {SCOPE_MIN_VOLTAGE_V:g} V "
                         f"line-to-neutral (clause 1): evaluated at {v:g} V for information "
                         "only, not a verdict")
        if isinstance(ft, MeasuredFixture):
            w = _capture_waveform(ft)
            if not w.has_voltage:
                notes.append(f"{fid}: the record has no voltage channel; its power factor is "
                             "taken as 1.0 (the most lenient for the 30 x lambda % third-order "
                             "limit) and option b's waveform test cannot be made")
            r = evaluate_fixture(w if w.has_voltage else spectrum(w), None if w.has_voltage
                                 else ft.power_w, None if w.has_voltage else 1.0,
                                 equipment_class, fixture=fid, state="as recorded",
                                 nominal_voltage_v=v, outside_scope=outside, edition=ed)
            s = spectrum(w)
            st = LineupState("as recorded", None, w, s, r.p_w, r, limits_in_amps(r, s))
            entries.append(LineupEntry(fid, ft.description, f"capture {ft.capture}",
                                       "as recorded", "info" if r.informative else r.verdict,
                                       r.rule, (st,), r, tuple(notes)))
            continue
        dimmed = [k for k in kinds[fid] if k != "none"]
        if ft.model == "resistive" and dimmed and not ft.builtin_dimming:
            notes.append(f"{fid}: a filament lamp is resistive; behind a phase-cut dimmer the "
                         "harmonics are the dimmer's, and independent phase-control dimmers are "
                         "Class A equipment (IEC 61000-3-2): evaluated at full output only")
            dimmed = []
        for kind in dimmed or ["none"]:
            states = fixture_states(ft, v, f, kind, notes=notes)
            recs = [(lab, w, None, None) for lab, _, w in states]
            try:
                res = evaluate_dimmable(recs, equipment_class, fixture=fid, nominal_voltage_v=v,
                                        outside_scope=outside, edition=ed, strict=strict,
                                        dimming="builtin" if ft.builtin_dimming
                                        else "independent")
            except InputError as e:
                raise InputError(f"fixtures.{fid}: {e}") from None
            # results[0] is the maximum-power state, the others in the order given
            kmax = max(range(len(states)), key=lambda k: _power(states[k][2]))
            order = [kmax] + [k for k in range(len(states)) if k != kmax]
            lst = []
            for r, k in zip(res.results, order, strict=True):
                lab, a, w = states[k]
                s = spectrum(w)
                lst.append(LineupState(lab, a, w, s, _power(w), r, limits_in_amps(r, s)))
            top = res.results[0]
            entries.append(LineupEntry(fid, ft.description, f"model {ft.model}", kind,
                                       "info" if res.informative else res.verdict, top.rule,
                                       tuple(lst), res, tuple(notes) + tuple(res.notes)))
    return entries


def _power(w: Waveform) -> float:
    """Active power of a solved record [W] (a solve always carries its voltage)."""
    if w.p_w is None:
        raise InputError(f"{w.label or 'record'}: no voltage, so no power")
    return float(w.p_w)


def _capture_waveform(ft: MeasuredFixture) -> Waveform:
    from ..io.capture import load_capture, record_to_waveform

    return record_to_waveform(load_capture(ft.capture, ft.capture_options))
