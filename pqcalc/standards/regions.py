"""Regional rule sets: which breaker trip model, load rule, neutral sizing and paper apply.

A project is judged either on IEC rules (IEC 60364 installations with IEC 60898-1 breakers)
or on US rules (NFPA 70 NEC with UL 489 breakers). The values live in the data files
``standards_limits/region_*.toml``, each with its standard, clause and certainty; this module
reads them and holds the rules as pure functions:

- :func:`rule_set` by name (``"IEC"``, ``"US"``), :func:`known_rule_sets`, and
  :func:`default_rule_set` from the supply (230/400 V 50 Hz -> IEC, 120/208/277/480 V 60 Hz ->
  US; any other supply must name its set, field :data:`RULES_FIELD`);
- :func:`instantaneous_band`: the instantaneous-trip band of a breaker type and rating;
- :func:`load_figures`: the NEC 210.20(A) continuous-load rule or the IEC 60364-4-43 433.1
  coordination IB <= In <= IZ;
- :func:`neutral_figures`: IEC 60364-5-52 Annex E (Table E.52.1) or NEC 310.15(E)(3) with the
  adjustment factors of Table 310.15(C)(1);
- :func:`paper`: A4 or Letter, overridable.

Results are plain frozen dataclasses (value, limit, unit, status, source, certainty, message);
turning them into a project's check type is the caller's business.

Certainty: ``"seen"`` (read in a public copy of the text), ``"secondary"`` (read in public
material quoting or applying the standard), ``"memory"`` (recalled, unverified),
``"common practice"`` (a trade habit, or a reading the text leaves open).

Results guide equipment choices: they support, and never replace, the code adopted where the
installation is, the makers' data and a licensed professional.
"""

from __future__ import annotations

import functools
import math
import sys
from collections.abc import Mapping
from dataclasses import dataclass
from importlib import resources
from typing import Any, Literal

from ..errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = [
    "RULES_FIELD",
    "CERTAINTIES",
    "PAPER_SIZES",
    "NEUTRAL_METHODS",
    "PaperSize",
    "NeutralMethod",
    "FigureStatus",
    "BreakerType",
    "LoadRule",
    "NeutralBand",
    "AdjustmentRow",
    "NeutralRule",
    "Paper",
    "SupplyDefault",
    "RuleSet",
    "InstantaneousBand",
    "Figure",
    "NeutralFigure",
    "known_rule_sets",
    "rule_set",
    "default_rule_set",
    "breaker_type",
    "instantaneous_band",
    "load_figures",
    "neutral_band_iec",
    "neutral_sizing_iec",
    "adjustment_factor",
    "neutral_sizing_nec",
    "neutral_figures",
    "paper",
]

#: The installation-file field that names the rule set (proposed: ``[supply] rules``).
RULES_FIELD = "supply.rules"
CERTAINTIES = ("seen", "secondary", "memory", "computed", "common practice")
PaperSize = Literal["A4", "Letter"]
PAPER_SIZES: tuple[str, ...] = ("A4", "Letter")
NeutralMethod = Literal["iec-annex-e", "nec-310.15"]
NEUTRAL_METHODS: tuple[str, ...] = ("iec-annex-e", "nec-310.15")
FigureStatus = Literal["pass", "fail", "info"]
_FILE_PREFIX = "region_"
_MM_PER_IN = 25.4


# ---------------------------------------------------------------------------- data types
@dataclass(frozen=True)
class BreakerType:
    """A breaker type and its instantaneous-trip band [multiples of In, rms].

    The breaker does not trip instantaneously below ``k_min * In`` and trips within the
    instantaneous time (0.1 s for IEC 60898-1) at ``k_max * In``.
    """

    name: str
    description: str
    k_min: float
    k_max: float
    standard: str
    clause: str
    certainty: str
    note: str = ""

    def citation(self) -> str:
        return f"{self.standard}, {self.clause}"


@dataclass(frozen=True)
class LoadRule:
    """The steady-load rule of a rule set.

    ``continuous_factor`` multiplies the continuous load in the device-rating rule (1.25 for
    NEC 210.20(A)); None where the rule set has no such factor (IEC 60364-4-43 433.1).
    ``conventional_tripping_factor`` is I2 / In of the set's breakers where the set checks
    I2 <= 1.45 IZ (1.45 for IEC 60898-1), else None.
    """

    kind: str
    continuous_factor: float | None
    standard: str
    clause: str
    rule: str
    certainty: str
    note: str = ""
    exception: str = ""
    conventional_tripping_factor: float | None = None
    conventional_tripping_source: str = ""
    common_practice: str = ""

    def citation(self) -> str:
        return f"{self.standard}, {self.clause}"


