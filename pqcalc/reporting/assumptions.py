"""The assumptions of a study in numbers: every component value, dimmer parameter and
impedance the calculation used, with where each came from.

Origins:

- ``file``: written in the installation file;
- ``model default``: the model's fixed typical value (:mod:`pqcalc.circuits`);
- ``derived``: computed by the model's sizing rule from the rated power, voltage and
  frequency (a default that follows the lamp), or from other figures of the file (a
  source impedance from a transformer's rating, a cable's loop impedance from its length
  and size).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    from ..installation import Installation
    from ..installation.model import Circuit, ModelledFixture

__all__ = ["ParamRow", "fixture_params", "dimmer_param_sets", "impedance_rows", "si"]

FILE, DEFAULT, DERIVED = "file", "model default", "derived"

_PREFIX = [(1e-12, "p"), (1e-9, "n"), (1e-6, "\u00b5"), (1e-3, "m"), (1.0, ""), (1e3, "k"),
           (1e6, "M")]


def si(value: float | None, unit: str, digits: int = 4) -> str:
    """``value`` with an SI prefix: ``si(4.7e-6, "F") == "4.7 \u00b5F"``; no prefix on units
    that take none (deg, -, %, W at a lamp's scale).

    >>> si(4.7e-6, "F"), si(0.05, "A"), si(330e3, "ohm"), si(0.0, "V"), si(120.0, "deg")
    ('4.7 \u00b5F', '50 mA', '330 k\u03a9', '0 V', '120 deg')
    """
    if value is None or not math.isfinite(value):
        return "-"
    u = "\u03a9" if unit == "ohm" else unit
    if unit in ("-", ""):
        return f"{value:.{digits}g}"
    if unit in ("deg", "%", "W", "pu") or value == 0:
        return f"{value:.{digits}g} {u}"
    a = abs(value)
    k, p = 1.0, ""
    for f, q in _PREFIX:
        if a >= f * 0.9999:
            k, p = f, q
    return f"{value / k:.{digits}g} {p}{u}"


@dataclass(frozen=True)
class ParamRow:
    """One value the calculation used: name, value [SI], unit, origin, meaning."""

    name: str
    value: float | None
    unit: str
    origin: str
    meaning: str


def fixture_params(ft: ModelledFixture, v_ln_v: float, f_hz: float) -> list[ParamRow]:
    """The component values of a modelled fixture type as solved (rated at the nominal
    voltage, as :meth:`pqcalc.installation.cases.CaseSolver.rated_params` fixes them)."""
    from ..circuits.drivers import PARAMS, resolve_params

    model = str(ft.model)
    given = dict(ft.params)
    used = resolve_params(model, ft.power_w, v_ln_v, f_hz, given)
    rows = []
    p_size = ft.power_w / float(given.get("load_fraction", 1.0)) if "load_fraction" in {
        ps.name for ps in PARAMS[model]} else ft.power_w
    for ps in PARAMS[model]:
        val = used.get(ps.name)
        if ps.name in given:
            origin = FILE
        else:
            # a default that moves with the rated power or the supply follows a sizing rule
            a = ps.value(p_size, v_ln_v, f_hz)
            b = ps.value(p_size * 1.37, v_ln_v * 0.91, f_hz * 0.95)
            origin = DERIVED if (a is not None and b is not None and not math.isclose(
                float(a), float(b), rel_tol=1e-9)) else DEFAULT
        rows.append(ParamRow(ps.name, None if val is None else float(val), ps.unit, origin,
                             ps.doc))
    return rows


def dimmer_param_sets(inst: Installation) -> list[tuple[str, list[str], list[ParamRow]]]:
    """The dimmers' parameters, once per distinct dimmer (kind, switch, file values):
    (title, the circuits that use it, the rows)."""
    from ..circuits import Supply
    from ..circuits.dimmers import dimmer_params

    sup = inst.supply
    here = Supply(v_rms_v=sup.voltage_ln_v, frequency_hz=sup.frequency_hz)
    other = Supply(v_rms_v=sup.voltage_ln_v * 0.91, frequency_hz=sup.frequency_hz * 0.95)
    groups: dict[tuple, list[Circuit]] = {}
    for c in inst.circuits:
        if c.dimmer == "none":
            continue
        sw = c.dimmer_switch if c.dimmer == "leading-edge" else "transistor"
        groups.setdefault((c.dimmer, sw, c.dimmer_params), []).append(c)
    out = []
    for (kind, sw, given_t), circuits in groups.items():
        given = dict(given_t)
        alt = {r["name"]: r["default"] for r in dimmer_params(kind, sw, other)}
        rows = []
        for r in dimmer_params(kind, sw, here):
            name = r["name"]
            if name in given:
                val, origin = given[name], FILE
            else:
                val = r["default"]
                origin = DERIVED if not math.isclose(alt[name], val, rel_tol=1e-9) else DEFAULT
            rows.append(ParamRow(name, float(val), r["unit"], origin, r["doc"]))
        title = f"{kind}, {sw}" + (" (values from the file)" if given else "")
        out.append((title, [c.id for c in circuits], rows))
    return out


def impedance_rows(inst: Installation) -> list[tuple[str, str, str, str]]:
    """(where, line R + L, neutral R + L, origin) of every impedance the sums used: the
    source, each feeder, each branch circuit's loop."""
    sup = inst.supply
    z = sup.impedance

    def rl(r: float, l_h: float) -> str:
        return f"{si(r, 'ohm')} + {si(l_h, 'H')}"

    basis = {"transformer": f"{DERIVED}: {sup.transformer_kva:g} kVA transformer, its "
                            f"impedance and X/R (file)" if sup.transformer_kva else DERIVED,
             "short-circuit current": f"{DERIVED}: short-circuit current and X/R (file)",
             "direct": FILE}.get(sup.impedance_basis, sup.impedance_basis)
    if z.is_zero:
        basis = "not given: a stiff supply (no voltage drop)"
    rows = [("source (per line)", rl(z.r_ohm, z.l_h), rl(z.neutral_r_ohm, z.neutral_l_h), basis)]
    for fid, f in inst.feeders.items():
        fi = f.impedance
        same = f.neutral_r_ohm is None and f.neutral_l_h is None
        rows.append((f"feeder {fid}", rl(fi.r_ohm, fi.l_h), rl(fi.neutral_r_ohm, fi.neutral_l_h),
                     FILE + ("; neutral taken equal to a line (default)" if same else "")))
    # branch loops, one row per distinct value and origin (the circuits that share it named)
    loops: dict[tuple[str, str], list[str]] = {}
    for c in inst.circuits:
        if c.loop_r_ohm == 0 and c.loop_l_h == 0:
            continue
        origin = f"{DERIVED}: cable {c.cable}" if c.cable else FILE
        loops.setdefault((rl(c.loop_r_ohm, c.loop_l_h), origin), []).append(c.id)
    for (z_txt, origin), ids in loops.items():
        who = "circuit " if len(ids) == 1 else "circuits "
        rows.append((who + ", ".join(ids) + " (branch loop: line and neutral)", z_txt,
                     "in the loop", origin))
    return rows
