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
from typing import Any

import numpy as np

from ..errors import InputError
from ..spectrum import rotate_phasors
from .cases import CaseResult
from .model import BREAKER_CURVE_NAMES, LINE_ANGLES_DEG, Circuit, Installation, Panel
from .results import CAUTION, Check, LineResult, NeutralResult, Status
from .sums import NodeSum

__all__ = [
    "CAUTION",
    "Status",
    "Check",
    "BREAKER_CURVES",
    "breaker_inrush",
    "breaker_max_fixtures",
    "dimmer_load",
    "neutral_factor_iec",
    "neutral_conductor",
    "nec_neutral_note",
    "transformer_derating",
    "K_RATINGS",
    "FLAG_TEXT",
    "breaker_load",
    "circuit_checks",
    "node_checks",
    "pcc_checks",
]

#: IEC 60898-1 instantaneous-trip bands, multiples of the rated current In (rms).
BREAKER_CURVES: dict[str, tuple[float, float]] = dict(zip(
    BREAKER_CURVE_NAMES, ((3.0, 5.0), (5.0, 10.0), (10.0, 20.0)), strict=True))
_IEC60898 = "IEC 60898-1, instantaneous tripping bands B 3-5 In, C 5-10 In, D 10-20 In"


def _band(curve: str) -> tuple[float, float]:
    try:
        return BREAKER_CURVES[curve.upper()]
    except KeyError:
        raise InputError(
            f"breaker curve: expected one of {', '.join(BREAKER_CURVES)}, got {curve!r}"
        ) from None


def breaker_inrush(inrush_peak_a: float, rating_a: float, curve: str) -> Check:
    """Summed inrush peak against the lower edge of the instantaneous-trip band.

    The band is given as an rms current; its peak ``sqrt(2) k_min In`` is compared with the
    inrush peak. Inrush pulses of LED drivers last a few hundred microseconds, far shorter
    than the half cycle the band is tested with, so a breaker often holds above this figure
    (common practice; manufacturers publish driver counts per breaker). A result above the
    lower edge is therefore a warning, never a failure on its own.
    """
    k_lo, k_hi = _band(curve)
    lo = np.sqrt(2) * k_lo * rating_a
    hi = np.sqrt(2) * k_hi * rating_a
    st: Status
    if inrush_peak_a <= lo:
        st, msg = "pass", "summed inrush peak below the instantaneous-trip band"
    else:
        where_ = "inside" if inrush_peak_a <= hi else "above"
        st, msg = "warn", (
            f"summed inrush peak {inrush_peak_a:.0f} A is {where_} the instantaneous-trip band "
            f"({lo:.0f}-{hi:.0f} A peak): nuisance trips are possible; the pulses last well under "
            "a millisecond, so check the breaker maker's LED-driver tables, stagger switching "
            "or split the circuit")
    return Check("breaker inrush", st, msg, _IEC60898, float(inrush_peak_a), float(lo), "A",
                 {"curve": curve.upper(), "rating_a": rating_a, "band_peak_a": [lo, hi]})


