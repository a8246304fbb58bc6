"""Distinct circuit cases, solved once and shared.

Cost grows with distinct cases, not lamps: a circuit's current is found by solving its
fixture mix behind its dimmer at its setting and panel voltage once (cached by
:class:`CaseConditions`); identical circuits reuse the same result object. Behind one
leading-edge (triac) dimmer the lamps are solved together, since latching and holding depend
on the summed current; on a stiff supply with no dimmer or a trailing-edge dimmer every lamp
sees the same voltage whatever the others do, so each fixture type is solved once and
multiplied by its count (the dimmer's own small series resistance then counts once per
lamp: below 0.2 % of the current for usual circuits).

Lamps keep the components rated at the nominal voltage (:meth:`CaseSolver.rated_params`)
when the panel voltage sags or distorts.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Collection
from concurrent.futures import Executor
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from ..errors import ConvergenceError, InputError
from ..spectrum import period_phasors
from ..waveform import shift_periodic
from .model import Circuit, Installation, MeasuredFixture, ModelledFixture
from .sums import GRID_SAMPLES, MAX_ORDER, common_period, to_grid

__all__ = ["FULL_CONDUCTION_DEG", "PanelVoltage", "CaseConditions", "GroupStress",
           "CaseResult", "CaseSolver", "LampLight", "with_fundamental", "turn_transfer"]

#: A setting at or above this conduction angle [deg] is a dimmer fully on.
FULL_CONDUCTION_DEG = 179.5


@dataclass(frozen=True)
class PanelVoltage:
    """The source a circuit sees at its panel, in its own line's frame: the fundamental
    [V rms], harmonics as (order, fraction of V1, angle [deg] on the fundamental's zero
    crossing), the fundamental's angle against the ideal supply [rad], and the loop
    impedance of the source and feeder [ohm], [H]."""

    v1_rms_v: float
    harmonics: tuple[tuple[int, float, float], ...] = ()
    delta_rad: float = 0.0
    loop_r_ohm: float = 0.0
    loop_l_h: float = 0.0

    @property
    def v_rms_v(self) -> float:
        return self.v1_rms_v * float(np.sqrt(1 + sum(r * r for _, r, _ in self.harmonics)))


@dataclass(frozen=True)
class CaseConditions:
    """Everything a circuit solve depends on (the cache key): fixture mix, dimmer and its
    setting, branch impedance, panel voltage (None: the ideal supply)."""

    groups: tuple[tuple[str, int], ...]
    dimmer: str
    dimmer_switch: str
    conduction_deg: float | None
    knob: float | None
    dimmer_params: tuple[tuple[str, float], ...]
    branch_r_ohm: float
    branch_l_h: float
    voltage: PanelVoltage | None = None

    @classmethod
    def of(cls, c: Circuit, scenario: int, voltage: PanelVoltage | None = None
           ) -> CaseConditions:
        cond, knob = c.setting(scenario)
        return cls(tuple((g.fixture, g.count) for g in c.groups), c.dimmer, c.dimmer_switch,
                   cond, knob, c.dimmer_params, c.loop_r_ohm, c.loop_l_h, voltage)


@dataclass(frozen=True)
class GroupStress:
    """Per fixture type in a circuit: one lamp's figures at this circuit's conditions."""

    fixture: str
    count: int
    i_rms_one_a: float


@dataclass(frozen=True)
class CaseResult:
    """A circuit's solved current on the aggregation grid [A], on its own line's voltage."""

    current_a: np.ndarray
    cycles: int
    p_w: float
    flags: tuple[str, ...]
    groups: tuple[GroupStress, ...]
    notes: tuple[str, ...] = ()
    #: the lamps' light, its figures computed when first read (:attr:`light`)
    light_of: LampLight | None = None
    #: the harmonic transfer ``(A, B)`` of the current from the voltage about this state,
    #: orders 0..MAX_ORDER (rows out, columns in; the fundamental's column made whole by
    #: :func:`with_fundamental`) [S]: asked for by the supply interaction
    #: (:func:`pqcalc.circuits.smallsignal.harmonic_transfer`, single precision: a
    #: Jacobian); None where not asked for, for measured records (used as recorded at any
    #: voltage: no answer) or where the state has no one-cycle period. It is still to be
    #: turned by ``turn_rad`` (see :meth:`turned`)
    transfer: tuple[np.ndarray, np.ndarray] | None = None
    turn_rad: float = 0.0
    #: the discrete pattern of the solved state: per solve, its trigger pulses per half cycle
    #: (a triac's firings and re-fires) and its flags; a change of it between two voltages
    #: is a change of firing pattern, not a smooth answer
    pattern: tuple = ()

    @functools.cached_property
    def phasors(self) -> np.ndarray:
        """The current's phasors, orders 0..MAX_ORDER (computed once per result)."""
        return period_phasors(self.current_a, self.cycles)

    @property
    def light(self) -> dict[str, float] | None:
        """The worst lamp's light: ``mean`` [-, 1 = full output], ``pst_lm``, ``svm`` [-]
        (None for measured records and where every lamp is dark)."""
        return None if self.light_of is None else self.light_of.worst()

    def scaled(self, count: int) -> CaseResult:
        t = self.transfer
        return replace(self, current_a=self.current_a * count, p_w=self.p_w * count,
                       transfer=None if t is None else (t[0] * count, t[1] * count))

    def turned(self, angle_rad: float) -> CaseResult:
        """The result moved ahead by ``angle_rad`` of the fundamental (every order-h phasor
        turned by ``h * angle_rad``); its transfer keeps its matrices and adds the angle to
        ``turn_rad`` (:func:`turn_transfer` turns them)."""
        return replace(self, current_a=shift_periodic(self.current_a, -angle_rad, self.cycles),
                       turn_rad=self.turn_rad + angle_rad)