@dataclass(frozen=True)
class NeutralBand:
    """One row of IEC 60364-5-52 Table E.52.1: applies when ``above_pct < content <=
    up_to_pct`` (third-harmonic content [% of the line current]); the cable is sized on the
    ``basis`` current ("line" or "neutral") divided by ``factor``."""

    above_pct: float
    up_to_pct: float | None
    factor: float
    basis: Literal["line", "neutral"]


@dataclass(frozen=True)
class AdjustmentRow:
    """One row of NEC Table 310.15(C)(1): ``first`` to ``last`` (None: and above)
    current-carrying conductors -> ``factor`` of the ampacity [-]."""

    first: int
    last: int | None
    factor: float


@dataclass(frozen=True)
class NeutralRule:
    """How a rule set sizes the neutral: the method, its source and its table."""

    method: str
    standard: str
    clause: str
    certainty: str
    note: str = ""
    bands: tuple[NeutralBand, ...] = ()
    adjustment: tuple[AdjustmentRow, ...] = ()
    nonlinear_major_share: float | None = None
    quantity_note: str = ""

    def citation(self) -> str:
        return f"{self.standard}, {self.clause}"


@dataclass(frozen=True)
class Paper:
    """A report page: its name and size [mm]; ``size_in`` gives inches for a figure."""

    size: str
    width_mm: float
    height_mm: float
    standard: str
    certainty: str

    @property
    def size_in(self) -> tuple[float, float]:
        """(width, height) [in]."""
        return (self.width_mm / _MM_PER_IN, self.height_mm / _MM_PER_IN)


@dataclass(frozen=True)
class SupplyDefault:
    """The supplies for which a rule set is the default: voltages [V] (line-to-neutral or
    line-to-line) within ``tolerance`` [fraction], at ``frequency_hz``."""

    voltages_v: tuple[float, ...]
    frequency_hz: float
    tolerance: float
    certainty: str

    def matches(self, voltage_v: float, frequency_hz: float) -> bool:
        if abs(frequency_hz - self.frequency_hz) > 0.5:
            return False
        return any(abs(voltage_v - v) <= self.tolerance * v for v in self.voltages_v)

    def label(self) -> str:
        return "/".join(f"{v:g}" for v in self.voltages_v) + f" V {self.frequency_hz:g} Hz"


@dataclass(frozen=True)
class RuleSet:
    """A regional rule set, read from ``standards_limits/region_<name>.toml``.

    Attributes
    ----------
    name
        ``"IEC"`` or ``"US"`` (the value of the installation-file field).
    breaker_types
        The breaker types the set knows, in file order; :meth:`breaker` finds one.
    default_breaker
        The type assumed where a circuit names none.
    load
        The steady-load rule; ``continuous_load_factor`` is its factor or None.
    neutral
        The neutral-sizing rule; ``neutral_method`` its method.
    paper_default
        The report page.
    supply_default
        The supplies for which this set is the default.
    """

    name: str
    title: str
    breaker_types: tuple[BreakerType, ...]
    default_breaker: str
    load: LoadRule
    neutral: NeutralRule
    paper_default: Paper
    supply_default: SupplyDefault
    certainty: str
    note: str = ""
    file: str = ""

    @property
    def breaker_type_names(self) -> tuple[str, ...]:
        return tuple(b.name for b in self.breaker_types)

    @property
    def continuous_load_factor(self) -> float | None:
        """The NEC-style factor on continuous load (1.25), or None (IEC)."""
        return self.load.continuous_factor

    @property
    def neutral_method(self) -> str:
        return self.neutral.method

    @property
    def paper_size(self) -> str:
        return self.paper_default.size

    def breaker(self, name: str) -> BreakerType:
        """The breaker type ``name`` (case-insensitive); InputError listing the known ones."""
        return breaker_type(self, name)


@dataclass(frozen=True)
class InstantaneousBand:
    """The instantaneous-trip band of one breaker [A rms and A peak]."""

    rule_set: str
    breaker_type: str
    rating_a: float
    k_min: float
    k_max: float
    low_a: float
    high_a: float
    source: str
    certainty: str
    message: str

    @property
    def low_peak_a(self) -> float:
        """Peak of a sinusoid at the band's lower edge [A]: sqrt(2) k_min In."""
        return math.sqrt(2.0) * self.low_a

    @property
    def high_peak_a(self) -> float:
        return math.sqrt(2.0) * self.high_a


@dataclass(frozen=True)
class Figure:
    """One figure of a rule: ``value`` against ``limit`` in ``unit``.

    ``status`` is "pass" (value within limit), "fail", or "info" (no limit to judge against).
    """

    name: str
    value: float | None
    limit: float | None
    unit: str
    status: FigureStatus
    source: str
    certainty: str
    message: str