def breaker_max_fixtures(
    inrush_peak_per_lamp_a: float, i_rms_per_lamp_a: float, rating_a: float, curve: str,
    continuous_factor: float = 0.8,
) -> dict:
    """Largest number of one fixture type a breaker carries [-].

    Two bounds: the inrush bound (lamps switched together at the voltage crest stay below
    the lower edge of the instantaneous band, IEC 60898-1) and the steady-state bound
    (``continuous_factor`` times the rating; 0.8 is the usual continuous-load allowance,
    common practice and NEC 210.19/210.20 for continuous loads).
    """
    k_lo, _ = _band(curve)
    lo = np.sqrt(2) * k_lo * rating_a
    n_inrush = (int(lo // inrush_peak_per_lamp_a)
                if np.isfinite(inrush_peak_per_lamp_a) and inrush_peak_per_lamp_a > 0 else None)
    n_steady = int(continuous_factor * rating_a // i_rms_per_lamp_a) if i_rms_per_lamp_a > 0 else None
    bounds = [n for n in (n_inrush, n_steady) if n is not None]
    return {"inrush_bound": n_inrush, "steady_bound": n_steady,
            "max_fixtures": min(bounds) if bounds else None}


def dimmer_load(
    led_power_w: float, rating_w: float, led_derating: float, min_load_w: float | None,
    total_power_w: float,
) -> Check:
    """LED load against the dimmer's rating derated for LED loads, and its minimum load.

    A phase-cut dimmer rated for filament watts carries far fewer watts of LED drivers
    (capacitive inrush and peak currents); ``led_derating`` is the usable share of the
    rating (common practice; take the dimmer maker's LED rating where published).
    """
    if not 0 < led_derating <= 1:
        raise InputError(f"led_derating: expected a fraction in (0, 1], got {led_derating}")
    allowed = rating_w * led_derating
    src = "dimmer rating derated for LED load (common practice; use the maker's LED rating)"
    if led_power_w > allowed:
        return Check("dimmer rating", "fail",
                     f"LED load {led_power_w:.0f} W exceeds the derated rating "
                     f"{allowed:.0f} W ({rating_w:.0f} W x {led_derating:g})", src,
                     float(led_power_w), float(allowed), "W")
    if min_load_w is not None and total_power_w < min_load_w:
        return Check("dimmer rating", "warn",
                     f"connected load {total_power_w:.1f} W is below the dimmer's minimum load "
                     f"{min_load_w:.0f} W: flicker, drop-out or glow when off are likely",
                     "dimmer minimum load (maker's data; common practice)",
                     float(total_power_w), float(min_load_w), "W")
    return Check("dimmer rating", "pass",
                 f"LED load {led_power_w:.0f} W within the derated rating {allowed:.0f} W", src,
                 float(led_power_w), float(allowed), "W")


_E52 = "IEC 60364-5-52:2009, Annex E, Table E.52.1 (4- and 5-core cables, balanced loads)"


def neutral_factor_iec(third_harmonic_pct: float) -> tuple[float, str]:
    """Reduction factor and the current a 4- or 5-core cable is sized on.

    ``third_harmonic_pct`` is the third-harmonic content of the line current [% of the
    line current's RMS; the reading of the table's "third harmonic content of line current"
    as I3/I_rms is from memory]. Bands: 0-15 % factor 1.0 on the line
    current; >15-33 % 0.86 on the line current; >33-45 % 0.86 on the neutral current;
    >45 % 1.0 on the neutral current.

    References
    ----------
    IEC 60364-5-52:2009, Annex E, Table E.52.1.

    >>> neutral_factor_iec(15.0), neutral_factor_iec(15.01), neutral_factor_iec(45.01)
    ((1.0, 'line'), (0.86, 'line'), (1.0, 'neutral'))
    """
    t = float(third_harmonic_pct)
    if not np.isfinite(t) or t < 0:
        raise InputError(f"third-harmonic content: expected a percentage >= 0, got {t}")
    if t <= 15:
        return 1.0, "line"
    if t <= 33:
        return 0.86, "line"
    if t <= 45:
        return 0.86, "neutral"
    return 1.0, "neutral"


def neutral_conductor(
    third_harmonic_pct: float, line_current_a: float, neutral_current_a: float,
    neutral_ampacity_a: float | None = None, imbalance: float = 0.0,
) -> Check:
    """The IEC 60364-5-52 Table E.52.1 sizing current of a 4/5-core cable and, when the
    ampacity is known, whether the neutral (and the cable) carry it.

    Sizing current: ``I_line / factor`` or ``I_neutral / factor`` by the band. The table
    assumes balanced lines whose neutral current is the third harmonic's; where the neutral
    actually carries more than the table's sizing current (other triplens, the 9th and 15th,
    or unbalanced lines), the neutral current itself is the sizing current (conservative).
    ``imbalance`` is the spread of the line currents as a fraction of the highest [-].
    """
    factor, basis = neutral_factor_iec(third_harmonic_pct)
    base = line_current_a if basis == "line" else neutral_current_a
    size_on = base / factor
    msg = (f"third harmonic {third_harmonic_pct:.0f} % of line current: Table E.52.1 sizes "
           f"the cable on the {basis} current with factor {factor:g}: {size_on:.1f} A")
    details = {"factor": factor, "basis": basis, "table_sizing_a": size_on}
    if neutral_current_a > size_on:
        size_on = neutral_current_a
        msg += (f"; the neutral carries {neutral_current_a:.1f} A (triplens beyond the 3rd or "
                f"unbalanced lines), so size on that")
        details["basis"] = "neutral (measured above the table's figure)"
    if imbalance > 0.1:
        msg += (f"; the lines differ by {100 * imbalance:.0f} % but the table is for balanced "
                "loads")
    if neutral_ampacity_a is None:
        return Check("neutral conductor", "info", msg, _E52, float(size_on), math.nan, "A", details)
    st: Status = "pass" if size_on <= neutral_ampacity_a else "fail"
    msg += f"; conductor ampacity {neutral_ampacity_a:.0f} A"
    return Check("neutral conductor", st, msg, _E52, float(size_on), float(neutral_ampacity_a),
                 "A", details)


def nec_neutral_note(nonlinear_share: float, system: str) -> Check | None:
    """The NEC note: on a four-wire wye circuit whose major portion of load is non-linear,
    the neutral counts as a current-carrying conductor (ampacity adjustment).

    References
    ----------
    NFPA 70 (NEC) 2020/2023, 310.15(E)(3).
    """
    if system != "three-phase-wye" or nonlinear_share <= 0.5:
        return None
    return Check(
        "NEC neutral", "info",
        f"{100 * nonlinear_share:.0f} % of the load is non-linear: under the US NEC, on a 4-wire "
        "wye circuit the neutral counts as a current-carrying conductor for ampacity adjustment",
        "NFPA 70 (NEC) 2023, 310.15(E)(3)", float(nonlinear_share), 0.5, "-")


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
    "no-latch": "the triac does not stay on after firing (load current below its latching or "
                "holding current): flicker or no light; add load, a bleeder, or use a "
                "trailing-edge dimmer",
    "misfire": "the dimmer fails to fire in some half cycles",
    "re-fire": "the triac fires more than once per half cycle",
    "subharmonic": "the dimmer fires only every few half cycles: visible flicker and a DC/"
                   "sub-harmonic current",
    "asymmetric": "the two half cycles differ: a DC component and even harmonics",
    "drop-out": "the lamp's driver shuts down at this setting",
    "glow-when-off": "the dimmer's own supply current lights the lamp when off",
}

#: The status a circuit-model flag gives the dimmer-compatibility check (others: warn).
FLAG_STATUS: dict[str, Status] = {
    "no-solution": "fail", "no-latch": "fail", "misfire": "fail", "subharmonic": "fail",
    "re-fire": "warn", "drop-out": "warn", "glow-when-off": "warn"}

_NEC_CONTINUOUS = ("continuous load at most 80 % of the breaker rating (common practice; "
                   "NEC 210.20(A))")


def breaker_load(i_rms_a: float, rating_a: float) -> Check:
    """Steady current against the breaker rating and the 80 % continuous-load allowance."""
    if i_rms_a > rating_a:
        return Check("breaker load", "fail", f"{i_rms_a:.2f} A exceeds the {rating_a:g} A "
                     "rating", _NEC_CONTINUOUS, i_rms_a, rating_a, "A")
    if i_rms_a > 0.8 * rating_a:
        return Check("breaker load", "warn", f"{i_rms_a:.2f} A is over 80 % of the "
                     f"{rating_a:g} A rating", _NEC_CONTINUOUS, i_rms_a, 0.8 * rating_a, "A")
    return Check("breaker load", "pass", f"{i_rms_a:.2f} A within 80 % of {rating_a:g} A",
                 _NEC_CONTINUOUS, i_rms_a, 0.8 * rating_a, "A")


def circuit_checks(inst: Installation, c: Circuit, cs: CaseResult, i_rms_a: float
                   ) -> tuple[tuple[Check, ...], float, dict[str, dict[str, Any]]]:
    """The checks of one circuit at one scenario, its summed inrush peak [A] and the
    largest number of each fixture type its breaker carries."""
    inrush = sum(g.count * g.inrush_peak_one_a for g in cs.groups
                 if np.isfinite(g.inrush_peak_one_a))
    checks = [breaker_inrush(inrush, c.breaker_a, c.breaker_curve)]
    unknown = [g.fixture for g in cs.groups if not np.isfinite(g.inrush_peak_one_a)]
    if unknown:
        checks.append(Check("breaker inrush", "info",
                            f"inrush of {', '.join(unknown)} unknown (a steady-state record); "
                            "the inrush figure covers the modelled fixtures only",
                            "measured record"))
    checks.append(breaker_load(i_rms_a, c.breaker_a))
    if c.conductor_ampacity_a is not None:
        st: Status = "pass" if i_rms_a <= c.conductor_ampacity_a else "fail"
        checks.append(Check("conductor", st, f"{i_rms_a:.2f} A against "
                            f"{c.conductor_ampacity_a:g} A ampacity", "conductor ampacity as given",
                            i_rms_a, c.conductor_ampacity_a, "A"))
    fx = inst.fixtures
    if c.dimmer != "none" and c.dimmer_rating_w is not None:
        led_w = sum(g.count * fx[g.fixture].power_w for g in cs.groups if fx[g.fixture].nonlinear)
        connected_w = sum(g.count * fx[g.fixture].power_w for g in cs.groups)
        checks.append(dimmer_load(led_w, c.dimmer_rating_w, c.led_derating,
                                  c.dimmer_min_load_w, connected_w))
    for fl in cs.flags:
        checks.append(Check("dimmer compatibility", FLAG_STATUS.get(fl, "warn"),
                            f"the circuit model reports '{fl}' at this setting: "
                            + FLAG_TEXT.get(fl, "see the lamp model"),
                            "periodic steady-state circuit model of dimmer and drivers",
                            details={"flag": fl}))
    mx = {g.fixture: breaker_max_fixtures(g.inrush_peak_one_a, g.i_rms_one_a, c.breaker_a,
                                          c.breaker_curve) for g in cs.groups}
    return tuple(checks), float(inrush), mx


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
        if sup.system == "three-phase-wye":
            lo = min(r.i_rms_a for r in lines.values())
            checks.append(neutral_conductor(lines[worst].i3_pct_of_rms, max_line,
                                            neutral.i_rms_a,
                                            panel.neutral_ampacity_a if panel else None,
                                            (max_line - lo) / max_line))
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
