"""Assess an installation: solve each distinct case once, sum with phase alignment, check.

Cost grows with distinct cases, not lamps: a circuit's current is found by solving its
fixture mix behind its dimmer at its setting and panel voltage once (cached); identical
circuits reuse it. Behind one leading-edge (triac) dimmer the lamps are solved together,
since latching and holding depend on the summed current; on a stiff supply with no dimmer or
a trailing-edge dimmer every lamp sees the same voltage whatever the others do, so each
fixture type is solved once and multiplied by its count (the dimmer's own small series
resistance then counts once per lamp: below 0.2 % of the current for usual circuits).

Supply interaction: the line and neutral currents drop harmonic voltages across the feeder
and source impedance; the circuits are solved again under the distorted panel voltage until
the line currents change by less than the tolerance. Both the ideal-supply and the
interacting results are kept.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from . import checks as ck
from .aggregate import (
    GRID_SAMPLES,
    LINE_ANGLES_DEG,
    common_period,
    summation_law,
    to_grid,
    triplen_share,
)
from .errors import ConvergenceError, InputError
from .installation import Circuit, Installation, Panel
from .metrics import harmonic_loss_factor, k_factor, thd
from .spectrum import rotate_phasors
from .supply import voltage_drop

__all__ = ["CaseResult", "CaseSolver", "CircuitResult", "LineResult", "PanelResult",
           "ScenarioResult", "Assessment", "assess", "grid_phasors"]

MAX_ORDER = 50
#: A setting at or above this conduction angle [deg] is a dimmer fully on.
FULL_CONDUCTION_DEG = 179.5


def grid_phasors(x: np.ndarray, cycles: int, max_order: int = MAX_ORDER) -> np.ndarray:
    """RMS phasors (sine basis) of orders 0..max_order at the array's own time origin [A]."""
    n = x.shape[-1]
    X = np.fft.rfft(x, axis=-1) / n
    c = X[..., np.arange(max_order + 1) * cycles] * 2
    p = np.abs(c) / np.sqrt(2) * np.exp(1j * (np.angle(c) + np.pi / 2))
    p[..., 0] = X[..., 0].real
    return p


def _advance(x: np.ndarray, angle_rad: float, cycles: int) -> np.ndarray:
    """Advance a periodic record by ``angle_rad`` of the fundamental (orders turn by +h*angle)."""
    if angle_rad == 0:
        return x
    X = np.fft.rfft(x)
    k = np.arange(X.size)
    X = X * np.exp(1j * k * angle_rad / cycles)
    if x.size % 2 == 0:
        X[-1] = X[-1].real
    return np.fft.irfft(X, x.size)


# ------------------------------------------------------------------------ case solving
@dataclass(frozen=True)
class GroupStress:
    """Per fixture type in a circuit: one lamp's figures at this circuit's conditions."""

    fixture: str
    count: int
    i_rms_one_a: float
    inrush_peak_one_a: float
    p_one_w: float
    light_rel: float | None


@dataclass(frozen=True)
class CaseResult:
    """A circuit's solved current on the aggregation grid, on its own line's voltage."""

    current_a: np.ndarray
    cycles: int
    p_w: float
    flags: tuple[str, ...]
    groups: tuple[GroupStress, ...]
    notes: tuple[str, ...] = ()