def _sum_cases(parts: list[CaseResult], notes: tuple[str, ...] = ()) -> CaseResult:
    if len(parts) == 1:
        # one part: its own arrays (the sum below would copy them to the same values)
        p = parts[0]
        return replace(p, notes=tuple(dict.fromkeys(p.notes + notes)), pattern=(p.pattern,))
    cyc = common_period(p.cycles for p in parts)
    cur = parts[0].current_a * 0.0
    for p in parts:  # in order, as the reference sums were made
        cur = cur + np.tile(p.current_a, cyc // p.cycles)
    flags = tuple(dict.fromkeys(f for p in parts for f in p.flags))
    lights = tuple(p.light_of for p in parts if p.light_of is not None)
    light = None if not lights else lights[0] if len(lights) == 1 else LampLight((), 1.0, lights)
    ts = [(p.transfer, p.turn_rad) for p in parts if p.transfer is not None]
    transfer, turn = None, 0.0
    if len(ts) == 1 or len({a for _, a in ts}) == 1:
        turn = ts[0][1]
        transfer = (np.sum([t[0] for t, _ in ts], axis=0), np.sum([t[1] for t, _ in ts], axis=0))
    elif ts:
        turned = [turn_transfer(t, a) for t, a in ts]
        transfer = (np.sum([t[0] for t in turned], axis=0),
                    np.sum([t[1] for t in turned], axis=0))
    return CaseResult(cur, cyc, sum(p.p_w for p in parts), flags,
                      tuple(g for p in parts for g in p.groups),
                      tuple(dict.fromkeys(n for p in parts for n in p.notes + notes)), light,
                      transfer, turn, tuple(p.pattern for p in parts))


class CaseSolver:
    """Solves and caches the circuit cases of one installation."""

    def __init__(self, inst: Installation, executor: Executor | None = None,
                 transfer: bool = False):
        self.inst = inst
        #: solve the harmonic transfer beside each modelled case (the supply interaction's
        #: linear part); a measured record has none (used as recorded at any voltage)
        self.transfer = transfer
        self.cache: dict[Any, Any] = {}
        self.captures: dict[str, tuple[np.ndarray, float, tuple[str, ...]]] = {}
        self.solves = 0
        #: where distinct cases are solved: None in this process; any
        #: :class:`concurrent.futures.Executor` (local processes, or a dask cluster's
        #: ``client.get_executor()``) otherwise
        self.executor = executor

    def prefetch(self, wanted: list[tuple[Circuit, int, PanelVoltage | None]]) -> None:
        """Solve the distinct cases of ``wanted`` that are not cached yet, on the executor.

        The results are the same objects :meth:`case` would make in this process (the same
        code on the same inputs); only where they are computed differs.
        """
        if self.executor is None:
            return
        todo: dict[CaseConditions, str] = {}
        for c, scenario, v in wanted:
            key = CaseConditions.of(c, scenario, v)
            if key not in self.cache and key not in todo:
                todo[key] = c.id
        if len(todo) < 2:
            return
        items = list(todo.items())
        size = max(1, math.ceil(len(items) / BATCHES))  # a few tasks per worker, not one each
        futures = [self.executor.submit(_solve_remote, self.inst, items[i:i + size],
                                        self.transfer)
                   for i in range(0, len(items), size)]
        for fut in futures:
            results, solves = fut.result()
            self.cache.update(results)
            self.solves += solves

    def retain(self, voltages: Collection[PanelVoltage | None]) -> None:
        """Forget the cases solved under panel voltages other than ``voltages`` (and the
        stiff supply's): the supply-interaction iteration calls it before each pass, so
        that the cache holds one pass's cases, not every pass's. A case asked again after
        it was forgotten is solved again, to the same result."""
        keep = set(voltages)
        harm = {(round(v.v1_rms_v, 3), v.harmonics) for v in keep if v is not None}
        for k in list(self.cache):
            if isinstance(k, CaseConditions):
                if k.voltage is not None and k.voltage not in keep:
                    del self.cache[k]
            elif isinstance(k, tuple) and k and k[0] == "model" and k[-1][1] \
                    and k[-1] not in harm:
                del self.cache[k]  # a distorted panel voltage of an earlier pass

    def case(self, c: Circuit, scenario: int, voltage: PanelVoltage | None = None) -> CaseResult:
        """The circuit's current at a scenario under ``voltage`` (None: the ideal supply).

        Circuits that differ only in id, panel, line or breaker share one result object. A
        circuit the model cannot settle is a result with no current and the flag
        'no-solution', loudly: its checks fail and the totals say so.
        """
        key = CaseConditions.of(c, scenario, voltage)
        hit = self.cache.get(key)
        if hit is None:
            hit = self._case_or_missing(key, c.id)
            self.cache[key] = hit
        return hit

    def _case_or_missing(self, k: CaseConditions, cid: str) -> CaseResult:
        try:
            return self._case(k, cid)
        except ConvergenceError as e:
            return CaseResult(np.zeros(GRID_SAMPLES), 1, 0.0, ("no-solution",), (), (f"{e}",))

    def _case(self, k: CaseConditions, cid: str) -> CaseResult:
        extra_notes: tuple[str, ...] = ()
        top = self.max_conduction_deg(k)
        if k.conduction_deg is not None and top is not None and k.conduction_deg > top:
            # the dimmer's own top: a firing network cannot fire at the zero crossing, a
            # transistor dimmer's knob ends short of the full wave
            extra_notes = (f"{k.dimmer} dimmer set to {k.conduction_deg:g} deg conducts at most "
                           f"{top:g} deg (its max_conduction_deg)",)
            k = replace(k, conduction_deg=top)
        if k.dimmer != "none" and k.conduction_deg is not None and \
                k.conduction_deg >= FULL_CONDUCTION_DEG:
            # a dimmer at full conduction passes the whole wave: solved as the uncut supply
            # (a single gate pulse at the zero crossing would find no current to latch on)
            extra_notes += (f"{k.dimmer} dimmer at {k.conduction_deg:g} deg: the whole wave "
                            "passes; solved as the uncut supply",)
            k = replace(k, dimmer="none", conduction_deg=180.0, knob=None)
        fx = self.inst.fixtures
        measured = [(f, n) for f, n in k.groups if fx[f].measured]
        modelled = [(f, n) for f, n in k.groups if not fx[f].measured]
        parts = [self._capture_case(f, n) for f, n in measured]
        if modelled:
            v = k.voltage
            loop = v is not None and (v.loop_r_ohm + v.loop_l_h) > 0
            triac = k.dimmer == "leading-edge" and k.dimmer_switch == "triac"
            together = triac or k.branch_r_ohm > 0 or k.branch_l_h > 0 or loop
            if together:
                parts.append(self._model_case(k, tuple(modelled), cid))
            else:
                for f, n in modelled:
                    one = self._model_case(k, ((f, 1),), cid)
                    g = one.groups[0]
                    parts.append(replace(one.scaled(n), groups=(replace(g, count=n),)))
        return _sum_cases(parts, extra_notes)

    # measured fixtures: the capture is used as recorded, aligned to its voltage
    def _capture_case(self, fid: str, count: int) -> CaseResult:
        if fid not in self.captures:
            from ..io.capture import load_capture, record_to_waveform

            ft = self.inst.fixtures[fid]
            assert isinstance(ft, MeasuredFixture)
            try:
                w = record_to_waveform(load_capture(ft.capture, ft.capture_options))
            except InputError as e:
                raise InputError(f"fixtures.{fid}.capture: {e}") from None
            notes: list[str] = []
            if w.voltage_v is not None:
                # move the time origin to the voltage's positive-going zero crossing
                w = w.shifted(float(np.angle(period_phasors(w.voltage_v, w.cycles, 1)[1])))
                v = w.v_rms_v
                nominal = self.inst.supply.voltage_ln_v
                if v is not None and abs(v - nominal) > 0.05 * nominal:
                    notes.append(f"fixture {fid}: captured at {v:.0f} V, used unscaled")
                p1 = float(w.p_w) if w.p_w is not None else ft.power_w
            else:
                notes.append(f"fixture {fid}: capture has no voltage; phase taken from the "
                             "current fundamental as if in phase with the voltage")
                w = w.shifted(float(np.angle(period_phasors(w.current_a, w.cycles, 1)[1])))
                p1 = ft.power_w
            # keep one cycle (the average cycle) of the record
            x = to_grid(w, w.cycles).reshape(w.cycles, GRID_SAMPLES).mean(axis=0)
            self.captures[fid] = (x, p1, tuple(notes))
        x, p1, got = self.captures[fid]
        # a steady-state record holds no switch-on inrush: unknown (NaN), not its peak
        g = GroupStress(fid, count, float(np.sqrt(np.mean(x**2))))
        return CaseResult(x * count, 1, p1 * count, (), (g,),
                          got + (f"fixture {fid}: measured record used at its recorded "
                                   "conditions (dimmer setting not applied)",))

    def _model_case(self, k: CaseConditions, groups: tuple[tuple[str, int], ...],
                    cid: str) -> CaseResult:
        v = k.voltage
        sup = self.inst.supply
        v1, harm, delta = (sup.voltage_ln_v, (), 0.0) if v is None else \
            (v.v1_rms_v, v.harmonics, v.delta_rad)
        r_src = k.branch_r_ohm + (0.0 if v is None else v.loop_r_ohm)
        l_src = k.branch_l_h + (0.0 if v is None else v.loop_l_h)
        # solved at the key's own values (1 mV on the fundamental), so that which case is
        # met first never changes a result (workers meet them in another order)
        v1 = round(v1, 3)
        # the panel voltage's part of the key last, as one item (retain() reads it)
        key = ("model", k.dimmer, k.dimmer_switch, k.conduction_deg, k.knob, k.dimmer_params,
               r_src, l_src, groups, (v1, harm))
        hit = self.cache.get(key)
        if hit is None:
            hit = self._solve(k, groups, v1, harm, r_src, l_src, cid)
            self.cache[key] = hit
        return hit.turned(delta) if delta else hit

    def shunt_capacitance_f(self) -> dict[str, float]:
        """Per line, the fixtures' input (EMI) capacitance across the supply [F]: every
        modelled lamp's ``c_emi_f`` (rated components) times its count."""
        out = {ln: 0.0 for ln in self.inst.supply.lines}
        for c in self.inst.circuits:
            for g in c.groups:
                if not self.inst.fixtures[g.fixture].measured:
                    out[c.line] += g.count * self.rated_params(g.fixture).get("c_emi_f", 0.0)
        return out

    def max_conduction_deg(self, k: CaseConditions) -> float | None:
        """The dimmer's largest conduction angle [deg] (its ``max_conduction_deg``
        parameter, given or the model's default), or None where it has none."""
        if k.dimmer == "none":
            return None
        from ..circuits import Supply
        from ..circuits.dimmers import resolve_dimmer

        sup = self.inst.supply
        p = resolve_dimmer(dimmer_spec(replace(k, conduction_deg=90.0, knob=None)),
                           Supply(v_rms_v=sup.voltage_ln_v, frequency_hz=sup.frequency_hz))
        top = p.get("max_conduction_deg")
        return None if top is None else float(top)

    def rated_params(self, fid: str) -> dict[str, float]:
        """A fixture type's component values fixed at the nominal supply voltage.

        The models scale their default components with the supply voltage; a lamp built for
        the nominal voltage keeps its components when the panel voltage sags or distorts, so
        they are resolved once here and passed on explicitly.
        """
        key = ("params", fid)
        if key not in self.cache:
            from ..circuits.drivers import resolve_params

            ft = self.inst.fixtures[fid]
            assert isinstance(ft, ModelledFixture)
            try:
                full = resolve_params(ft.model, ft.power_w, self.inst.supply.voltage_ln_v,
                                      self.inst.supply.frequency_hz, dict(ft.params))
            except InputError as e:
                raise InputError(f"fixtures.{fid}: {e}") from None
            self.cache[key] = {k: v for k, v in full.items() if v is not None}
        return dict(self.cache[key])

    def _solve(self, k: CaseConditions, groups: tuple[tuple[str, int], ...], v1: float,
               harm: tuple[tuple[int, float, float], ...], r_src: float, l_src: float,
               cid: str) -> CaseResult:
        from ..circuits import LoadGroup, Supply, solve_circuit

        inst = self.inst
        self.solves += 1
        supply = Supply(v_rms_v=v1, frequency_hz=inst.supply.frequency_hz,
                        source_r_ohm=r_src, source_l_h=l_src,
                        voltage_harmonics=list(harm) if harm else None)
        loads = [LoadGroup(model=str(inst.fixtures[f].model), power_w=inst.fixtures[f].power_w,
                           count=n, params=tuple(sorted(self.rated_params(f).items())))
                 for f, n in groups]
        try:
            # the switch-on inrush is the installation's own transient (inrush()), so the
            # solver's extras are not needed; this cache keeps the result, not the solver's
            # memo
            sol = solve_circuit(supply, dimmer_spec(k), loads, extras=False, memo=False,
                                admittance="odd" if self.transfer else False)
        except (ConvergenceError, InputError) as e:
            what = ", ".join(f"{n} x {f}" for f, n in groups)
            setting = "" if k.dimmer == "none" else (
                f" at knob {k.knob:g}" if k.knob is not None else f" at {k.conduction_deg:g} deg")
            raise type(e)(f"circuit {cid} ({what} behind {k.dimmer}{setting}, panel voltage "
                          f"{v1:.1f} V): {e}") from None
        w = sol.waveform
        x = to_grid(w, w.cycles)
        gs = tuple(GroupStress(f, n, float(g.waveform.i_rms_a))
                   for (f, n), g in zip(groups, sol.groups, strict=True))
        p = float(w.p_w) if w.p_w is not None else float("nan")
        if not np.isfinite(p):
            raise InputError(f"circuit {cid}: the solver returned no power")
        # the solver's notes, except its dimmer-top note: the case was clamped to the top
        # already, and says so itself
        notes = tuple(n for n in sol.notes if "conducts at most" not in n)
        t = sol.harmonic_transfer_s
        if t is not None:
            a, b = with_fundamental(t, period_phasors(x, w.cycles, MAX_ORDER), v1)
            t = (a.astype(np.complex64), b.astype(np.complex64))
        return CaseResult(x, w.cycles, p, tuple(sol.flags), gs, notes,
                          LampLight(tuple(np.asarray(g.light, dtype=float) for g in sol.groups),
                                    sol.period_cycles / inst.supply.frequency_hz), t,
                          pattern=(tuple(sol.firings), tuple(sorted(sol.flags))))

    def _inrush_key(self, c: Circuit, scenario: int) -> tuple | None:
        """The cache key of a circuit's switch-on transient and what it is solved from:
        (key, modelled groups, conditions, loop R [ohm], loop L [H]); None without
        modelled lamps."""
        fx = self.inst.fixtures
        groups = tuple((g.fixture, g.count) for g in c.groups if not fx[g.fixture].measured)
        if not groups:
            return None
        panel = next(p for p in self.inst.panels if p.id == c.panel)
        z = self.inst.supply.impedance
        r = z.r_ohm + z.neutral_r_ohm + c.loop_r_ohm
        l_h = z.l_h + z.neutral_l_h + c.loop_l_h
        if panel.feeder is not None:
            zf = self.inst.feeders[panel.feeder].impedance
            r, l_h = r + zf.r_ohm + zf.neutral_r_ohm, l_h + zf.l_h + zf.neutral_l_h
        k = CaseConditions.of(c, scenario)
        key = ("inrush", groups, k.dimmer, k.dimmer_switch, k.conduction_deg, k.knob,
               k.dimmer_params, round(r, 9), round(l_h, 12))
        return key, groups, k, r, l_h

    def prefetch_inrush(self, circuits: Collection[Circuit], scenario: int) -> None:
        """Solve the distinct switch-on transients of ``circuits`` not cached yet on the
        executor (as :meth:`prefetch` does the steady states)."""
        if self.executor is None:
            return
        todo: dict[tuple, str] = {}
        for c in circuits:
            got = self._inrush_key(c, scenario)
            if got is not None and got[0] not in self.cache and got[0] not in todo:
                todo[got[0]] = c.id
        if len(todo) < 2:
            return
        items = list(todo.values())
        size = max(1, math.ceil(len(items) / BATCHES))
        futures = [self.executor.submit(_inrush_remote, self.inst, items[i:i + size], scenario)
                   for i in range(0, len(items), size)]
        for fut in futures:
            self.cache.update(fut.result())

    def inrush(self, c: Circuit, scenario: int) -> tuple[Any, tuple[str, ...]]:
        """The switch-on transient of the circuit's modelled lamps at the scenario's
        setting, through its own loop (supply source and feeder, line and neutral, plus the
        branch), and the fixture ids of its groups; (None, ()) without modelled lamps."""
        from ..circuits import LoadGroup, Supply
        from ..circuits.inrush import switch_on_transient

        fx = self.inst.fixtures
        got = self._inrush_key(c, scenario)
        if got is None:
            return None, ()
        key, groups, k, r, l_h = got
        hit = self.cache.get(key)
        if hit is None:
            sup = self.inst.supply
            loads = [LoadGroup(model=str(fx[f].model), power_w=fx[f].power_w, count=n,
                               params=tuple(sorted(self.rated_params(f).items())))
                     for f, n in groups]
            dim = None if k.dimmer == "none" else dimmer_spec(k)
            try:
                hit = switch_on_transient(Supply(v_rms_v=sup.voltage_ln_v,
                                                 frequency_hz=sup.frequency_hz,
                                                 source_r_ohm=r, source_l_h=l_h), loads, dim)
            except (ConvergenceError, InputError) as e:
                raise InputError(f"circuit {c.id}: the switch-on transient: {e}") from None
            self.cache[key] = hit
        return hit, tuple(f for f, _ in groups)


def with_fundamental(t: tuple[np.ndarray, np.ndarray], phasors: np.ndarray, v1_v: float
                     ) -> tuple[np.ndarray, np.ndarray]:
    """A solve's harmonic transfer (events held at their times) with the fundamental's
    column made whole: its magnitude's part as solved (the firing instants stay where they
    are when the voltage only scales), its angle's part the whole state turning with it
    (``dI_k = j k I_k d(angle)``: every time event follows the fundamental's zero crossing).
    With ``V_1 = v1_v`` real (the solve's frame), ``dV_1 = v1_v (da + j d(angle))``:
    ``A[k, 1] = (A_1 + B_1)_k / 2 + k I_k / (2 V_1)``, ``B[k, 1] = (A_1 + B_1)_k / 2 - k I_k /
    (2 V_1)``."""
    a, b = t[0].copy(), t[1].copy()
    k = np.arange(a.shape[0])
    mag = (a[:, 1] + b[:, 1]) / 2
    turn = k * phasors[: a.shape[0]] / (2 * v1_v)
    a[:, 1], b[:, 1] = mag + turn, mag - turn
    return a, b


def turn_transfer(t: tuple[np.ndarray, np.ndarray], angle_rad: float
                  ) -> tuple[np.ndarray, np.ndarray]:
    """A harmonic transfer for currents and voltages turned ahead by ``angle_rad`` of the
    fundamental (order h by ``h * angle_rad``): ``A[k, h]`` turns by ``(k - h)`` times the
    angle, ``B[k, h]`` by ``(k + h)``."""
    e = np.exp(1j * angle_rad * np.arange(t[0].shape[0]))
    return e[:, None] * t[0] * np.conj(e)[None, :], e[:, None] * t[1] * e[None, :]


#: Tasks a pass's distinct cases are split into for the workers.
BATCHES = 16


def _solve_remote(inst: Installation, items: list[tuple[CaseConditions, str]],
                  transfer: bool = False) -> tuple[dict[CaseConditions, CaseResult], int]:
    """Distinct cases solved in a worker: the results by key and the solves they took."""
    solver = CaseSolver(inst, transfer=transfer)
    return {key: solver._case_or_missing(key, cid) for key, cid in items}, solver.solves


def _inrush_remote(inst: Installation, ids: list[str], scenario: int) -> dict[tuple, Any]:
    """Switch-on transients solved in a worker, by cache key."""
    solver = CaseSolver(inst)
    by_id = {c.id: c for c in inst.circuits}
    out = {}
    for cid in ids:
        got = solver._inrush_key(by_id[cid], scenario)
        assert got is not None  # only circuits with a key are sent
        out[got[0]] = solver.inrush(by_id[cid], scenario)[0]
    return out


class LampLight:
    """The light of a case's lamps (one waveform per fixture group over ``period_s``), and
    of the cases summed into it (``parts``); the worst lamp's figures are computed when
    first read: the flickermeter is the dearest part of a case, and a supply-interaction
    pass that is not the last never reads it."""

    __slots__ = ("waves", "period_s", "parts", "_worst")

    def __init__(self, waves: tuple[np.ndarray, ...], period_s: float,
                 parts: tuple[LampLight, ...] = ()):
        self.waves = waves
        self.period_s = period_s
        self.parts = parts
        self._worst: tuple[dict[str, float] | None] | None = None

    def __getstate__(self) -> dict:
        return {"waves": self.waves, "period_s": self.period_s, "parts": self.parts,
                "_worst": self._worst}

    def __setstate__(self, state: dict) -> None:
        for k, v in state.items():
            setattr(self, k, v)

    def worst(self) -> dict[str, float] | None:
        """The figures of the worst lamp (highest Pst_LM): mean light [-], Pst_LM and SVM
        [-]; None when every lamp is dark."""
        if self._worst is None:
            from ..light.metrics import light_metrics

            cands: list[dict[str, float]] = []
            for w in self.waves:
                m = light_metrics(w, self.period_s, dark_below=0.02)
                if m.pst_lm is not None:
                    cands.append({"mean": float(np.mean(w)), "pst_lm": float(m.pst_lm),
                                  "svm": float(m.svm) if m.svm is not None else math.nan})
            cands += [d for d in (p.worst() for p in self.parts) if d is not None]
            # the first of equals, as the figures were read in order before
            best = None
            for d in cands:
                if best is None or d["pst_lm"] > best["pst_lm"]:
                    best = d
            self._worst = (best,)
        return self._worst[0]


def dimmer_spec(k: CaseConditions) -> Any:
    """The circuit model's dimmer for a case."""
    from ..circuits import DimmerSpec

    kw: dict[str, Any] = {"kind": k.dimmer}
    if k.dimmer != "none":
        if k.knob is not None:
            kw["knob"] = k.knob
        else:
            kw["conduction_deg"] = k.conduction_deg
    if k.dimmer == "leading-edge":
        kw["switch"] = k.dimmer_switch
    if k.dimmer_params:
        kw["params"] = dict(k.dimmer_params)
    return DimmerSpec(**kw)
