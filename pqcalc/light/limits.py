"""The EU ecodesign requirements for light sources: limits as data, verdicts as results.

The limits live in ``standards_limits/eu_2019_2020_light_sources.toml`` (Commission
Regulation (EU) 2019/2020, Annex II, Table 4, as amended by Regulation (EU) 2021/341), each
with its dates, condition, source note and certainty. :func:`load_eu_light_source_limits`
reads them; :func:`eu_ecodesign_check` judges a lamp's figures at full load:

- flicker: ``Pst_LM <= 1.0``;
- stroboscopic effect: ``SVM <= 0.9`` from 1 September 2021, ``<= 0.4`` from
  1 September 2024 (not for lamps meant for outdoor, industrial or other applications whose
  lighting standards allow CRI < 80: ``strobe_exempt=True``);
- displacement factor ``cos(phi1)`` by on-mode power: no limit at or below 5 W, >= 0.5 above
  5 W, >= 0.7 above 10 W, >= 0.9 above 25 W.

The rules apply to LED and OLED mains light sources at full load; figures of a dimmed state
are reported as informative (``full_load=False``). A verdict supports, and never replaces,
the regulation's text and the harmonised measurement standards.
"""

from __future__ import annotations

import datetime as _dt
import functools
import math
import sys
from dataclasses import dataclass
from importlib import resources
from typing import Literal

from ..errors import InputError
from ..standards.results import Check

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = [
    "EU_LIMITS_FILE",
    "EuRequirement",
    "EuLightSourceLimits",
    "EcodesignVerdict",
    "EcodesignResult",
    "load_eu_light_source_limits",
    "eu_ecodesign_check",
    "QUANTITIES",
]

EU_LIMITS_FILE = "eu_2019_2020_light_sources.toml"
#: the quantities the file limits
QUANTITIES = ("pst_lm", "svm", "displacement_factor")
_CERTAINTIES = ("seen", "secondary", "memory", "computed", "common practice")


@dataclass(frozen=True)
class EuRequirement:
    """One row of the requirements: a limit on one quantity, over dates and powers.

    ``limit`` is None where the row sets no limit (small lamps' displacement factor).
    A power row applies when ``above_w < P_on <= up_to_w``.
    """

    quantity: str
    bound: Literal["max", "min"]
    limit: float | None
    valid_from: _dt.date
    valid_until: _dt.date | None
    condition: str
    certainty: str
    source_note: str
    method: str = ""
    above_w: float | None = None
    up_to_w: float | None = None

    def in_force(self, on: _dt.date) -> bool:
        return self.valid_from <= on and (self.valid_until is None or on <= self.valid_until)

    def covers_power(self, power_w: float | None) -> bool:
        if self.above_w is None and self.up_to_w is None:
            return True
        if power_w is None:
            return False
        lo = -math.inf if self.above_w is None else self.above_w
        hi = math.inf if self.up_to_w is None else self.up_to_w
        return lo < power_w <= hi


@dataclass(frozen=True)
class EuLightSourceLimits:
    """The requirements of the data file and its source."""

    key: str
    standard: str
    edition: str
    table: str
    applies_from: _dt.date
    scope: str
    certainty: str
    note: str
    requirements: tuple[EuRequirement, ...]
    file: str = EU_LIMITS_FILE

    def citation(self) -> str:
        return f"{self.standard}, {self.table}"

    def find(self, quantity: str, on: _dt.date, power_w: float | None = None
             ) -> EuRequirement | None:
        """The row limiting ``quantity`` on date ``on`` (at ``power_w`` for power rows)."""
        if quantity not in QUANTITIES:
            raise InputError(f"quantity: expected one of {', '.join(QUANTITIES)}, got "
                             f"{quantity!r}")
        for r in self.requirements:
            if r.quantity == quantity and r.in_force(on) and r.covers_power(power_w):
                return r
        return None


def _date(v, where: str) -> _dt.date:
    if isinstance(v, _dt.date):
        return v
    try:
        return _dt.date.fromisoformat(str(v))
    except ValueError:
        raise InputError(f"standards_limits/{EU_LIMITS_FILE}: {where}: expected a date "
                         f"YYYY-MM-DD, got {v!r}") from None


