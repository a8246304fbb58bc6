"""IEC 61000-3-2 harmonic-current emission limits: which rule applies, and the verdict.

Rules (limit values in ``standards_limits/``, read by :func:`~.limits.load_limits`):

- Class A and B: absolute limits [A] per order (Table 1; Class B is 1.5 times Class A).
- Class C, active input power above 25 W: percent of the fundamental (Table 2), the third
  order at 30 * lambda percent, lambda being the circuit power factor.
- Class C, 5 W to 25 W: pass any one of (a) the Class D per-watt limits (Table 3,
  column 2); (b) h3 <= 86 %, h5 <= 61 % and the waveform test
  (:func:`waveform_test`); (c) THD <= 70 % with limits for orders 2 to 11.
- Class C below 5 W: no limits.
- Class D: per-watt limits capped by absolute ones (Table 3).
- Dimmable lighting (:func:`evaluate_dimmable`): the formal verdict is at the rated supply
  and full output. Dimmed states behind an *independent* phase-cut dimmer are an
  informative emission assessment (the standard type-tests the lamp; independent
  phase-control dimmers are Class A equipment and not lighting equipment, 5.1 and 5.2):
  they are shown against the full-output limits as absolute currents [A] and never fail
  the verdict, unless ``strict=True`` asks for it. Equipment with *built-in* dimming is
  measured at maximum load and in five equidistant steps between minimum and maximum power
  (Annex C, test conditions for lighting equipment), each state held to the absolute
  currents allowed at maximum power. **That dimmed-state limit rests on memory.**

Scope (clause 1 and 5.1): supplies of 220 V line-to-neutral and above (below, "the limits
have not yet been considered"): :func:`evaluate_fixture` then gives no verdict, and on
request (``outside_scope=True``) an informative evaluation; Class D covers equipment of a
specified power up to and including 600 W.

Editions are data: ``edition="5.0"`` (2018) or ``"5.1"`` (2018 + AMD1:2020, the default);
they differ in the third order of Table 2 (30 * lambda % in 5.0, 27 % in 5.1; the 5.1
value read in a test laboratory's public summary of AMD1, certainty "secondary").

Harmonic currents below 0.6 % of the input current or below 5 mA, whichever is greater,
are disregarded (recalled from memory; ``disregard_small=False`` turns this off).

References
----------
IEC 61000-3-2:2018 (ed. 5.0) and its consolidated edition 5.1 (+ AMD1:2020): clause 1
(scope), 5.1 and 5.2 (classes, lighting equipment), clause 7 and Tables 1 to 3, Annex C.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from ..errors import InputError
from ..metrics import power_factor, thd
from ..spectrum import Spectrum, spectrum
from ..waveform import Waveform
from .limits import (
    OrderLimit,
    OrderTable,
    SmallLightingLimits,
    WaveformTestLimits,
    known_keys,
    load_limits,
)
from .results import CAUTION, Check, FixtureResult, Role, RuleResult

__all__ = [
    "EquipmentClass",
    "EQUIPMENT_CLASSES",
    "SCOPE_MIN_VOLTAGE_V",
    "CLASS_D_MAX_W",
    "NO_LIMITS_BELOW_W",
    "DIMMED_RULE_NOTE",
    "INDEPENDENT_DIMMER_NOTE",
    "Dimming",
    "DIMMING_KINDS",
    "DEFAULT_EDITION",
    "editions",
    "check_edition",
    "WaveformTestResult",
    "DimmableResult",
    "disregard_level_a",
    "waveform_test",
    "evaluate_class_a",
    "evaluate_class_b",
    "evaluate_class_c",
    "evaluate_class_d",
    "evaluate_option_a",
    "evaluate_option_b",
    "evaluate_option_c",
    "evaluate_fixture",
    "evaluate_dimmable",
    "dimmed_test_powers",
]

EquipmentClass = Literal["A", "B", "C", "D"]
#: The equipment classes, declared once for the library, the files and the CLI.
EQUIPMENT_CLASSES: tuple[str, ...] = get_args(EquipmentClass)

#: Lowest line-to-neutral supply voltage in the scope of IEC 61000-3-2 [V].
SCOPE_MIN_VOLTAGE_V = 220.0
#: Lighting equipment below this active input power has no limits [W].
NO_LIMITS_BELOW_W = 5.0
#: Upper end of the small-lighting alternatives (a, b, c) [W].
SMALL_LIGHTING_MAX_W = 25.0
#: Rated input current above which IEC 61000-3-2 no longer applies [A per phase].
SCOPE_MAX_CURRENT_A = 16.0
#: Class D covers equipment with a specified power up to and including this [W] (5.1, as
#: worded by AMD1:2020; seen in a public copy of the amendment's text).
CLASS_D_MAX_W = 600.0

#: How a fixture type is dimmed: behind an independent (wall) dimmer, or by dimming built
#: into the equipment itself.
Dimming = Literal["independent", "builtin"]
DIMMING_KINDS: tuple[str, ...] = get_args(Dimming)

#: The edition used when none is named: the consolidated edition 5.1 (2018 + AMD1:2020).
DEFAULT_EDITION = "5.1"

DIMMED_RULE_NOTE = (
    "dimmed states: held to the absolute harmonic currents [A] allowed at maximum power; "
    "this limit rests on memory and should be confirmed against the standard"
)
INDEPENDENT_DIMMER_NOTE = (
    "dimmed states behind an independent phase-cut dimmer are an informative emission "
    "assessment against the full-output limits [A], not part of the verdict: IEC 61000-3-2 "
    "type-tests the lamp at its rated supply, and independent phase-control dimmers are "
    "Class A equipment, not lighting equipment (5.1, 5.2)"
)
_DISREGARD_NOTE = (
    "harmonics below 0.6 % of the input current or 5 mA (whichever is greater) are "
    "disregarded; this rule rests on memory"
)

Record = Spectrum | Waveform


# ---------------------------------------------------------------------------- helpers
def _check_power(p_w: float, name: str = "p_w") -> float:
    if p_w is None or not math.isfinite(p_w):
        raise InputError(f"{name}: expected the active input power [W], got {p_w}")
    if p_w < 0:
        raise InputError(
            f"{name}: expected an active input power >= 0 W, got {p_w:g} W (a negative power "
            "usually means the current or voltage channel is reversed)"
        )
    return float(p_w)


def _check_pf(pf: float) -> float:
    if pf is None or not math.isfinite(pf) or not 0 < pf <= 1 + 1e-6:
        raise InputError(f"pf: expected a power factor in (0, 1], got {pf}")
    return min(float(pf), 1.0)


def _check_fundamental(s: Spectrum) -> None:
    if s.max_order < 1 or not s.i1_a > 0:
        raise InputError(
            f"{s.label + ': ' if s.label else ''}the spectrum has no fundamental current "
            "(order 1 is zero); expected a record of a load drawing current"
        )


def _as_spectrum(record: Record) -> tuple[Spectrum, Waveform | None]:
    if isinstance(record, Waveform):
        return spectrum(record), record
    if isinstance(record, Spectrum):
        return record, None
    raise InputError(f"expected a Spectrum or a Waveform, got {type(record).__name__}")


def disregard_level_a(s: Spectrum) -> float:
    """Level below which a harmonic current is disregarded [A]: max(0.6 % of I_rms, 5 mA).

    References
    ----------
    IEC 61000-3-2:2018, clause 7 (recalled from memory).
    """
    return max(0.006 * s.i_rms_a, 0.005)


def _order_checks(
    s: Spectrum,
    limits: Sequence[tuple[int, float]],
    unit: str,
    disregard_small: bool,
) -> tuple[tuple[Check, ...], tuple[str, ...]]:
    """Per-order checks; ``limits`` are (order, limit in ``unit``) with unit "A" or
    "fraction of I1"."""
    level = disregard_level_a(s) if disregard_small else 0.0
    checks, missing = [], []
    for h, lim in limits:
        if h > s.max_order:
            missing.append(h)
            continue
        i_h = float(abs(s.current_a[h]))
        value = i_h if unit == "A" else i_h / s.i1_a
        checks.append(Check.against(f"I{h}", h, value, float(lim), unit, "max", i_h < level))
    notes: tuple[str, ...] = ()
    if missing:
        notes = (f"orders {min(missing)} to {max(missing)} are above the spectrum's highest "
                 f"order ({s.max_order}) and were not checked",)
    return tuple(checks), notes


def _table_rule(rule: str, table: OrderTable, s: Spectrum, pf: float, disregard_small: bool,
                extra_notes: tuple[str, ...] = ()) -> RuleResult:
    unit = "fraction of I1" if table.relative else "A"
    if table.relative:
        _check_fundamental(s)
    lims = [(x.order, lim) for x in table.limits if (lim := x.value_at(pf)) is not None]
    checks, notes = _order_checks(s, lims, unit, disregard_small)
    sec = [x.order for x in table.limits if x.certainty == "secondary"]
    if sec:
        notes += (f"the limit of order {', '.join(map(str, sec))} in this edition was read in "
                  "a public summary of the standard, not in its text (secondary)",)
    if any(x.certainty not in ("seen", "secondary") for x in table.limits):
        notes += ("some limits of this table rest on memory",)
    return RuleResult(rule, table.source.citation(), checks, True, extra_notes + notes)


def editions() -> tuple[str, ...]:
    """The editions of IEC 61000-3-2 whose limit tables are shipped (from the data files'
    keys ``iec61000-3-2:<edition>:<table>``), sorted."""
    out = set()
    for k in known_keys():
        parts = k.split(":")
        if parts[0] == "iec61000-3-2" and len(parts) >= 3 and parts[1][:1].isdigit():
            out.add(parts[1])
    return tuple(sorted(out))


def check_edition(edition: str, field: str = "edition") -> str:
    """``edition`` if its tables are shipped, else an InputError naming ``field`` and the
    known editions."""
    known = editions()
    if not isinstance(edition, str) or edition not in known:
        raise InputError(f"{field}: unknown IEC 61000-3-2 edition {edition!r}; known: "
                         f"{', '.join(known)} (5.0: 2018; 5.1: 2018 + AMD1:2020)")
    return edition


def _key(table: str, edition: str) -> str:
    return f"iec61000-3-2:{check_edition(edition)}:{table}"


def _order_table(table: str, edition: str = DEFAULT_EDITION) -> OrderTable:
    key = _key(table, edition)
    t = load_limits(key)
    assert isinstance(t, OrderTable), key  # the per-order tables of this standard
    return t


def _needed(value: float | None, x: OrderLimit, table: OrderTable, what: str) -> float:
    """A column a rule needs, or a message naming the limit file and the order."""
    if value is None:
        raise InputError(f"standards_limits/{table.source.file}: order {x.order}: expected "
                         f"{what}, found none")
    return value


# ---------------------------------------------------------------------------- classes
def evaluate_class_a(s: Spectrum, *, disregard_small: bool = True,
                     edition: str = DEFAULT_EDITION) -> RuleResult:
    """Class A: absolute limits per order [A] (IEC 61000-3-2:2018, Table 1)."""
    return _table_rule("class A", _order_table("class-a", edition), s, 1.0, disregard_small)


def evaluate_class_b(s: Spectrum, *, disregard_small: bool = True,
                     edition: str = DEFAULT_EDITION) -> RuleResult:
    """Class B: 1.5 times the Class A limits [A] (IEC 61000-3-2:2018, 7.2)."""
    return _table_rule("class B", _order_table("class-b", edition), s, 1.0, disregard_small)


def evaluate_class_c(s: Spectrum, pf: float, *, disregard_small: bool = True,
                     edition: str = DEFAULT_EDITION) -> RuleResult:
    """Class C above 25 W: percent of the fundamental; h3 at 27 % (edition 5.1) or
    30 * lambda % (edition 5.0).

    Parameters
    ----------
    s
        Input-current spectrum.
    pf
        Circuit power factor lambda [-].

    References
    ----------
    IEC 61000-3-2:2018, Table 2; IEC 61000-3-2:2018+AMD1:2020 (ed. 5.1), Table 2.
    """
    pf = _check_pf(pf)
    return _table_rule("class C (> 25 W)", _order_table("class-c", edition), s, pf,
                       disregard_small)


def evaluate_class_d(s: Spectrum, p_w: float, *, disregard_small: bool = True,
                     edition: str = DEFAULT_EDITION) -> RuleResult:
    """Class D: ``min(per-watt limit * P, absolute limit)`` per order [A].

    References
    ----------
    IEC 61000-3-2:2018, Table 3, columns 2 and 3.
    """
    p = _check_power(p_w)
    t = _order_table("class-d", edition)
    lims = [(x.order, min(_needed(x.per_watt_a_w, x, t, "a per-watt limit [A/W]") * p,
                          _needed(x.limit, x, t, "an absolute limit [A]")))
            for x in t.limits]
    checks, notes = _order_checks(s, lims, "A", disregard_small)
    if p <= 75.0 or p > CLASS_D_MAX_W:
        notes += (f"Class D covers equipment up to and including 600 W (5.1) and sets no "
                  f"limits at 75 W or less (memory); {p:.4g} W is outside that range",)
    return RuleResult("class D", t.source.citation(), checks, True, notes)


def _small(edition: str = DEFAULT_EDITION) -> SmallLightingLimits:
    t = load_limits(_key("class-c:5-25w", edition))
    assert isinstance(t, SmallLightingLimits)
    return t


def evaluate_option_a(s: Spectrum, p_w: float, *, disregard_small: bool = True,
                      edition: str = DEFAULT_EDITION) -> RuleResult:
    """Class C, 5 W to 25 W, option (a): Class D per-watt limits times the power [A].

    References
    ----------
    IEC 61000-3-2:2018, 7.4.2 and Table 3, column 2.
    """
    p = _check_power(p_w)
    t = _small(edition).option_a
    lims = [(x.order, _needed(x.per_watt_a_w, x, t, "a per-watt limit [A/W]") * p)
            for x in t.limits]
    checks, notes = _order_checks(s, lims, "A", disregard_small)
    return RuleResult("option a", t.source.citation(), checks, True, notes)


@dataclass(frozen=True)
class WaveformTestResult:
    """The option (b) waveform test on one record, the worse of the two half-cycles.

    Angles [deg] from the positive-going zero crossing of the fundamental voltage (for the
    negative half-cycle, from the negative-going one).

    Attributes
    ----------
    threshold_a
        The threshold, a share of the highest absolute current peak [A].
    reach_deg
        Where the current first reaches the threshold.
    peak_deg
        Where it reaches its peak in the half-cycle.
    drop_deg
        Where, after reaching the threshold, it first falls below it again (180 if it
        does not within the half-cycle).
    """

    threshold_a: float
    reach_deg: float
    peak_deg: float
    drop_deg: float
    limits: WaveformTestLimits

    def checks(self) -> tuple[Check, ...]:
        lim = self.limits
        return (
            Check.against("reach threshold", None, self.reach_deg, lim.reach_by_deg, "deg", "max"),
            Check.against("peak", None, self.peak_deg, lim.peak_by_deg, "deg", "max"),
            Check.against("stay above threshold", None, self.drop_deg, lim.stay_until_deg, "deg", "min"),
        )

    @property
    def passed(self) -> bool:
        return all(c.status == "pass" for c in self.checks())


def _crossing(a: np.ndarray, x: np.ndarray, k: int, level: float) -> float:
    """Angle where x crosses ``level`` between samples k-1 and k (linear interpolation)."""
    if k == 0:
        return float(a[0])
    x0, x1 = x[k - 1], x[k]
    if x1 == x0:
        return float(a[k])
    return float(a[k - 1] + (level - x0) / (x1 - x0) * (a[k] - a[k - 1]))


def waveform_test(w: Waveform, limits: WaveformTestLimits | None = None) -> WaveformTestResult:
    """The waveform test of option (b) for Class C equipment of 5 W to 25 W.

    Taking 0 deg at the positive-going zero crossing of the fundamental voltage, the current
    must reach a threshold of 5 % of its highest absolute peak at or before 60 deg, have its
    peak at or before 65 deg and not fall below the threshold before 90 deg. The record is
    averaged over its cycles (when it holds a whole number of samples per cycle), both
    half-cycles are tested and the worse one is reported. Crossing angles are interpolated
    linearly between samples.

    Parameters
    ----------
    w
        The record; it must have a voltage channel (for the zero crossing).
    limits
        Angles and threshold; default from ``iec61000-3-2:class-c:5-25w``.

    References
    ----------
    IEC 61000-3-2:2018 + AMD1:2020, 7.4.2 b) (wording with the 5 % threshold).
    """
    lim = limits or _small().waveform
    if w.voltage_v is None:
        raise InputError(
            f"{w.label + ': ' if w.label else ''}the waveform test of option b needs the "
            "voltage zero crossing, and the record has no voltage channel"
        )
    n = w.n_samples
    c1 = 2.0 * np.fft.rfft(w.voltage_v)[w.cycles] / n  # cosine basis, peak
    if abs(c1) == 0:
        raise InputError("the voltage channel has no fundamental; cannot find its zero crossing")
    # v1(t) = |c1| sin(theta + angle(c1) + pi/2), theta = 2 pi f t: zero at theta0 below
    offset = float(np.angle(c1)) + np.pi / 2
    spc = w.samples_per_cycle
    if spc == int(spc):
        spc = int(spc)
        i = w.current_a.reshape(w.cycles, spc).mean(axis=0)
        theta = 2 * np.pi * np.arange(spc) / spc
    else:
        i = w.current_a
        theta = 2 * np.pi * w.frequency_hz * w.time_s
    ang = np.mod(theta + offset, 2 * np.pi)
    order = np.argsort(ang, kind="stable")
    ang, i = np.degrees(ang[order]), i[order]
    peak = float(np.max(np.abs(i)))
    if peak == 0:
        raise InputError("the current is zero throughout; nothing to test")
    thr = lim.threshold_of_peak * peak
    reach, pk, drop = [], [], []
    for sign, lo in ((1.0, 0.0), (-1.0, 180.0)):
        sel = (ang >= lo) & (ang < lo + 180.0)
        a, x = ang[sel] - lo, sign * i[sel]
        above = np.flatnonzero(x >= thr)
        if above.size == 0:
            reach.append(180.0)
            pk.append(180.0)
            drop.append(0.0)
            continue
        k0 = int(above[0])
        reach.append(_crossing(a, x, k0, thr))
        pk.append(float(a[int(np.argmax(x))]))
        below = np.flatnonzero(x[k0:] < thr)
        drop.append(180.0 if below.size == 0 else _crossing(a, x, k0 + int(below[0]), thr))
    return WaveformTestResult(thr, max(reach), max(pk), min(drop), lim)


def evaluate_option_b(
    s: Spectrum, waveform: Waveform | None = None, *, disregard_small: bool = True,
    edition: str = DEFAULT_EDITION,
) -> RuleResult:
    """Class C, 5 W to 25 W, option (b): h3 <= 86 %, h5 <= 61 % and the waveform test.

    Without a waveform that has a voltage channel, the rule is returned with
    ``evaluated=False`` and a note saying so.

    References
    ----------
    IEC 61000-3-2:2018 + AMD1:2020, 7.4.2 b).
    """
    t = _small(edition)
    base = _table_rule("option b", t.option_b, s, 1.0, disregard_small)
    if waveform is None or waveform.voltage_v is None:
        why = ("the waveform test needs the voltage zero crossing and the record has no "
               "voltage channel") if waveform is not None else (
               "the waveform test needs the waveform with its voltage; only a spectrum was given")
        return RuleResult(base.rule, base.reference, base.checks, False, base.notes + (why,))
    wt = waveform_test(waveform, t.waveform)
    return RuleResult(base.rule, base.reference, base.checks + wt.checks(), True,
                      base.notes + ("waveform test: worse of the two half-cycles",))


def evaluate_option_c(s: Spectrum, *, disregard_small: bool = True,
                      edition: str = DEFAULT_EDITION) -> RuleResult:
    """Class C, 5 W to 25 W, option (c): THD <= 70 % and limits for orders 2 to 11.

    References
    ----------
    IEC 61000-3-2:2018 + AMD1:2020, 7.4.2 c); THD over orders 2..40 (memory).
    """
    t = _small(edition)
    base = _table_rule("option c", t.option_c, s, 1.0, disregard_small)
    top = min(t.thd_max_order, s.max_order)
    thd_check = Check.against(f"THD (2..{top})", None, float(thd(s, top)), t.thd_limit,
                      "fraction of I1")
    return RuleResult(base.rule, base.reference, base.checks + (thd_check,), True, base.notes)


# ---------------------------------------------------------------------------- a fixture
def _closest(rules: Sequence[RuleResult]) -> RuleResult:
    ev = [r for r in rules if r.evaluated] or list(rules)
    return max(ev, key=lambda r: r.worst_margin_ratio)


def _power_and_pf(s: Spectrum, p_w: float | None, pf: float | None) -> tuple[float, float]:
    if p_w is None:
        if s.p_w is None:
            raise InputError(
                f"{s.label + ': ' if s.label else ''}no voltage channel, so the active power "
                "is unknown; give it (p_w, or --power-w on the command line)"
            )
        p_w = s.p_w
    if pf is None:
        if not s.has_voltage:
            raise InputError(
                f"{s.label + ': ' if s.label else ''}no voltage channel, so the power factor "
                "is unknown; give it (pf, or --pf on the command line)"
            )
        pf = power_factor(s)
    return _check_power(p_w), _check_pf(pf)


def evaluate_fixture(
    record: Record,
    p_w: float | None = None,
    pf: float | None = None,
    equipment_class: EquipmentClass = "C",
    *,
    fixture: str = "",
    state: str = "",
    nominal_voltage_v: float | None = None,
    outside_scope: bool = False,
    disregard_small: bool = True,
    edition: str = DEFAULT_EDITION,
) -> FixtureResult:
    """IEC 61000-3-2 verdict for one fixture in one compliance test state.

    Parameters
    ----------
    record
        A :class:`~pqcalc.spectrum.Spectrum` of the input current, or the
        :class:`~pqcalc.waveform.Waveform` itself (needed for option b's waveform test).
    p_w
        Active input power [W]; default from the record's voltage channel.
    pf
        Circuit power factor lambda [-]; default from the record's voltage channel.
    equipment_class
        ``"A"``, ``"B"``, ``"C"`` (lighting) or ``"D"``.
    state
        The compliance test state's label (``"full"``, a dimmed state).
    nominal_voltage_v
        Nominal line-to-neutral supply voltage [V]. Below 220 V the standard sets no
        limits (clause 1): the result is informative (``role="informative"``) and not
        applicable, or, with ``outside_scope``, evaluated for information only.
    disregard_small
        Disregard harmonics below max(0.6 % of I_rms, 5 mA) (memory).
    edition
        ``"5.0"`` or ``"5.1"`` (see :func:`editions`); default :data:`DEFAULT_EDITION`.

    Returns
    -------
    FixtureResult
        For Class C from 5 W to 25 W, ``rules`` holds options a, b and c and ``rule``
        names the option that passed (the first in a, b, c order) or, when none did, the
        closest one. Class D above 600 W is outside Class D (``applicable=False``).
    """
    if equipment_class not in EQUIPMENT_CLASSES:
        raise InputError(
            f"equipment_class: expected one of {', '.join(EQUIPMENT_CLASSES)}, "
            f"got {equipment_class!r}"
        )
    check_edition(edition)
    s, w = _as_spectrum(record)
    _check_fundamental(s)
    p, lam = _power_and_pf(s, p_w, pf)
    fixture = fixture or s.label
    notes: list[str] = []
    role: Role = "verdict"
    basis = ""
    if disregard_small:
        notes.append(_DISREGARD_NOTE)
    if s.i_rms_a > SCOPE_MAX_CURRENT_A:
        notes.append(f"input current {s.i_rms_a:.3g} A is above the 16 A per phase of the "
                     "standard's scope (IEC 61000-3-12 covers larger equipment)")
    if nominal_voltage_v is not None and nominal_voltage_v < SCOPE_MIN_VOLTAGE_V:
        msg = (f"IEC 61000-3-2 sets no limits below {SCOPE_MIN_VOLTAGE_V:g} V line-to-neutral "
               f"(clause 1; nominal {nominal_voltage_v:g} V): information only, not a verdict")
        role, basis = "informative", msg
        if not outside_scope:
            return FixtureResult(fixture, state, p, lam, "pass", "not applicable: " + msg,
                                 (), False, None, tuple(notes + [msg]), role, basis)
        notes.append(msg + "; evaluated on request")

    def na(why: str, extra: Sequence[str] = ()) -> FixtureResult:
        return FixtureResult(fixture, state, p, lam, "pass", "not applicable: " + why, (),
                             False, None, tuple(notes) + tuple(extra), role, basis)

    def done(rules: Sequence[RuleResult], rule: str | None = None,
             undetermined: str | None = None, extra: Sequence[str] = ()) -> FixtureResult:
        passed = [r for r in rules if r.verdict == "pass"]
        decider = passed[0] if passed else _closest(rules)
        return FixtureResult(fixture, state, p, lam, "pass" if passed else "fail",
                             rule or decider.rule, tuple(rules), True, undetermined,
                             tuple(notes) + tuple(extra), role, basis)

    dr, ed = disregard_small, edition
    if equipment_class == "A":
        return done([evaluate_class_a(s, disregard_small=dr, edition=ed)])
    if equipment_class == "B":
        return done([evaluate_class_b(s, disregard_small=dr, edition=ed)])
    if equipment_class == "D":
        if p <= 75.0:
            return na("Class D sets no limits at 75 W or less",
                      ["the 75 W lower end of Class D is recalled from memory"])
        if p > CLASS_D_MAX_W:
            return na(f"Class D covers equipment up to and including {CLASS_D_MAX_W:g} W "
                      f"(5.1); {p:.4g} W is outside it",
                      ["equipment not in Class B, C or D is Class A (5.1): evaluate it as "
                       "Class A"])
        return done([evaluate_class_d(s, p, disregard_small=dr, edition=ed)])
    # Class C
    if p < NO_LIMITS_BELOW_W:
        return na("lighting below 5 W has no limits")
    if p > SMALL_LIGHTING_MAX_W:
        return done([evaluate_class_c(s, lam, disregard_small=dr, edition=ed)])
    rules = [evaluate_option_a(s, p, disregard_small=dr, edition=ed),
             evaluate_option_b(s, w, disregard_small=dr, edition=ed),
             evaluate_option_c(s, disregard_small=dr, edition=ed)]
    extra = ["5 W to 25 W: the fixture complies when any one of options a, b, c passes"]
    undetermined = None
    if all(r.verdict == "fail" for r in rules if r.evaluated) and not rules[1].evaluated:
        undetermined = ("options a and c fail and option b, the only one left, needs the "
                        "voltage zero crossing, which the record lacks")
    return done(rules, None, undetermined, extra)


# ---------------------------------------------------------------------------- dimming
@dataclass(frozen=True)
class DimmableResult:
    """Results of a dimmable fixture: the maximum-power state and the dimmed states.

    ``results[0]`` is the state of maximum power (it gives the limits and the formal
    verdict); the others follow in the order given, each with its role
    (:attr:`FixtureResult.role`). ``verdict`` is ``fail`` only when a result that counts
    (formal or strict) fails: an informative dimmed state never fails it.
    """

    fixture: str
    results: tuple[FixtureResult, ...]
    notes: tuple[str, ...]
    dimming: str = "independent"
    strict: bool = False

    @property
    def verdict(self) -> str:
        return "fail" if any(r.failed for r in self.results) else "pass"

    @property
    def informative(self) -> bool:
        """True when no result counts (every one is informative)."""
        return all(r.informative for r in self.results)

    def to_dict(self) -> dict:
        return {"fixture": self.fixture,
                "verdict": "info" if self.informative else self.verdict,
                "dimming": self.dimming, "strict_dimmed": self.strict,
                "results": [r.to_dict() for r in self.results], "notes": list(self.notes)}


def _dimmed_rule(at_max: RuleResult, s_max: Spectrum, s: Spectrum,
                 disregard_small: bool) -> RuleResult:
    """The rule of the maximum-power state turned into absolute limits [A]."""
    lims = []
    for c in at_max.order_checks():
        if c.order is None:  # order_checks() holds orders only; this narrows the type
            continue
        lims.append((c.order, c.limit * s_max.i1_a if c.unit == "fraction of I1" else c.limit))
    checks, notes = _order_checks(s, lims, "A", disregard_small)
    if any(c.order is None for c in at_max.checks):
        notes += ("figures other than harmonic currents (THD, waveform test) are not "
                  "carried over to dimmed states",)
    return RuleResult(f"{at_max.rule}, dimmed", at_max.reference + "; limits in A taken at "
                      "maximum power", checks, True, notes)


_BUILTIN_BASIS = ("built-in dimming: measured at maximum load and at five equidistant steps "
                  "between minimum and maximum power (IEC 61000-3-2, Annex C, lighting "
                  "equipment); each state held to the currents [A] allowed at maximum power")
_STRICT_BASIS = ("behind an independent phase-cut dimmer, held to the full-output limits [A] "
                 "at the owner's request (strict mode), beyond the standard's type test")


#: A first state within this fraction of the highest power is the full-output state [-].
FULL_POWER_TOL = 0.01


def full_output_index(powers: Sequence[float]) -> int:
    """Which state is the full-output (maximum-power) one: the first state (the lamp at its
    rated supply, no dimmer: what a type test measures) when its power is within
    :data:`FULL_POWER_TOL` of the highest, else the highest. A constant-power driver draws
    the same power at every setting; its full output stays the undimmed state.

    >>> full_output_index([60.0, 60.05, 31.5]), full_output_index([9.0, 9.5, 4.0])
    (0, 1)
    """
    top = max(powers)
    if powers[0] >= (1 - FULL_POWER_TOL) * top:
        return 0
    return max(range(len(powers)), key=lambda k: powers[k])


def evaluate_dimmable(
    states: Sequence[tuple[str, Record, float | None, float | None]],
    equipment_class: EquipmentClass = "C",
    *,
    fixture: str = "",
    nominal_voltage_v: float | None = None,
    outside_scope: bool = False,
    disregard_small: bool = True,
    dimming: Dimming = "independent",
    strict: bool = False,
    edition: str = DEFAULT_EDITION,
) -> DimmableResult:
    """IEC 61000-3-2 for dimmable lighting: the verdict at maximum power, and the dimmed
    states as the way the fixture is dimmed allows.

    Parameters
    ----------
    states
        ``(state label, Spectrum or Waveform, p_w [W] or None, pf [-] or None)`` per
        compliance test state; None takes the value from the record's voltage channel.
        The state of highest active power is the full-output state; Annex C asks for it
        and five equidistant steps between minimum and maximum power (see
        :func:`dimmed_test_powers`).
    dimming
        ``"independent"`` (the default): the fixture is dimmed by a separate phase-cut
        dimmer; its dimmed states are informative (role ``"informative"``: shown against
        the full-output limits as absolute currents, never failing the verdict), or, with
        ``strict=True``, pass/fail (role ``"strict"``). ``"builtin"``: the equipment has
        built-in dimming, and every state is part of its verdict.
    strict
        Hold the dimmed states behind an independent dimmer to pass/fail (an owner's
        requirement beyond the standard).
    edition
        ``"5.0"`` or ``"5.1"`` (default :data:`DEFAULT_EDITION`).

    Returns
    -------
    DimmableResult
        The state of highest active power evaluated as a fixture
        (:func:`evaluate_fixture`); every other state against the absolute harmonic
        currents [A] allowed at maximum power, under any rule the maximum-power state
        passed (or, when it passed none, any of its rules). That dimmed-state limit rests on
        memory, and the result says so.
    """
    if not states:
        raise InputError("states: expected at least one (state, record, p_w, pf)")
    if dimming not in DIMMING_KINDS:
        raise InputError(f"dimming: expected one of {', '.join(DIMMING_KINDS)}, got {dimming!r}")
    check_edition(edition)
    prepared = []
    for k, st in enumerate(states):
        if len(st) != 4:
            raise InputError(f"states[{k}]: expected (state, record, p_w, pf)")
        label, rec, p_w, pf = st
        s, w = _as_spectrum(rec)
        _check_fundamental(s)
        p, lam = _power_and_pf(s, p_w, pf)
        prepared.append((str(label), s, w, p, lam))
    kmax = full_output_index([x[3] for x in prepared])
    label, s_max, w_max, p_max, pf_max = prepared[kmax]
    fixture = fixture or s_max.label
    top = evaluate_fixture(w_max if w_max is not None else s_max, p_max, pf_max,
                           equipment_class, fixture=fixture, state=label,
                           nominal_voltage_v=nominal_voltage_v, outside_scope=outside_scope,
                           disregard_small=disregard_small, edition=edition)
    results = [top]
    if top.informative:
        role: Role = "informative"
        basis = top.basis
    elif dimming == "builtin":
        role, basis = "verdict", _BUILTIN_BASIS
    elif strict:
        role, basis = "strict", _STRICT_BASIS
    else:
        role, basis = "informative", INDEPENDENT_DIMMER_NOTE
    notes = [f"maximum power state: {label} at {p_max:.4g} W"]
    if len(prepared) > 1:
        notes.insert(0, DIMMED_RULE_NOTE)
        if dimming == "independent" and not strict and not top.informative:
            notes.insert(0, INDEPENDENT_DIMMER_NOTE)
    base_rules = [r for r in top.rules if r.verdict == "pass"] or [
        r for r in top.rules if r.evaluated]
    for k, (lab, s, _w, p, lam) in enumerate(prepared):
        if k == kmax:
            continue
        if not top.applicable or not base_rules:
            results.append(FixtureResult(fixture, lab, p, lam, "pass", top.rule, (), False,
                                         None, top.notes, role, basis))
            continue
        rules = [_dimmed_rule(r, s_max, s, disregard_small) for r in base_rules]
        passed = [r for r in rules if r.verdict == "pass"]
        decider = passed[0] if passed else _closest(rules)
        st_notes = [DIMMED_RULE_NOTE]
        if p < NO_LIMITS_BELOW_W:
            st_notes.append("this state draws less than 5 W; it is still held to the "
                            "maximum-power limits")
        results.append(FixtureResult(fixture, lab, p, lam, "pass" if passed else "fail",
                                     decider.rule, tuple(rules), True, None, tuple(st_notes),
                                     role, basis))
    return DimmableResult(fixture, tuple(results), tuple(notes) + (CAUTION,), dimming,
                          bool(strict))


def dimmed_test_powers(p_min_w: float, p_max_w: float, n: int = 5) -> np.ndarray:
    """Five equidistant active powers from minimum to maximum power [W], ends included.

    The settings at which dimmable lighting is measured besides maximum power; how the
    ends are counted is our reading of the standard's wording.
    """
    lo, hi = _check_power(p_min_w, "p_min_w"), _check_power(p_max_w, "p_max_w")
    if hi < lo:
        raise InputError(f"p_max_w ({hi:g} W) is below p_min_w ({lo:g} W)")
    if n < 2:
        raise InputError(f"n: expected at least 2 settings, got {n}")
    return np.linspace(lo, hi, n)