def _sum_cases(parts: list[CaseResult], flags_extra=(), notes=()) -> CaseResult:
    cyc = common_period(p.cycles for p in parts)
    cur = sum(np.tile(p.current_a, cyc // p.cycles) for p in parts)
    flags = tuple(dict.fromkeys(f for p in parts for f in p.flags + tuple(flags_extra)))
    return CaseResult(cur, cyc, sum(p.p_w for p in parts), flags,
                      tuple(g for p in parts for g in p.groups),
                      tuple(dict.fromkeys(n for p in parts for n in p.notes + tuple(notes))))


class CaseSolver:
    """Solves and caches circuit cases of one installation."""

    def __init__(self, inst: Installation):
        self.inst = inst
        self.cache: dict = {}
        self.captures: dict = {}
        self.solves = 0

    # measured fixtures: the capture is used as recorded, aligned to its voltage
    def _capture_case(self, fid: str, count: int) -> CaseResult:
        if fid not in self.captures:
            from .io.capture import load_capture, record_to_waveform

            ft = self.inst.fixtures[fid]
            try:
                w = record_to_waveform(load_capture(ft.capture, ft.capture_options))
            except InputError as e:
                raise InputError(f"fixtures.{fid}.capture: {e}") from None
            notes = []
            if w.has_voltage:
                # move the time origin to the voltage's positive-going zero crossing
                raw = grid_phasors(w.voltage_v, w.cycles, 1)[1]
                psi = float(np.angle(raw))
                w = w.shifted(psi)
                v = w.v_rms_v
                if abs(v - self.inst.supply.voltage_ln_v) > 0.05 * self.inst.supply.voltage_ln_v:
                    notes.append(f"fixture {fid}: captured at {v:.0f} V, used unscaled")
                p1 = w.p_w
            else:
                notes.append(f"fixture {fid}: capture has no voltage; phase taken from the "
                             "current fundamental as if in phase with the voltage")
                raw = grid_phasors(w.current_a, w.cycles, 1)[1]
                w = w.shifted(float(np.angle(raw)))
                p1 = ft.power_w
            # keep one cycle (the average cycle) of the record
            spc = GRID_SAMPLES
            x = to_grid(w, w.cycles, spc).reshape(w.cycles, spc).mean(axis=0)
            self.captures[fid] = (x, p1, float(w.current_a.max()), tuple(notes))
        x, p1, peak, notes = self.captures[fid]
        # a steady-state record holds no switch-on inrush: unknown (NaN), not its peak
        g = GroupStress(fid, count, float(np.sqrt(np.mean(x**2))), float("nan"), p1, None)
        return CaseResult(x * count, 1, p1 * count, (), (g,),
                          notes + (f"fixture {fid}: measured record used at its recorded "
                                   "conditions (dimmer setting not applied)",))

    def case(self, c: Circuit, scenario: int, voltage=None) -> CaseResult:
        """The circuit's current at a scenario; ``voltage`` = (v1_rms, harmonics, delta)
        of its panel line in the line's own frame, or None for the ideal supply.

        Circuits that differ only in id, panel, line or breaker share one result object.
        """
        key = ("circuit", c.groups, c.dimmer, c.dimmer_switch, c.setting(scenario), c.dimmer_params,
               c.branch_r_ohm, c.branch_l_h, voltage)
        hit = self.cache.get(key)
        if hit is None:
            try:
                hit = self._case(c, scenario, voltage)
            except ConvergenceError as e:
                # leave the circuit out of the sums, loudly: a FAIL on the circuit, and its
                # current counted as zero (the rest of the installation is still worth seeing)
                hit = CaseResult(np.zeros(GRID_SAMPLES), 1, 0.0, ("no-solution",), (),
                                 (f"{e}",))
            self.cache[key] = hit
        return hit

    def _case(self, c: Circuit, scenario: int, voltage) -> CaseResult:
        cond, knob = c.setting(scenario)
        extra_notes: tuple[str, ...] = ()
        if c.dimmer != "none" and cond is not None and cond >= FULL_CONDUCTION_DEG:
            # a dimmer at full conduction passes the whole wave: solved as the uncut supply
            # (a single gate pulse at the zero crossing would find no current to latch on)
            extra_notes = (f"{c.dimmer} dimmer at {cond:g} deg: the whole wave passes; solved "
                           "as the uncut supply",)
            c = replace(c, dimmer="none", conduction_deg=(180.0,), knob=None)
            cond = 180.0
        measured = [g for g in c.groups if self.inst.fixtures[g.fixture].measured]
        modelled = [g for g in c.groups if not self.inst.fixtures[g.fixture].measured]
        parts = [self._capture_case(g.fixture, g.count) for g in measured]
        if modelled:
            loop = voltage is not None and len(voltage) > 3 and (voltage[3][0] + voltage[3][1]) > 0
            triac = c.dimmer == "leading-edge" and c.dimmer_switch == "triac"
            together = triac or c.branch_r_ohm > 0 or c.branch_l_h > 0 or loop
            if together:
                parts.append(self._model_case(c, cond, knob, tuple(
                    (g.fixture, g.count) for g in modelled), voltage))
            else:
                for g in modelled:
                    one = self._model_case(c, cond, knob, ((g.fixture, 1),), voltage)
                    parts.append(CaseResult(one.current_a * g.count, one.cycles, one.p_w * g.count,
                                            one.flags, (GroupStress(g.fixture, g.count,
                                                                    *_group_tail(one)),),
                                            one.notes))
        return _sum_cases(parts, notes=extra_notes)

    def _model_case(self, c: Circuit, cond, knob, groups, voltage) -> CaseResult:
        sup = self.inst.supply
        v1, harm, delta = (sup.voltage_ln_v, (), 0.0) if voltage is None else voltage[:3]
        loop = (0.0, 0.0) if voltage is None or len(voltage) < 4 else voltage[3]
        r_src, l_src = c.branch_r_ohm + loop[0], c.branch_l_h + loop[1]
        key = (c.dimmer, c.dimmer_switch, cond, knob, c.dimmer_params, r_src, l_src, groups,
               round(v1, 3), harm)
        hit = self.cache.get(key)
        if hit is None:
            hit = self._solve(c, cond, knob, groups, v1, harm, r_src, l_src)
            self.cache[key] = hit
        if delta:
            return CaseResult(_advance(hit.current_a, delta, hit.cycles), hit.cycles, hit.p_w,
                              hit.flags, hit.groups, hit.notes)
        return hit

    def rated_params(self, fid: str) -> dict:
        """A fixture type's component values fixed at the nominal supply voltage.

        The models scale their default components with the supply voltage; a lamp built for
        the nominal voltage keeps its components when the panel voltage sags or distorts, so
        they are resolved once here and passed on explicitly.
        """
        key = ("params", fid)
        if key not in self.cache:
            from .circuits.drivers import resolve_params

            ft = self.inst.fixtures[fid]
            try:
                full = resolve_params(ft.model, ft.power_w, self.inst.supply.voltage_ln_v,
                                      self.inst.supply.frequency_hz, dict(ft.params))
            except InputError as e:
                raise InputError(f"fixtures.{fid}: {e}") from None
            self.cache[key] = {k: v for k, v in full.items() if v is not None}
        return self.cache[key]

    def _solve(self, c: Circuit, cond, knob, groups, v1, harm, r_src, l_src) -> CaseResult:
        from .circuits import LoadGroup, Supply, solve_circuit

        inst = self.inst
        self.solves += 1
        supply = Supply(v_rms_v=v1, frequency_hz=inst.supply.frequency_hz,
                        source_r_ohm=r_src, source_l_h=l_src,
                        voltage_harmonics=list(harm) if harm else None)
        dimmer = _dimmer_spec(c, cond, knob)
        loads = [LoadGroup(model=inst.fixtures[f].model, power_w=inst.fixtures[f].power_w,
                           count=n, params=self.rated_params(f)) for f, n in groups]
        try:
            sol = solve_circuit(supply, dimmer, loads)
        except (ConvergenceError, InputError) as e:
            what = ", ".join(f"{n} x {f}" for f, n in groups)
            setting = "" if c.dimmer == "none" else (
                f" at knob {knob:g}" if knob is not None else f" at {cond:g} deg")
            raise type(e)(f"circuit {c.id} ({what} behind {c.dimmer}{setting}, panel voltage "
                          f"{v1:.1f} V): {e}") from None
        w = sol.waveform
        x = to_grid(w, w.cycles)
        gs = []
        for (f, n), g in zip(groups, sol.groups, strict=True):
            gs.append(GroupStress(f, n, *_stress(g, w)))
        p = float(w.p_w) if w.p_w is not None else float("nan")
        if not np.isfinite(p):
            raise InputError(f"circuit {c.id}: the solver returned no power")
        return CaseResult(x, w.cycles, p, tuple(sol.flags), tuple(gs))


def _dimmer_spec(c: Circuit, cond, knob):
    """The circuit model's dimmer for a circuit and setting."""
    from .circuits import DimmerSpec

    kw = {"kind": c.dimmer}
    if c.dimmer != "none":
        if knob is not None:
            kw["knob"] = knob
        else:
            kw["conduction_deg"] = cond
    if c.dimmer == "leading-edge":
        kw["switch"] = c.dimmer_switch
    if c.dimmer_params:
        kw["params"] = dict(c.dimmer_params)
    return DimmerSpec(**kw)


def _stress(g, w) -> tuple[float, float, float, float | None]:
    """(i_rms, inrush peak when switched on at the crest, power, mean relative light) of
    one lamp of a solved group."""
    st = g.stresses
    return (float(g.waveform.i_rms_a), float(st.inrush_peak_a), float(g.p_w),
            None if g.light_mean is None else float(g.light_mean))


def _group_tail(one: CaseResult) -> tuple:
    g = one.groups[0]
    return g.i_rms_one_a, g.inrush_peak_one_a, g.p_one_w, g.light_rel


# ---------------------------------------------------------------------------- results
@dataclass(frozen=True)
class CircuitResult:
    id: str
    panel: str
    phase: str
    setting_deg: float | None
    knob: float | None
    i_rms_a: float
    i1_a: float
    i_peak_a: float
    thd_i: float
    p_w: float
    pf: float | None
    dpf: float | None
    inrush_peak_a: float
    flags: tuple[str, ...]
    checks: tuple[ck.Check, ...]
    max_fixtures: dict
    notes: tuple[str, ...] = ()
    #: RMS magnitude per order 0..50 of the circuit current [A] (for the exports).
    magnitudes_a: np.ndarray | None = None

    def to_dict(self) -> dict:
        return {
            "id": self.id, "panel": self.panel, "phase": self.phase,
            "setting_deg": self.setting_deg, "knob": self.knob,
            "i_rms_a": self.i_rms_a, "i1_rms_a": self.i1_a, "i_peak_a": self.i_peak_a,
            "thd_i_pct": 100 * self.thd_i, "p_w": self.p_w, "pf": self.pf, "dpf": self.dpf,
            "inrush_peak_a": self.inrush_peak_a, "flags": list(self.flags),
            "checks": [c.to_dict() for c in self.checks],
            "max_fixtures_per_breaker": self.max_fixtures, "notes": list(self.notes),
        }


@dataclass(frozen=True)
class LineResult:
    i_rms_a: float
    i1_a: float
    i_peak_a: float
    thd_i: float
    i3_pct_of_rms: float
    p_w: float
    pf: float | None
    dpf: float | None
    thd_v: float
    v_rms_v: float
    magnitudes_a: np.ndarray

    def to_dict(self) -> dict:
        return {"i_rms_a": self.i_rms_a, "i1_rms_a": self.i1_a, "i_peak_a": self.i_peak_a,
                "thd_i_pct": 100 * self.thd_i, "i3_pct_of_rms": self.i3_pct_of_rms,
                "p_w": self.p_w, "pf": self.pf, "dpf": self.dpf, "v_rms_v": self.v_rms_v,
                "thd_v_pct": 100 * self.thd_v}


@dataclass(frozen=True)
class NeutralResult:
    i_rms_a: float
    i_peak_a: float
    ratio_to_max_phase: float
    triplen_share: float
    magnitudes_a: np.ndarray

    def to_dict(self) -> dict:
        return {"i_rms_a": self.i_rms_a, "i_peak_a": self.i_peak_a,
                "ratio_to_max_phase": self.ratio_to_max_phase,
                "triplen_share_pct": 100 * self.triplen_share,
                "spectrum_a": [float(x) for x in self.magnitudes_a[:41]]}


@dataclass(frozen=True)
class PanelResult:
    id: str
    kind: str  # "panel", "feeder" or "transformer"
    lines: dict[str, LineResult]
    neutral: NeutralResult | None
    checks: tuple[ck.Check, ...] = ()
    k_factor: float = 1.0
    harmonic_loss_factor: float = 1.0

    def to_dict(self) -> dict:
        return {"id": self.id, "kind": self.kind,
                "phases": {k: v.to_dict() for k, v in self.lines.items()},
                "neutral": None if self.neutral is None else self.neutral.to_dict(),
                "k_factor": self.k_factor, "harmonic_loss_factor": self.harmonic_loss_factor,
                "checks": [c.to_dict() for c in self.checks]}


@dataclass(frozen=True)
class ScenarioResult:
    name: str
    circuits: tuple[CircuitResult, ...]
    panels: tuple[PanelResult, ...]
    feeders: tuple[PanelResult, ...]
    transformer: PanelResult
    interaction_iterations: int
    ideal: ScenarioResult | None = None
    checks: tuple[ck.Check, ...] = ()

    def all_checks(self):
        for c in self.circuits:
            yield from c.checks
        for p in self.panels + self.feeders + (self.transformer,):
            yield from p.checks
        yield from self.checks

    def to_dict(self) -> dict:
        d = {"name": self.name, "circuits": [c.to_dict() for c in self.circuits],
             "panels": [p.to_dict() for p in self.panels],
             "feeders": [p.to_dict() for p in self.feeders],
             "transformer": self.transformer.to_dict(),
             "supply_interaction_iterations": self.interaction_iterations,
             "checks": [c.to_dict() for c in self.checks]}
        if self.ideal is not None:
            d["ideal_supply"] = {"panels": [p.to_dict() for p in self.ideal.panels],
                                 "transformer": self.ideal.transformer.to_dict()}
        return d


@dataclass(frozen=True)
class Assessment:
    installation: Installation
    scenarios: tuple[ScenarioResult, ...]
    design_index: int
    diversity: dict | None = None
    solves: int = 0
    caution: str = ck.CAUTION

    @property
    def design(self) -> ScenarioResult:
        return self.scenarios[self.design_index]

    @property
    def failed(self) -> bool:
        return any(c.status == "fail" for s in self.scenarios for c in s.all_checks())

    def to_dict(self) -> dict:
        inst = self.installation
        d = self.design.to_dict()
        return {
            "project": vars(inst.project) if hasattr(inst.project, "__dict__") else {},
            "installation": inst.path,
            "supply": {"system": inst.supply.system, "voltage_ln_v": inst.supply.voltage_ln_v,
                       "frequency_hz": inst.supply.frequency_hz,
                       "source_r_ohm": inst.supply.impedance.r_ohm,
                       "source_l_h": inst.supply.impedance.l_h,
                       "short_circuit_a": (inst.supply.short_circuit_a
                                           if np.isfinite(inst.supply.short_circuit_a) else None)},
            "lamps": inst.n_lamps, "distinct_solves": self.solves,
            "design_scenario": self.design.name,
            "circuits": d["circuits"], "panels": d["panels"], "feeders": d["feeders"],
            "transformer": d["transformer"],
            "scenarios": [s.to_dict() for s in self.scenarios],
            "diversity": self.diversity,
            "verdict": "fail" if self.failed else "pass",
            "caution": self.caution,
        }


# ------------------------------------------------------------------------- evaluation
def _line_result(x: np.ndarray, cycles: int, v_phasors: np.ndarray, p_w: float,
                 own_angle_rad: float) -> LineResult:
    ph = grid_phasors(x, cycles)
    m = np.abs(ph)
    i_rms = float(np.sqrt(np.mean(x**2)))
    i1 = float(m[1])
    v1 = v_phasors[1]
    v_rms = float(np.sqrt(np.sum(np.abs(v_phasors[1:]) ** 2)))
    dpf = float(np.cos(np.angle(v1) - np.angle(ph[1]))) if i1 > 0 else None
    pf = p_w / (v_rms * i_rms) if i_rms > 0 else None
    return LineResult(
        i_rms, i1, float(np.max(np.abs(x))), float(thd(m, 40)) if i1 > 0 else 0.0,
        100 * float(m[3] / i_rms) if i_rms > 0 else 0.0, p_w, pf, dpf,
        float(thd(np.abs(v_phasors), 40)), v_rms, m)


def _neutral(x: np.ndarray, cycles: int, max_phase: float) -> NeutralResult:
    m = np.abs(grid_phasors(x, cycles))
    rms = float(np.sqrt(np.mean(x**2)))
    return NeutralResult(rms, float(np.max(np.abs(x))), rms / max_phase if max_phase > 0 else 0.0,
                         triplen_share(m), m)


def _ideal_v(inst: Installation, line: str) -> np.ndarray:
    v = np.zeros(MAX_ORDER + 1, dtype=complex)
    v[1] = inst.supply.voltage_ln_v * np.exp(1j * np.radians(LINE_ANGLES_DEG[inst.supply.system][line]))
    return v


class _Node:
    """Summed line arrays (L1 frame) of a panel, feeder or the transformer."""

    def __init__(self, lines):
        self.x = {ln: None for ln in lines}
        self.p = {ln: 0.0 for ln in lines}

    def add(self, line, x, p):
        self.x[line] = x.copy() if self.x[line] is None else self.x[line] + x
        self.p[line] += p

    def add_node(self, other):
        for ln in self.x:
            if other.x[ln] is not None:
                self.add(ln, other.x[ln], other.p[ln])


#: Longest common period [cycles] the sums are carried over; circuits whose own period
#: (a triac firing every few half cycles) does not divide it enter as their mean cycle.
MAX_COMMON_PERIOD = 12


def _period(periods) -> int:
    """The common period of the circuits' records, or 1 when it would exceed
    :data:`MAX_COMMON_PERIOD`."""
    try:
        p = common_period(periods)
    except InputError:
        return 1
    return p if p <= MAX_COMMON_PERIOD else 1


def _on_period(cs: CaseResult, cyc: int) -> np.ndarray:
    """A case's current over ``cyc`` cycles: tiled, or its mean cycle when its own period
    does not divide ``cyc`` (the sub-harmonic content is then averaged out; the circuit
    keeps its 'subharmonic' flag and its own figures)."""
    if cyc % cs.cycles == 0:
        return np.tile(cs.current_a, cyc // cs.cycles)
    mean = cs.current_a.reshape(cs.cycles, -1).mean(axis=0)
    return np.tile(mean, cyc)


def _run(inst: Installation, solver: CaseSolver, scenario: int, voltages, progress=None):
    """One pass: circuit cases -> panel/feeder/transformer sums (L1 frame)."""
    sup = inst.supply
    angles = LINE_ANGLES_DEG[sup.system]
    cases = {}
    for p in inst.panels:
        for c in p.circuits:
            cases[c.id] = solver.case(c, scenario, None if voltages is None else
                                      voltages[c.id])
            if progress is not None:
                progress(1)
    cyc = _period(cs.cycles for cs in cases.values())
    spc = GRID_SAMPLES
    panels = {}
    for p in inst.panels:
        node = _Node(angles)
        for c in p.circuits:
            cs = cases[c.id]
            x = _on_period(cs, cyc)
            shift = int(round(angles[c.phase] / 360.0 * spc))
            node.add(c.phase, np.roll(x, -shift) if shift else x, cs.p_w)
        for ln in angles:
            if node.x[ln] is None:
                node.x[ln] = np.zeros(spc * cyc)
        panels[p.id] = node
    feeders = {f: _Node(angles) for f in inst.feeders}
    total = _Node(angles)
    for p in inst.panels:
        if p.feeder is not None:
            feeders[p.feeder].add_node(panels[p.id])
        total.add_node(panels[p.id])
    return cases, panels, feeders, total, cyc


def _node_phasors(system: str, node: _Node, cyc: int):
    """Line phasors and the neutral (return) phasors of a node, L1 frame. On a two-wire
    single-phase supply the neutral returns the line current."""
    xs = {ln: grid_phasors(x, cyc) for ln, x in node.x.items()}
    return xs, sum(xs.values())


def _circuit_sources(inst: Installation, cases, feeders, total, cyc):
    """The Thevenin source each circuit sees at its panel, for solving it again.

    The loop impedance of the source and feeder (line and neutral) goes into the circuit's
    own solve, so a circuit's own switching transients meet the impedance exactly; the drop
    that the *other* circuits' currents cause across the shared impedances distorts its EMF:
    ``E_c = E - Z_tr (I_tr - I_c) - Z_trN (I_trN - I_c) - Z_f (I_f - I_c) - Z_fN (I_fN - I_c)``.
    Returns per circuit id ``(v1_rms, harmonics, delta, (r_loop_ohm, l_loop_h))`` in the
    circuit's own line frame.
    """
    sup = inst.supply
    f = sup.frequency_hz
    angles = LINE_ANGLES_DEG[sup.system]
    tot_l, tot_n = _node_phasors(sup.system, total, cyc)
    fdr = {k: _node_phasors(sup.system, v, cyc) for k, v in feeders.items()}
    ztr = sup.impedance
    out = {}
    for p in inst.panels:
        zf = inst.feeders[p.feeder].impedance if p.feeder is not None else None
        loop = (ztr.r_ohm + ztr.neutral_r_ohm, ztr.l_h + ztr.neutral_l_h)
        if zf is not None:
            loop = (loop[0] + zf.r_ohm + zf.neutral_r_ohm, loop[1] + zf.l_h + zf.neutral_l_h)
        loop = (round(loop[0], 9), round(loop[1], 12))
        for c in p.circuits:
            cs = cases[c.id]
            ic = rotate_phasors(grid_phasors(cs.current_a, cs.cycles), np.radians(angles[c.phase]))
            ln = c.phase
            v = _ideal_v(inst, ln) - voltage_drop(ztr, tot_l[ln] - ic, tot_n - ic, f)
            if zf is not None:
                fl, fn = fdr[p.feeder]
                v = v - voltage_drop(zf, fl[ln] - ic, fn - ic, f)
            out[c.id] = v, loop
    return out


def _panel_voltages(inst: Installation, panels, feeders, total, cyc):
    """Harmonic voltage at each panel line (L1 frame), from the drops over the source and
    the feeder impedances."""
    sup = inst.supply
    f = sup.frequency_hz

    tot_l, tot_n = _node_phasors(sup.system, total, cyc)
    fdr = {k: _node_phasors(sup.system, v, cyc) for k, v in feeders.items()}
    out = {}
    for p in inst.panels:
        for ln in tot_l:
            v = _ideal_v(inst, ln) - voltage_drop(sup.impedance, tot_l[ln], tot_n, f)
            if p.feeder is not None:
                fl, fn = fdr[p.feeder]
                v = v - voltage_drop(inst.feeders[p.feeder].impedance, fl[ln], fn, f)
            out[(p.id, ln)] = v
    return out


def _source_frame(inst: Installation, sources):
    """Per-circuit Thevenin EMFs (L1 frame) in each circuit's own line frame, with the loop
    impedance: ``(v1_rms, harmonics, delta, loop)``."""
    lines = {c.id: c.phase for c in inst.circuits}
    own = _own_frame(inst, {(cid, lines[cid]): v for cid, (v, _) in sources.items()})
    return {cid: own[(cid, lines[cid])] + (sources[cid][1],) for cid in sources}


def _own_frame(inst: Installation, vmap):
    """Panel voltages in each line's own frame as (v1_rms, harmonics, delta) for solving."""
    angles = LINE_ANGLES_DEG[inst.supply.system]
    out = {}
    for key, v in vmap.items():
        ln = key[1]
        own = rotate_phasors(v, -np.radians(angles[ln]))
        v1 = abs(own[1])
        delta = float(np.angle(own[1]))
        harm = []
        for h in range(2, MAX_ORDER + 1):
            r = abs(own[h]) / v1
            if r > 1e-4:
                harm.append((h, round(float(r), 5),
                             round(float(np.degrees(np.angle(own[h]) - h * delta)), 1)))
        out[key] = (float(v1), tuple(harm), delta)
    return out


_METRICS: dict = {}


def _case_metrics(inst, cs: CaseResult, v_own):
    """(magnitudes, i_rms, i1, i_peak, thd, pf, dpf) of a case under a panel voltage; memoised
    on the case object (shared by identical circuits)."""
    key = (id(cs), v_own)
    hit = _METRICS.get(key)
    if hit is not None and hit[0] is cs:
        return hit[1]
    v1 = inst.supply.voltage_ln_v if v_own is None else v_own[0]
    ph = grid_phasors(cs.current_a, cs.cycles)
    m = np.abs(ph)
    i_rms = float(np.sqrt(np.mean(cs.current_a**2)))
    i1 = float(m[1])
    delta = 0.0 if v_own is None else v_own[2]
    dpf = float(np.cos(delta - np.angle(ph[1]))) if i1 > 0 else None
    v_rms = v1 if v_own is None else v1 * np.sqrt(1 + sum(r * r for _, r, _ in v_own[1]))
    pf = cs.p_w / (v_rms * i_rms) if i_rms > 0 else None
    out = (m, i_rms, i1, float(np.max(np.abs(cs.current_a))),
           float(thd(m, 40)) if i1 > 0 else 0.0, pf, dpf)
    if len(_METRICS) > 100_000:
        _METRICS.clear()
    _METRICS[key] = (cs, out)
    return out


#: What each circuit-model flag means for the user.
_FLAG_TEXT = {
    "no-solution": "the circuit model found no periodic steady state (unstable or chaotic "
                   "operation: expect flicker); this circuit is LEFT OUT of the panel sums",
    "no-latch": "the triac does not stay on after firing (load current below its latching or "
                "holding current): flicker or no light; add load, a bleeder, or use a "
                "trailing-edge dimmer",
    "misfire": "the dimmer fails to fire in some half cycles",
    "re-fire": "the triac fires more than once per half cycle",
    "subharmonic": "the dimmer fires only every few half cycles: visible flicker and a DC/"
                   "sub-harmonic current",
    "asymmetric": "the two half cycles differ: a DC component and even harmonics",
    "drop-out": "the lamp's driver shuts down at this setting",
    "glow-when-off": "the dimmer's own supply current lights the lamp when off",
}


def _circuit_result(inst, c: Circuit, cs: CaseResult, scenario: int, v_own) -> CircuitResult:
    m, i_rms, i1, i_peak, thd_i, pf, dpf = _case_metrics(inst, cs, v_own)
    cond, knob = c.setting(scenario)
    inrush = sum(g.count * g.inrush_peak_one_a for g in cs.groups
                 if np.isfinite(g.inrush_peak_one_a))
    checks = [ck.breaker_inrush(inrush, c.breaker_a, c.breaker_curve)]
    unknown = [g.fixture for g in cs.groups if not np.isfinite(g.inrush_peak_one_a)]
    if unknown:
        checks.append(ck.Check("breaker inrush", "info",
                               f"inrush of {', '.join(unknown)} unknown (a steady-state record); "
                               "the inrush figure covers the modelled fixtures only",
                               "measured record", None, None, ""))
    load = i_rms / c.breaker_a
    src = "continuous load at most 80 % of the breaker rating (common practice; NEC 210.20(A))"
    if load > 1:
        checks.append(ck.Check("breaker load", "fail", f"{i_rms:.2f} A exceeds the "
                               f"{c.breaker_a:g} A rating", src, i_rms, c.breaker_a, "A"))
    elif load > 0.8:
        checks.append(ck.Check("breaker load", "warn", f"{i_rms:.2f} A is over 80 % of the "
                               f"{c.breaker_a:g} A rating", src, i_rms, 0.8 * c.breaker_a, "A"))
    else:
        checks.append(ck.Check("breaker load", "pass", f"{i_rms:.2f} A within 80 % of "
                               f"{c.breaker_a:g} A", src, i_rms, 0.8 * c.breaker_a, "A"))
    if c.conductor_ampacity_a is not None:
        st = "pass" if i_rms <= c.conductor_ampacity_a else "fail"
        checks.append(ck.Check("conductor", st, f"{i_rms:.2f} A against {c.conductor_ampacity_a:g} A "
                               "ampacity", "conductor ampacity as given", i_rms,
                               c.conductor_ampacity_a, "A"))
    led_w = sum(g.count * inst.fixtures[g.fixture].power_w for g in cs.groups
                if inst.fixtures[g.fixture].nonlinear)
    if c.dimmer != "none" and c.dimmer_rating_w is not None:
        connected_w = sum(g.count * inst.fixtures[g.fixture].power_w for g in cs.groups)
        checks.append(ck.dimmer_load(led_w, c.dimmer_rating_w, c.led_derating,
                                     c.dimmer_min_load_w, connected_w))
    bad = {"no-solution": "fail", "no-latch": "fail", "misfire": "fail", "subharmonic": "fail",
           "re-fire": "warn",
           "drop-out": "warn", "glow-when-off": "warn"}
    for fl in cs.flags:
        st = bad.get(fl, "warn")
        checks.append(ck.Check("dimmer compatibility", st,
                               f"the circuit model reports '{fl}' at this setting: "
                               + _FLAG_TEXT.get(fl, "see the lamp model"),
                               "periodic steady-state circuit model of dimmer and drivers", None,
                               None, "", {"flag": fl}))
    mx = {g.fixture: ck.breaker_max_fixtures(g.inrush_peak_one_a, g.i_rms_one_a, c.breaker_a,
                                             c.breaker_curve) for g in cs.groups}
    return CircuitResult(c.id, c.panel, c.phase, cond if c.dimmer != "none" else None, knob,
                         i_rms, i1, i_peak, thd_i, cs.p_w, pf, dpf, inrush,
                         cs.flags, tuple(checks), mx, cs.notes, m)


def _node_result(inst, name, kind, node: _Node, cyc, vmap_lines, panel: Panel | None = None):
    sup = inst.supply
    angles = LINE_ANGLES_DEG[sup.system]
    lines = {}
    for ln in angles:
        v = vmap_lines[ln] if vmap_lines is not None else _ideal_v(inst, ln)
        lines[ln] = _line_result(node.x[ln], cyc, v, node.p[ln], np.radians(angles[ln]))
    max_phase = max(r.i_rms_a for r in lines.values())
    neutral = None
    if sup.system != "single-phase":
        neutral = _neutral(sum(node.x.values()), cyc, max_phase)
    worst = max(lines, key=lambda k: lines[k].i_rms_a)
    mw = lines[worst].magnitudes_a
    kf = float(k_factor(mw)) if mw[1] > 0 else 1.0
    fhl = float(harmonic_loss_factor(mw)) if mw[1] > 0 else 1.0
    checks = []
    if kind == "panel" and neutral is not None and max_phase > 0:
        if sup.system == "three-phase-wye":
            lo = min(r.i_rms_a for r in lines.values())
            checks.append(ck.neutral_conductor(lines[worst].i3_pct_of_rms, max_phase,
                                               neutral.i_rms_a,
                                               panel.neutral_ampacity_a if panel else None,
                                               (max_phase - lo) / max_phase))
        if neutral.ratio_to_max_phase > 1:
            checks.append(ck.Check("neutral current", "warn",
                                   f"the neutral carries {neutral.ratio_to_max_phase:.2f} times "
                                   "the highest phase current (triplen harmonics add)",
                                   "phasor sum of the line currents", neutral.ratio_to_max_phase,
                                   1.0, "-"))
        if panel is not None and panel.phase_ampacity_a is not None:
            st = "pass" if max_phase <= panel.phase_ampacity_a else "fail"
            checks.append(ck.Check("phase conductors", st, f"highest phase {max_phase:.1f} A "
                                   f"against {panel.phase_ampacity_a:g} A", "ampacity as given",
                                   max_phase, panel.phase_ampacity_a, "A"))
    if kind == "transformer" and max_phase > 0 and mw[1] > 0:
        checks.append(ck.transformer_derating(fhl, kf, max_phase, sup.rated_current_a,
                                              sup.eddy_loss_pu))
    return PanelResult(name, kind, lines, neutral, tuple(checks), kf, fhl)


def _nonlinear_share(inst: Installation) -> float:
    tot = nl = 0.0
    for c in inst.circuits:
        for g in c.groups:
            w = g.count * inst.fixtures[g.fixture].power_w
            tot += w
            nl += w if inst.fixtures[g.fixture].nonlinear else 0.0
    return nl / tot if tot > 0 else 0.0


def _scenario(inst, solver, k, progress=None) -> ScenarioResult:
    opts = inst.analysis
    z = inst.supply.impedance
    has_z = (z.r_ohm + z.l_h + z.neutral_r_ohm + z.neutral_l_h) > 0 or any(
        (f.r_ohm + f.l_h) > 0 for f in inst.feeders.values())
    cases, panels, feeders, total, cyc = _run(inst, solver, k, None, progress)
    ideal = _assemble(inst, k, cases, panels, feeders, total, cyc, None, 0)
    if not (opts.supply_interaction and has_z):
        return ideal
    # Fixed point on the panel voltages, under-relaxed: V <- V + r (V(I(V)) - V). The
    # circuits are re-solved under each new voltage; it stops when the voltage update is
    # below the tolerance [fraction of V1] on every panel line.
    relax = 0.8
    first = _circuit_sources(inst, cases, feeders, total, cyc)
    src = {cid: v for cid, (v, _) in first.items()}
    loops = {cid: lp for cid, (_, lp) in first.items()}
    change = float("inf")
    for it in range(1, opts.max_iterations + 1):  # noqa: B007 (reported after the loop)
        solve_at = _source_frame(inst, {cid: (v, loops[cid]) for cid, v in src.items()})
        cases, panels, feeders, total, cyc = _run(inst, solver, k, solve_at)
        new = _circuit_sources(inst, cases, feeders, total, cyc)
        change = max(float(np.max(np.abs(new[cid][0] - src[cid]))) / abs(src[cid][1])
                     for cid in src)
        if change < opts.tolerance:
            break
        src = {cid: src[cid] + relax * (new[cid][0] - src[cid]) for cid in src}
    vmap = _panel_voltages(inst, panels, feeders, total, cyc)
    own = _own_frame(inst, vmap)
    res = _assemble(inst, k, cases, panels, feeders, total, cyc, vmap, it, own)
    extra = res.checks
    if change >= opts.tolerance:
        extra = extra + (ck.Check(
            "supply interaction", "warn",
            f"the panel voltages had not settled after {it} iterations (last update "
            f"{100 * change:.3f} % of V1, tolerance {100 * opts.tolerance:.3f} %): the "
            "interacting figures are approximate; raise analysis.max_iterations",
            "fixed-point iteration on the panel voltages (under-relaxed)", change,
            opts.tolerance, "-"),)
    return ScenarioResult(res.name, res.circuits, res.panels, res.feeders, res.transformer, it,
                          ideal, extra)


def _assemble(inst, k, cases, panels, feeders, total, cyc, vmap, iterations, own=None):
    circuits = []
    for p in inst.panels:
        for c in p.circuits:
            circuits.append(_circuit_result(inst, c, cases[c.id], k,
                                            None if own is None else own[(p.id, c.phase)]))
    lines = tuple(LINE_ANGLES_DEG[inst.supply.system])

    def vm(pid):
        return None if vmap is None else {ln: vmap[(pid, ln)] for ln in lines}

    pres = tuple(_node_result(inst, p.id, "panel", panels[p.id], cyc, vm(p.id), p)
                 for p in inst.panels)
    fres = tuple(_node_result(inst, f, "feeder", feeders[f], cyc, None) for f in inst.feeders)
    tres = _node_result(inst, "service", "transformer", total, cyc, None)
    extra = []
    note = ck.nec_neutral_note(_nonlinear_share(inst), inst.supply.system)
    if note is not None:
        extra.append(note)
    extra.extend(_pcc_checks(inst, tres, total, cyc))
    return ScenarioResult(inst.scenario_name(k), tuple(circuits), pres, fres, tres, iterations,
                          None, tuple(extra))


def _pcc_checks(inst: Installation, tres: PanelResult, total: _Node, cyc: int) -> list[ck.Check]:
    """IEEE 519 at the point of common coupling, taken at the service (transformer
    secondary), on every line; the line closest to (or furthest over) a limit is reported."""
    from .spectrum import Spectrum
    from .standards import evaluate_pcc

    sup = inst.supply
    angles = LINE_ANGLES_DEG[sup.system]
    if not any(np.any(x) for x in total.x.values()):
        return []
    pcc = inst.pcc
    isc = pcc.get("short_circuit_a", sup.short_circuit_a)
    if not np.isfinite(isc):
        return [ck.Check("IEEE 519 at the PCC", "info", "no source impedance given: the "
                         "short-circuit ratio and the PCC limits are unknown",
                         "IEEE Std 519", None, None, "")]
    kv = pcc.get("voltage_kv")
    if kv is None:
        kv = sup.voltage_ln_v * {"three-phase-wye": np.sqrt(3), "split-phase": 2.0,
                                 "single-phase": 1.0}[sup.system] / 1e3
    edition = str(pcc.get("ieee519_edition", "2022"))
    xs, n = _node_phasors(sup.system, total, cyc)
    il_given = pcc.get("demand_current_a")
    il = il_given if il_given is not None else max(float(abs(p[1])) for p in xs.values())
    results = []
    for line, x in total.x.items():
        if not np.any(x):
            continue
        v = _ideal_v(inst, line) - voltage_drop(sup.impedance, xs[line], n, sup.frequency_hz)
        turn = -np.radians(angles[line])
        i_own, v_own = rotate_phasors(xs[line], turn), rotate_phasors(v, turn)
        spec = Spectrum(i_own, sup.frequency_hz, float(np.sqrt(np.mean(x**2))),
                        float(np.max(np.abs(x))), v_own,
                        float(np.sqrt(np.sum(np.abs(v_own[1:]) ** 2))), None, None, "voltage",
                        f"service {line}")
        r = evaluate_pcc(spec, float(il), float(isc), edition, float(kv))
        worst = min(r.current.checks, key=lambda c: c.margin / abs(c.limit) if c.limit else 1e9)
        results.append((worst.margin / abs(worst.limit), line, r, worst))
    _, line, r, worst = min(results, key=lambda t: t[0])
    msg = (f"at the service, worst line {line}: TDD {100 * r.tdd:.1f} % of I_L, Isc/IL "
           f"{r.isc_il:.0f} (row {r.row}); closest: {worst.quantity} {100 * worst.value:.2f} % "
           f"against {100 * worst.limit:.2f} %")
    if r.voltage is not None:
        thdv = next(c for c in r.voltage.checks if c.quantity == "THD")
        msg += f"; voltage THD {100 * thdv.value:.2f} % against {100 * thdv.limit:.0f} %"
    if il_given is None:
        msg += ("; I_L taken as the computed fundamental at the service (the lighting alone); "
                "give pcc.demand_current_a, the building's maximum demand current")
    if edition == "2022":
        msg += "; the 2022 treatment of even orders rests on memory"
    verdicts = [t[2].verdict for t in results]
    verdict = "fail" if "fail" in verdicts else "pass"
    status = verdict if il_given is not None or verdict == "pass" else "warn"
    d = r.to_dict()
    d["lines"] = {t[1]: t[2].verdict for t in results}
    return [ck.Check("IEEE 519 at the PCC", status, msg, f"IEEE Std 519-{edition}, Tables 1 "
                     "and 2", float(r.tdd), None, "-", d)]


def assess(inst: Installation, progress=None) -> Assessment:
    """Solve, sum and check every scenario of an installation.

    ``progress`` is called with the number of circuits done (for a progress bar).
    """
    solver = CaseSolver(inst)
    scen = tuple(_scenario(inst, solver, k, progress) for k in range(inst.n_scenarios))
    design = int(np.argmax([max((p.neutral.i_rms_a if p.neutral else 0.0) +
                                max(r.i_rms_a for r in p.lines.values()) for p in s.panels)
                            for s in scen]))
    div = None
    if inst.diversity.mode == "summation":
        div = _summation(inst, solver, scen)
    elif inst.diversity.mode == "monte-carlo":
        div = _monte_carlo(inst, solver)
    return Assessment(inst, scen, design, div, solver.solves)


# ---------------------------------------------------------------------------- diversity
def _summation(inst: Installation, solver: CaseSolver, scen) -> dict:
    """IEC TR 61000-3-6 summation law over circuits at their worst listed setting."""
    angles = LINE_ANGLES_DEG[inst.supply.system]
    out = {"method": "IEC TR 61000-3-6 summation law, exponents 1 (h<5), 1.4 (5..10), 2 (h>10)"
                     " (from memory); each circuit at the largest magnitude per order over its "
                     "scenarios; the neutral fundamental from the phasor sum of the lines",
           "panels": []}
    for p in inst.panels:
        per_line = {ln: [] for ln in angles}
        fund = {ln: 0j for ln in angles}
        for c in p.circuits:
            phs = [grid_phasors(cs.current_a, cs.cycles)
                   for cs in (solver.case(c, k) for k in range(inst.n_scenarios))]
            mags = np.abs(phs)
            m = np.max(mags, axis=0)
            per_line[c.phase].append(m)
            # the fundamental keeps its phase (displacement) from the scenario of largest I1
            p1 = phs[int(np.argmax(mags[:, 1]))][1]
            fund[c.phase] += p1 * np.exp(1j * np.radians(angles[c.phase]))
        res = {}
        for ln, ms in per_line.items():
            s = summation_law(np.array(ms)) if ms else np.zeros(MAX_ORDER + 1)
            res[ln] = {"i_rms_a": float(np.sqrt(np.sum(s**2))), "i3_a": float(s[3])}
        allm = [m for ms in per_line.values() for m in ms]
        entry = {"id": p.id, "phases": res}
        if inst.supply.system != "single-phase" and allm:
            # every order by the summation law over all the panel's circuits (their relative
            # phases unknown), but the fundamental as the phasor sum of the lines (set by the
            # load balance, not by the dimmer settings)
            sn = summation_law(np.array(allm))
            sn[1] = abs(sum(fund.values()))
            entry["neutral"] = {"i_rms_a": float(np.sqrt(np.sum(sn**2))),
                                "triplen_share_pct": 100 * triplen_share(sn)}
        out["panels"].append(entry)
    return out


def _monte_carlo(inst: Installation, solver: CaseSolver) -> dict:
    """Settings drawn uniformly in [low, high] per dimmed circuit, quantised to step_deg."""
    d = inst.diversity
    rng = np.random.default_rng(d.seed)
    grid = np.arange(d.low_deg, d.high_deg + 1e-9, d.step_deg)
    angles = LINE_ANGLES_DEG[inst.supply.system]
    spc = GRID_SAMPLES
    from dataclasses import replace

    per_panel = {p.id: {"lines": {ln: [] for ln in angles}, "neutral": []} for p in inst.panels}
    # each circuit's current at each grid setting, solved once
    table = {}
    skipped: list[str] = []
    for p in inst.panels:
        for c in p.circuits:
            if c.dimmer == "none":
                table[c.id] = [solver.case(c, 0)]
            else:
                opts = []
                for a in grid:
                    try:
                        opts.append(solver.case(replace(c, conduction_deg=(float(a),),
                                                        knob=None), 0))
                    except ConvergenceError:
                        skipped.append(f"{c.id} at {a:g} deg")
                if not opts:
                    raise ConvergenceError(f"Monte Carlo: circuit {c.id} has no steady state at "
                                           f"any setting of {d.low_deg:g}..{d.high_deg:g} deg")
                table[c.id] = opts
    cyc = _period(cs.cycles for v in table.values() for cs in v)
    for _ in range(d.draws):
        for p in inst.panels:
            acc = {ln: np.zeros(spc * cyc) for ln in angles}
            for c in p.circuits:
                opts = table[c.id]
                cs = opts[rng.integers(len(opts))] if len(opts) > 1 else opts[0]
                x = _on_period(cs, cyc)
                shift = int(round(angles[c.phase] / 360.0 * spc))
                acc[c.phase] += np.roll(x, -shift) if shift else x
            for ln in angles:
                per_panel[p.id]["lines"][ln].append(float(np.sqrt(np.mean(acc[ln] ** 2))))
            if inst.supply.system != "single-phase":
                per_panel[p.id]["neutral"].append(float(np.sqrt(np.mean(sum(acc.values()) ** 2))))

    def pct(v):
        a = np.asarray(v)
        return {"p50_a": float(np.percentile(a, 50)), "p95_a": float(np.percentile(a, 95)),
                "p99_a": float(np.percentile(a, 99)), "max_a": float(a.max())}

    return {"method": f"Monte Carlo, {d.draws} draws, settings uniform in "
                      f"{d.low_deg:g}..{d.high_deg:g} deg conduction (step {d.step_deg:g} deg), "
                      f"seed {d.seed}; ideal supply",
            "left_out": (["settings without a steady state, left out of the draws: "
                          + ", ".join(skipped)] if skipped else []),
            "panels": [{"id": pid, "phases": {ln: pct(v) for ln, v in r["lines"].items()},
                        **({"neutral": pct(r["neutral"])} if r["neutral"] else {})}
                       for pid, r in per_panel.items()]}
