"""One steady-state solve of a supply, a dimmer and the lamp groups behind it.

:func:`solve_circuit` builds the network (source impedance, dimmer, lamp groups), finds the
periodic state by shooting over one mains cycle and, when that has no consistent stable
orbit, over 2, 3 and 4 cycles (a triac that fires every few half cycles: flag
``subharmonic``, the waveform spans the true period). Two outer loops close around it:

- a phase-detecting driver (``pfc``, ``pwm-detect``) sets its output from the conduction
  angle it reads (from the firing edge behind a leading edge, the switch's on-time
  otherwise); the angle and the output are iterated to a fixed point;
- a ``pfc`` driver's voltage loop sets its emulated resistance so that the lamp draws its
  target input power, ``power_w`` times its output level (Newton on ``P ~ 1 / R_e`` inside
  a bracket; where the dimmer stops holding below some
  current demand the loop takes the side that delivers the target).

Flags: ``no-latch`` (a half cycle was fired but no pulse latched the triac, or it dropped
out within ``NO_HOLD_DEG`` of latching), ``misfire``, ``re-fire``, ``subharmonic``, ``asymmetric``,
``drop-out`` (a converter's lock-out stopped it), ``glow-when-off`` (light while the dimmer
is off, from its own supply and snubber leakage), ``long-transient`` (no periodic state of
up to 4 cycles exists: a record of up to ``LONG_CYCLES`` cycles is simulated after
``LONG_SETTLE_CYCLES`` cycles of settling, and its mean cycle reported: the averaged
spectrum at orders 0..50, exact over the record; the energy between the orders is
``Solution.interharmonic_a``; the circuit stays in every sum).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, replace
from typing import Literal, get_args

import numpy as np

from ..errors import ConvergenceError, InputError
from .dimmers import SWITCH, build_dimmer, conduction_from_knob, resolve_dimmer
from .drivers import ConverterUVLO, TapLevels, build_group, dim_fraction, resolve_params
from .exact import MAX_ORDER, Figures, SolvedWaveform, corrected_samples, expand, figures
from .network import CH_ONE, CH_SOURCE, Network
from .pwl import Engine, Source
from .spec import DimmerSpec, LoadGroup, Supply

__all__ = ["solve_circuit", "Solution", "GroupResult", "Stresses", "Flag", "FLAGS",
           "SAMPLES_PER_CYCLE"]

Flag = Literal["no-latch", "misfire", "re-fire", "subharmonic", "asymmetric", "drop-out",
               "glow-when-off", "long-transient"]
FLAGS: tuple[str, ...] = get_args(Flag)
SAMPLES_PER_CYCLE = 4096
#: a triac fired in a half cycle that conducts less than this [deg] has not stayed latched
#: (its current fell below holding right after the gate pulse): flagged "no-latch"
NO_HOLD_DEG = 5.0
#: mains cycles simulated to read a triac's latching period when the one-cycle shooting
#: fails (the pattern of the last half of them; periods up to GUESS_CYCLES / 2 cycles)
GUESS_CYCLES = 12
#: the pattern read may stop after this many cycles once it repeats (see _period_guess)
GUESS_MIN_CYCLES = 4
#: mains cycles simulated, when no periodic state is found, to describe what the circuit
#: does instead (the latching pattern of the last half of them, and the drift of the state)
REPORT_CYCLES = 24
#: no periodic state: mains cycles simulated from the warm-up state before the record (the
#: start transient fades), and cycles recorded, whose mean cycle is reported (flag
#: ``long-transient``); the record is shortened (to no fewer than LONG_MIN_CYCLES) so that
#: it should hold at most LONG_EVENTS switching events at the settling run's rate (a count of
#: events, not a time: the record, and so the result, must not depend on the machine's load)
LONG_SETTLE_CYCLES = 20
LONG_CYCLES = 100
LONG_MIN_CYCLES = 10
LONG_EVENTS = 400_000
#: an orbit of several cycles whose first cycle returns to its start within this fraction
#: of each state's scale is reported as the one-cycle orbit it is (see _steady)
SAME_CYCLE_TOL = 1e-6
#: a pfc driver drawing more than this factor above or below its target power after its
#: voltage loop stopped is reported as unsettled (a note on the solution)
PFC_POWER_BAND = 1.1
#: a pfc driver's voltage loop has met a jump in its power (see _pfc_update) when its
#: bracket of emulated resistances is narrower than PFC_JUMP_WIDTH (a ratio) while the
#: powers at its ends differ by more than PFC_JUMP_RATIO: a smooth ``P ~ 1 / R_e`` would
#: differ by the width alone
PFC_JUMP_WIDTH = 1.05
PFC_JUMP_RATIO = 1.5
#: incandescent light against filament power, L ~ P^(3.4/1.6) from L ~ V^3.4 and P ~ V^1.6
#: (common practice; exponents from memory)
FILAMENT_LIGHT_EXPONENT = 3.4 / 1.6


class _Deferred:
    """A dataclass field that may be given as a zero-argument callable: evaluated once, on
    the first read (the light of ``extras=False``, whose normalisation needs a reference
    solve that a caller after the waveform alone never pays for)."""

    def __set_name__(self, owner, name: str) -> None:
        self._key = "_deferred_" + name

    def __get__(self, obj, owner=None):
        if obj is None:
            raise AttributeError(self._key)  # no class default: the field stays required
        v = obj.__dict__[self._key]
        if callable(v):
            v = v()
            obj.__dict__[self._key] = v
        return v

    def __set__(self, obj, value) -> None:
        obj.__dict__[self._key] = value


@dataclass(frozen=True)
class Stresses:
    """Component stresses of ONE lamp. The capacitor currents and resistor powers are
    integrated with the solver's extras only (None without: an installation's solves never
    read them, and they cost a product integral per component)."""

    # largest input current in steady state [A] (a search over every segment, made when
    # first read; a descriptor without a class default, which the type checker cannot see)
    i_peak_a: float = _Deferred()  # type: ignore[assignment]
    # largest input current when switched on at the crest [A]
    inrush_peak_a: float | None  # type: ignore[misc]
    cap_rms_a: tuple[tuple[str, float], ...] | None  # type: ignore[misc]  # capacitor rms [A]
    resistor_w: tuple[tuple[str, float], ...] | None  # type: ignore[misc]  # dissipation [W]

    def __getstate__(self):
        self.i_peak_a  # noqa: B018  (a deferred peak is found before pickling)
        return self.__dict__


@dataclass(frozen=True)
class GroupResult:
    """Results of one lamp of a :class:`LoadGroup` (the group draws ``count`` times this)."""

    group: LoadGroup
    params: tuple[tuple[str, float | None], ...]
    waveform: SolvedWaveform  # current of ONE lamp and the line voltage (see its figures)
    led_current_a: np.ndarray  # LED current of one lamp [A]
    # relative light output, 1.0 = rated full output [-]; a descriptor without a class
    # default (the field stays required), which the type checker cannot see
    light: np.ndarray = _Deferred()  # type: ignore[assignment]
    stresses: Stresses  # type: ignore[misc]

    def __getstate__(self):
        self.light  # noqa: B018  (a deferred light is computed before pickling)
        return self.__dict__

    @property
    def light_mean(self) -> float:
        return float(np.mean(self.light))

    @property
    def figures(self) -> Figures:
        """Exact figures of one lamp's current (phasors, rms, power, peak)."""
        assert self.waveform.figures is not None
        return self.waveform.figures

    @property
    def current_phasors_a(self) -> np.ndarray:
        """RMS phasors of one lamp's current, orders 0..50 [A] (exact; the convention of
        :mod:`pqcalc.spectrum`, on the line voltage's fundamental)."""
        return self.figures.current_phasors_a

    @property
    def i_rms_a(self) -> float:
        """RMS input current of one lamp [A] (exact)."""
        return self.figures.i_rms_a

    @property
    def p_w(self) -> float:
        """Mean input power of one lamp at the line voltage [W] (exact)."""
        return self.figures.p_w


