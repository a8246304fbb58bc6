"""Limit tables of the harmonic standards, read from the data files in ``standards_limits/``.

The numbers live in TOML files shipped as the resource package ``pqcalc.standards_limits``;
each file names its standard, edition, table and how sure the values are (``certainty``:
``"seen"`` in a public copy, ``"secondary"`` read in public material summarising it,
``"memory"`` recalled and unverified, ``"computed"`` derived here). :func:`load_limits`
reads one table by its key, e.g. ``"iec61000-3-2:class-c"`` or ``"ieee519:2014:current"``;
:func:`known_keys` lists them all.

Values are stored in the unit of the published table (percent, mA/W, A) and converted here
to SI and fractions: a limit in percent of the fundamental becomes a fraction, mA/W
becomes A/W.
"""

from __future__ import annotations

import functools
import math
import re
import sys
from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from typing import Literal

from ..errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = [
    "Certainty",
    "Source",
    "OrderLimit",
    "OrderTable",
    "WaveformTestLimits",
    "SmallLightingLimits",
    "CurrentDistortionRow",
    "CurrentDistortionLimits",
    "VoltageDistortionRow",
    "VoltageDistortionLimits",
    "load_limits",
    "known_keys",
]

Certainty = Literal["seen", "secondary", "memory", "computed", "common practice"]
#: ``secondary``: read in public material quoting or summarising the standard (a test
#: laboratory's list of an amendment's changes, a national adoption), not in its text.
_CERTAINTIES = ("seen", "secondary", "memory", "computed", "common practice")

#: Unit of a value in a data file -> factor to the SI value or fraction used inside.
_UNIT_FACTOR = {"%": 0.01, "A": 1.0, "mA": 1e-3, "mA/W": 1e-3, "A/W": 1.0}


@dataclass(frozen=True)
class Source:
    """Where a table comes from: standard, edition, table or clause, and how sure we are."""

    key: str
    standard: str
    edition: str
    table: str
    certainty: str
    note: str = ""
    file: str = ""

    def citation(self) -> str:
        """``IEC 61000-3-2, 5.0 (2018) + AMD1:2020, Table 2`` style reference."""
        return f"{self.standard}, {self.edition}, {self.table}"


@dataclass(frozen=True)
class OrderLimit:
    """Limit of one harmonic order.

    Attributes
    ----------
    order
        Harmonic order h [-].
    limit
        The limit in SI: [A], or a fraction of the fundamental [-] for relative tables;
        for ``times_lambda`` rows, the limit at power factor 1 (multiply by lambda).
        None where a table has only a per-watt column.
    per_watt_a_w
        Per-watt limit [A/W], or None.
    times_lambda
        True where the limit is multiplied by the circuit power factor (Class C, h3).
    certainty
        How sure the value is (see the module docstring).
    """

    order: int
    limit: float | None
    per_watt_a_w: float | None = None
    times_lambda: bool = False
    certainty: str = "seen"

    def value_at(self, pf: float = 1.0) -> float | None:
        """The limit at power factor ``pf`` [same unit as ``limit``]."""
        if self.limit is None:
            return None
        return self.limit * pf if self.times_lambda else self.limit


@dataclass(frozen=True)
class OrderTable:
    """A per-order limit table (IEC 61000-3-2 Tables 1 to 3 and the option tables).

    ``relative`` is True when limits are fractions of the fundamental current.
    """

    source: Source
    limits: tuple[OrderLimit, ...]
    relative: bool
    applies_from_w: float | None = None
    applies_above_w: float | None = None
    applies_up_to_w: float | None = None

    @property
    def orders(self) -> tuple[int, ...]:
        return tuple(x.order for x in self.limits)

    def get(self, order: int) -> OrderLimit | None:
        for x in self.limits:
            if x.order == order:
                return x
        return None

    def __getitem__(self, order: int) -> OrderLimit:
        x = self.get(order)
        if x is None:
            raise KeyError(order)
        return x


@dataclass(frozen=True)
class WaveformTestLimits:
    """Angles of the option (b) waveform test [deg] and its threshold [fraction of peak]."""

    threshold_of_peak: float
    reach_by_deg: float
    peak_by_deg: float
    stay_until_deg: float
    certainty: str = "seen"


