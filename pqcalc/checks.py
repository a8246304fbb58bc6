"""Circuit and panel checks: breakers, dimmers, neutral conductors, transformers.

Each check is a pure function returning a :class:`Check`: a status, the figure it looked at,
the limit, and the source of the rule. Every check that guides the choice of a conductor,
breaker, dimmer or transformer carries :data:`CAUTION` in the outputs that show it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from .errors import InputError

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
]

CAUTION = (
    "These figures support, and never replace, the local electrical code and the design of a "
    "licensed professional; confirm conductor, breaker, dimmer and transformer choices with "
    "the manufacturers' data and the authority having jurisdiction."
)

Status = Literal["pass", "fail", "warn", "info"]


@dataclass(frozen=True)
class Check:
    """One check's outcome."""

    name: str
    status: Status
    message: str
    source: str
    value: float | None = None
    limit: float | None = None
    unit: str = ""
    details: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {
            "name": self.name, "status": self.status, "message": self.message,
            "source": self.source, "value": self.value, "limit": self.limit, "unit": self.unit,
            **({"details": self.details} if self.details else {}),
        }


#: IEC 60898-1 instantaneous-trip bands, multiples of the rated current In (rms).
BREAKER_CURVES: dict[str, tuple[float, float]] = {"B": (3.0, 5.0), "C": (5.0, 10.0),
                                                   "D": (10.0, 20.0)}
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
        return Check("neutral conductor", "info", msg, _E52, float(size_on), None, "A", details)
    st = "pass" if size_on <= neutral_ampacity_a else "fail"
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
        return Check("transformer", "info",
                     f"F_HL {harmonic_loss_factor:.2f} (this load's spectrum, orders 1..50, most "
                     f"loaded line): a standard transformer serving only this load may carry "
                     f"{100 * i_max_pu:.0f} % of its rated current; a K-rated replacement "
                     f"needs {_k_text(k_needed)}", src, i_max_pu, None,
                     "pu", det)
    allowed = i_max_pu * rated_current_a
    st = "pass" if load_current_a <= allowed else "fail"
    return Check("transformer", st,
                 f"F_HL {harmonic_loss_factor:.2f} (this load's spectrum, orders 1..50, most "
                 f"loaded line): if the whole load had this spectrum, the derated capacity "
                 f"would be {allowed:.0f} A "
                 f"({100 * i_max_pu:.0f} % of {rated_current_a:.0f} A) against a load of "
                 f"{load_current_a:.0f} A; a K-rated replacement needs {_k_text(k_needed)}",
                 src, float(load_current_a), float(allowed), "A", det)
