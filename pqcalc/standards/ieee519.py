"""IEEE Std 519 at the point of common coupling (PCC): current and voltage distortion.

:func:`evaluate_pcc` takes the current spectrum at the PCC (phasors in A, e.g. the sum of an
installation's fixtures on one phase of the feeder), the maximum demand load current I_L
and the short-circuit current I_SC there, and returns per-order and TDD verdicts from the
current distortion table (the row chosen by I_SC / I_L) and, when the spectrum carries a
voltage, the individual and total voltage distortion verdicts.
:func:`transformer_short_circuit_current` gives I_SC at a transformer's secondary from its
rating, per-unit impedance and voltage.

Even orders: the 2014 edition limits them to 25 % of the odd limit of their band; the 2022
edition relaxed that (50 % up to h = 6, 100 % above, from a secondary summary, memory).
The limit values are in ``standards_limits/ieee519_*.toml``.

References
----------
IEEE Std 519-2014 and IEEE Std 519-2022, Table 1 (voltage) and Table 2 (current,
120 V through 69 kV).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from ..errors import InputError
from ..spectrum import Spectrum
from .limits import CurrentDistortionLimits, VoltageDistortionLimits, load_limits
from .results import CAUTION, Check, RuleResult, Verdict

__all__ = [
    "Edition",
    "EDITIONS",
    "PccResult",
    "evaluate_pcc",
    "transformer_short_circuit_current",
]

Edition = Literal["2014", "2022"]
#: Editions with limit tables, declared once for the library and the CLI.
EDITIONS: tuple[str, ...] = get_args(Edition)


@dataclass(frozen=True)
class PccResult:
    """IEEE 519 verdicts at the point of common coupling.

    Attributes
    ----------
    isc_il
        I_SC / I_L [-]; ``row`` is the label of the table row it selects.
    current
        Per-order checks [fraction of I_L] and the TDD check.
    voltage
        Individual voltage harmonics and voltage THD [fraction of V1], or None without a
        voltage in the spectrum.
    """

    edition: str
    voltage_kv: float
    demand_current_a: float
    short_circuit_current_a: float
    isc_il: float
    row: str
    current: RuleResult
    voltage: RuleResult | None
    notes: tuple[str, ...]

    @property
    def current_verdict(self) -> Verdict:
        return self.current.verdict

    @property
    def voltage_verdict(self) -> Verdict | None:
        return None if self.voltage is None else self.voltage.verdict

    @property
    def verdict(self) -> Verdict:
        ok = self.current.verdict == "pass" and self.voltage_verdict in (None, "pass")
        return "pass" if ok else "fail"

    @property
    def tdd(self) -> float:
        """Total demand distortion [fraction of I_L]."""
        return next(c.value for c in self.current.checks if c.name == "TDD")

    def to_dict(self) -> dict:
        return {
            "standard": f"IEEE Std 519-{self.edition}",
            "voltage_kv": self.voltage_kv,
            "demand_current_a": self.demand_current_a,
            "short_circuit_current_a": self.short_circuit_current_a,
            "isc_il": self.isc_il,
            "row": self.row,
            "verdict": self.verdict,
            "current": self.current.to_dict(),
            "voltage": None if self.voltage is None else self.voltage.to_dict(),
            "notes": list(self.notes),
        }


def _positive(x: float, name: str, unit: str) -> float:
    if x is None or not (math.isfinite(x) and x > 0):
        raise InputError(f"{name}: expected a positive value [{unit}], got {x}")
    return float(x)


def evaluate_pcc(
    spectrum_at_pcc: Spectrum,
    demand_current_a: float,
    short_circuit_current_a: float,
    edition: Edition = "2022",
    voltage_kv: float = 0.4,
    max_order: int = 50,
) -> PccResult:
    """IEEE 519 current and voltage distortion verdicts at the PCC.

    Parameters
    ----------
    spectrum_at_pcc
        Current phasors at the PCC [A] (one phase), with the bus voltage when known.
    demand_current_a
        I_L, the maximum demand load current (fundamental) at the PCC [A].
    short_circuit_current_a
        I_SC, the maximum short-circuit current at the PCC [A].
    edition
        ``"2014"`` or ``"2022"`` (they differ in the even orders).
    voltage_kv
        Nominal bus voltage at the PCC, line to line [kV]; selects the voltage limits and
        must lie within the current table's 120 V to 69 kV.
    max_order
        Highest order checked and summed in TDD and THD [-] (50 in the standard).

    Returns
    -------
    PccResult

    References
    ----------
    IEEE Std 519-2014 / 519-2022, Tables 1 and 2; TDD over orders 2..50 (memory).

    Examples
    --------
    >>> import numpy as np
    >>> from pqcalc.spectrum import Spectrum
    >>> p = np.zeros(51, complex); p[1] = 100; p[5] = 3.0
    >>> s = Spectrum(p, 50.0, float(np.sqrt(100**2 + 9)), 150.0)
    >>> r = evaluate_pcc(s, 100.0, 3000.0, "2014", 0.4)
    >>> r.row, r.current_verdict, round(r.tdd, 4)
    ('20 to < 50', 'pass', 0.03)
    """
    if edition not in EDITIONS:
        raise InputError(f"edition: expected one of {', '.join(EDITIONS)}, got {edition!r}")
    il = _positive(demand_current_a, "demand_current_a", "A")
    isc = _positive(short_circuit_current_a, "short_circuit_current_a", "A")
    kv = _positive(voltage_kv, "voltage_kv", "kV")
    cur = load_limits(f"ieee519:{edition}:current")
    vol = load_limits(f"ieee519:{edition}:voltage")
    assert isinstance(cur, CurrentDistortionLimits) and isinstance(vol, VoltageDistortionLimits)
    if not cur.voltage_kv_min <= kv <= cur.voltage_kv_max:
        raise InputError(
            f"voltage_kv: {kv:g} kV is outside the {cur.voltage_kv_min * 1e3:g} V to "
            f"{cur.voltage_kv_max:g} kV of {cur.source.citation()}; the tables for higher "
            "voltages are not in pqcalc's data"
        )
    s = spectrum_at_pcc
    if s.max_order < 1 or not s.i1_a > 0:
        raise InputError("spectrum_at_pcc: no fundamental current (order 1 is zero)")
    isc_il = isc / il
    row = cur.row_for(isc_il)
    top = min(max_order, s.max_order)
    notes = [f"I_SC/I_L = {isc_il:.4g}: row {row.label()} of {cur.source.citation()}"]
    if s.i1_a > il * (1 + 1e-9):
        notes.append(f"the fundamental at the PCC ({s.i1_a:.4g} A) exceeds the given maximum "
                     f"demand current I_L ({il:.4g} A); check I_L")
    if any(c != "seen" for _, _, c in cur.even):
        notes.append(f"the {edition} treatment of even orders rests on memory")
    checks = []
    for h in range(2, top + 1):
        lim = cur.limit(h, isc_il)
        if lim is None:
            continue
        checks.append(Check.against(f"I{h}", h, float(abs(s.current_a[h])) / il, lim, "fraction of IL"))
    tdd = float(np.sqrt(np.sum(np.abs(s.current_a[2 : top + 1]) ** 2)) / il)
    checks.append(Check.against("TDD", None, tdd, row.tdd, "fraction of IL", note=f"orders 2..{top}"))
    if top < 50:
        notes.append(f"orders above {top} are not in the spectrum and were not checked")
    current = RuleResult(f"IEEE 519-{edition} current", cur.source.citation(), tuple(checks),
                         True, ())

    voltage = None
    if s.voltage_v is not None and abs(s.voltage_v[1]) > 0:
        vrow = vol.row_for(kv)
        v1 = float(abs(s.voltage_v[1]))
        vtop = min(vol.thd_max_order, s.max_order)
        vchecks = [Check.against(f"V{h}", h, float(abs(s.voltage_v[h])) / v1, vrow.individual,
                         "fraction of V1") for h in range(2, vtop + 1)]
        thd_v = float(np.sqrt(np.sum(np.abs(s.voltage_v[2 : vtop + 1]) ** 2)) / v1)
        vchecks.append(Check.against("THD", None, thd_v, vrow.thd, "fraction of V1",
                             note=f"orders 2..{vtop}"))
        vnotes = () if vrow.certainty == "seen" else ("this row rests on memory",)
        voltage = RuleResult(f"IEEE 519-{edition} voltage", vol.source.citation(),
                             tuple(vchecks), True, vnotes)
    else:
        notes.append("no voltage at the PCC in the spectrum: voltage distortion not checked")
    notes.append(CAUTION)
    return PccResult(edition, kv, il, isc, isc_il, row.label(), current, voltage, tuple(notes))


def transformer_short_circuit_current(
    rating_kva: float,
    impedance_pct: float,
    voltage_v: float,
    phases: Literal[1, 3] = 3,
    source_short_circuit_mva: float | None = None,
) -> float:
    """Short-circuit current at a transformer's secondary terminals [A].

    ``I_SC = I_rated / z``, with ``I_rated = S / (sqrt(3) V_LL)`` (three-phase) or ``S / V``
    (single-phase) and ``z = impedance_pct / 100``. Without ``source_short_circuit_mva`` the
    upstream network is taken as infinitely strong, which overstates I_SC and so I_SC/I_L
    (and the limits it selects); with it, the source impedance referred to the secondary
    is added to the transformer's (magnitudes added, the same X/R assumed for both, which
    errs on the low side of I_SC).

    Parameters
    ----------
    rating_kva
        Rated apparent power [kVA].
    impedance_pct
        Short-circuit impedance [% on the rating].
    voltage_v
        Secondary voltage [V], line to line for three-phase.
    phases
        1 or 3.
    source_short_circuit_mva
        Short-circuit power of the network at the primary [MVA], or None.

    References
    ----------
    Per-unit short-circuit calculation, e.g. IEEE Std 399-1997 (Brown Book), chapter 7
    (from memory); IEC 60909-0:2016, 6.3 (transformer impedance, from memory).

    Examples
    --------
    >>> round(transformer_short_circuit_current(1000, 5.75, 480))
    20918
    """
    s = _positive(rating_kva, "rating_kva", "kVA") * 1e3
    z = _positive(impedance_pct, "impedance_pct", "%") / 100.0
    v = _positive(voltage_v, "voltage_v", "V")
    if phases == 3:
        i_rated = s / (math.sqrt(3) * v)
    elif phases == 1:
        i_rated = s / v
    else:
        raise InputError(f"phases: expected 1 or 3, got {phases}")
    if source_short_circuit_mva is None:
        return i_rated / z
    ssc = _positive(source_short_circuit_mva, "source_short_circuit_mva", "MVA") * 1e6
    z_source = s / ssc  # per unit on the transformer's rating
    return i_rated / (z + z_source)
