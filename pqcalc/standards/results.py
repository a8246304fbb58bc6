"""Named results of the limit evaluators: one check, one rule, one fixture state.

A :class:`Check` compares one value with one limit (a harmonic order, a THD, an angle of
the waveform test). A :class:`RuleResult` gathers the checks of one rule (a table, or one
of the alternatives for small lighting equipment). :class:`FixtureResult` is the verdict
for one fixture at one setting, naming the rule that decided it.

Values inside are SI or fractions; :meth:`to_dict` converts fractions to percent for the
JSON form (the ``unit`` field says which).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

__all__ = ["Verdict", "Check", "RuleResult", "FixtureResult", "REL_TOL", "CAUTION"]

Verdict = Literal["pass", "fail"]

#: Relative tolerance of the comparison with a limit: a value within 1e-9 of the limit
#: counts as at the limit (passes). It absorbs floating-point round-off of ratios such as
#: I_h / I_1; it is many orders below any measurement resolution.
REL_TOL = 1e-9

#: Shown with every compliance table.
CAUTION = (
    "These results support, and do not replace, the judgement of a licensed professional; "
    "the applicable standard text, the local electrical code and the utility's requirements "
    "govern."
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
    """One value against one limit.

    Attributes
    ----------
    quantity
        What is checked: ``"I3"``, ``"THD"``, ``"TDD"``, ``"V5"``, ``"reach threshold"``...
    order
        Harmonic order, or None for a figure that is not one order.
    value, limit
        In ``unit`` (``"A"``, ``"fraction of I1"``, ``"fraction of IL"``,
        ``"fraction of V1"``, ``"deg"``).
    bound
        ``"max"``: passes when value <= limit; ``"min"``: passes when value >= limit.
    disregarded
        True when the value is below the level under which the standard disregards it;
        the check then passes whatever the limit.
    """

    quantity: str
    order: int | None
    value: float
    limit: float
    unit: str
    bound: Literal["max", "min"] = "max"
    disregarded: bool = False
    note: str = ""

    @property
    def margin(self) -> float:
        """Distance to the limit in ``unit``; negative when the limit is exceeded."""
        return self.limit - self.value if self.bound == "max" else self.value - self.limit

    @property
    def verdict(self) -> Verdict:
        if self.disregarded:
            return "pass"
        tol = REL_TOL * max(abs(self.limit), abs(self.value))
        return "pass" if self.margin >= -tol else "fail"

    def to_dict(self) -> dict:
        unit, k = _DISPLAY.get(self.unit, (self.unit, 1.0))
        d = {
            "quantity": self.quantity,
            "order": self.order,
            "value": self.value * k,
            "limit": self.limit * k,
            "unit": unit,
            "bound": self.bound,
            "margin": self.margin * k,
            "verdict": self.verdict,
        }
        if self.disregarded:
            d["disregarded"] = True
        if self.note:
            d["note"] = self.note
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
        return "pass" if all(c.verdict == "pass" for c in self.checks) else "fail"

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