@dataclass(frozen=True)
class NeutralFigure:
    """The neutral-sizing figures of one circuit or node.

    ``value`` is the current the cable is sized on [A] (IEC), or the ampacity a conductor
    needs before adjustment [A] (NEC, where a current is given); ``limit`` is the ampacity
    after the rule's factors [A] or None when no ampacity was given.
    ``factor`` is the Table E.52.1 reduction factor or the Table 310.15(C)(1) adjustment
    factor [-]; ``basis`` is "line" or "neutral" (IEC) or "" (NEC);
    ``neutral_counts`` says whether the NEC counts the neutral as current-carrying;
    ``current_carrying`` is the conductor count the adjustment used.
    """

    method: str
    value: float | None
    limit: float | None
    unit: str
    status: FigureStatus
    factor: float
    basis: str
    neutral_counts: bool | None
    current_carrying: int | None
    source: str
    certainty: str
    message: str


# ---------------------------------------------------------------------------- reading
def _err(fname: str, msg: str) -> InputError:
    return InputError(f"standards_limits/{fname}: {msg}")


def _certainty(fname: str, c: Any, where: str) -> str:
    if c not in CERTAINTIES:
        raise _err(fname, f"{where}.certainty: expected one of {', '.join(CERTAINTIES)}, "
                          f"got {c!r}")
    return str(c)


def _num(fname: str, d: Mapping[str, Any], key: str, where: str,
         lo: float = -math.inf) -> float:
    v = d.get(key)
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < lo:
        raise _err(fname, f"{where}.{key}: expected a number >= {lo:g}, got {v!r}")
    return float(v)


def _breakers(fname: str, rows: list[dict[str, Any]], dflt: str) -> tuple[BreakerType, ...]:
    out: list[BreakerType] = []
    for i, b in enumerate(rows):
        w = f"breaker[{i}]"
        k_min = _num(fname, b, "k_min", w, lo=0.0)
        k_max = _num(fname, b, "k_max", w, lo=0.0)
        if not 0 < k_min < k_max:
            raise _err(fname, f"{w}: expected 0 < k_min < k_max, got {k_min:g}, {k_max:g}")
        name = str(b["type"])
        if name.upper() in (x.name.upper() for x in out):
            raise _err(fname, f"{w}.type: {name!r} appears twice")
        out.append(BreakerType(name, str(b.get("description", "")), k_min, k_max,
                               str(b["standard"]), str(b.get("clause", "")),
                               _certainty(fname, b.get("certainty", dflt), w),
                               str(b.get("source_note", ""))))
    if not out:
        raise _err(fname, "no [[breaker]] rows")
    return tuple(out)


def _load_rule(fname: str, d: dict[str, Any], dflt: str) -> LoadRule:
    f = d.get("continuous_factor")
    factor = None if f == "none" else _num(fname, d, "continuous_factor", "load_rule", lo=1.0)
    ct = d.get("conventional_tripping_factor")
    return LoadRule(
        str(d["kind"]), factor, str(d["standard"]), str(d["clause"]), str(d["rule"]),
        _certainty(fname, d.get("certainty", dflt), "load_rule"), str(d.get("source_note", "")),
        str(d.get("exception", "")),
        None if ct is None else _num(fname, d, "conventional_tripping_factor", "load_rule", 1.0),
        str(d.get("conventional_tripping_standard", "")), str(d.get("common_practice", "")))


def _neutral_rule(fname: str, d: dict[str, Any], dflt: str) -> NeutralRule:
    method = d.get("method")
    if method not in NEUTRAL_METHODS:
        raise _err(fname, f"neutral.method: expected one of {', '.join(NEUTRAL_METHODS)}, "
                          f"got {method!r}")
    bands: list[NeutralBand] = []
    for i, b in enumerate(d.get("band", [])):
        w = f"neutral.band[{i}]"
        basis = b.get("basis")
        if basis not in ("line", "neutral"):
            raise _err(fname, f"{w}.basis: expected 'line' or 'neutral', got {basis!r}")
        above = _num(fname, b, "above_pct", w, lo=0.0)
        up_to = None if "up_to_pct" not in b else _num(fname, b, "up_to_pct", w, lo=above)
        if bands and (bands[-1].up_to_pct is None or bands[-1].up_to_pct != above):
            raise _err(fname, f"{w}.above_pct: expected {bands[-1].up_to_pct} (the previous "
                              "row's up_to_pct): the bands must be contiguous")
        bands.append(NeutralBand(above, up_to, _num(fname, b, "factor", w, lo=0.0), basis))
    adj: list[AdjustmentRow] = []
    for i, r in enumerate(d.get("adjustment", [])):
        w = f"neutral.adjustment[{i}]"
        first = int(_num(fname, r, "from", w, lo=1))
        last = None if "to" not in r else int(_num(fname, r, "to", w, lo=first))
        expected = 1 if not adj else (adj[-1].last or 0) + 1
        if first != expected:
            raise _err(fname, f"{w}.from: expected {expected} (rows must be contiguous)")
        adj.append(AdjustmentRow(first, last, _num(fname, r, "percent", w, lo=0.0) / 100.0))
    if method == "iec-annex-e" and (not bands or bands[-1].up_to_pct is not None):
        raise _err(fname, "neutral.band: expected contiguous rows, the last without up_to_pct")
    if method == "nec-310.15" and (not adj or adj[-1].last is not None):
        raise _err(fname, "neutral.adjustment: expected contiguous rows, the last without 'to'")
    share = d.get("nonlinear_major_share")
    return NeutralRule(
        str(method), str(d["standard"]), str(d["clause"]),
        _certainty(fname, d.get("certainty", dflt), "neutral"), str(d.get("source_note", "")),
        tuple(bands), tuple(adj),
        None if share is None else _num(fname, d, "nonlinear_major_share", "neutral", 0.0),
        str(d.get("quantity_note", "")))