@dataclass(frozen=True)
class Solution:
    """Periodic steady state of one (supply, dimmer, loads) case.

    The figures (``current_phasors_a``, ``i_rms_a``, ``p_w``, ``i_peak_a``, :meth:`spectrum`)
    are integrated exactly over the piecewise solution (:mod:`pqcalc.circuits.exact`); the
    ``waveform`` is a sampled copy for plots and CSV whose DFT at orders 0..50, rms and
    power agree with them (see :class:`~pqcalc.circuits.exact.SolvedWaveform`).
    """

    waveform: SolvedWaveform  # total input current and the voltage at the dimmer's line terminal
    groups: tuple[GroupResult, ...]
    flags: tuple[str, ...]
    period_cycles: int
    converged: bool
    iterations: int
    conduction_deg: tuple[float, ...]  # measured conduction of each half cycle [deg]
    firings: tuple[int, ...]  # trigger events per half cycle (leading-edge triac)
    dimmer_p: tuple[tuple[str, float], ...] = ()
    # flag 'long-transient': rms of the record's content between the orders (interharmonics
    # and the drift of the cycles about their mean) [A], and the cycles recorded; the
    # waveform is the mean cycle (its phasors the record's averaged spectrum), the figures'
    # i_rms_a the record's, the light spans the record (period_cycles = record_cycles)
    interharmonic_a: float = 0.0
    record_cycles: int = 0
    notes: tuple[str, ...] = ()
    #: with ``admittance=True``: the harmonic transfer ``(A, B)`` of the line current from
    #: the source voltage about this state, ``dI_k = A[k, h] dV_h + B[k, h] conj(dV_h)``,
    #: orders 0..50 (rows out, columns in) [S]
    #: (:func:`pqcalc.circuits.smallsignal.harmonic_transfer`); None otherwise, or where the
    #: state has no one-cycle period
    harmonic_transfer_s: tuple[np.ndarray, np.ndarray] | None = None

    @property
    def input_admittance_s(self) -> np.ndarray | None:
        """The diagonal of ``harmonic_transfer_s``'s ``A``: the input admittance per order
        [S] (None without the transfer)."""
        t = self.harmonic_transfer_s
        return None if t is None else np.diagonal(t[0]).copy()

    @property
    def interharmonic_fraction(self) -> float:
        """The record's content between the orders as a fraction of its rms [-] (0 for a
        periodic state): ``sqrt(I_rms^2 - sum_h |I_h|^2) / I_rms`` over all orders."""
        r = self.figures.i_rms_a
        return float(self.interharmonic_a / r) if r > 0 else 0.0

    @property
    def figures(self) -> Figures:
        """Exact figures of the total input current against the line voltage."""
        assert self.waveform.figures is not None
        return self.waveform.figures

    @property
    def current_phasors_a(self) -> np.ndarray:
        """RMS phasors of the total input current, orders 0..50 [A] (exact; the convention
        of :mod:`pqcalc.spectrum`, on the line voltage's fundamental)."""
        return self.figures.current_phasors_a

    @property
    def voltage_phasors_v(self) -> np.ndarray:
        """RMS phasors of the line voltage at the dimmer, orders 0..50 [V] (exact)."""
        return self.figures.voltage_phasors_v

    @property
    def i_rms_a(self) -> float:
        """RMS of the total input current [A] (exact)."""
        return self.figures.i_rms_a

    @property
    def p_w(self) -> float:
        """Mean power into the dimmer and its lamps [W] (exact)."""
        return self.figures.p_w

    @property
    def i_peak_a(self) -> float:
        """Largest absolute total input current [A] (exact, not a sample)."""
        return self.figures.i_peak_a

    def spectrum(self, max_order: int = MAX_ORDER):
        """The exact figures as a :class:`pqcalc.spectrum.Spectrum` (orders 0..max_order)."""
        return self.figures.spectrum(max_order, self.waveform.label)


# ---------------------------------------------------------------------- building
@dataclass
class _Case:
    net: Network
    eng: Engine
    builds: list
    scale: np.ndarray


def _build(supply: Supply, dimmer: DimmerSpec, dp: dict, loads, gparams, levels,
           inrush: bool = False, grid: int = 2048) -> _Case:
    net = Network()
    net.V("src", "src", "0", CH_SOURCE)
    node = "src"
    if supply.source_r_ohm > 0:
        net.R("R_source", node, "sa", supply.source_r_ohm)
        node = "sa"
    if supply.source_l_h > 0:
        net.L("L_source", node, "line", supply.source_l_h)
        net.R("R_damp", node, "line", supply.source_damping_ohm)
        node = "line"
    elif node != "line":
        net.R("R_link", node, "line", 1e-6)
    net.R("R_vline", "line", "0", 1e12)
    net.V("A_line", "line", "din", CH_ONE, 0.0)
    make_dim = build_dimmer(net, dimmer if not inrush else DimmerSpec("none", params=()),
                            dp if not inrush else {"r_on_ohm": dp["r_on_ohm"]}, supply,
                            "din", "dout")
    builds = []
    for k, (g, p) in enumerate(zip(loads, gparams, strict=True)):
        builds.append(build_group(net, k, g.model, g.power_w, g.count, p, "dout",
                                  dim_level=levels[k], inrush=inrush,
                                  v_rms_v=supply.v_rms_v))
    net.finalize()
    autos = [make_dim()]
    for b in builds:
        if "conv" in b.extra:
            pp = b.params
            autos.append(ConverterUVLO(b.extra["conv"], net.state_of[b.extra["cap"]],
                                       b.extra["breaks"], pp["v_uvlo_on_v"],
                                       pp["v_uvlo_off_v"], net.n_x, net.n_u))
        for a in b.automata:
            if a[0] == "taps":
                autos.append(TapLevels(a[1], a[2], net.n_x, net.n_u,
                                       net.n_e + net.index[a[1]]))
    terms, dc = supply.source_terms()
    eng = Engine(net, Source.from_sines(supply.frequency_hz, terms, dc), autos, grid)
    vpk = np.sqrt(2) * supply.v_rms_v
    iscale = sum(g.power_w * g.count for g in loads) / supply.v_rms_v
    scale = np.zeros(net.n_x)
    for name, j in net.state_of.items():
        scale[j] = 1e-4 * (vpk if net.elements[net.index[name]].kind == "C" else iscale)
    eng._floor = scale
    return _Case(net, eng, builds, scale)


