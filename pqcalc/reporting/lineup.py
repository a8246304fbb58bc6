"""The fixture lineup as the report and the exports read it; the standards it cites."""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError

if TYPE_CHECKING:  # pragma: no cover

    from ..assess import Assessment
    from ..installation import Installation
    from ..spectrum import Spectrum
    from ..standards.results import FixtureResult

__all__ = ["LineupState", "LineupEntry", "limits_a_from_result", "lineup_entries",
           "capture_lineup", "default_lineup", "standards_applied"]


# ------------------------------------------------------------------------------ lineup
@dataclass(frozen=True)
class LineupState:
    """One operating state of a fixture type: its spectrum, its verdict, its limits [A]."""

    setting: str
    spectrum: Spectrum
    result: FixtureResult
    limits_a: Mapping[int, float] = field(default_factory=dict)

    @property
    def magnitudes_a(self) -> np.ndarray:
        """Harmonic current magnitudes [A rms], index = order."""
        return np.asarray(self.spectrum.i_h_a, dtype=float)


@dataclass(frozen=True)
class LineupEntry:
    """A fixture type's IEC 61000-3-2 results: full output first, then dimmed states."""

    fixture: str
    states: tuple[LineupState, ...]
    description: str = ""
    dimmer: str = ""
    notes: tuple[str, ...] = ()

    @property
    def title(self) -> str:
        """Fixture name, with the dimmer kind when it was evaluated behind one."""
        d = self.dimmer
        return self.fixture + (f" behind {d} dimmer" if d and d not in ("none", "as recorded")
                               else "")

    @property
    def verdict(self) -> str:
        return "pass" if all(s.result.verdict == "pass" for s in self.states) else "fail"


def limits_a_from_result(result: FixtureResult, spectrum: Spectrum) -> dict[int, float]:
    """The per-order limits [A] of the rule that decided ``result`` (fractions of I1 are
    turned into amperes with the spectrum's fundamental)."""
    dec = result.deciding
    if dec is None:
        return {}
    out = {}
    for c in dec.order_checks():
        if c.unit == "A":
            out[int(c.order)] = float(c.limit)
        elif c.unit == "fraction of I1":
            out[int(c.order)] = float(c.limit) * float(spectrum.i1_a)
    return out


def _get(obj, *names, default=None):
    for n in names:
        if isinstance(obj, Mapping) and n in obj:
            return obj[n]
        if hasattr(obj, n):
            return getattr(obj, n)
    return default


def lineup_entries(lineup: Iterable) -> list[LineupEntry]:
    """Normalise a lineup to :class:`LineupEntry` objects.

    Accepts :class:`LineupEntry` items, or any objects (or mappings) with a fixture name
    (``fixture``/``fixture_type``/``id``), ``states``/``results`` whose items carry a
    setting label (``setting``/``label``/``state``), a ``spectrum`` and a ``result``
    (a :class:`~pqcalc.standards.results.FixtureResult`) and optionally ``limits_a``.
    """
    out = []
    for k, e in enumerate(lineup):
        if isinstance(e, LineupEntry):
            out.append(e)
            continue
        name = _get(e, "fixture", "fixture_type", "id")
        states = _get(e, "states", "results")
        if name is None or states is None:
            raise InputError(f"lineup[{k}]: expected a fixture name and its states")
        sts = []
        for j, s in enumerate(states):
            if isinstance(s, LineupState):
                sts.append(s)
                continue
            spec, res = _get(s, "spectrum"), _get(s, "result", "fixture_result")
            if spec is None or res is None:
                raise InputError(f"lineup[{k}].states[{j}]: expected a spectrum and a result")
            lim = _get(s, "limits_a", "limits")
            if lim is None:
                lim = limits_a_from_result(res, spec)
            sts.append(LineupState(str(_get(s, "setting", "setting_label", "label", "state",
                                            default="") or res.setting), spec, res,
                                   {int(h): float(v) for h, v in dict(lim).items()
                                    if v is not None}))
        out.append(LineupEntry(str(name), tuple(sts),
                               str(_get(e, "description", default="") or ""),
                               str(_get(e, "dimmer", default="") or ""),
                               tuple(str(n) for n in (_get(e, "notes", default=()) or ()))))
    return out


def capture_lineup(inst: Installation) -> tuple[list[LineupEntry], list[str]]:
    """IEC 61000-3-2 (Class C) results of the installation's measured fixture types.

    Each capture is one state (as measured). Returns the entries and notes naming the
    fixture types that are circuit models and were not evaluated here.
    """
    from ..io.capture import load_capture, record_to_waveform
    from ..spectrum import spectrum
    from ..standards import evaluate_fixture

    entries, notes = [], []
    v_nom = inst.supply.voltage_ln_v
    for fid, ft in inst.fixtures.items():
        if not ft.measured:
            notes.append(f"fixture type {fid} is a circuit model; its lineup row needs the "
                         "lineup evaluator")
            continue
        try:
            w = record_to_waveform(load_capture(ft.capture, ft.capture_options))
        except InputError as e:
            raise InputError(f"fixtures.{fid}.capture: {e}") from None
        pw = None if w.has_voltage else ft.power_w or None
        pf = None if w.has_voltage else 1.0
        r = evaluate_fixture(w, pw, pf, "C", fixture=fid, setting="as measured",
                             nominal_voltage_v=v_nom)
        s = spectrum(w)
        entries.append(LineupEntry(fid, (LineupState("as measured", s, r,
                                                     limits_a_from_result(r, s)),),
                                   ft.description))
        if not w.has_voltage:
            notes.append(f"fixture type {fid}: the capture has no voltage; power factor "
                         "taken as 1 and power from the file")
    return entries, notes


def default_lineup(inst: Installation) -> tuple[list[LineupEntry], list[str]]:
    """The lineup evaluator's result when ``pqcalc.lineup`` exists, else
    :func:`capture_lineup`."""
    import importlib.util

    if importlib.util.find_spec("pqcalc.lineup") is not None:
        from .. import lineup as _lu  # type: ignore[attr-defined]

        fn = getattr(_lu, "evaluate_lineup", None)
        if fn is not None:
            return lineup_entries(fn(inst)), []
    return capture_lineup(inst)


# --------------------------------------------------------------------------- standards
def standards_applied(assessment: Assessment, lineup: Sequence[LineupEntry] = ()
                      ) -> list[tuple[str, str]]:
    """(reference with edition, what it was used for) for every rule source the report
    relies on: the lineup's IEC 61000-3-2 rules and every check's source."""
    used: dict[str, list[str]] = {}

    def add(ref: str, what: str) -> None:
        lst = used.setdefault(ref, [])
        if what not in lst:
            lst.append(what)

    for e in lineup:
        for s in e.states:
            for r in s.result.rules:
                add(r.reference, f"fixture lineup ({r.rule})")
            if not s.result.rules:
                add("IEC 61000-3-2:2018 (ed. 5.0) + AMD1:2020", f"fixture lineup "
                    f"({s.result.rule})")
    for sc in assessment.scenarios:
        for c in sc.all_checks():
            add(c.source, c.name)
    return [(ref, ", ".join(w)) for ref, w in used.items()]