def _read(fname: str, text: str) -> RuleSet:
    try:
        d = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise _err(fname, f"not valid TOML: {e}") from None
    try:
        s = d["source"]
        if s.get("kind") != "regional-rules":
            raise _err(fname, f"source.kind: expected 'regional-rules', got {s.get('kind')!r}")
        c = _certainty(fname, s.get("certainty", "memory"), "source")
        breakers = _breakers(fname, d["breaker"], c)
        dflt_breaker = str(s.get("default_breaker", breakers[0].name))
        if dflt_breaker not in (b.name for b in breakers):
            raise _err(fname, f"source.default_breaker: {dflt_breaker!r} is not a [[breaker]]")
        p = d["paper"]
        if p.get("size") not in PAPER_SIZES:
            raise _err(fname, f"paper.size: expected one of {', '.join(PAPER_SIZES)}, "
                              f"got {p.get('size')!r}")
        paper_ = Paper(str(p["size"]), _num(fname, p, "width_mm", "paper", 1.0),
                       _num(fname, p, "height_mm", "paper", 1.0), str(p["standard"]),
                       _certainty(fname, p.get("certainty", c), "paper"))
        df = d["default"]
        volts = df.get("voltages_v", [])
        if not volts or not all(isinstance(v, (int, float)) and v > 0 for v in volts):
            raise _err(fname, f"default.voltages_v: expected positive voltages, got {volts!r}")
        supply = SupplyDefault(tuple(float(v) for v in volts),
                               _num(fname, df, "frequency_hz", "default", 1.0),
                               _num(fname, df, "tolerance_pct", "default", 0.0) / 100.0,
                               _certainty(fname, df.get("certainty", c), "default"))
        return RuleSet(str(s["name"]), str(s.get("title", s["name"])), breakers, dflt_breaker,
                       _load_rule(fname, d["load_rule"], c),
                       _neutral_rule(fname, d["neutral"], c), paper_, supply, c,
                       str(s.get("note", "")), fname)
    except KeyError as e:
        raise _err(fname, f"missing field {e.args[0]!r}") from None


@functools.lru_cache(maxsize=1)
def _index() -> dict[str, RuleSet]:
    """Upper-case name -> rule set, for every ``region_*.toml`` shipped."""
    out: dict[str, RuleSet] = {}
    folder = resources.files("pqcalc.standards_limits")
    for entry in sorted(folder.iterdir(), key=lambda e: e.name):
        if not (entry.name.startswith(_FILE_PREFIX) and entry.name.endswith(".toml")):
            continue
        rs = _read(entry.name, entry.read_text(encoding="utf-8"))
        key = rs.name.upper()
        if key in out:
            raise _err(entry.name, f"rule set {rs.name!r} is also defined in {out[key].file}")
        out[key] = rs
    return out


def known_rule_sets() -> tuple[str, ...]:
    """Names of the rule sets shipped with pqcalc, sorted (``("IEC", "US")``)."""
    return tuple(sorted(rs.name for rs in _index().values()))


def rule_set(name: str) -> RuleSet:
    """The rule set ``name`` (case-insensitive).

    Raises
    ------
    InputError
        For an unknown name; the message names it and lists the known ones.

    Examples
    --------
    >>> rs = rule_set("us")
    >>> rs.name, rs.continuous_load_factor, rs.paper_size
    ('US', 1.25, 'Letter')
    >>> rule_set("IEC").continuous_load_factor is None
    True
    """
    idx = _index()
    rs = idx.get(str(name).strip().upper())
    if rs is None:
        raise InputError(f"{RULES_FIELD}: unknown regional rule set {name!r}; expected one of "
                         f"{', '.join(known_rule_sets())}")
    return rs


