"""Inrush pulses against a breaker's pulse withstand: the allowed peak and the driver count.

A breaker's instantaneous release is judged by the pulse's peak AND its width at half peak
(common practice of breaker makers and the lighting industry). The withstand tables (peak
allowed versus width) live in ``standards_limits/breaker_pulse_withstand.toml`` with their
derivation, source and certainty; a breaker maker's own table of the same shape, passed in,
replaces them.

- :func:`withstand_table` gives the table of an IEC 60898-1 characteristic (``"B"``,
  ``"C"``, ``"D"``), or of a UL 489 thermal-magnetic breaker from its instantaneous pickup
  (``"UL489"``, ``pickup_x_in`` required).
- :func:`table_from_data` validates a maker's table (``width_s`` with ``peak_a`` or
  ``peak_x_in``): widths positive and increasing, peaks positive and non-increasing with
  width; else an :class:`~pqcalc.errors.InputError` naming the field.
- :func:`judge_pulse` returns the allowed peak at the pulse's width and the largest number
  of identical drivers whose pulses coincide (the worst case), with the figures it used.

References
----------
IEC 60898-1 (instantaneous tripping bands B 3-5 In, C 5-10 In, D 10-20 In). The curves are
derived from those bands (see the data file); they support, and never replace, the breaker
maker's data, the local electrical code and a licensed professional.
"""

from __future__ import annotations

import functools
import math
import sys
from collections.abc import Mapping
from dataclasses import dataclass
from importlib import resources
from typing import Literal, get_args

from ..errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = ["BreakerType", "BREAKER_TYPES", "WithstandTable", "PulseJudgement",
           "WITHSTAND_FILE", "withstand_table", "table_from_data", "judge_pulse",
           "instantaneous_peak_a"]

BreakerType = Literal["B", "C", "D", "UL489"]
BREAKER_TYPES: tuple[str, ...] = get_args(BreakerType)
WITHSTAND_FILE = "breaker_pulse_withstand.toml"
#: IEC 60898-1 instantaneous tripping bands [x In rms] (seen)
IEC60898_BANDS: dict[str, tuple[float, float]] = {"B": (3.0, 5.0), "C": (5.0, 10.0),
                                                  "D": (10.0, 20.0)}


@dataclass(frozen=True)
class WithstandTable:
    """Peak allowed versus width at half peak, for one breaker type.

    ``peaks`` are multiples of the rated current In where ``unit`` is ``"x_in"``, amperes
    where it is ``"A"`` (a maker's table of one breaker). Between points the peak is
    interpolated on log-log axes (a power law per interval); outside, the end value holds
    (a narrower pulse than the first width is allowed the first width's peak, which the
    monotonic table makes the conservative choice).
    """

    name: str
    width_s: tuple[float, ...]
    peaks: tuple[float, ...]
    unit: str  # "x_in" or "A"
    source: str
    certainty: str
    note: str = ""

    def allowed_peak_a(self, width_s: float, rating_a: float) -> tuple[float, str]:
        """Allowed peak [A] at ``width_s`` for a breaker rated ``rating_a`` [A], and how it
        was read (``"interpolated"``, ``"below the table: first width"``, ``"above the
        table: last width"``)."""
        w, p = self.width_s, self.peaks
        if width_s <= w[0]:
            val, how = p[0], "below the table: first width" if width_s < w[0] else "tabulated"
        elif width_s >= w[-1]:
            val, how = p[-1], "above the table: last width" if width_s > w[-1] else "tabulated"
        else:
            j = next(k for k in range(1, len(w)) if width_s <= w[k])
            f = math.log(width_s / w[j - 1]) / math.log(w[j] / w[j - 1])
            val = math.exp(math.log(p[j - 1]) + f * (math.log(p[j]) - math.log(p[j - 1])))
            how = "interpolated (log-log)"
        scale = rating_a if self.unit == "x_in" else 1.0
        return float(val * scale), how