@dataclass(frozen=True)
class SmallLightingLimits:
    """IEC 61000-3-2 Class C, 5 W to 25 W: the three alternatives a, b, c."""

    source: Source
    option_a: OrderTable
    option_b: OrderTable
    waveform: WaveformTestLimits
    option_c: OrderTable
    thd_limit: float
    thd_max_order: int
    applies_from_w: float
    applies_up_to_w: float


@dataclass(frozen=True)
class CurrentDistortionRow:
    """One I_SC/I_L row of IEEE 519 Table 2: odd-order band limits and TDD [fractions of I_L]."""

    isc_il_from: float
    isc_il_below: float
    odd: tuple[float, ...]
    tdd: float

    def label(self) -> str:
        if self.isc_il_from <= 0:
            return f"< {self.isc_il_below:g}"
        if math.isinf(self.isc_il_below):
            return f">= {self.isc_il_from:g}"
        return f"{self.isc_il_from:g} to < {self.isc_il_below:g}"


@dataclass(frozen=True)
class CurrentDistortionLimits:
    """IEEE 519 current distortion limits by I_SC/I_L row and harmonic band."""

    source: Source
    bands: tuple[tuple[int, int], ...]  # (first order, first order of the next band)
    rows: tuple[CurrentDistortionRow, ...]
    even: tuple[tuple[int, float, str], ...]  # (up to order, factor, certainty)
    voltage_kv_min: float
    voltage_kv_max: float

    def row_for(self, isc_il: float) -> CurrentDistortionRow:
        """The row holding ``isc_il`` (lower edge inclusive)."""
        if not (isc_il > 0 and math.isfinite(isc_il)):
            raise InputError(f"I_SC/I_L: expected a positive finite ratio, got {isc_il}")
        for r in self.rows:
            if r.isc_il_from <= isc_il < r.isc_il_below:
                return r
        raise InputError(f"I_SC/I_L = {isc_il:g} is outside every row of {self.source.key}")

    def band_index(self, order: int) -> int | None:
        for k, (lo, hi) in enumerate(self.bands):
            if lo <= order < hi:
                return k
        return None

    def limit(self, order: int, isc_il: float) -> float | None:
        """Limit of order h [fraction of I_L], even orders by the edition's rule; None when
        the order is outside the bands."""
        k = self.band_index(order)
        if k is None:
            return None
        odd = self.row_for(isc_il).odd[k]
        if order % 2:
            return odd
        for up_to, factor, _ in self.even:
            if order <= up_to:
                return odd * factor
        return None


@dataclass(frozen=True)
class VoltageDistortionRow:
    up_to_kv: float
    individual: float  # [fraction of V1]
    thd: float  # [fraction of V1]
    certainty: str = "seen"


@dataclass(frozen=True)
class VoltageDistortionLimits:
    """IEEE 519 voltage distortion limits by bus voltage."""

    source: Source
    rows: tuple[VoltageDistortionRow, ...]
    thd_max_order: int

    def row_for(self, voltage_kv: float) -> VoltageDistortionRow:
        if not (voltage_kv > 0 and math.isfinite(voltage_kv)):
            raise InputError(f"voltage_kv: expected a positive bus voltage [kV], got {voltage_kv}")
        for r in self.rows:
            if voltage_kv <= r.up_to_kv:
                return r
        raise InputError(f"voltage_kv = {voltage_kv:g} is outside every row of {self.source.key}")


LimitData = OrderTable | SmallLightingLimits | CurrentDistortionLimits | VoltageDistortionLimits


# ---------------------------------------------------------------------------- reading
def _files() -> dict[str, tuple[str, dict]]:
    """key -> (file name, parsed TOML) for every data file."""
    out: dict[str, tuple[str, dict]] = {}
    folder = resources.files("pqcalc.standards_limits")
    for entry in sorted(folder.iterdir(), key=lambda e: e.name):
        if not entry.name.endswith(".toml"):
            continue
        try:
            data = tomllib.loads(entry.read_text(encoding="utf-8"))
        except tomllib.TOMLDecodeError as e:
            raise InputError(f"standards_limits/{entry.name}: not valid TOML: {e}") from None
        for key in data.get("source", {}).get("keys", []):
            out[key] = (entry.name, data)
    return out