@functools.lru_cache(maxsize=1)
def load_eu_light_source_limits() -> EuLightSourceLimits:
    """Read the EU ecodesign light-source requirements from ``standards_limits/``.

    Examples
    --------
    >>> lim = load_eu_light_source_limits()
    >>> import datetime
    >>> lim.find("svm", datetime.date(2025, 1, 1)).limit
    0.4
    """
    entry = resources.files("pqcalc.standards_limits").joinpath(EU_LIMITS_FILE)
    try:
        d = tomllib.loads(entry.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"standards_limits/{EU_LIMITS_FILE}: missing from the installation"
                         ) from None
    except tomllib.TOMLDecodeError as e:
        raise InputError(f"standards_limits/{EU_LIMITS_FILE}: not valid TOML: {e}") from None
    try:
        s = d["source"]
        rows = []
        for k, r in enumerate(d["requirement"]):
            where = f"requirement[{k}]"
            q = r["quantity"]
            if q not in QUANTITIES:
                raise InputError(f"standards_limits/{EU_LIMITS_FILE}: {where}: quantity "
                                 f"{q!r} is not one of {QUANTITIES}")
            c = r.get("certainty", s.get("certainty", "memory"))
            if c not in _CERTAINTIES:
                raise InputError(f"standards_limits/{EU_LIMITS_FILE}: {where}: certainty "
                                 f"{c!r} is not one of {_CERTAINTIES}")
            if r["bound"] not in ("max", "min"):
                raise InputError(f"standards_limits/{EU_LIMITS_FILE}: {where}: bound must be "
                                 "'max' or 'min'")
            limit = None if r.get("no_limit", False) else float(r["limit"])
            rows.append(EuRequirement(
                q, r["bound"], limit, _date(r["from"], where + ".from"),
                _date(r["until"], where + ".until") if "until" in r else None,
                r.get("condition", ""), c, r.get("source_note", ""), r.get("method", ""),
                float(r["above_w"]) if "above_w" in r else None,
                float(r["up_to_w"]) if "up_to_w" in r else None))
        return EuLightSourceLimits(s["key"], s["standard"], s["edition"], s["table"],
                                   _date(s["applies_from"], "source.applies_from"),
                                   s.get("scope", ""), s.get("certainty", "memory"),
                                   s.get("note", ""), tuple(rows))
    except KeyError as e:
        raise InputError(f"standards_limits/{EU_LIMITS_FILE}: missing field {e.args[0]!r}"
                         ) from None


@dataclass(frozen=True)
class EcodesignVerdict:
    """The verdict on one quantity.

    ``verdict``: ``"pass"``, ``"fail"``, ``"no limit"`` (the row sets none, e.g. <= 5 W),
    ``"exempt"`` (SVM of an exempt application), ``"not evaluated"`` (value not given),
    ``"not in force"`` (date before the rule applies) or ``"informative"`` (a dimmed state:
    the figure is compared with the full-load limit for information only).
    """

    quantity: str
    verdict: str
    value: float | None
    check: Check | None
    requirement: EuRequirement | None
    citation: str
    certainty: str
    note: str = ""

    def to_dict(self) -> dict:
        r = self.requirement
        return {
            "quantity": self.quantity,
            "verdict": self.verdict,
            "value": self.value,
            "limit": None if r is None else r.limit,
            "bound": None if r is None else r.bound,
            "margin": None if self.check is None else self.check.margin,
            "condition": None if r is None else r.condition,
            "citation": self.citation,
            "certainty": self.certainty,
            "source_note": None if r is None else r.source_note,
            "note": self.note,
        }


@dataclass(frozen=True)
class EcodesignResult:
    """The EU ecodesign verdicts of one lamp state."""

    verdicts: tuple[EcodesignVerdict, ...]
    on_date: _dt.date
    full_load: bool
    source: str

    @property
    def verdict(self) -> str:
        """``"fail"`` if any rule fails, ``"pass"`` if at least one passes and none fails,
        ``"informative"`` for a dimmed state, else ``"not evaluated"``."""
        vs = [v.verdict for v in self.verdicts]
        if not self.full_load:
            return "informative"
        if "fail" in vs:
            return "fail"
        if "pass" in vs:
            return "pass"
        return "not evaluated"

    def to_dict(self) -> dict:
        return {
            "verdict": self.verdict,
            "on_date": self.on_date.isoformat(),
            "full_load": self.full_load,
            "source": self.source,
            "checks": [v.to_dict() for v in self.verdicts],
        }