def default_rule_set(voltage_ln_v: float, frequency_hz: float) -> RuleSet:
    """The rule set a supply implies: 230/400 V 50 Hz -> IEC, 120/208/277/480 V 60 Hz -> US.

    Any other supply raises an InputError that names :data:`RULES_FIELD` and the choices:
    the project must choose its rules.

    >>> default_rule_set(230.0, 50.0).name, default_rule_set(277.0, 60.0).name
    ('IEC', 'US')
    """
    v, f = float(voltage_ln_v), float(frequency_hz)
    if not (math.isfinite(v) and v > 0 and math.isfinite(f) and f > 0):
        raise InputError(f"supply: expected a positive voltage [V] and frequency [Hz], got "
                         f"{voltage_ln_v!r} V, {frequency_hz!r} Hz")
    sets = [_index()[k] for k in sorted(_index())]
    hits = [rs for rs in sets if rs.supply_default.matches(v, f)]
    if len(hits) == 1:
        return hits[0]
    known = "; ".join(f"{rs.name} for {rs.supply_default.label()}" for rs in sets)
    names = " or ".join(f'"{rs.name}"' for rs in sets)
    raise InputError(f"{RULES_FIELD}: a {v:g} V {f:g} Hz supply has no default regional rule "
                     f"set (defaults: {known}); choose one: {RULES_FIELD} = {names}")


# ---------------------------------------------------------------------------- breakers
def breaker_type(rules: RuleSet, name: str) -> BreakerType:
    """The breaker type ``name`` of ``rules`` (case-insensitive).

    Raises
    ------
    InputError
        Naming the type and the rule set, listing the known types.
    """
    key = str(name).strip().upper()
    for b in rules.breaker_types:
        if b.name.upper() == key:
            return b
    raise InputError(f"breaker type {name!r} is not known to the {rules.name} rule set; "
                     f"expected one of {', '.join(rules.breaker_type_names)}")


def instantaneous_band(rules: RuleSet, breaker: str, rating_a: float,
                       k_override: tuple[float, float] | None = None) -> InstantaneousBand:
    """The instantaneous-trip band of a breaker of type ``breaker`` rated ``rating_a`` [A].

    ``k_override`` = (k_min, k_max) replaces the set's band with the maker's figures
    [multiples of In]; the source then says so.

    >>> b = instantaneous_band(rule_set("IEC"), "B", 10.0)
    >>> b.low_a, b.high_a
    (30.0, 50.0)
    """
    bt = breaker_type(rules, breaker)
    r = float(rating_a)
    if not (math.isfinite(r) and r > 0):
        raise InputError(f"breaker_a: expected a positive rating [A], got {rating_a!r}")
    k_min, k_max, src, cert = bt.k_min, bt.k_max, bt.citation(), bt.certainty
    if k_override is not None:
        k_min, k_max = (float(k) for k in k_override)
        if not (math.isfinite(k_min) and math.isfinite(k_max) and 0 < k_min < k_max):
            raise InputError(f"instantaneous band: expected 0 < k_min < k_max [x In], got "
                             f"{k_override!r}")
        src, cert = "maker's figures given in the installation file", "seen"
    msg = (f"{rules.name} {bt.name} {r:g} A: instantaneous trip between {k_min:g} and "
           f"{k_max:g} x In = {k_min * r:.0f}-{k_max * r:.0f} A rms "
           f"({math.sqrt(2) * k_min * r:.0f}-{math.sqrt(2) * k_max * r:.0f} A peak)")
    if cert in ("memory", "common practice"):
        msg += f" [{cert}: confirm with the breaker maker's time-current curve]"
    return InstantaneousBand(rules.name, bt.name, r, k_min, k_max, k_min * r, k_max * r,
                             src, cert, msg)


# ---------------------------------------------------------------------------- load rule
def _nonneg(name: str, v: float | None) -> float | None:
    if v is None:
        return None
    x = float(v)
    if not (math.isfinite(x) and x >= 0):
        raise InputError(f"{name}: expected a current >= 0 [A], got {v!r}")
    return x