def _initial(case: _Case, supply: Supply):
    net = case.net
    x0 = np.zeros(net.n_x)
    vpk = np.sqrt(2) * supply.v_rms_v
    for b in case.builds:
        if b.model in ("bulk-cap", "pwm-detect"):
            x0[net.state_of[b.prefix + "C_bulk"]] = 0.9 * vpk
    autos0 = []
    for a in case.eng.automata:
        s = a.initial
        if isinstance(a, ConverterUVLO):
            s = a.state_for(x0[a.j], x0[a.j] > a.v_on)
        autos0.append(s)
    return x0, (tuple([False] * len(net.diodes)), tuple(autos0))


def _stable(eng: Engine, tr, cycles: int, scale: np.ndarray, exact_phi: bool) -> bool:
    """A small perturbation of the periodic state decays: the monodromy matrix's spectral
    radius is below 1 where that matrix is exact (no event with a jump of the vector
    field); otherwise a perturbation is simulated over two periods."""
    T = cycles * eng.T1
    if tr.x0.size == 0:
        return True
    if exact_phi:
        return bool(np.max(np.abs(np.linalg.eigvals(tr.phi))) < 1.0 + 1e-9)
    ref = np.abs(tr.x0) + 1e3 * scale
    d0 = 1e-3 * ref
    a = eng.run(0.0, T, tr.x0 + d0, tr.s0)
    e1 = np.max(np.abs(a.xT - tr.x0) / ref)
    return bool(e1 <= 1.05e-3 and a.sT == tr.s0)  # the perturbation has not grown


