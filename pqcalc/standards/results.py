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

__all__ = ["Verdict", "Status", "Bound", "Role", "Check", "RuleResult", "FixtureResult",
           "REL_TOL", "CAUTION"]

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
            rel = self.relative_margin
            d["margin_pct"] = 100.0 * rel if math.isfinite(rel) else None
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
        """Smallest relative margin [-] (:attr:`Check.relative_margin`) of the checks that
        count (for choosing the closest rule)."""
        c = self.closest_check
        return c.relative_margin if c is not None else float("inf")

    @property
    def closest_check(self) -> Check | None:
        """The check with the smallest relative margin, disregarded checks left out (None
        when no check has a limit)."""
        cs = [c for c in self.checks if c.limit and math.isfinite(c.limit) and not c.disregarded]
        return min(cs, key=lambda c: c.relative_margin, default=None)

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


#: What a fixture result counts for: the formal verdict of the fixture type (``"verdict"``),
#: an informative assessment kept out of the verdict (``"informative"``), or a state held
#: to pass/fail at an owner's request beyond the standard's own test (``"strict"``).
Role = Literal["verdict", "informative", "strict"]


@dataclass(frozen=True)
class FixtureResult:
    """Verdict for one fixture in one compliance test state.

    Attributes
    ----------
    fixture, state
        Labels for the table: the fixture and its compliance test state (full output, a
        dimmed state).
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
    role
        ``"verdict"``: the result decides the fixture type's verdict; ``"informative"``:
        an emission assessment outside the standard's test or scope (a dimmed state behind
        an independent dimmer, a supply below the standard's voltage scope), shown and never
        the reason a verdict fails (``verdict`` then says only whether the figures meet the
        limits); ``"strict"``: such a state held to pass/fail at the owner's request.
    basis
        Why the result has its role, in words ("" for the formal verdict).
    """

    fixture: str
    state: str
    p_w: float
    pf: float
    verdict: Verdict
    rule: str
    rules: tuple[RuleResult, ...] = ()
    applicable: bool = True
    undetermined: str | None = None
    notes: tuple[str, ...] = field(default=())
    role: Role = "verdict"
    basis: str = ""

    @property
    def informative(self) -> bool:
        """True when the result is shown for information and kept out of every verdict."""
        return self.role == "informative"

    @property
    def counts(self) -> bool:
        """True when the result can fail a verdict (formal or strict)."""
        return self.role != "informative"

    @property
    def failed(self) -> bool:
        """True when the result fails a verdict: over a limit and not informative."""
        return self.verdict == "fail" and self.counts

    @property
    def status(self) -> str:
        """``"pass"``, ``"fail"``, ``"info"`` (informative) or ``"n/a"`` (no limits here)."""
        if self.informative:
            return "info"
        if not self.applicable:
            return "n/a"
        return self.verdict

    @property
    def label(self) -> str:
        """The status as printed: PASS, FAIL, NOT APPLICABLE, INFORMATIVE (within limits),
        INFORMATIVE (above limits)."""
        if self.informative:
            if not self.rules:
                return "INFORMATIVE (not evaluated)"
            return "INFORMATIVE (" + ("within" if self.verdict == "pass" else "above") + \
                " limits)"
        if not self.applicable:
            return "NOT APPLICABLE"
        return self.verdict.upper() + (" (strict)" if self.role == "strict" else "")

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
            "state": self.state,
            "p_w": self.p_w,
            "pf": self.pf,
            # the verdict as it counts: "info" for an informative result, whose comparison
            # with the limits is "limits_met"
            "verdict": "info" if self.informative else self.verdict,
            "limits_met": self.verdict == "pass",
            "role": self.role,
            "basis": self.basis,
            "rule": self.rule,
            "applicable": self.applicable,
            "undetermined": self.undetermined,
            "orders": [c.to_dict() for c in dec.order_checks()] if dec else [],
            "checks": [c.to_dict() for c in dec.checks if c.order is None] if dec else [],
            "rules": [r.to_dict() for r in self.rules],
            "notes": list(self.notes),
        }