def load_figures(rules: RuleSet, rating_a: float, continuous_a: float,
                 noncontinuous_a: float = 0.0, ampacity_a: float | None = None,
                 listed_100_pct: bool = False) -> tuple[Figure, ...]:
    """The steady-load figures of a branch circuit under ``rules``.

    US (NEC 210.20(A)): the device rating must be at least the noncontinuous load plus
    125 % of the continuous load (100 % where the assembly is listed for 100 % operation,
    ``listed_100_pct``): figure ``value`` = required rating [A], ``limit`` = the rating.
    IEC (IEC 60364-4-43 433.1): IB <= In, and In <= IZ where the conductor ampacity
    ``ampacity_a`` is given (with I2 = 1.45 In of an IEC 60898-1 breaker this also gives
    I2 <= 1.45 IZ). No continuous-load factor applies.

    Parameters
    ----------
    rating_a
        Rated current of the breaker In [A].
    continuous_a, noncontinuous_a
        Load currents [A rms]; lighting is normally a continuous load (3 h or more).
    ampacity_a
        Conductor ampacity IZ [A] after correction factors, or None.

    >>> [f.status for f in load_figures(rule_set("US"), 20.0, 16.0)]
    ['pass']
    >>> [f.status for f in load_figures(rule_set("US"), 20.0, 16.5)]
    ['fail']
    >>> [f.status for f in load_figures(rule_set("IEC"), 16.0, 16.0)]
    ['pass']
    """
    rating = float(rating_a)
    if not (math.isfinite(rating) and rating > 0):
        raise InputError(f"breaker_a: expected a positive rating [A], got {rating_a!r}")
    cont = _nonneg("continuous load", continuous_a) or 0.0
    ncont = _nonneg("noncontinuous load", noncontinuous_a) or 0.0
    iz = _nonneg("ampacity_a", ampacity_a)
    rule = rules.load
    src = rule.citation()
    out: list[Figure] = []
    if rule.continuous_factor is not None:
        k = 1.0 if listed_100_pct else rule.continuous_factor
        need = ncont + k * cont
        ok = need <= rating
        allowed = max(rating - ncont, 0.0) / k
        what = ("assembly listed for 100 % operation (exception)" if listed_100_pct
                else f"{100 * k:.0f} % of the continuous load")
        msg = (f"continuous {cont:.2f} A, noncontinuous {ncont:.2f} A: the device must be rated "
               f"at least {need:.2f} A ({what}); rated {rating:g} A"
               + ("" if ok else " - too small")
               + f"; continuous load allowed {allowed:.2f} A ({100 * allowed / rating:.0f} % of "
               "the rating)")
        out.append(Figure("continuous load", need, rating, "A", "pass" if ok else "fail", src,
                          rule.certainty, msg))
        return tuple(out)
    ib = cont + ncont
    ok = ib <= rating
    out.append(Figure(
        "design current", ib, rating, "A", "pass" if ok else "fail", src, rule.certainty,
        f"design current IB {ib:.2f} A {'<=' if ok else 'exceeds'} the rated current In "
        f"{rating:g} A (IB <= In); no continuous-load factor applies under IEC 60364"))
    if iz is not None:
        ok_z = rating <= iz
        msg = (f"rated current In {rating:g} A {'<=' if ok_z else 'exceeds'} the conductor "
               f"ampacity IZ {iz:g} A (In <= IZ)")
        if rule.conventional_tripping_factor is not None:
            i2 = rule.conventional_tripping_factor * rating
            msg += (f"; I2 = {rule.conventional_tripping_factor:g} In = {i2:.1f} A "
                    f"{'<=' if i2 <= 1.45 * iz else '>'} 1.45 IZ = {1.45 * iz:.1f} A")
            ok_z = ok_z and i2 <= 1.45 * iz
        out.append(Figure("conductor protection", rating, iz, "A", "pass" if ok_z else "fail",
                          src, rule.certainty, msg))
    return tuple(out)


# ---------------------------------------------------------------------------- neutral
def _rule_of(rules: RuleSet | None, method: str) -> NeutralRule:
    if rules is not None and rules.neutral.method == method:
        return rules.neutral
    for rs in _index().values():
        if rs.neutral.method == method:
            return rs.neutral
    raise InputError(f"neutral method {method!r}: no rule set provides it; expected one of "
                     f"{', '.join(NEUTRAL_METHODS)}")  # pragma: no cover - data error


def neutral_band_iec(third_harmonic_pct: float, rules: RuleSet | None = None) -> NeutralBand:
    """The Table E.52.1 row for a third-harmonic content [% of the line current].

    >>> b = neutral_band_iec(40.0)
    >>> b.factor, b.basis
    (0.86, 'neutral')
    """
    t = float(third_harmonic_pct)
    if not (math.isfinite(t) and t >= 0):
        raise InputError(f"third-harmonic content: expected a percentage >= 0, got "
                         f"{third_harmonic_pct!r}")
    for b in _rule_of(rules, "iec-annex-e").bands:
        if t <= (b.up_to_pct if b.up_to_pct is not None else math.inf) and (
                t > b.above_pct or b.above_pct == 0.0):
            return b
    raise AssertionError("Table E.52.1 bands are contiguous from 0 %")  # pragma: no cover


