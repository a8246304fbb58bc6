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

**Temporal light artefacts.** Each modelled state also carries its light figures
(:class:`StateLight`): SVM (IEC TR 63158), Pst_LM (IEC TR 61547-1) and the displacement factor
(cos phi1 of the input current). Where the project applies the EU ecodesign rules for light
sources (``[compliance] eu_ecodesign``, default on for a 230/400 V 50 Hz supply: see
:func:`eu_ecodesign_default`), the full-output state is judged against Regulation (EU)
2019/2020 as amended by 2021/341 (pass/fail) and the dimmed states are compared with the same
limits for information (the rules apply at full load only). Circuits that declare a firing
spread (``dimmer_jitter_deg``) add, per dimmed state, the Pst_LM with that jitter
(:func:`pqcalc.light.dimmer_jitter_pst_lm`, informative).
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from ..light.immunity import JitterResult
from ..light.limits import EcodesignResult, eu_ecodesign_check
from ..light.metrics import LightMetrics, light_metrics
from ..spectrum import Spectrum, spectrum
from ..waveform import Waveform
from .model import Installation, MeasuredFixture, ModelledFixture

if TYPE_CHECKING:  # pragma: no cover
    from ..standards import DimmableResult, FixtureResult
    from ..standards.iec61000_3_2 import EquipmentClass

__all__ = ["LineupState", "LineupEntry", "StateLight", "evaluate_lineup", "fixture_states",
           "limits_in_amps", "state_light", "eu_ecodesign_default", "eu_ecodesign_applies",
           "eu_ecodesign_in_scope", "EU_NOT_LED_NOTE"]

#: mean light [-, 1 = full output] at or below which a lamp counts as dark (no light figures):
#: the solver's off-state leakage, as pqcalc.circuits.curve.NUMERIC_DARK
DARK_LIGHT = 1e-6


def eu_ecodesign_default(voltage_ln_v: float, frequency_hz: float) -> bool:
    """Whether the EU ecodesign rules for light sources apply by default to a supply: yes for
    the EU's 230/400 V 50 Hz mains (IEC 60038 nominal voltage; the same supplies as the IEC
    rule set's default, ``standards_limits/region_iec.toml``: within 2 %), no otherwise
    (a 120 V 60 Hz project: off).

    >>> eu_ecodesign_default(230.0, 50.0), eu_ecodesign_default(120.0, 60.0)
    (True, False)
    """
    from ..standards.regions import rule_set

    return bool(rule_set("IEC").supply_default.matches(float(voltage_ln_v), float(frequency_hz)))


#: the EU rows on flicker, stroboscopic effect and displacement factor are for LED and OLED
#: mains light sources: a filament lamp (model "resistive") is not judged by them
EU_NOT_LED_NOTE = ("the EU ecodesign rows on Pst_LM, SVM and the displacement factor are for "
                   "LED and OLED mains light sources; a filament lamp is not judged by them")


def eu_ecodesign_in_scope(model: str | None) -> bool:
    """Whether a lamp model falls under the EU rows (every LED driver model; not the
    filament, ``"resistive"``)."""
    return model != "resistive"


def eu_ecodesign_applies(inst: Installation) -> bool:
    """The installation's ``[compliance] eu_ecodesign``, or the default of its supply."""
    flag = getattr(inst.compliance, "eu_ecodesign", None)
    if flag is not None:
        return bool(flag)
    return eu_ecodesign_default(inst.supply.voltage_ln_v, inst.supply.frequency_hz)


@dataclass(frozen=True)
class StateLight:
    """The temporal light artefact figures of one lamp state.

    Attributes
    ----------
    metrics
        SVM, Pst_LM and the flicker figures of one lamp's light (:class:`LightMetrics`);
        ``metrics.svm`` and ``metrics.pst_lm`` are None when the lamp is dark.
    displacement_factor
        ``cos(phi1)`` of the input current against the supply voltage [-] (IEEE Std 1459
        fundamental power factor; the EU rules' displacement factor).
    power_w
        On-mode input power of one lamp [W] (it selects the displacement-factor row).
    full_load
        True for the full-output state (the EU verdict counts), False for a dimmed one.
    ecodesign
        The EU ecodesign verdicts (None when the project does not apply the EU rules).
    jitter
        Pst_LM with a random firing-angle spread (None without a declared spread).
    """

    metrics: LightMetrics
    displacement_factor: float | None
    power_w: float
    full_load: bool
    ecodesign: EcodesignResult | None = None
    jitter: JitterResult | None = None

    @property
    def svm(self) -> float | None:
        return self.metrics.svm

    @property
    def pst_lm(self) -> float | None:
        return self.metrics.pst_lm

    def to_dict(self) -> dict[str, Any]:
        m = self.metrics
        return {
            "svm": m.svm,
            "pst_lm": m.pst_lm,
            "displacement_factor": self.displacement_factor,
            "power_w": self.power_w,
            "full_load": self.full_load,
            "mean_light_pct": 100.0 * m.mean_light,
            "percent_flicker_pct": (None if m.percent_flicker is None
                                    else 100.0 * m.percent_flicker),
            "modulation_frequency_hz": m.modulation_frequency_hz,
            "ecodesign": None if self.ecodesign is None else self.ecodesign.to_dict(),
            "jitter": None if self.jitter is None else {
                "jitter_deg": self.jitter.jitter_deg, "pst_lm": self.jitter.pst_lm,
                "pst_lm_steady": self.jitter.pst_lm_steady, "seed": self.jitter.seed,
                "notes": list(self.jitter.notes)},
        }