@functools.lru_cache(maxsize=1)
def _index() -> dict[str, tuple[str, dict]]:
    return _files()


def known_keys() -> tuple[str, ...]:
    """Keys of every limit table shipped with pqcalc, sorted."""
    return tuple(sorted(_index()))


def _source(key: str, fname: str, d: dict) -> Source:
    s = d["source"]
    c = s.get("certainty", "memory")
    if c not in _CERTAINTIES:
        raise InputError(f"standards_limits/{fname}: certainty {c!r} is not one of {_CERTAINTIES}")
    # a table shared by several editions lists one key per edition; ``edition_by_key`` names
    # the edition of the keys whose edition differs from ``edition``
    edition = s.get("edition_by_key", {}).get(key, s["edition"])
    return Source(key, s["standard"], edition, s["table"], c, s.get("note", ""), fname)


def _factor(units: dict, column: str, fname: str) -> float:
    u = units.get(column)
    if u not in _UNIT_FACTOR:
        raise InputError(
            f"standards_limits/{fname}: unit of column {column!r} is {u!r}; expected one of "
            + ", ".join(_UNIT_FACTOR)
        )
    return _UNIT_FACTOR[u]


_SCALE = re.compile(r"^\s*(\d+(?:\.\d+)?)\s*/\s*h\s*$")


def _scaled(value: float, scale: str | None, h: int, fname: str) -> tuple[float, bool]:
    """Apply a row's ``scale`` (``"N/h"`` or ``"lambda"``); returns (value, times_lambda)."""
    if scale is None:
        return value, False
    if scale == "lambda":
        return value, True
    m = _SCALE.match(scale)
    if not m:
        raise InputError(
            f"standards_limits/{fname}: scale {scale!r}: expected 'N/h' or 'lambda'"
        )
    return value * float(m.group(1)) / h, False


def _order_rows(rows: list[dict], units: dict, default_certainty: str, fname: str
                ) -> tuple[OrderLimit, ...]:
    out: dict[int, OrderLimit] = {}
    for r in rows:
        first = int(r["first"])
        last = int(r.get("last", first))
        step = int(r.get("step", 2))
        for h in range(first, last + 1, step):
            limit = per_watt = None
            lam = False
            if "limit" in r:
                limit, lam = _scaled(r["limit"] * _factor(units, "limit", fname),
                                     r.get("scale"), h, fname)
            if "per_watt" in r:
                per_watt, _ = _scaled(r["per_watt"] * _factor(units, "per_watt", fname),
                                      r.get("per_watt_scale"), h, fname)
            if h in out:
                raise InputError(f"standards_limits/{fname}: order {h} appears in two rows")
            out[h] = OrderLimit(h, limit, per_watt, lam, r.get("certainty", default_certainty))
    return tuple(out[h] for h in sorted(out))


def _order_table(key: str, fname: str, d: dict) -> OrderTable:
    s = d["source"]
    src = _source(key, fname, d)
    if "derived_from" in s:
        base = load_limits(s["derived_from"])
        assert isinstance(base, OrderTable)
        f = float(s["factor"])
        limits = tuple(
            OrderLimit(x.order, None if x.limit is None else x.limit * f,
                       None if x.per_watt_a_w is None else x.per_watt_a_w * f,
                       x.times_lambda, src.certainty)
            for x in base.limits
        )
        return OrderTable(src, limits, base.relative)
    units = s.get("units", {})
    limits = _order_rows(d["rows"], units, src.certainty, fname)
    return OrderTable(src, limits, units.get("limit") == "%", s.get("applies_from_w"),
                      s.get("applies_above_w"), s.get("applies_up_to_w"))