def neutral_sizing_iec(third_harmonic_pct: float, line_current_a: float,
                       neutral_current_a: float | None = None,
                       ampacity_a: float | None = None, system: str = "three-phase-wye",
                       rules: RuleSet | None = None) -> NeutralFigure:
    """IEC 60364-5-52 Annex E: the current a 4- or 5-core cable is sized on.

    ``value`` = basis current / factor [A], the basis being the line current or the neutral
    current by the Table E.52.1 row. ``neutral_current_a`` defaults to the table's own
    3 x I3 = 3 x content x I_line (memory: the annex's worked examples). Where the neutral
    carries more than the sizing current (other triplens, unbalance), the neutral current
    itself is the sizing current. Outside a three-phase 4-wire circuit the table does not
    apply: a single-phase neutral carries the line current (info).
    """
    rule = _rule_of(rules, "iec-annex-e")
    src = rule.citation()
    i_l = _nonneg("line current", line_current_a) or 0.0
    i_z = _nonneg("ampacity_a", ampacity_a)
    if system != "three-phase-wye":
        msg = (f"{system}: Table E.52.1 is for balanced three-phase 4- and 5-core cables; the "
               f"neutral of this circuit carries the line current, {i_l:.1f} A")
        st: FigureStatus = "info" if i_z is None else ("pass" if i_l <= i_z else "fail")
        return NeutralFigure(rule.method, i_l, i_z, "A", st, 1.0, "line", None, None, src,
                             rule.certainty, msg)
    band = neutral_band_iec(third_harmonic_pct, rules)
    t = float(third_harmonic_pct)
    i_n_table = 3.0 * t / 100.0 * i_l
    i_n = i_n_table if neutral_current_a is None else _nonneg("neutral current",
                                                                neutral_current_a) or 0.0
    base = i_l if band.basis == "line" else i_n
    size_on = base / band.factor
    msg = (f"third harmonic {t:.0f} % of the line current: Table E.52.1 sizes the cable on the "
           f"{band.basis} current {base:.1f} A / {band.factor:g} = {size_on:.1f} A")
    if neutral_current_a is None and band.basis == "neutral":
        msg += " (neutral current taken as 3 x I3)"
    if i_n > size_on:
        size_on = i_n
        msg += (f"; the neutral carries {i_n:.1f} A (triplens beyond the 3rd or unbalance), "
                "so the cable is sized on that")
    st = "info"
    if i_z is not None:
        st = "pass" if size_on <= i_z else "fail"
        msg += f"; cable ampacity {i_z:.1f} A"
    return NeutralFigure(rule.method, size_on, i_z, "A", st, band.factor, band.basis, None,
                         None, src, rule.certainty, msg)


def adjustment_factor(current_carrying: int, rules: RuleSet | None = None) -> float:
    """NEC Table 310.15(C)(1): the ampacity factor for ``current_carrying`` conductors [-].

    >>> adjustment_factor(3), adjustment_factor(4), adjustment_factor(9), adjustment_factor(41)
    (1.0, 0.8, 0.7, 0.35)
    """
    n = current_carrying
    if isinstance(n, bool) or not isinstance(n, int) or n < 1:
        raise InputError(f"current-carrying conductors: expected a whole number >= 1, got {n!r}")
    for r in _rule_of(rules, "nec-310.15").adjustment:
        if n >= r.first and (r.last is None or n <= r.last):
            return r.factor
    raise AssertionError("Table 310.15(C)(1) rows are contiguous from 1")  # pragma: no cover


