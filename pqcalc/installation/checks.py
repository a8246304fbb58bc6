"""Every check of an installation: breakers, dimmers, conductors, transformers, IEEE 519.

Each check is a function returning :class:`Check` objects: a status, the figure it looked
at, the limit, and the source of the rule. The pure rules come first (one figure in, one
check out); then the checks of a circuit, of a node and of the point of common coupling,
which gather the rules for one result. Every check that guides the choice of a conductor,
breaker, dimmer or transformer carries :data:`CAUTION` in the outputs that show it.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import numpy as np

from ..circuits.inrush import CircuitInrush
from ..errors import InputError
from ..spectrum import rotate_phasors
from ..standards.breakers import judge_pulse
from ..standards.regions import (
    RuleSet,
    instantaneous_band,
    load_figures,
    neutral_figures,
    rule_set,
)
from .cases import CaseResult
from .model import LINE_ANGLES_DEG, Circuit, Installation, Panel
from .results import CAUTION, Check, LineResult, NeutralResult, Status
from .sums import NodeSum

__all__ = [
    "CAUTION",
    "Status",
    "Check",
    "breaker_inrush",
    "breaker_load",
    "steady_bound",
    "dimmer_load",
    "dimmer_compatibility",
    "neutral_conductor",
    "transformer_derating",
    "K_RATINGS",
    "FLAG_TEXT",
    "circuit_checks",
    "node_checks",
    "pcc_checks",
]

def _fig(f: Any, name: str | None = None, details: Mapping[str, Any] | None = None) -> Check:
    """A figure of :mod:`pqcalc.standards.regions` as a :class:`Check`."""
    src = f.source + (f" ({f.certainty})" if f.certainty not in ("seen", "") else "")
    return Check(name or f.name, f.status, f.message, src,
                 math.nan if f.value is None else float(f.value),
                 math.nan if f.limit is None else float(f.limit), f.unit, dict(details or {}))


def breaker_inrush(rules: RuleSet, c: Circuit, inrush: CircuitInrush | None,
                   fixtures: tuple[str, ...] = (), unknown: tuple[str, ...] = ()
                   ) -> tuple[list[Check], dict[str, Any]]:
    """The circuit's switch-on pulse against its breaker's pulse withstand, and the largest
    number of drivers of each fixture type the breaker carries on switch-on.

    Breaker makers judge LED-driver inrush by peak and width at half peak, not peak alone
    (common practice): the allowed peak at the pulse's width is read from the breaker
    type's pulse-withstand table (:mod:`pqcalc.standards.breakers`; the maker's table where
    the file gives one). The lower edge of the instantaneous-trip band (the peak-only rule)
    is reported beside it.
    """
    band = instantaneous_band(rules, c.breaker_curve, c.breaker_a,
                              None if c.breaker_pickup_x_in is None else
                              (c.breaker_pickup_x_in, max(20.0, 2 * c.breaker_pickup_x_in)))
    kind = c.breaker_curve.upper()
    table = None
    if c.breaker_pulse_table is not None:
        table = {"width_s": list(c.breaker_pulse_table[0]), "peak_a": list(c.breaker_pulse_table[1]),
                 "unit": "A"}
    pickup = c.breaker_pickup_x_in if c.breaker_pickup_x_in is not None else band.k_min
    breaker = kind if kind in ("B", "C", "D") else "UL489"
    checks: list[Check] = []
    per: dict[str, Any] = {}
    if inrush is not None:
        circ = inrush.circuit
        j = judge_pulse(breaker, c.breaker_a, circ.peak_a, circ.width_s, table, pickup)
        st: Status = "pass" if circ.peak_a <= j.allowed_peak_a else "fail"
        msg = (f"switched on at {inrush.switch_deg:.0f} deg through the loop "
               f"{1e3 * inrush.loop_r_ohm:.0f} mohm + {1e6 * inrush.loop_l_h:.0f} uH: pulse "
               f"{circ.peak_a:.0f} A peak, {1e6 * circ.width_s:.0f} us at half peak, "
               f"I2t {circ.i2t_a2s:.3g} A2s; {c.breaker_curve} {c.breaker_a:g} A withstands "
               f"{j.allowed_peak_a:.0f} A at that width ({j.reading}; peak-only rule "
               f"{band.low_peak_a:.0f} A)")
        if st == "fail":
            msg += ": a nuisance trip on switch-on is likely; split the circuit, stagger "\
                   "switching or take a breaker type the makers rate for it"
        checks.append(Check("breaker inrush", st, msg,
                            f"{j.table}: {j.source} (certainty: {j.certainty})",
                            float(circ.peak_a), float(j.allowed_peak_a), "A",
                            {"width_s": circ.width_s, "i2t_a2s": circ.i2t_a2s,
                             "instantaneous_peak_a": band.low_peak_a,
                             "breaker": c.breaker_curve, "rating_a": c.breaker_a}))
        for fid, g in zip(fixtures, inrush.groups, strict=True):
            one = g.pulse_one
            jg = judge_pulse(breaker, c.breaker_a, one.peak_a, one.width_s, table, pickup)
            per[fid] = {"inrush_bound": jg.max_drivers, "peak_only_bound":
                               jg.peak_only_drivers, "peak_one_a": one.peak_a,
                               "width_s": one.width_s, "i2t_one_a2s": one.i2t_a2s}
    if unknown:
        checks.append(Check("breaker inrush", "info",
                            f"inrush of {', '.join(unknown)} unknown (a steady-state record); "
                            "the inrush figure covers the modelled fixtures only",
                            "measured record"))
    return checks, per


def breaker_load(rules: RuleSet, c: Circuit, i_rms_a: float) -> list[Check]:
    """Steady current against the breaker by the rule set's load rule (lighting counted as a
    continuous load: common practice), and against the conductor where its ampacity is
    given."""
    out = [_fig(f, "breaker load" if f.name != "conductor protection" else None)
           for f in load_figures(rules, c.breaker_a, i_rms_a)]
    if c.conductor_ampacity_a is not None:
        st: Status = "pass" if i_rms_a <= c.conductor_ampacity_a else "fail"
        out.append(Check("conductor", st, f"{i_rms_a:.2f} A against "
                         f"{c.conductor_ampacity_a:g} A ampacity", "conductor ampacity as given",
                         i_rms_a, c.conductor_ampacity_a, "A"))
    return out


def steady_bound(rules: RuleSet, rating_a: float, i_rms_one_a: float) -> int | None:
    """Largest number of one fixture type a breaker carries in steady state [-]: the rating
    over the rule set's continuous-load factor (NEC 210.20(A): 1/1.25 = 80 %; IEC: the
    rating itself, IB <= In)."""
    if i_rms_one_a <= 0:
        return None
    k = rules.continuous_load_factor or 1.0
    return int(math.floor(rating_a / k / i_rms_one_a * (1 + 1e-12)))  # 16 A / 0.1 A is 160


def dimmer_load(
    led_power_w: float, rating_w: float, led_derating: float, min_load_w: float | None,
    total_power_w: float,
) -> Check:
    """The dimmer's load against its rating: filament (resistive) watts count at face value,
    LED watts at ``1 / led_derating`` each (a dimmer rated for filament watts carries far
    fewer watts of LED drivers: capacitive inrush and peak currents; common practice, take
    the dimmer maker's LED rating where published); and the minimum load.

    ``total_power_w`` is the connected load (filament + LED) [W].
    """
    if not 0 < led_derating <= 1:
        raise InputError(f"led_derating: expected a fraction in (0, 1], got {led_derating}")
    resistive_w = max(total_power_w - led_power_w, 0.0)
    equivalent = resistive_w + led_power_w / led_derating
    src = ("dimmer rating: filament watts plus LED watts / derating (common practice; use the "
           "maker's LED rating)")
    what = (f"{resistive_w:.0f} W filament + {led_power_w:.0f} W LED / {led_derating:g} = "
            f"{equivalent:.0f} W of the {rating_w:.0f} W rating")
    if equivalent > rating_w:
        return Check("dimmer rating", "fail", f"{what}: over the rating", src,
                     float(equivalent), float(rating_w), "W")
    if min_load_w is not None and total_power_w < min_load_w:
        return Check("dimmer rating", "warn",
                     f"connected load {total_power_w:.1f} W is below the dimmer's minimum load "
                     f"{min_load_w:.0f} W: flicker, drop-out or glow when off are likely",
                     "dimmer minimum load (maker's data; common practice)",
                     float(total_power_w), float(min_load_w), "W")
    return Check("dimmer rating", "pass", f"{what}: within the rating", src,
                 float(equivalent), float(rating_w), "W")


def neutral_conductor(rules: RuleSet, system: str, lines: Mapping[str, LineResult],
                      neutral: NeutralResult, nonlinear_share: float,
                      ampacity_a: float | None) -> Check:
    """The neutral by the rule set's sizing method: IEC 60364-5-52 Annex E (Table E.52.1)
    or NEC 310.15(E) with the Table 310.15(C)(1) adjustment."""
    worst = max(lines, key=lambda ln: lines[ln].i_rms_a)
    max_line = lines[worst].i_rms_a
    lo = min(r.i_rms_a for r in lines.values())
    f = neutral_figures(rules, system=system, line_current_a=max_line,
                        neutral_current_a=neutral.i_rms_a,
                        third_harmonic_pct=lines[worst].i3_pct_of_rms,
                        nonlinear_share=nonlinear_share, ampacity_a=ampacity_a)
    c = _fig(f, "neutral conductor", {"factor": f.factor, "basis": f.basis,
                                      "method": f.method})
    if f.method == "iec-annex-e" and max_line > 0 and (max_line - lo) / max_line > 0.1:
        c = replace(c, message=c.message + f"; the lines differ by "
                    f"{100 * (max_line - lo) / max_line:.0f} % but the table is for balanced loads")
    return c


#: K-factor ratings offered for replacement transformers (common practice: UL-listed K-4,
#: K-9, K-13, K-20, K-30, K-40, K-50).
K_RATINGS = (1, 4, 9, 13, 20, 30, 40, 50)


def _k_text(k: int | None) -> str:
    return f"K-{k}" if k is not None else "a rating above K-50 (reduce the harmonics instead)"


def transformer_derating(
    harmonic_loss_factor: float, k_factor: float, load_current_a: float,
    rated_current_a: float | None, eddy_loss_pu: float = 0.1,
) -> Check:
    """IEEE C57.110 derating from the harmonic loss factor, and the K rating a replacement
    would need.

    ``I_max / I_R = sqrt(P_LL-R / (1 + F_HL P_EC-R))`` with ``P_LL-R = 1 + P_EC-R`` (per unit
    of the rated I^2 R loss); ``eddy_loss_pu`` is the rated winding eddy-current loss P_EC-R
    (0.1 is a typical value for a dry-type unit of this size, from memory; use the maker's
    test report).

    References
    ----------
    IEEE Std C57.110-2018, clause 5 (derating from F_HL); UL 1561 (K-factor ratings).
    """
    if not eddy_loss_pu >= 0:
        raise InputError(f"eddy_loss_pu: expected a non-negative per-unit loss, got {eddy_loss_pu}")
    i_max_pu = float(np.sqrt((1 + eddy_loss_pu) / (1 + harmonic_loss_factor * eddy_loss_pu)))
    k_needed = next((k for k in K_RATINGS if k >= k_factor), None)
    det = {"f_hl": harmonic_loss_factor, "k_factor": k_factor, "i_max_pu": i_max_pu,
           "eddy_loss_pu": eddy_loss_pu, "k_rating_needed": k_needed}
    src = "IEEE Std C57.110-2018, clause 5; K ratings per UL 1561 (common practice)"
    if rated_current_a is None:
        return Check("transformer", "info" if k_needed is not None else "warn",
                     f"F_HL {harmonic_loss_factor:.2f} (this load's spectrum, orders 1..50, most "
                     f"loaded line): a standard transformer serving only this load may carry "
                     f"{100 * i_max_pu:.0f} % of its rated current; a K-rated replacement "
                     f"needs {_k_text(k_needed)}", src, i_max_pu, math.nan,
                     "pu", det)
    allowed = i_max_pu * rated_current_a
    st: Status = "pass" if load_current_a <= allowed else "fail"
    if st == "pass" and k_needed is None:
        st = "warn"  # within the derated capacity, but no K rating covers this spectrum
    return Check("transformer", st,
                 f"F_HL {harmonic_loss_factor:.2f} (this load's spectrum, orders 1..50, most "
                 f"loaded line): if the whole load had this spectrum, the derated capacity "
                 f"would be {allowed:.0f} A "
                 f"({100 * i_max_pu:.0f} % of {rated_current_a:.0f} A) against a load of "
                 f"{load_current_a:.0f} A; a K-rated replacement needs {_k_text(k_needed)}",
                 src, float(load_current_a), float(allowed), "A", det)


# ---------------------------------------------------------------- checks of one result
#: What each circuit-model flag means for the user.
FLAG_TEXT = {
    "no-solution": "the circuit model found no periodic steady state (unstable or chaotic "
                   "operation: expect flicker); this circuit is LEFT OUT of the panel sums",
    "asymmetric": "the two half cycles differ: a DC component and even harmonics",
    "drop-out": "the lamp's driver shuts down at this setting",
    "glow-when-off": "the dimmer's own supply current lights the lamp when off",
    "long-transient": "the circuit never settles into a repeating state: its figures are the "
                      "mean of a long transient, with interharmonic current; expect flicker",
}


def dimmer_compatibility(flags: tuple[str, ...], light: Mapping[str, Any] | None,
                         dimmer: str) -> list[Check]:
    """Whether dimmer and lamps work together, judged by what the light does.

    The light fails when the dimmer misfires or fires only every few half cycles
    (``misfire``, ``subharmonic``) *and* that shows in the light (Pst_LM above 1, the
    visibility threshold of IEC TR 61547-1), or when the light flickers visibly for any
    reason; a driver that drops out or glows when off is a warning. The triac's state is
    evidence, not the verdict: a triac that releases after each charging pulse (``no-latch``)
    is normal for capacitive-input drivers and passes when the light is steady.

    ``light`` holds the worst lamp's figures: ``mean`` [-, 1 = full output], ``pst_lm``
    [-], ``svm`` [-] (None where the lamp is dark).
    """
    if dimmer == "none" and not flags:
        return []
    src = ("periodic steady-state circuit model of dimmer and drivers; flicker by Pst_LM "
           "(IEC TR 61547-1, visibility threshold 1)")
    pst = None if light is None else light.get("pst_lm")
    mean = None if light is None else light.get("mean")
    seen = f"light {100 * mean:.0f} % of full output" if mean is not None else "no light figure"
    if pst is not None:
        seen += f", Pst_LM {pst:.2f}"
    out: list[Check] = []
    if "no-solution" in flags:
        return [Check("dimmer compatibility", "fail", "the circuit model found no steady "
                      "state: " + FLAG_TEXT["no-solution"], src, details={"flag": "no-solution"})]
    firing = [f for f in flags if f in ("misfire", "subharmonic", "no-latch", "re-fire")]
    if pst is not None and pst > 1.0:  # visible flicker
        why = (", ".join(f"'{f}'" for f in firing) + " in the firing, and ") if firing else ""
        out.append(Check("dimmer compatibility", "fail",
                         f"{why}the light flickers visibly ({seen}): add load, a bleeder, or "
                         "use a trailing-edge dimmer rated for these drivers", src,
                         float(pst), 1.0, "-", {"flag": firing[0] if firing else "flicker"}))
    elif firing:
        out.append(Check("dimmer compatibility", "info",
                         f"the circuit model reports {', '.join(repr(f) for f in firing)} "
                         f"(the triac's state), but the light is steady ({seen}): normal for "
                         "capacitive-input drivers", src,
                         math.nan if pst is None else float(pst), 1.0, "-",
                         {"flag": firing[0]}))
    for fl in flags:
        if fl in ("drop-out", "glow-when-off", "asymmetric", "long-transient"):
            out.append(Check("dimmer compatibility", "warn",
                             f"the circuit model reports '{fl}' at this setting: "
                             + FLAG_TEXT[fl], src, details={"flag": fl}))
    return out


def circuit_checks(inst: Installation, rules: RuleSet, c: Circuit, cs: CaseResult,
                   i_rms_a: float, inrush: CircuitInrush | None,
                   inrush_fixtures: tuple[str, ...]
                   ) -> tuple[tuple[Check, ...], float, dict[str, dict[str, Any]]]:
    """The checks of one circuit at one scenario, its inrush peak [A] and the largest
    number of each fixture type its breaker carries (by inrush and by steady load)."""
    unknown = tuple(g.fixture for g in cs.groups if inst.fixtures[g.fixture].measured)
    checks, per = breaker_inrush(rules, c, inrush, inrush_fixtures, unknown)
    if "no-solution" in cs.flags:
        # its current is unknown: a breaker load of 0 A would read as a pass
        checks.append(Check("breaker load", "info", "not judged: the circuit has no solution, "
                            "so its current is unknown", "no solution"))
    else:
        checks += breaker_load(rules, c, i_rms_a)
    fx = inst.fixtures
    if c.dimmer != "none" and c.dimmer_rating_w is not None:
        led_w = sum(g.count * fx[g.fixture].power_w for g in cs.groups if fx[g.fixture].nonlinear)
        connected_w = sum(g.count * fx[g.fixture].power_w for g in cs.groups)
        checks.append(dimmer_load(led_w, c.dimmer_rating_w, c.led_derating,
                                  c.dimmer_min_load_w, connected_w))
    checks += dimmer_compatibility(cs.flags, cs.light, c.dimmer)
    mx = {}
    for g in cs.groups:
        p = per.get(g.fixture, {})
        mx[g.fixture] = {"inrush_bound": p.get("inrush_bound"),
                         "peak_only_bound": p.get("peak_only_bound"),
                         "steady_bound": steady_bound(rules, c.breaker_a, g.i_rms_one_a)}
        bounds = [x for x in (mx[g.fixture]["inrush_bound"], mx[g.fixture]["steady_bound"])
                  if x is not None]
        mx[g.fixture]["max_fixtures"] = min(bounds) if bounds else None
    peak = inrush.circuit.peak_a if inrush is not None else math.nan
    return tuple(checks), float(peak), mx


def rules_of(inst: Installation) -> RuleSet:
    """The installation's regional rule set."""
    return rule_set(inst.supply.rules)


def node_checks(inst: Installation, kind: str, lines: Mapping[str, LineResult],
                neutral: NeutralResult | None, k: float, fhl: float,
                panel: Panel | None = None, left_out: tuple[str, ...] = ()
                ) -> tuple[Check, ...]:
    """The checks of a panel (neutral and line conductors) or of the service
    (transformer derating); first, when circuits could not be solved, that the totals are
    incomplete."""
    sup = inst.supply
    max_line = max(r.i_rms_a for r in lines.values())
    worst = max(lines, key=lambda ln: lines[ln].i_rms_a)
    checks: list[Check] = []
    if left_out:
        checks.append(Check(
            "totals incomplete", "fail",
            f"{len(left_out)} circuit{'s' if len(left_out) != 1 else ''} without a solution "
            f"({', '.join(left_out[:5])}{', ...' if len(left_out) > 5 else ''}) are missing "
            "from these totals: the currents below understate the load; not assessed",
            "periodic steady-state circuit model", float(len(left_out)), 0.0, "circuits",
            {"flag": "no-solution", "left_out": list(left_out)}))
    if kind == "panel" and neutral is not None and max_line > 0:
        checks.append(neutral_conductor(rules_of(inst), sup.system, lines, neutral,
                                        inst.nonlinear_share(),
                                        panel.neutral_ampacity_a if panel else None))
        if neutral.ratio_to_max_line > 1:
            checks.append(Check("neutral current", "warn",
                                f"the neutral carries {neutral.ratio_to_max_line:.2f} times "
                                "the highest line current (triplen harmonics add)",
                                "phasor sum of the line currents", neutral.ratio_to_max_line,
                                1.0, "-"))
        if panel is not None and panel.line_ampacity_a is not None:
            st: Status = "pass" if max_line <= panel.line_ampacity_a else "fail"
            checks.append(Check("line conductors", st, f"highest line {max_line:.1f} A "
                                f"against {panel.line_ampacity_a:g} A", "ampacity as given",
                                max_line, panel.line_ampacity_a, "A"))
    if kind == "transformer" and max_line > 0 and lines[worst].magnitudes_a[1] > 0:
        checks.append(transformer_derating(fhl, k, max_line, sup.rated_current_a,
                                           sup.eddy_loss_pu))
    return tuple(checks)


def pcc_checks(inst: Installation, total: NodeSum, cycles: int) -> list[Check]:
    """IEEE 519 at the point of common coupling, taken at the service (transformer
    secondary), on every line; the line closest to (or furthest over) a limit is reported."""
    from ..spectrum import Spectrum
    from ..standards import evaluate_pcc
    from .interaction import ideal_voltage, voltage_drop

    sup = inst.supply
    angles = LINE_ANGLES_DEG[sup.system]
    if not any(np.any(total.line(ln)) for ln in total.x):
        return []
    pcc = inst.pcc
    isc = pcc.short_circuit_a if pcc.short_circuit_a is not None else sup.short_circuit_a
    if not np.isfinite(isc):
        return [Check("IEEE 519 at the PCC", "info", "no source impedance given: the "
                      "short-circuit ratio and the PCC limits are unknown",
                      "IEEE Std 519")]
    kv = pcc.voltage_kv
    if kv is None:
        kv = sup.voltage_ln_v * {"three-phase-wye": np.sqrt(3), "split-phase": 2.0,
                                 "single-phase": 1.0}[sup.system] / 1e3
    edition = pcc.ieee519_edition
    xs, n = total.phasors(cycles)
    il_given = pcc.demand_current_a
    il = il_given if il_given is not None else max(float(abs(p[1])) for p in xs.values())
    results = []
    for line in total.x:
        x = total.line(line)
        if not np.any(x):
            continue
        v = ideal_voltage(inst, line) - voltage_drop(sup.impedance, xs[line], n, sup.frequency_hz)
        turn = -np.radians(angles[line])
        i_own, v_own = rotate_phasors(xs[line], turn), rotate_phasors(v, turn)
        spec = Spectrum(i_own, sup.frequency_hz, float(np.sqrt(np.mean(x**2))),
                        float(np.max(np.abs(x))), v_own,
                        float(np.sqrt(np.sum(np.abs(v_own[1:]) ** 2))), None, None, "voltage",
                        f"service {line}")
        r = evaluate_pcc(spec, float(il), float(isc), edition, float(kv))
        worst = min(r.current.checks, key=lambda c: c.margin / abs(c.limit) if c.limit else 1e9)
        results.append((worst.margin / abs(worst.limit), line, r, worst))
    _, line, r, worst = min(results, key=lambda t: t[0])
    msg = (f"at the service, worst line {line}: TDD {100 * r.tdd:.1f} % of I_L, Isc/IL "
           f"{r.isc_il:.0f} (row {r.row}); closest: {worst.name} {100 * worst.value:.2f} % "
           f"against {100 * worst.limit:.2f} %")
    if r.voltage is not None:
        thdv = next(c for c in r.voltage.checks if c.name == "THD")
        msg += f"; voltage THD {100 * thdv.value:.2f} % against {100 * thdv.limit:.0f} %"
    if il_given is None:
        msg += ("; I_L taken as the computed fundamental at the service (the lighting alone); "
                "give pcc.demand_current_a, the building's maximum demand current")
    if edition == "2022":
        msg += "; the 2022 treatment of even orders rests on memory"
    verdicts = [t[2].verdict for t in results]
    verdict: Status = "fail" if "fail" in verdicts else "pass"
    status: Status = verdict if il_given is not None or verdict == "pass" else "warn"
    d = r.to_dict()
    d["lines"] = {t[1]: t[2].verdict for t in results}
    return [Check("IEEE 519 at the PCC", status, msg, f"IEEE Std 519-{edition}, Tables 1 "
                  "and 2", float(r.tdd), math.nan, "-", d)]