@dataclass(frozen=True)
class PulseJudgement:
    """One driver's inrush pulse against a breaker.

    Attributes
    ----------
    breaker, rating_a
        Breaker type and rated current [A].
    peak_one_a, width_s
        The pulse judged: one driver's peak [A] and width at half peak [s].
    allowed_peak_a
        Largest peak of a pulse of that width the breaker withstands [A].
    max_drivers
        Largest number of identical drivers whose pulses coincide (worst case) with a
        summed peak within ``allowed_peak_a`` [-]; None if the peak is zero.
    instantaneous_peak_a
        Peak of the lower instantaneous-band edge, ``sqrt(2) k_lo In`` [A]: the peak-only
        rule, for comparison (None for a maker's table in amperes without a band).
    peak_only_drivers
        The count the peak-only rule allows [-] (None where it has no band).
    table, source, certainty, reading
        The table used, its source and certainty, and how the width was read in it.
    """

    breaker: str
    rating_a: float
    peak_one_a: float
    width_s: float
    allowed_peak_a: float
    max_drivers: int | None
    instantaneous_peak_a: float | None
    peak_only_drivers: int | None
    table: str
    source: str
    certainty: str
    reading: str

    def to_dict(self) -> dict:
        return dict(self.__dict__)


# ---------------------------------------------------------------------- tables
def _positive_list(data: Mapping, name: str, where_: str) -> list[float]:
    v = data.get(name)
    if not isinstance(v, (list, tuple)) or len(v) < 1:
        raise InputError(f"{where_}{name}: expected a list of positive numbers")
    out = []
    for k, x in enumerate(v):
        try:
            f = float(x)
        except (TypeError, ValueError):
            raise InputError(f"{where_}{name}[{k}]: expected a positive number, got {x!r}"
                             ) from None
        if not (math.isfinite(f) and f > 0):
            raise InputError(f"{where_}{name}[{k}]: expected a positive number, got {x!r}")
        out.append(f)
    return out


def table_from_data(data: Mapping, where_: str = "", name: str = "maker's table",
                    source: str = "breaker maker's data", certainty: str = "maker"
                    ) -> WithstandTable:
    """A withstand table from a mapping ``{"width_s": [...], "peak_a": [...]}`` (one
    breaker, amperes) or ``{"width_s": [...], "peak_x_in": [...]}`` (multiples of In).

    Validated: widths positive and strictly increasing; peaks positive, as many as widths,
    and non-increasing with width (a breaker never withstands a higher peak for a longer
    pulse). ``where_`` prefixes the messages (e.g. ``"plan.toml:42: circuit CL-1: "``).
    """
    if not isinstance(data, Mapping):
        raise InputError(f"{where_}pulse withstand: expected a table with width_s and peak_a "
                         "(or peak_x_in)")
    has_a, has_x = "peak_a" in data, "peak_x_in" in data
    if has_a == has_x:
        raise InputError(f"{where_}pulse withstand: expected one of peak_a [A] or peak_x_in "
                         "[x In] beside width_s")
    key = "peak_a" if has_a else "peak_x_in"
    w = _positive_list(data, "width_s", where_)
    p = _positive_list(data, key, where_)
    if len(w) != len(p):
        raise InputError(f"{where_}{key}: expected {len(w)} values, one per width_s, got "
                         f"{len(p)}")
    for k in range(1, len(w)):
        if not w[k] > w[k - 1]:
            raise InputError(f"{where_}width_s[{k}]: expected widths strictly increasing, got "
                             f"{w[k]:g} after {w[k - 1]:g}")
        if p[k] > p[k - 1]:
            raise InputError(f"{where_}{key}[{k}]: expected the allowed peak non-increasing "
                             f"with width (monotonic), got {p[k]:g} after {p[k - 1]:g}")
    return WithstandTable(name, tuple(w), tuple(p), "A" if has_a else "x_in", source,
                          certainty, str(data.get("note", "")))