def state_light(light: np.ndarray, period_s: float, spectrum_: Spectrum, power_w: float, *,
                full_load: bool, eu_ecodesign: bool,
                on_date: _dt.date | str | None = None, strobe_exempt: bool = False,
                jitter: JitterResult | None = None) -> StateLight:
    """SVM, Pst_LM, displacement factor and (where the EU rules apply) their verdicts of one
    lamp state.

    Parameters
    ----------
    light
        One lamp's light over ``period_s`` (:attr:`pqcalc.circuits.GroupResult.light`).
    period_s
        The duration the light covers [s].
    spectrum_
        The state's input-current spectrum with its voltage (for cos phi1).
    power_w
        On-mode input power of one lamp [W].
    full_load
        The full-output state: the EU verdict counts; False: informative.
    eu_ecodesign
        Judge against Regulation (EU) 2019/2020 (as amended by 2021/341).
    on_date
        Date the rules are taken at (default today): the SVM limit changed on 1 September
        2024.
    """
    from ..metrics import displacement_power_factor

    m = light_metrics(light, period_s, dark_below=DARK_LIGHT)
    df = None
    if spectrum_.voltage_v is not None and spectrum_.i1_a > 0:
        df = float(min(max(displacement_power_factor(spectrum_), 0.0), 1.0))
    eco = None
    if eu_ecodesign:
        eco = eu_ecodesign_check(svm=m.svm, pst_lm=m.pst_lm, power_w=power_w,
                                 displacement_factor=df, on_date=on_date,
                                 full_load=full_load, strobe_exempt=strobe_exempt)
    return StateLight(m, df, float(power_w), bool(full_load), eco, jitter)


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
    #: SVM, Pst_LM, displacement factor and EU verdicts (None for a measured record)
    light: StateLight | None = None

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
    failed) or ``"info"`` (nothing counts: outside the standard's scope).

    ``ecodesign`` is the EU ecodesign verdict at full output (Regulation (EU) 2019/2020:
    ``"pass"``, ``"fail"`` or ``"not evaluated"``; None where the project does not apply the
    EU rules or the fixture is a measured record without light); ``eu_ecodesign`` says
    whether the project applies them."""

    fixture: str
    description: str
    source: str  # "model bulk-cap" or "capture file.csv"
    dimmer: str
    verdict: str
    rule: str
    states: tuple[LineupState, ...]
    result: FixtureResult | DimmableResult
    notes: tuple[str, ...] = ()
    ecodesign: str | None = None
    eu_ecodesign: bool = False

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
                            "limits_a": {str(k): v for k, v in s.limits_a.items()},
                            "light": None if s.light is None else s.light.to_dict()}
                           for s in self.states],
                "eu_ecodesign": self.eu_ecodesign, "ecodesign": self.ecodesign,
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


#: a solved state: (waveform, one lamp's light, the period the light covers [s])
_Solved = tuple[Waveform, np.ndarray, float]


def _reference_dimmer(kind: str, cond: float | None) -> Any:
    """The ideal phase cut of ``kind`` at ``cond`` [deg] (no dimmer at full conduction)."""
    from ..circuits import DimmerSpec

    if kind == "none" or cond is None or cond >= 180.0:
        return DimmerSpec(kind="none")
    if kind == "leading-edge":
        return DimmerSpec(kind="leading-edge", conduction_deg=cond, switch="transistor")
    return DimmerSpec(kind=kind, conduction_deg=cond)


def _solve(ft: ModelledFixture, v: float, f: float, kind: str, cond: float | None) -> _Solved:
    from ..circuits import LoadGroup, Supply, solve_circuit

    sol = solve_circuit(Supply(v_rms_v=v, frequency_hz=f), _reference_dimmer(kind, cond),
                        [LoadGroup(model=ft.model, power_w=ft.power_w, count=1,
                                   params=ft.params)])
    return sol.waveform, np.asarray(sol.groups[0].light, dtype=float), sol.period_cycles / f


def fixture_states(ft: ModelledFixture, v: float, f: float, kind: str, grid: int = 19,
                   notes: list[str] | None = None) -> list[tuple[str, float | None, Waveform]]:
    """The maximum-power state and five equidistant-power dimmed states of a modelled
    fixture behind a reference phase cut of ``kind``.

    A setting the circuit model cannot solve is left out (and named in ``notes``); when the
    input power stays within 2 % of its maximum over the whole range (a constant-power
    driver) there is no dimmed state to test, and ``notes`` says so.
    """
    return [(lab, a, sv[0]) for lab, a, sv in _fixture_states(ft, v, f, kind, grid, notes)]


def _fixture_states(ft: ModelledFixture, v: float, f: float, kind: str, grid: int = 19,
                    notes: list[str] | None = None
                    ) -> list[tuple[str, float | None, _Solved]]:
    """:func:`fixture_states` with each state's light and its period."""
    from ..errors import ConvergenceError
    from ..standards import dimmed_test_powers

    notes = [] if notes is None else notes
    full = _solve(ft, v, f, "none", None)
    states: list[tuple[str, float | None, _Solved]] = [("full", 180.0, full)]
    if kind == "none":
        return states
    angles = np.linspace(ft.min_conduction_deg, 180.0, grid)[:-1]
    solved, failed = [], []
    for a in angles:
        try:
            solved.append((a, _solve(ft, v, f, kind, float(a))))
        except ConvergenceError:
            failed.append(f"{a:.0f}")
    if failed:
        notes.append(f"{ft.id}: no steady state behind the {kind} cut at {', '.join(failed)} "
                     "deg; those settings were left out")
    if not solved:
        return states
    powers = np.array([_power(sv[0]) for _, sv in solved])
    p_max = _power(full[0])
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
        a, sv = solved[k]
        states.append((f"{a:.0f} deg ({_power(sv[0]):.1f} W)", float(a), sv))
    return states


def evaluate_lineup(inst: Installation, equipment_class: EquipmentClass = "C", *,
                    strict_dimmed: bool | None = None, edition: str | None = None,
                    eu_ecodesign: bool | None = None, on_date: _dt.date | str | None = None
                    ) -> list[LineupEntry]:
    """IEC 61000-3-2 for every fixture type of an installation, at full output and dimmed,
    with each modelled state's light figures and (where applied) the EU ecodesign verdicts.

    Parameters
    ----------
    strict_dimmed
        Hold dimmed states behind independent dimmers to pass/fail; None takes the
        installation's ``[compliance] strict_dimmed`` (default False: informative).
    edition
        ``"5.0"`` or ``"5.1"``; None: the default edition (5.1).
    eu_ecodesign
        Judge the full-output state against Regulation (EU) 2019/2020 (as amended by
        2021/341); None takes ``[compliance] eu_ecodesign`` (default: on for a 230/400 V
        50 Hz supply, :func:`eu_ecodesign_applies`).
    on_date
        Date the EU rules are taken at (``datetime.date`` or ``"YYYY-MM-DD"``); None takes
        ``[compliance] on_date``, else the project's date when it is one, else today.
    """
    from ..standards import DEFAULT_EDITION, check_edition, evaluate_dimmable, evaluate_fixture
    from ..standards.iec61000_3_2 import SCOPE_MIN_VOLTAGE_V, full_output_index

    ed = check_edition(DEFAULT_EDITION if edition is None else edition)
    strict = inst.compliance.strict_dimmed if strict_dimmed is None else bool(strict_dimmed)
    eu = eu_ecodesign_applies(inst) if eu_ecodesign is None else bool(eu_ecodesign)
    if on_date is None:
        on_date = inst.compliance.on_date
    if on_date is None:
        try:
            on_date = _dt.date.fromisoformat(inst.project.date.strip()[:10])
        except ValueError:
            on_date = None
    day = _on_date(on_date)
    sup = inst.supply
    v, f = sup.voltage_ln_v, sup.frequency_hz
    outside = v < SCOPE_MIN_VOLTAGE_V
    kinds: dict[str, list[str]] = {fid: [] for fid in inst.fixtures}
    #: the largest firing spread [deg] declared on the circuits of each fixture and dimmer kind
    spread: dict[tuple[str, str], float] = {}
    for c in inst.circuits:
        sd = float(getattr(c, "dimmer_jitter_deg", 0.0) or 0.0)
        for g in c.groups:
            if c.dimmer not in kinds[g.fixture]:
                kinds[g.fixture].append(c.dimmer)
            if sd > 0 and c.dimmer != "none":
                key = (g.fixture, c.dimmer)
                spread[key] = max(spread.get(key, 0.0), sd)
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
            if eu:
                notes.append(f"{fid}: a current record carries no light; the EU ecodesign "
                             "rules (SVM, Pst_LM) are not evaluated")
            entries.append(LineupEntry(fid, ft.description, f"capture {ft.capture}",
                                       "as recorded", "info" if r.informative else r.verdict,
                                       r.rule, (st,), r, tuple(notes), None, eu))
            continue
        dimmed = [k for k in kinds[fid] if k != "none"]
        eu_ft = eu and eu_ecodesign_in_scope(ft.model)
        if eu and not eu_ft:
            notes.append(f"{fid}: {EU_NOT_LED_NOTE}")
        if ft.model == "resistive" and dimmed and not ft.builtin_dimming:
            notes.append(f"{fid}: a filament lamp is resistive; behind a phase-cut dimmer the "
                         "harmonics are the dimmer's, and independent phase-control dimmers are "
                         "Class A equipment (IEC 61000-3-2): evaluated at full output only")
            dimmed = []
        for kind in dimmed or ["none"]:
            states = _fixture_states(ft, v, f, kind, notes=notes)
            recs = [(lab, sv[0], None, None) for lab, _, sv in states]
            try:
                res = evaluate_dimmable(recs, equipment_class, fixture=fid, nominal_voltage_v=v,
                                        outside_scope=outside, edition=ed, strict=strict,
                                        dimming="builtin" if ft.builtin_dimming
                                        else "independent")
            except InputError as e:
                raise InputError(f"fixtures.{fid}: {e}") from None
            # results[0] is the maximum-power state, the others in the order given
            kmax = full_output_index([_power(st[2][0]) for st in states])
            order = [kmax] + [k for k in range(len(states)) if k != kmax]
            lst = []
            sd = spread.get((fid, kind), 0.0)
            for r, k in zip(res.results, order, strict=True):
                lab, a, (w, light, period_s) = states[k]
                s = spectrum(w)
                full = lab == "full"
                jit = None
                if sd > 0 and not full and a is not None:
                    jit = _jitter(ft, v, f, kind, a, sd, fid, notes)
                sl = state_light(light, period_s, s, _power(w), full_load=full,
                                 eu_ecodesign=eu_ft, on_date=day, jitter=jit)
                lst.append(LineupState(lab, a, w, s, _power(w), r, limits_in_amps(r, s), sl))
            top = res.results[0]
            eco = _entry_ecodesign(lst) if eu_ft else None
            entries.append(LineupEntry(fid, ft.description, f"model {ft.model}", kind,
                                       "info" if res.informative else res.verdict, top.rule,
                                       tuple(lst), res, tuple(notes) + tuple(res.notes),
                                       eco, eu))
    return entries


def _on_date(on_date: _dt.date | str | None) -> _dt.date:
    if on_date is None:
        return _dt.date.today()
    if isinstance(on_date, _dt.date):
        return on_date
    try:
        return _dt.date.fromisoformat(str(on_date))
    except ValueError:
        raise InputError(f"on_date: expected a date YYYY-MM-DD, got {on_date!r}") from None


def _entry_ecodesign(states: list[LineupState]) -> str | None:
    """The EU verdict of the full-output state (the rules apply at full load only)."""
    for st in states:
        if st.light is not None and st.light.full_load and st.light.ecodesign is not None:
            return st.light.ecodesign.verdict
    return None


def _jitter(ft: ModelledFixture, v: float, f: float, kind: str, cond: float, sd: float,
            fid: str, notes: list[str]) -> JitterResult | None:
    """Pst_LM of a dimmed state with a random firing spread ``sd`` [deg] (informative)."""
    from ..circuits import LoadGroup, Supply
    from ..light.immunity import dimmer_jitter_pst_lm

    try:
        return dimmer_jitter_pst_lm(Supply(v_rms_v=v, frequency_hz=f),
                                    _reference_dimmer(kind, cond),
                                    [LoadGroup(model=ft.model, power_w=ft.power_w, count=1,
                                               params=ft.params)], sd)
    except InputError as e:  # e.g. the lamp goes dark across the spread
        notes.append(f"{fid}: firing jitter {sd:g} deg at {cond:.0f} deg not evaluated: {e}")
        return None


def _power(w: Waveform) -> float:
    """Active power of a solved record [W] (a solve always carries its voltage)."""
    if w.p_w is None:
        raise InputError(f"{w.label or 'record'}: no voltage, so no power")
    return float(w.p_w)


def _capture_waveform(ft: MeasuredFixture) -> Waveform:
    from ..io.capture import load_capture, record_to_waveform

    return record_to_waveform(load_capture(ft.capture, ft.capture_options))
