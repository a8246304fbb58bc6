"""Named results: one check, one rule, one fixture state; the caution text.

A :class:`Check` is one figure judged by one rule. It is the one check type of pqcalc: a
standard's limit check (a harmonic order, a THD, an angle of the waveform test; made with
:meth:`Check.against`, its status follows from the value and the limit) and an
installation's check (a breaker, a dimmer, a conductor; made with a status, a message and
the source of the rule) are the same type, read the same way by the terminal, the exports
and the report. A :class:`RuleResult` gathers the checks of one rule (a table, or one of the
alternatives for small lighting equipment). :class:`FixtureResult` is the verdict for one
fixture in one state, naming the rule that decided it.

Values inside are SI or fractions; :meth:`Check.to_dict` converts fractions to percent for
the JSON form (the ``unit`` field says which).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

__all__ = ["Verdict", "Status", "Bound", "Check", "RuleResult", "FixtureResult", "REL_TOL",
           "CAUTION"]

Verdict = Literal["pass", "fail"]
#: A check's outcome: a limit met or not, a warning, or information without a limit.
Status = Literal["pass", "fail", "warn", "info"]
#: ``"max"``: a value passes at or below its limit; ``"min"``: at or above.
Bound = Literal["max", "min"]

#: Relative tolerance of the comparison with a limit: a value within 1e-9 of the limit
#: counts as at the limit (passes). It absorbs floating-point round-off of ratios such as
#: I_h / I_1; it is many orders below any measurement resolution.
REL_TOL = 1e-9

#: The caution, the one text every output that guides a choice carries.
CAUTION = (
    "These figures support, and never replace, the applicable standard texts, the local "
    "electrical code and the design of a licensed professional; confirm conductor, breaker, "
    "dimmer and transformer choices with the manufacturers' data and the authority having "
    "jurisdiction."
)

#: Units of Check values and how the JSON form shows them: (display unit, factor).
_DISPLAY = {
    "A": ("A", 1.0),
    "fraction of I1": ("% of I1", 100.0),
    "fraction of IL": ("% of IL", 100.0),
    "fraction of V1": ("% of V1", 100.0),
    "fraction of peak": ("% of peak", 100.0),
    "deg": ("deg", 1.0),
}


@dataclass(frozen=True)
class Check:
    """One figure judged by one rule.

    Attributes
    ----------
    name
        What is checked: ``"I3"``, ``"THD"``, ``"TDD"``, ``"reach threshold"``,
        ``"breaker load"``, ``"neutral conductor"``...
    status
        ``"pass"``, ``"fail"``, ``"warn"`` or ``"info"``.
    message, source
        What was found, in words; the rule's source (standard, edition, clause; or "common
        practice").
    value, limit
        In ``unit`` (``"A"``, ``"W"``, ``"fraction of I1"``, ``"fraction of IL"``,
        ``"fraction of V1"``, ``"deg"``, ``"-"``...); NaN where there is none (``null`` in
        the JSON form).
    details
        Further figures for the exports.
    order
        Harmonic order, or None for a figure that is not one order.
    bound
        For a limit check: ``"max"`` (passes when value <= limit) or ``"min"``; None for a
        check whose status was judged otherwise.
    disregarded
        True when the value is below the level under which the standard disregards it;
        the check then passes whatever the limit.
    """

    name: str
    status: Status
    message: str = ""
    source: str = ""
    value: float = math.nan
    limit: float = math.nan
    unit: str = ""
    details: Mapping[str, Any] = field(default_factory=dict)
    order: int | None = None
    bound: Bound | None = None
    disregarded: bool = False
    note: str = ""

    @classmethod
    def against(cls, name: str, order: int | None, value: float, limit: float, unit: str,
                bound: Bound = "max", disregarded: bool = False, note: str = "",
                source: str = "") -> Check:
        """A limit check: its status is ``pass`` when the value meets the limit (within
        :data:`REL_TOL`) or is disregarded, else ``fail``."""
        margin = limit - value if bound == "max" else value - limit
        tol = REL_TOL * max(abs(limit), abs(value))
        status: Status = "pass" if disregarded or margin >= -tol else "fail"
        return cls(name, status, "", source, value, limit, unit, {}, order, bound,
                   disregarded, note)

    @property
    def margin(self) -> float:
        """Distance to the limit in ``unit``, positive when the limit is met and negative
        when it is exceeded (NaN without a value and a limit)."""
        return self.limit - self.value if self.bound != "min" else self.value - self.limit

    @property
    def relative_margin(self) -> float:
        """The margin as a fraction of the limit [-] (NaN without a limit): the one margin
        pqcalc reports, as ``margin_pct`` in the JSON form."""
        return self.margin / abs(self.limit) if self.limit else math.nan

    def to_dict(self) -> dict[str, Any]:
        unit, k = _DISPLAY.get(self.unit, (self.unit, 1.0))
        d: dict[str, Any] = {"name": self.name, "status": self.status}
        if self.order is not None:
            d["order"] = self.order
        if self.message:
            d["message"] = self.message
        if self.source:
            d["source"] = self.source
        d["value"] = self.value * k if math.isfinite(self.value) else None
        d["limit"] = self.limit * k if math.isfinite(self.limit) else None
        d["unit"] = unit
        if self.bound is not None:
            d["bound"] = self.bound
            d["margin"] = self.margin * k
        if self.disregarded:
            d["disregarded"] = True
        if self.note:
            d["note"] = self.note
        if self.details:
            d["details"] = dict(self.details)
        return d


@dataclass(frozen=True)
class RuleResult:
    """The checks of one rule and its verdict.

    ``evaluated`` is False when the rule could not be applied (e.g. the waveform test
    without a voltage channel); ``verdict`` is then ``"fail"`` (not shown to pass) and
    ``notes`` says why.
    """

    rule: str
    reference: str
    checks: tuple[Check, ...]
    evaluated: bool = True
    notes: tuple[str, ...] = ()

    @property
    def verdict(self) -> Verdict:
        if not self.evaluated:
            return "fail"
        return "pass" if all(c.status == "pass" for c in self.checks) else "fail"

    @property
    def worst_margin_ratio(self) -> float:
        """Smallest margin relative to its limit [-] (for choosing the closest rule)."""
        r = [c.margin / abs(c.limit) for c in self.checks if c.limit and not c.disregarded]
        return min(r) if r else float("inf")

    def order_checks(self) -> tuple[Check, ...]:
        return tuple(c for c in self.checks if c.order is not None)

    def to_dict(self) -> dict:
        return {
            "rule": self.rule,
            "reference": self.reference,
            "evaluated": self.evaluated,
            "verdict": self.verdict,
            "checks": [c.to_dict() for c in self.checks],
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class FixtureResult:
    """Verdict for one fixture at one setting.

    Attributes
    ----------
    fixture, setting
        Labels for the table.
    p_w, pf
        Active input power [W] and circuit power factor lambda [-] used.
    rule
        The rule that decided the verdict (the one that passed, or the closest one when
        none did).
    rules
        Every rule evaluated (for small lighting equipment: options a, b and c).
    applicable
        False when the standard sets no limits here (below 5 W, or outside its scope);
        the verdict is then ``"pass"``.
    undetermined
        Why the verdict could not be settled (e.g. only the waveform test could still
        pass and it needs the voltage), or None.
    """

    fixture: str
    setting: str
    p_w: float
    pf: float
    verdict: Verdict
    rule: str
    rules: tuple[RuleResult, ...] = ()
    applicable: bool = True
    undetermined: str | None = None
    notes: tuple[str, ...] = field(default=())

    @property
    def deciding(self) -> RuleResult | None:
        for r in self.rules:
            if r.rule == self.rule:
                return r
        return None

    def to_dict(self) -> dict:
        dec = self.deciding
        return {
            "fixture": self.fixture,
            "setting": self.setting,
            "p_w": self.p_w,
            "pf": self.pf,
            "verdict": self.verdict,
            "rule": self.rule,
            "applicable": self.applicable,
            "undetermined": self.undetermined,
            "orders": [c.to_dict() for c in dec.order_checks()] if dec else [],
            "checks": [c.to_dict() for c in dec.checks if c.order is None] if dec else [],
            "rules": [r.to_dict() for r in self.rules],
            "notes": list(self.notes),
        }