def _pattern_period(pat: list) -> int | None:
    """The smallest period [half cycles] in which ``pat`` repeats at least twice."""
    for p in range(1, len(pat) // 2 + 1):
        if all(pat[i] == pat[i + p] for i in range(len(pat) - p)):
            return p
    return None


def _period_guess(eng: Engine, x0, d0, cycles: int = GUESS_CYCLES,
                  min_cycles: int = GUESS_MIN_CYCLES):
    """The period [mains cycles] of the triac's latching pattern, simulated from ``x0``
    for up to ``cycles`` cycles, and the state at the end. The pattern read is the second
    half of the simulated half cycles (transients faded); the read stops early, from
    ``min_cycles`` on, once that half repeats twice within its length. The guess only
    orders the periods tried: each is confirmed by shooting and a stability check."""
    latched: list[bool] = []
    x, d, c = x0, d0, 0
    while c < cycles:
        step = min(min_cycles if c == 0 else 2, cycles - c)
        tr = eng.run(0.0, step * eng.T1, x, d, record=True)
        _on, _f, _n, held = _conduction(tr, eng, step)
        latched += [v > NO_HOLD_DEG for v in held]
        x, d, c = tr.xT, tr.sT, c + step
        p = _pattern_period(latched[c:])
        if p is not None:
            # an odd number of half cycles alternates polarity: p whole cycles
            return (p // 2 if p % 2 == 0 else p), x, d
    return None, x, d


def _steady(case: _Case, supply: Supply, check_stability: bool, max_period: int = 4,
            exact_phi: bool = False, triac: bool = False, start=None):
    """Periodic steady state of ``case``; ``start`` (a state and discrete state at the cycle
    start, from a solve of a nearby circuit of the same structure) replaces the initial
    guess: a warm start."""
    eng = case.eng
    x0, d0 = _initial(case, supply) if start is None else start
    # one cycle from the initial guess gives Newton a state near the orbit
    warm = eng.run(0.0, eng.T1, x0, d0, record=triac)
    x0, d0 = warm.xT, warm.sT
    x_phys = (x0, d0)  # a simulated (physical) state, where a failure report starts
    tried = []
    total = 0
    order = list(range(1, max_period + 1))
    k_i = 0
    guessed = False  # the full pattern read has been done
    x_read = None  # the physical state where an early pattern read ended
    if triac:
        # a half cycle of that cycle fired without staying latched: the triac may latch
        # only every few half cycles. Read the latching pattern now, from this physical
        # state, and shoot at its period first (rather than after a failed one-cycle
        # shooting, whose last iterate can be far from any orbit)
        _on, _fires, nolatch, _held = _conduction(warm, eng, 1)
        if nolatch:
            guess, x0, d0 = _period_guess(eng, x0, d0)
            x_read = (x0, d0)
            guessed = guess is None or guess > 1
            if guess is not None and guess > 1:
                if guess not in order:
                    order.append(guess)
                order.remove(guess)
                order.insert(0, guess)
    while k_i < len(order):
        k = order[k_i]
        k_i += 1
        try:
            tr, it, ok = eng.periodic(k, x0, d0)
        except ConvergenceError as e:
            tried.append(f"{k}-cycle period: {e}")
            continue
        total += it
        if ok and (not check_stability or _stable(eng, tr, k, case.scale, exact_phi)):
            if k > 1:
                # an orbit of k cycles whose cycles coincide is the one-cycle orbit (found
                # at k where the one-cycle shooting stalled on an event at a rounding's edge)
                one = eng.run(0.0, eng.T1, tr.x0, tr.s0, record=True)
                sc = np.maximum(np.abs(one.xT), np.abs(tr.x0)) + eng._floor
                if one.sT == tr.s0 and (not tr.x0.size or float(
                        np.max(np.abs(one.xT - tr.x0) / sc)) < SAME_CYCLE_TOL):
                    return one, 1, total, True
            return tr, k, total, True
        tried.append(f"{k}-cycle period: {'unstable' if ok else 'no convergence'} after "
                     f"{it} Newton iterations")
        x0, d0 = tr.xT, tr.sT
        if k == 1 and triac and not guessed:
            # a triac that latches only every few half cycles: read the period off the
            # latching pattern of GUESS_CYCLES simulated cycles (continuing an early read
            # that found period 1 from where it ended, a physical state), then shoot at
            # that period first
            guessed = True
            if x_read is not None:
                x0, d0 = x_read
            guess, x0, d0 = _period_guess(eng, x0, d0, min_cycles=GUESS_CYCLES)
            if guess is not None and guess > 1:
                if guess not in order:
                    order.append(guess)
                order.remove(guess)
                order.insert(k_i, guess)
    raise ConvergenceError(
        "no periodic steady state found; tried shooting (Newton on the state at the cycle "
        "start) over " + "; ".join(tried) + ". " + _no_orbit_report(case, *x_phys, triac,
                                                                   max(order))
    )


def _no_orbit_report(case: _Case, x, d, triac: bool, max_period: int) -> str:
    """What the circuit does instead of settling: simulated for REPORT_CYCLES cycles from a
    physical state, the triac's firing and latching pattern over the last half of them and
    the state's drift over the last cycle (a slow mode the shooting could not close)."""
    eng = case.eng
    n = REPORT_CYCLES
    tr = eng.run(0.0, n * eng.T1, x, d, record=triac)
    parts = [f"Simulated over {n} mains cycles"]
    if triac:
        _on, fires, _nl, held = _conduction(tr, eng, n)
        marks = ["L" if c > NO_HOLD_DEG else ("x" if k > 0 else ".")
                 for c, k in zip(held, fires, strict=True)]
        tail = marks[n:]
        shown = "".join(tail)
        p = _pattern_period(tail)
        parts.append(f", the triac's last {len(tail)} half cycles were {shown!r} (L latched, "
                     "x fired without latching, . not fired)")
        if p is None:
            parts.append(f": an irregular latching pattern, no repeat within {n // 2} "
                         "cycles (chaotic, or a period longer than the search)")
        else:
            parts.append(f": it repeats every {p} half cycle{'s' if p > 1 else ''}")
    last = eng.run(0.0, eng.T1, tr.xT, tr.sT)
    ref = np.abs(last.xT) + 1e4 * case.scale
    if last.xT.size:
        rel = np.abs(last.xT - last.x0) / ref
        j = int(np.argmax(rel))
        name = next(k for k, v in case.net.state_of.items() if v == j)
        lam = np.abs(np.linalg.eigvals(last.phi))
        slow = float(np.max(lam)) if lam.size else 0.0
        unit = "V" if case.net.elements[case.net.index[name]].kind == "C" else "A"
        parts.append(f"; the state still drifts, most in {name} "
                     f"({last.xT[j] - last.x0[j]:+.3g} {unit} per cycle at {last.xT[j]:.4g} "
                     f"{unit})")
        if 0.999 < slow < 1.0:
            tau = -1.0 / np.log(slow)
            hours = tau / eng.src.frequency_hz / 3600.0
            parts.append(f", along a slow mode that decays by {slow:.9f} per cycle (time "
                         f"constant about {tau:.3g} cycles, {hours:.3g} h)")
            if triac and "L" not in marks[n:]:
                parts.append(": the triac never latches while that store holds it off, and "
                             "the latching comes back (if at all) only when the slow drift "
                             "has run its course, a cycle far longer than the search")
    parts.append(f". No periodic state of up to {max_period} cycles exists near this "
                 "behaviour; a pattern that only repeats over more cycles than that is not "
                 "solved here.")
    return "".join(parts)


def _conduction(tr, eng: Engine, cycles: int):
    """Switch on-time per half cycle [deg], trigger events per half cycle, whether a fired
    half cycle did not latch, and the latched on-time per half cycle [deg].

    The latched on-time counts a triac's ``on`` and ``low`` states only (its gate pulses
    are on-time, not latching). A half cycle did not latch when it was fired and its
    latched time is under ``NO_HOLD_DEG``: no pulse latched, or the triac dropped out
    right after; a pulse that failed before a later one latched is a re-fire, not a
    failure to latch. Without a triac the latched time is the on-time."""
    H = eng.T1 / 2
    nh = 2 * cycles
    on = np.zeros(nh)
    lat = np.zeros(nh)
    idx = eng.net.switches.index(eng.net.index[SWITCH]) + len(eng.net.diodes)
    ts0, ts1 = tr.seg_times()
    triac = dimmer_is_triac(eng)
    sw = tr.switch_on(idx) != 0
    held = np.array([st[0] in ("on", "low") for st in tr.states(0)], dtype=bool) if triac \
        else sw
    for t0, t1, h in zip(ts0[sw].tolist(), ts1[sw].tolist(), held[sw].tolist(), strict=True):
        k0 = int(np.floor(t0 / H + 1e-12))
        while t0 < t1 - 1e-15 and k0 < nh:
            e = min(t1, (k0 + 1) * H)
            on[k0] += e - t0
            if h:
                lat[k0] += e - t0
            t0 = e
            k0 += 1
    fires = np.zeros(nh, dtype=int)
    for t, tag in tr.events:
        name = tag[-1]
        if tag[0] in "AT" and tag[1] == 0 and name in ("fire+", "fire-", "fire"):
            # a trigger at the very end of the run (phase 0, the zero crossing) is the
            # first half cycle's of the next period: by periodicity it counts in half 0
            fires[int(np.floor(t / H + 1e-9)) % nh] += 1
    lat_deg = lat / H * 180.0
    nolatch = bool(triac and any(k > 0 and c < NO_HOLD_DEG for c, k in zip(lat_deg, fires,
                                                                            strict=True)))
    return (tuple(float(v) for v in on / H * 180.0), tuple(int(v) for v in fires), nolatch,
            tuple(float(v) for v in lat_deg))


def dimmer_is_triac(eng: Engine) -> bool:
    """The dimmer (automaton 0) is a triac: its states are tuples with a name first."""
    return isinstance(eng.automata[0].initial, tuple)


def _thermal_light(p_w: np.ndarray, rated_w: float, tau_s: float, f_hz: float,
                   cycles: int) -> np.ndarray:
    """Filament light from its power: first-order thermal low-pass, L ~ P^2.1."""
    n = p_w.size
    X = np.fft.rfft(p_w)
    fk = np.arange(X.size) * f_hz / cycles
    Pf = np.fft.irfft(X / (1 + 2j * np.pi * fk * tau_s), n)
    return (np.maximum(Pf, 0.0) / rated_w) ** FILAMENT_LIGHT_EXPONENT


# ---------------------------------------------------------------------- public
def solve_circuit(supply: Supply, dimmer: DimmerSpec, loads, samples_per_cycle: int =
                  SAMPLES_PER_CYCLE, extras: bool = True, admittance: bool | str = False,
                  memo: bool = True) -> Solution:
    """The periodic steady state of all lamp groups behind one dimmer on one supply.

    One solve: the triac or transistor sees the summed current of every group (holding and
    latching depend on it); ``count`` identical lamps cost the same as one.

    Parameters
    ----------
    supply, dimmer
        :class:`Supply`, :class:`DimmerSpec`.
    loads
        Sequence of :class:`LoadGroup`.
    samples_per_cycle
        Samples per mains cycle of the returned waveforms (>= 4096 recommended).
    extras
        Also compute the inrush peak (a second transient solve) and the light normalisation
        of models whose rated LED output needs a reference solve. ``False`` is for speed:
        ``inrush_peak_a`` is None, and that normalisation (a solve of the lamp alone on its
        rated supply, memoised per fixture type) runs only when ``light`` is first read.
    memo
        Keep the solution in the solver's memo of recent solves (256), so that the same
        case asked again costs nothing; ``False`` for callers that keep their own (an
        installation's distinct cases), which saves the memo's memory.
    admittance
        Also compute the harmonic transfer about the solved state
        (``Solution.harmonic_transfer_s`` and its diagonal ``input_admittance_s``: the
        lamps' Norton model for a network harmonic study); ``"odd"``: the odd orders only
        (a quarter of the work; :func:`pqcalc.circuits.smallsignal.harmonic_transfer`).

    Raises
    ------
    InputError
        A bad parameter (the message names it and lists the valid ones).
    ConvergenceError
        No periodic state found (the message says what was tried, and what the circuit
        does instead over REPORT_CYCLES simulated cycles: the triac's latching pattern
        and the state's remaining drift).
    """
    loads = tuple(loads)
    if not loads:
        raise InputError("loads: expected at least one LoadGroup")
    for g in loads:
        if not isinstance(g, LoadGroup):
            raise InputError(f"loads: expected LoadGroup items, got {type(g).__name__}")
    if int(samples_per_cycle) < 64:
        raise InputError("samples_per_cycle: expected at least 64")
    solve = _solve_cached if memo else _solve_cached.__wrapped__
    sol = solve(supply, dimmer, loads, int(samples_per_cycle), bool(extras), False,
                "odd" if admittance == "odd" else bool(admittance))
    assert isinstance(sol, Solution)
    if memo:
        # a kept solution keeps no expansion alive: its figures are computed now (a caller
        # that keeps its own results, memo=False, computes only those it reads)
        for w in [sol.waveform] + [g.waveform for g in sol.groups]:
            if w.figures is not None:
                w.figures.resolve()
    return sol


@functools.lru_cache(maxsize=256)
def _solve_cached(supply, dimmer, loads, spc, extras, reference,
                  admittance: bool | str = False) -> Solution | float:
    """One solve (memoised); with ``reference`` the mean LED power [W] of its one lamp."""
    dp = resolve_dimmer(dimmer, supply)
    gparams = [resolve_params(g.model, g.power_w, supply.v_rms_v, supply.frequency_hz,
                              g.param_dict()) for g in loads]
    cond_set = conduction_from_knob(dimmer, dp)
    cond_guess = 180.0 if cond_set is None else cond_set
    phase_detect = any(g.model in ("pfc", "pwm-detect") for g in loads)
    check = dimmer.uses_triac or any(g.model in ("bulk-cap", "pwm-detect", "sine-follow")
                                     and gparams[i].get("r_load_ohm") is None
                                     for i, g in enumerate(loads))
    # phase-detecting drivers: their output follows the conduction angle they detect, which
    # follows the dimmer; iterate the pair (a fixed point, a few passes). A pfc driver's
    # voltage loop sets its emulated resistance so that it draws its target power.
    cond = cond_guess
    pfc = [i for i, g in enumerate(loads) if g.model == "pfc"]
    warm_ok = not any(g.model == "pwm-detect" for g in loads)
    start = None
    v2 = supply.v_rms_v ** 2
    for _pass in range(6):
        levels = [dim_fraction(cond, p) if g.model in ("pfc", "pwm-detect") else 1.0
                  for g, p in zip(loads, gparams, strict=True)]
        brackets = {}
        for i in pfc:
            p, g = gparams[i], loads[i]
            p["_dim_level"] = levels[i]
            p["_target_w"] = max(g.power_w * levels[i], 1e-3 * g.power_w)
            p["_r_emulated_ohm"] = v2 / p["_target_w"]
            brackets[i] = [0.0, np.inf, np.inf, 0.0]
        for _k in range(12 if pfc else 1):
            case = _build(supply, dimmer, dp, loads, gparams, levels)
            try:
                tr, period, iters, ok = _steady(case, supply, check,
                                                exact_phi=not dimmer.uses_triac,
                                                triac=dimmer.uses_triac, start=start)
                long = False
            except ConvergenceError as e:
                if reference:
                    raise
                tr, period = _long_transient(case, supply, start, e)
                iters, ok, long, long_err = 0, False, True, str(e)
            # the next pass differs in a pfc driver's emulated resistance (and its dimming
            # level) alone: it starts from this solution (a warm start); a pwm-detect
            # driver's converter changes its chord cells with its level: it starts cold
            start = (tr.x0, tr.s0) if period == 1 and ok and warm_ok else None
            if long:
                start = None
            again = False
            for i in pfc:
                again |= _pfc_update(gparams[i], brackets[i],
                                     _input_power(case, tr, case.builds[i], period), v2,
                                     loads[i].power_w)
            if not again:
                break
        measured, fires, nolatch, _held = _conduction(tr, case.eng, period)
        if not phase_detect:
            break
        new_cond = float(np.mean(_detected(tr, case.eng, period, dimmer, measured)))
        if abs(new_cond - cond) < 0.5:
            break
        cond = new_cond
    if reference:  # the lamp alone on its rated supply: only its mean LED power is read
        return _reference_power(case, tr, case.builds[0])
    sol = _assemble(supply, dimmer, dp, loads, gparams, levels, case, tr, period, iters, ok,
                    spc, extras, measured, fires, nolatch, cond_set, reference)
    if admittance and period == 1 and not long:
        from .smallsignal import harmonic_transfer

        ht = harmonic_transfer(case.eng, tr, case.eng.net.index["A_line"], MAX_ORDER,
                               odd=admittance == "odd")
        sol = replace(sol, harmonic_transfer_s=ht)
    notes: tuple[str, ...] = ()
    if dimmer.conduction_deg is not None and cond_set is not None and \
            cond_set < dimmer.conduction_deg:
        notes = (f"{dimmer.kind} dimmer set to {dimmer.conduction_deg:g} deg conducts at most "
                 f"{cond_set:.1f} deg (its max_conduction_deg)",)
    for i in pfc:
        ratio = gparams[i].get("_power_ratio", 1.0)
        if not 1 / PFC_POWER_BAND <= ratio <= PFC_POWER_BAND:
            # the voltage loop met a jump in the power (the dimmer holds above some current
            # demand and drops out below it): the state found is one of several, and which
            # one depends on the iteration's path; said, not hidden
            notes += (f"{loads[i].model} driver's power loop did not settle on its target: "
                      f"it draws {100 * ratio:.0f} % of its {gparams[i]['_target_w']:.1f} W "
                      "target per lamp (the dimmer's holding makes the power jump); the "
                      "figures are one of several possible states, uncertain",)
    if long:
        sol = _mean_cycle(sol, spc)
        notes += (f"no periodic state found, reported as the mean cycle of a "
                  f"{sol.record_cycles}-cycle record: {long_err}",)
    return replace(sol, notes=sol.notes + notes) if notes else sol


def _long_transient(case: _Case, supply: Supply, start, err: ConvergenceError):
    """No periodic state: a record of the circuit's own behaviour. From the warm-up state
    (one cycle from the initial guess, or the warm start), ``LONG_SETTLE_CYCLES`` cycles
    let the start transient fade; then up to ``LONG_CYCLES`` cycles are recorded (fewer,
    down to ``LONG_MIN_CYCLES``, where the settling run's pace says the record would take
    more than ``LONG_EVENTS`` switching events). Returns the recorded trajectory and its cycles; raises
    ``err`` (the shooting's report) when the record holds non-finite values."""
    eng = case.eng
    x0, d0 = _initial(case, supply) if start is None else start
    before = eng.n_events
    warm = eng.run(0.0, LONG_SETTLE_CYCLES * eng.T1, x0, d0)
    rate = (eng.n_events - before) / LONG_SETTLE_CYCLES  # events per cycle
    n = LONG_CYCLES
    if rate > 0 and n * rate > LONG_EVENTS:
        n = max(LONG_MIN_CYCLES, int(LONG_EVENTS / rate))
    if not np.all(np.isfinite(warm.xT)):
        raise err
    tr = eng.run(0.0, n * eng.T1, warm.xT, warm.sT, record=True)
    if not np.all(np.isfinite(tr.xT)):
        raise err
    return tr, n


def _mean_cycle(sol: Solution, spc: int) -> Solution:
    """A long-transient solution as its mean cycle: the waveforms' samples averaged over
    the record's cycles (their DFT at the orders is the record's averaged spectrum, exact
    in the figures), the figures' phasors and power the record's; the content between the
    orders (all of the record's energy that the mean cycle does not hold: interharmonics
    and the cycles' spread about their mean) is ``interharmonic_a``, by Parseval on the
    samples, ``rms(record)^2 = rms(mean cycle)^2 + mean((record - mean cycle)^2)``."""
    n = sol.period_cycles

    def mean_of(w: SolvedWaveform) -> tuple[SolvedWaveform, float]:
        rec = w.current_a.reshape(n, spc)
        m = rec.mean(axis=0)
        inter2 = float(np.mean((rec - m) ** 2))
        v = None if w.voltage_v is None else w.voltage_v.reshape(n, spc).mean(axis=0)
        return SolvedWaveform(m, w.sample_rate_hz, w.frequency_hz, voltage_v=v, cycles=1, label=w.label,
                              figures=w.figures), inter2

    wf, inter2 = mean_of(sol.waveform)
    groups = tuple(replace(g, waveform=mean_of(g.waveform)[0], led_current_a=g.led_current_a)
                   for g in sol.groups)
    flags = set(sol.flags) | {"long-transient"}
    flags.discard("subharmonic")
    return replace(sol, waveform=wf, groups=groups,
                   flags=tuple(fl for fl in FLAGS if fl in flags),
                   interharmonic_a=float(np.sqrt(inter2)), record_cycles=n)


def _pfc_update(p: dict, br: list, got_w: float, v2: float, rated_w: float) -> bool:
    """One step of a pfc driver's voltage loop on its emulated resistance: Newton on
    ``P ~ 1 / R_e`` kept inside the bracket ``br`` of resistances known to give too much
    (``br[0]``, drawing ``br[2]`` [W]) or too little (``br[1]``, drawing ``br[3]``) power.
    Where the power jumps (the dimmer stops holding below some current demand) the loop
    settles on the side that gives at least the target: as soon as the bracket is narrower
    than PFC_JUMP_WIDTH and its ends' powers differ by more than PFC_JUMP_RATIO (``P ~ 1 /
    R_e`` would change them by the width alone), or when it has shrunk to 0.1 %. Returns
    True when the resistance changed."""
    re, target = p["_r_emulated_ohm"], p["_target_w"]
    p["_power_ratio"] = got_w / target
    if abs(got_w / target - 1) < 1e-3:
        return False
    if got_w >= target:
        if re >= br[0]:
            br[0], br[2] = re, got_w
    elif re <= br[1]:
        br[1], br[3] = re, got_w
    if br[1] < np.inf and br[0] > 0 and (
            br[1] / br[0] < 1 + 1e-3 or
            (br[1] / br[0] < PFC_JUMP_WIDTH and br[2] > PFC_JUMP_RATIO * max(br[3], 0.0))):
        if re == br[0]:
            return False
        p["_r_emulated_ohm"] = br[0]
        return True
    new = re * got_w / target if got_w > 0 else 0.2 * re
    if not br[0] < new < br[1]:
        new = np.sqrt(max(br[0], 1e-9) * min(br[1], 1e6 * re))
    new = min(max(new, 0.2 * v2 / rated_w), 1e4 * v2 / rated_w)
    if abs(new / re - 1) < 1e-6:
        return False
    p["_r_emulated_ohm"] = new
    return True


def _detected(tr, eng: Engine, cycles: int, dimmer: DimmerSpec, on_deg) -> list[float]:
    """The conduction angle a phase-detecting driver reads per half cycle [deg]: behind a
    leading edge, from the first turn-on of the switch (the voltage edge at the driver's
    input) to the half cycle's end, whether or not the triac then holds; otherwise the
    switch's on-time."""
    if dimmer.kind != "leading-edge":
        return list(on_deg)
    H = eng.T1 / 2
    idx = eng.net.switches.index(eng.net.index[SWITCH]) + len(eng.net.diodes)
    first: list[float | None] = [None] * (2 * cycles)
    ons = tr.switch_on(idx).tolist()
    was_on = ons[-1] if ons else 0
    for t0, on in zip(tr.seg_times()[0].tolist(), ons, strict=True):
        k = min(int(np.floor(t0 / H + 1e-12)), 2 * cycles - 1)
        if on and not was_on and first[k] is None:
            first[k] = t0 - k * H
        was_on = on
    return [0.0 if f is None else 180.0 * (1.0 - f / H) for f in first]


def _input_power(case, tr, b, period) -> float:
    """Mean input power of one lamp of group ``b`` at the dimmer's output [W] (exact)."""
    net = case.eng.net
    ex = expand(case.eng, tr, [net.index[b.sense], net.n_e + net.index["R_vline"],
                               net.n_e + net.index[SWITCH]])
    ex.mean_products([(0, 1), (0, 2)])
    return (ex.mean_product(0, 1) - ex.mean_product(0, 2)) / b.m


def _light_outputs(case) -> list[tuple[str, str]]:
    """The element currents ('i') and voltages ('v') that the groups' light is made from
    (point samples, see :func:`_light`)."""
    outs: list[tuple[str, str]] = []
    for b in case.builds:
        if b.light == "filament":
            outs += [(b.resistors[0], "i"), (b.resistors[0], "v")]
        elif b.light == "dc-load":
            outs += [(b.prefix + "R_load", "i"), (b.prefix + "R_load", "v")]
        elif b.light == "tap":
            outs.append((b.led, "i"))
        elif b.led and b.light not in ("converter", "pwm", "pfc"):
            outs += [(b.led, "i"), (b.led, "v")]
    return list(dict.fromkeys(outs))


def _row(net, name: str, kind: str) -> int:
    return net.index[name] if kind == "i" else net.n_e + net.index[name]


def _reference_power(case, tr, b) -> float:
    """Mean LED power of the one lamp of a reference solve [W], integrated exactly (the
    light of a tapped regulator weighs each segment's LED current by its lit segments)."""
    eng, net = case.eng, case.eng.net
    if b.light == "tap":
        ia = [i for i, a in enumerate(eng.automata) if isinstance(a, TapLevels)
              and a.el == b.led][0]
        ex = expand(eng, tr, [net.index[b.led]])
        lit = np.array([b.extra["lit"][st] for st in tr.states(ia)], dtype=float)
        return float(np.sum(lit * ex.segment_integrals(0)) * b.extra["vseg"]
                     / ex.period_s) / b.m
    name = b.prefix + "R_load" if b.light == "dc-load" else b.led
    ex = expand(eng, tr, [net.index[name], net.n_e + net.index[name]])
    return ex.mean_product(0, 1) / b.m


def _assemble(supply, dimmer, dp, loads, gparams, levels, case, tr, period, iters, ok, spc,
              extras, measured, fires, nolatch, cond_set, reference) -> Solution:
    eng = case.eng
    net = eng.net
    f = supply.frequency_hz
    n = spc * period
    ts = np.arange(n) / (spc * f)
    fs = spc * f
    # one expansion of every output read: the line current, the line voltage and each
    # group's current (exact figures and cell means: the waveforms), the capacitor currents
    # and resistor powers (stresses), and the light's elements (point samples)
    rows = [net.index["A_line"], net.n_e + net.index["R_vline"]] + \
        [net.index[b.sense] for b in case.builds]
    nw = len(rows)
    stress_at = []
    for b in case.builds:
        stress_at.append(len(rows))
        rows += [net.index[c] for c in b.caps] + [net.index[r] for r in b.resistors] + \
            [net.n_e + net.index[r] for r in b.resistors]
    outs = _light_outputs(case)
    light_at = len(rows)
    rows += [_row(net, name, kind) for name, kind in outs]
    ex = expand(eng, tr, rows)
    # the mean products read (rms values, powers), computed together: they share each
    # segment's pair integrals
    ex.mean_products([(0, 1), (0, 0), (1, 1)] + [(2 + k, 2 + k) for k in range(len(loads))]
                     + ([(s0 + j, s0 + j) for b, s0 in zip(case.builds, stress_at, strict=True)
                         for j in range(len(b.caps))]
                        + [(s0 + len(b.caps) + j, s0 + len(b.caps) + len(b.resistors) + j)
                           for b, s0 in zip(case.builds, stress_at, strict=True)
                           for j in range(len(b.resistors))] if extras else []))
    Y = ex.at_rows(light_at, len(outs), ts) if outs else np.zeros((0, n))
    col = {o: i for i, o in enumerate(outs)}
    seg_state = _segment_states(tr, ts)
    coef = ex.fourier(eng.src.omega, MAX_ORDER, nw)
    means = corrected_samples(ex.cell_means(n, nw), coef, period)
    vline = means[1]
    v_peak = functools.cache(lambda: ex.peak(1))  # read when first asked for
    fig = figures(ex, 0, 1, coef[1], coef[0], f, v_peak)
    wf = SolvedWaveform(means[0], fs, f, voltage_v=vline, cycles=period, label="dimmer input",
                        figures=fig)
    flags = set()
    if period > 1:
        flags.add("subharmonic")
    if nolatch:
        flags.add("no-latch")
    if dimmer.kind == "leading-edge" and dimmer.uses_triac:
        if any(k > 1 for k in fires):
            flags.add("re-fire")
        wants = (cond_set is None and (dimmer.knob or 0) > 0) or (cond_set or 0) > 0
        if wants and any(c < 1e-3 for c in measured):
            flags.add("misfire")
    pos = measured[0::2]
    neg = measured[1::2]
    if abs(np.mean(pos) - np.mean(neg)) > 5.0 and max(measured) > 1:
        flags.add("asymmetric")
    dimmer_off = max(measured) < 1e-3
    groups = []
    for k, (b, g, p) in enumerate(zip(case.builds, loads, gparams, strict=True)):
        m = b.m
        gfig = figures(ex, 2 + k, 1, coef[1], coef[2 + k], f, v_peak, scale=1.0 / m,
                       v_rms_v=lambda: fig.v_rms_v)
        gw = SolvedWaveform(means[2 + k] / m, fs, f, voltage_v=vline, cycles=period,
                            label=f"{g.model} {g.power_w:g} W", figures=gfig)
        # extras=False: the light's normalisation (a reference solve) waits until it is
        # read, except when the glow-when-off flag needs it now
        led, light = _light(case, b, g, p, Y, col, seg_state, ts, supply, period, levels[k],
                            reference, deferred=not extras and not dimmer_off)
        s0, nc, nr = stress_at[k], len(b.caps), len(b.resistors)
        caps = res = None
        if extras:
            caps = tuple((c.removeprefix(b.prefix),
                          float(np.sqrt(max(ex.mean_product(s0 + j, s0 + j), 0.0))) / m)
                         for j, c in enumerate(b.caps))
            res = tuple((r.removeprefix(b.prefix),
                         ex.mean_product(s0 + nc + j, s0 + nc + nr + j) / m)
                        for j, r in enumerate(b.resistors))
        inrush = _inrush(supply, dimmer, dp, loads, gparams, levels, k) if extras else None
        st = Stresses(lambda gfig=gfig: gfig.i_peak_a, inrush, caps, res)  # type: ignore[arg-type]
        if "conv" in b.extra:
            ia = [i for i, a in enumerate(eng.automata) if isinstance(a, ConverterUVLO)
                  and a.el == b.extra["conv"]][0]
            running = seg_state.automaton(ia, bool, dtype=bool)
            if not running.all() and not dimmer_off:
                flags.add("drop-out")
        if dimmer_off and np.max(light) > 1e-3:
            flags.add("glow-when-off")
        pub = tuple((kk, v) for kk, v in p.items() if not kk.startswith("_"))
        groups.append(GroupResult(g, pub, gw, led, light, st))
    # (the peaks are searched for when read: a search over finite states finds a finite
    # peak)
    for arr in [wf.current_a, coef, np.array([fig.i_rms_a, fig.p_w])] + \
            [gr.led_current_a for gr in groups] + \
            [gr.__dict__["_deferred_light"] for gr in groups
             if not callable(gr.__dict__["_deferred_light"])]:
        if not np.all(np.isfinite(arr)):
            raise ConvergenceError("the solution holds non-finite values; the solver failed")
    return Solution(wf, tuple(groups), tuple(fl for fl in FLAGS if fl in flags), period, ok,
                    iters, measured, fires, tuple(sorted(dp.items())))


class _SegmentStates:
    """The discrete states of a trajectory's segments and, for each (ascending) sample
    time, the index of the segment that holds it: per-sample values of a function of the
    discrete state cost one evaluation per segment."""

    def __init__(self, tr, ts) -> None:
        self.tr = tr
        ends = tr.seg_times()[1][:-1]
        self.idx = np.searchsorted(ends, ts, side="right")

    def automaton(self, ia: int, fn=lambda s: s, dtype=float) -> np.ndarray:
        """``fn`` of automaton ``ia``'s state at every sample."""
        per_seg = np.array([fn(st) for st in self.tr.states(ia)], dtype=dtype)
        return per_seg[self.idx]


def _segment_states(tr, ts) -> _SegmentStates:
    return _SegmentStates(tr, ts)


def _light(case, b, g, p, Y, col, seg_state, ts, supply, period, level, reference,
           deferred=False):
    """LED current and light of one lamp; with ``deferred`` the light of a model that
    needs the reference solve for its normalisation is a callable computing it."""
    m = b.m
    f = supply.frequency_hz
    if b.light == "filament":
        r = b.resistors[0]
        pw = Y[col[(r, "i")]] * Y[col[(r, "v")]] / m
        light = _thermal_light(pw, g.power_w, p["tau_thermal_s"], f, period)
        return np.sqrt(np.maximum(pw, 0) / p["r_ohm"]), light
    if b.light in ("converter", "pwm"):
        ia = [i for i, a in enumerate(case.eng.automata) if isinstance(a, ConverterUVLO)
              and a.el == b.extra["conv"]][0]
        running = seg_state.automaton(ia, lambda s: 1.0 if s else 0.0)
        if b.light == "pwm":
            fp = p["pwm_frequency_hz"]
            duty = level
            on = ((ts * fp) % 1.0) < duty
            light = running * on
        else:
            light = running
        return p["i_led_a"] * light, light.astype(float)
    if b.light == "pfc":
        # two-stage driver: the output stage holds the LED current steady at the set level
        lv = np.full(ts.size, level * min(1.0, p.get("_power_ratio", 1.0)))
        return lv * 0.85 * g.power_w / 36.0, lv
    # LED power through a string element (dropper), a tapped regulator or a DC load
    if b.light == "tap":
        ia = [i for i, a in enumerate(case.eng.automata) if isinstance(a, TapLevels)
              and a.el == b.led][0]
        lit = seg_state.automaton(ia, lambda s: b.extra["lit"][s])
        i_led = Y[col[(b.led, "i")]] / m
        p_led = i_led * lit * b.extra["vseg"]
    elif b.light == "dc-load":
        r = b.prefix + "R_load"
        i_led = Y[col[(r, "i")]] / m
        p_led = i_led * Y[col[(r, "v")]]
    else:
        i_led = Y[col[(b.led, "i")]] / m
        p_led = i_led * Y[col[(b.led, "v")]]
    # light is emitted power: the off-state leakage of a string element can make a sample's
    # product a hair below zero, which is no light, not negative light
    p_led = np.maximum(p_led, 0.0)
    if reference:
        return i_led, p_led
    key = (supply.v_rms_v, f, g.model, g.power_w, g.params)
    if not deferred:
        return i_led, p_led / _reference_led_power(*key)

    def normalised():
        light = p_led / _reference_led_power(*key)
        if not np.all(np.isfinite(light)):
            raise ConvergenceError("the solution holds non-finite values; the solver failed")
        return light

    return i_led, normalised


@functools.lru_cache(maxsize=128)
def _reference_led_power(v, f, model, power_w, params) -> float:
    """Mean LED power of the lamp alone on its rated sinusoidal supply, undimmed [W]."""
    ref = _solve_cached(Supply(v, f, 0.0, 0.0), DimmerSpec("none"),
                        (LoadGroup(model, power_w, 1, params),), 1024, False, True)
    assert isinstance(ref, float)
    if not ref > 0:
        raise ConvergenceError(f"{model}: the lamp gives no light on its rated supply; check "
                               "its parameters")
    return ref


def _inrush(supply, dimmer, dp, loads, gparams, levels, k) -> float:
    """Largest input current of one lamp of group ``k`` when everything is switched on at
    the voltage crest with discharged capacitors (the dimmer fully on) [A]."""
    case = _build(supply, dimmer, dp, loads, gparams, levels, inrush=True, grid=8192)
    eng = case.eng
    T = eng.T1
    disc = (tuple([False] * len(case.net.diodes)), tuple(a.initial for a in eng.automata))
    tr = eng.run(T / 4, T / 2, np.zeros(case.net.n_x), disc, record=True)
    ex = expand(eng, tr, [case.net.index[case.builds[k].sense]])
    return ex.peak(0) / case.builds[k].m