def neutral_sizing_nec(nonlinear_share: float, system: str = "three-phase-wye",
                       lines: int | None = None, other_current_carrying: int = 0,
                       ampacity_a: float | None = None, current_a: float | None = None,
                       rules: RuleSet | None = None) -> NeutralFigure:
    """NEC 310.15(E): does the neutral count as a current-carrying conductor, and the
    Table 310.15(C)(1) adjustment factor that follows.

    Parameters
    ----------
    nonlinear_share
        Share of the load that is non-linear [fraction]; "major portion" is read as more than
        half (common practice).
    system, lines
        ``"three-phase-wye"`` with ``lines`` = 3 (4-wire, (E)(3)) or 2 (two phases and the
        neutral, (E)(2): always counted); ``"split-phase"`` (3-wire 120/240 V: the neutral
        carries only the unbalance, (E)(1), not counted); ``"single-phase"`` (2-wire: the
        neutral carries the line current and is counted, common practice).
    other_current_carrying
        Current-carrying conductors of other circuits in the same raceway or cable [-].
    ampacity_a
        Conductor ampacity before adjustment [A]; ``limit`` is then it times the factor.
    current_a
        The largest conductor current [A] to compare with the adjusted ampacity, or None.
    """
    rule = _rule_of(rules, "nec-310.15")
    src = rule.citation()
    share = float(nonlinear_share)
    if not (math.isfinite(share) and 0 <= share <= 1):
        raise InputError(f"non-linear share: expected a fraction in [0, 1], got "
                         f"{nonlinear_share!r}")
    if isinstance(other_current_carrying, bool) or not isinstance(other_current_carrying, int) \
            or other_current_carrying < 0:
        raise InputError(f"other current-carrying conductors: expected a whole number >= 0, "
                         f"got {other_current_carrying!r}")
    major = rule.nonlinear_major_share if rule.nonlinear_major_share is not None else 0.5
    cert = rule.certainty
    if system == "three-phase-wye":
        n_lines = 3 if lines is None else lines
        if n_lines not in (2, 3):
            raise InputError(f"lines: expected 2 or 3 line conductors sharing the neutral, "
                             f"got {lines!r}")
        if n_lines == 2:
            counts, why = True, ("two phases and the neutral of a wye system: the neutral "
                                 "carries about the line current, 310.15(E)(2)")
        elif share > major:
            counts, why = True, (f"{100 * share:.0f} % of the load is non-linear (the major "
                                 "portion): harmonic currents flow in the neutral, "
                                 "310.15(E)(3)")
        else:
            counts, why = False, (f"{100 * share:.0f} % of the load is non-linear (not the "
                                  "major portion): the neutral carries the unbalance only, "
                                  "310.15(E)(1)")
    elif system == "split-phase":
        n_lines = 2
        counts, why = False, ("3-wire split-phase circuit: the neutral carries only the "
                              "unbalanced current, 310.15(E)(1)")
    elif system == "single-phase":
        n_lines = 1
        counts, why = True, ("2-wire circuit: the neutral carries the line current "
                             "(common practice)")
        cert = "common practice"
    else:
        raise InputError(f"system: expected one of single-phase, split-phase, three-phase-wye, "
                         f"got {system!r}")
    n = n_lines + (1 if counts else 0) + other_current_carrying
    factor = adjustment_factor(n, rules)
    msg = (f"neutral {'counts' if counts else 'does not count'} as a current-carrying "
           f"conductor ({why}); {n} current-carrying conductors: Table 310.15(C)(1) factor "
           f"{factor:g}")
    i_z = _nonneg("ampacity_a", ampacity_a)
    i = _nonneg("current", current_a)
    limit = None if i_z is None else i_z * factor
    st: FigureStatus = "info"
    if limit is not None:
        msg += f"; ampacity {i_z:g} A x {factor:g} = {limit:.1f} A"
        if i is not None:
            st = "pass" if i <= limit else "fail"
            msg += f" against {i:.1f} A"
    return NeutralFigure(rule.method, i, limit, "A", st, factor, "", counts, n, src, cert, msg)


def neutral_figures(rules: RuleSet, *, system: str, line_current_a: float,
                    neutral_current_a: float | None = None, third_harmonic_pct: float = 0.0,
                    nonlinear_share: float = 1.0, ampacity_a: float | None = None,
                    lines: int | None = None, other_current_carrying: int = 0
                    ) -> NeutralFigure:
    """The neutral figures by the rule set's method: one call for either region.

    IEC: :func:`neutral_sizing_iec` (``third_harmonic_pct``, the currents, ``ampacity_a``).
    US: :func:`neutral_sizing_nec` (``nonlinear_share``, ``system``, ``lines``,
    ``other_current_carrying``, ``ampacity_a`` before adjustment; the larger of the line
    and neutral currents is compared with the adjusted ampacity).
    """
    if rules.neutral.method == "iec-annex-e":
        return neutral_sizing_iec(third_harmonic_pct, line_current_a, neutral_current_a,
                                  ampacity_a, system, rules)
    i = max(float(line_current_a), float(neutral_current_a or 0.0))
    return neutral_sizing_nec(nonlinear_share, system, lines, other_current_carrying,
                              ampacity_a, i, rules)


# ---------------------------------------------------------------------------- paper
_LETTER_MM = (8.5 * _MM_PER_IN, 11.0 * _MM_PER_IN)
_A4_MM = (210.0, 297.0)


def paper(rules: RuleSet, override: str | None = None) -> Paper:
    """The report page: the rule set's (A4 for IEC, Letter for US) unless ``override``
    (``"A4"`` or ``"Letter"``, case-insensitive) names another.

    >>> p = paper(rule_set("US"), "a4")
    >>> paper(rule_set("US")).size, p.size, [round(x, 2) for x in p.size_in]
    ('Letter', 'A4', [8.27, 11.69])
    """
    if override is None:
        return rules.paper_default
    key = str(override).strip().lower()
    if key == rules.paper_default.size.lower():
        return rules.paper_default
    if key == "a4":
        return Paper("A4", *_A4_MM, "ISO 216, A series", "secondary")
    if key == "letter":
        return Paper("Letter", *_LETTER_MM, "ANSI/ASME Y14.1, size A", "secondary")
    raise InputError(f"paper: expected one of {', '.join(PAPER_SIZES)}, got {override!r}")