def _small_lighting(key: str, fname: str, d: dict) -> SmallLightingLimits:
    src = _source(key, fname, d)
    s = d["source"]
    a = d["option_a"]
    d_table = load_limits(a["per_watt_from"])
    assert isinstance(d_table, OrderTable)
    opt_a = OrderTable(
        Source(key + ":a", src.standard, src.edition, d_table.source.table + ", column 2",
               a.get("certainty", src.certainty), a.get("description", ""), fname),
        tuple(OrderLimit(x.order, None, x.per_watt_a_w, False, x.certainty)
              for x in d_table.limits if x.per_watt_a_w is not None),
        relative=False,
    )

    def option(name: str) -> OrderTable:
        o = d[name]
        c = o.get("certainty", src.certainty)
        return OrderTable(
            Source(f"{key}:{name[-1]}", src.standard, src.edition, src.table, c,
                   o.get("description", ""), fname),
            _order_rows(o["rows"], o.get("units", {}), c, fname),
            relative=o.get("units", {}).get("limit") == "%",
        )

    w = d["option_b"]["waveform"]
    wt = WaveformTestLimits(w["threshold_pct_of_peak"] / 100.0, w["reach_by_deg"],
                            w["peak_by_deg"], w["stay_until_deg"], w.get("certainty", "seen"))
    c = d["option_c"]
    return SmallLightingLimits(src, opt_a, option("option_b"), wt, option("option_c"),
                               c["thd_limit"] * _factor(c["units"], "limit", fname),
                               int(c["thd_max_order"]), s["applies_from_w"], s["applies_up_to_w"])


def _current_distortion(key: str, fname: str, d: dict) -> CurrentDistortionLimits:
    src = _source(key, fname, d)
    s = d["source"]
    k = _factor(s["units"], "limit", fname)
    bands = tuple((int(lo), int(hi)) for lo, hi in d["bands"])
    rows = []
    for r in d["rows"]:
        if len(r["odd"]) != len(bands):
            raise InputError(
                f"standards_limits/{fname}: a row has {len(r['odd'])} band limits for "
                f"{len(bands)} bands"
            )
        rows.append(CurrentDistortionRow(float(r["isc_il_from"]), float(r["isc_il_below"]),
                                         tuple(v * k for v in r["odd"]), r["tdd"] * k))
    even = tuple((int(e["up_to_order"]), float(e["factor"]), e.get("certainty", src.certainty))
                 for e in d["even"])
    return CurrentDistortionLimits(src, bands, tuple(rows), even, s["voltage_kv_min"],
                                   s["voltage_kv_max"])


def _voltage_distortion(key: str, fname: str, d: dict) -> VoltageDistortionLimits:
    src = _source(key, fname, d)
    k = _factor(d["source"]["units"], "limit", fname)
    rows = tuple(
        VoltageDistortionRow(float(r["up_to_kv"]), r["individual"] * k, r["thd"] * k,
                             r.get("certainty", src.certainty))
        for r in d["rows"]
    )
    return VoltageDistortionLimits(src, rows, int(d["source"]["thd_max_order"]))


_READERS: dict[str, Callable[[str, str, dict], LimitData]] = {
    "per-order": _order_table,
    "small-lighting": _small_lighting,
    "isc-il-bands": _current_distortion,
    "voltage-bands": _voltage_distortion,
}


@functools.cache
def load_limits(key: str) -> LimitData:
    """The limit table with identifier ``key``.

    Parameters
    ----------
    key
        ``"iec61000-3-2:class-a"``, ``"...:class-b"``, ``"...:class-c"`` (above 25 W),
        ``"iec61000-3-2:class-c:5-25w"``, ``"...:class-d"`` (the default edition, 5.1), or
        with the edition named, ``"iec61000-3-2:5.0:class-c"``, ``"iec61000-3-2:5.1:..."``;
        ``"ieee519:2014:current"``,
        ``"ieee519:2022:current"``, ``"ieee519:2014:voltage"``, ``"ieee519:2022:voltage"``.

    Raises
    ------
    InputError
        For an unknown key; the message lists the known ones.

    Examples
    --------
    >>> t = load_limits("iec61000-3-2:class-a")
    >>> t[3].limit, t.source.table
    (2.3, 'Table 1')
    """
    idx = _index()
    if key not in idx:
        raise InputError(
            f"unknown limit table {key!r}; known: {', '.join(sorted(idx))}"
        )
    fname, d = idx[key]
    kind = d["source"].get("kind")
    if kind not in _READERS:
        raise InputError(f"standards_limits/{fname}: kind {kind!r} is not one of {list(_READERS)}")
    try:
        return _READERS[kind](key, fname, d)
    except KeyError as e:
        raise InputError(f"standards_limits/{fname}: missing field {e.args[0]!r}") from None