def _number(name: str, v, lo: float = 0.0, hi: float = math.inf) -> float | None:
    if v is None:
        return None
    try:
        x = float(v)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected a number, got {v!r}") from None
    if not (math.isfinite(x) and lo <= x <= hi):
        raise InputError(f"{name}: expected a value from {lo:g} to {hi:g}, got {v!r}")
    return x


def eu_ecodesign_check(svm: float | None = None, pst_lm: float | None = None,
                       power_w: float | None = None,
                       displacement_factor: float | None = None,
                       on_date: _dt.date | str | None = None, full_load: bool = True,
                       strobe_exempt: bool = False) -> EcodesignResult:
    """Judge a lamp's SVM, Pst_LM and displacement factor against Regulation (EU) 2019/2020.

    Parameters
    ----------
    svm, pst_lm
        The lamp's figures [-] (None: not evaluated).
    power_w
        On-mode input power [W], for the displacement factor row.
    displacement_factor
        ``cos(phi1)`` [-], 0..1.
    on_date
        Date the rules are taken at (a ``datetime.date`` or ``"YYYY-MM-DD"``; default today):
        the SVM limit is 0.9 until 31 August 2024 and 0.4 from 1 September 2024.
    full_load
        False for a dimmed state: the figures are compared for information only.
    strobe_exempt
        True for a lamp meant for outdoor, industrial or other applications whose lighting
        standards allow CRI < 80: the SVM row does not apply.

    Examples
    --------
    >>> r = eu_ecodesign_check(svm=0.6, pst_lm=0.3, power_w=9.0, displacement_factor=0.55,
    ...                        on_date="2025-01-01")
    >>> [(v.quantity, v.verdict) for v in r.verdicts]
    [('pst_lm', 'pass'), ('svm', 'fail'), ('displacement_factor', 'pass')]
    """
    lim = load_eu_light_source_limits()
    if on_date is None:
        day = _dt.date.today()
    elif isinstance(on_date, _dt.date):
        day = on_date
    else:
        try:
            day = _dt.date.fromisoformat(str(on_date))
        except ValueError:
            raise InputError(f"on_date: expected a date YYYY-MM-DD, got {on_date!r}") from None
    values = {
        "pst_lm": _number("pst_lm", pst_lm),
        "svm": _number("svm", svm),
        "displacement_factor": _number("displacement_factor", displacement_factor, 0.0, 1.0),
    }
    p = _number("power_w", power_w, 0.0)
    out = []
    for q in QUANTITIES:
        v = values[q]
        cite = lim.citation()
        if day < lim.applies_from:
            out.append(EcodesignVerdict(q, "not in force", v, None, None, cite,
                                        lim.certainty, f"the regulation applies from "
                                        f"{lim.applies_from.isoformat()}"))
            continue
        if q == "svm" and strobe_exempt:
            out.append(EcodesignVerdict(q, "exempt", v, None, None, cite, lim.certainty,
                                        "outdoor, industrial or CRI < 80 application"))
            continue
        if q == "displacement_factor" and p is None:
            out.append(EcodesignVerdict(q, "not evaluated", v, None, None, cite,
                                        lim.certainty, "the row depends on power_w"))
            continue
        req = lim.find(q, day, p)
        if req is None:
            out.append(EcodesignVerdict(q, "not in force", v, None, None, cite, lim.certainty,
                                        f"no {q} row on {day.isoformat()}"))
            continue
        if req.limit is None:
            out.append(EcodesignVerdict(q, "no limit", v, None, req, cite, req.certainty,
                                        req.condition))
            continue
        if v is None:
            out.append(EcodesignVerdict(q, "not evaluated", None, None, req, cite,
                                        req.certainty, "value not given"))
            continue
        chk = Check.against(q, None, v, req.limit, "-", req.bound, note=req.condition)
        verdict = chk.status if full_load else "informative"
        out.append(EcodesignVerdict(q, verdict, v, chk, req, cite, req.certainty,
                                    "" if full_load else "dimmed state: the limits apply at "
                                    "full load"))
    return EcodesignResult(tuple(out), day, bool(full_load), lim.citation())