@functools.lru_cache(maxsize=1)
def _data() -> dict:
    entry = resources.files("pqcalc.standards_limits").joinpath(WITHSTAND_FILE)
    try:
        return tomllib.loads(entry.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as e:  # pragma: no cover - shipped file
        raise InputError(f"standards_limits/{WITHSTAND_FILE}: not valid TOML: {e}") from None


def _law() -> tuple[float, float, float]:
    law = _data()["law"]
    return float(law["exponent"]), float(law["anchor_width_s"]), float(law["min_width_s"])


def withstand_table(breaker: str, pickup_x_in: float | None = None) -> WithstandTable:
    """The pulse-withstand table of a breaker type.

    ``"B"``, ``"C"``, ``"D"``: IEC 60898-1 characteristics, from the data file.
    ``"UL489"``: a US thermal-magnetic breaker; ``pickup_x_in`` is its instantaneous pickup
    [x In rms], the lower tolerance edge on the maker's time-current curve (UL 489 sets no
    band); the curve is derived from it by the data file's law, as the IEC curves are.
    """
    b = str(breaker).strip().upper().replace(" ", "")
    d = _data()
    src = d["source"]
    where_ = f"standards_limits/{WITHSTAND_FILE}: "
    if b in ("B", "C", "D"):
        for c in d["curve"]:
            if c["breaker"] == b:
                t = table_from_data(c, where_ + f"curve {b}: ", f"IEC 60898-1 type {b}",
                                    f"{src['anchor']}; {src['law']}", c.get("certainty",
                                                                            src["certainty"]))
                return t
    if b in ("UL489", "UL-489"):
        if pickup_x_in is None or not (math.isfinite(pickup_x_in) and pickup_x_in > 1.0):
            raise InputError("breaker UL489: give instantaneous_pickup_x_in (> 1), the lower "
                             "edge of the instantaneous pickup on the maker's time-current "
                             "curve; UL 489 sets no instantaneous band")
        n, wa, wmin = _law()
        widths = [wmin, 1e-4, 2e-4, 5e-4, 1e-3, 2e-3, wa]
        peaks = [math.sqrt(2) * pickup_x_in * (wa / w) ** n for w in widths]
        return WithstandTable(
            f"UL 489 thermal-magnetic, instantaneous pickup {pickup_x_in:g} x In",
            tuple(widths), tuple(peaks), "x_in",
            f"maker's instantaneous pickup; {src['law']}", "computed",
            "derived from the pickup by the data file's law")
    raise InputError(f"breaker type: expected one of {', '.join(BREAKER_TYPES)}, got "
                     f"{breaker!r}")


def instantaneous_peak_a(breaker: str, rating_a: float,
                         pickup_x_in: float | None = None) -> float | None:
    """Peak of the lower instantaneous-band edge [A]: ``sqrt(2) k_lo In`` (IEC 60898-1), or
    ``sqrt(2) pickup In`` for a UL 489 breaker with a known pickup."""
    b = str(breaker).strip().upper().replace(" ", "")
    if b in IEC60898_BANDS:
        return math.sqrt(2) * IEC60898_BANDS[b][0] * rating_a
    if b in ("UL489", "UL-489") and pickup_x_in is not None:
        return math.sqrt(2) * pickup_x_in * rating_a
    return None


# ---------------------------------------------------------------------- the judgement
def judge_pulse(breaker: str, rating_a: float, peak_a: float, width_s: float,
                table: WithstandTable | Mapping | None = None,
                pickup_x_in: float | None = None) -> PulseJudgement:
    """One driver's inrush pulse (peak [A], width at half peak [s]) against a breaker.

    The allowed peak is read from ``table`` (a maker's :class:`WithstandTable` or a mapping
    validated by :func:`table_from_data`) or else from :func:`withstand_table`. Identical
    drivers switched together add their pulses (coinciding, the worst case; the loop
    impedance makes the true sum smaller): ``max_drivers = floor(allowed / peak)``.
    """
    if not (math.isfinite(rating_a) and rating_a > 0):
        raise InputError(f"breaker rating_a: expected a positive current [A], got {rating_a}")
    if not (math.isfinite(peak_a) and peak_a >= 0):
        raise InputError(f"inrush peak_a: expected a current >= 0 [A], got {peak_a}")
    if not (math.isfinite(width_s) and width_s > 0):
        raise InputError(f"inrush width_s: expected a positive width [s], got {width_s}")
    if table is None:
        tab = withstand_table(breaker, pickup_x_in)
    elif isinstance(table, WithstandTable):
        tab = table
    else:
        tab = table_from_data(table)
    allowed, how = tab.allowed_peak_a(width_s, rating_a)
    n = int(math.floor(allowed / peak_a * (1 + 1e-12))) if peak_a > 0 else None
    inst = instantaneous_peak_a(breaker, rating_a, pickup_x_in) \
        if str(breaker).strip().upper().replace(" ", "") in BREAKER_TYPES + ("UL-489",) \
        else None
    n_peak = int(math.floor(inst / peak_a * (1 + 1e-12))) if inst and peak_a > 0 else None
    return PulseJudgement(str(breaker), float(rating_a), float(peak_a), float(width_s),
                          allowed, n, inst, n_peak, tab.name, tab.source, tab.certainty, how)
