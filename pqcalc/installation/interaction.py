"""Source impedance and supply interaction: the panel voltages the load currents make.

The source impedance per line is a resistance in series with an inductance, given directly,
from transformer data (kVA, %Z, X/R) or from the short-circuit current at the panel (and
X/R). Harmonic currents flowing through it drop harmonic voltages:
``V_h = E_h - Z_line(h) I_line,h - Z_neutral(h) I_N,h`` with ``Z(h) = R + j h w L``.
Resistance is taken as independent of frequency (skin effect neglected: it would raise R at
high orders and lower the drop's phase angle slightly).
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from ..spectrum import phasor_samples, rotate_phasors
from .cases import CaseResult, PanelVoltage, turn_transfer
from .model import LINE_ANGLES_DEG, Installation, SourceImpedance
from .sums import MAX_ORDER, InstallationSums, sum_installation

__all__ = [
    "from_transformer",
    "from_short_circuit",
    "harmonic_impedance",
    "voltage_drop",
    "ideal_voltage",
    "node_voltages",
    "own_frame",
    "Interaction",
    "settle",
    "resonance_order",
]


def _split(z_ohm: float, x_over_r: float, frequency_hz: float) -> tuple[float, float]:
    if not x_over_r >= 0:
        raise InputError(f"x_over_r: expected a non-negative ratio, got {x_over_r}")
    r = z_ohm / np.sqrt(1 + x_over_r**2)
    return float(r), float(r * x_over_r / (2 * np.pi * frequency_hz))


def from_transformer(
    kva: float, impedance_pct: float, x_over_r: float, v_ln_v: float, frequency_hz: float,
    lines: int = 3,
) -> SourceImpedance:
    """Per-line impedance of a transformer [ohm, H] from its rating.

    ``Z = z% / 100 * V_LN^2 / (S / lines)``: for a three-phase unit this is the usual
    ``V_LL^2 / S`` base. For a split-phase (two-line) unit it refers each half winding to half
    the rating, an approximation: the half-winding impedance of real units differs (common
    practice uses 1.5 to 2 times the full-winding value for line-to-neutral faults).

    References
    ----------
    IEEE Std 141-1993 (Red Book), ch. 4 (per-unit impedance of transformers).
    """
    for name, v in (("kva", kva), ("impedance_pct", impedance_pct), ("v_ln_v", v_ln_v)):
        if not (np.isfinite(v) and v > 0):
            raise InputError(f"transformer.{name}: expected a positive number, got {v}")
    z = impedance_pct / 100.0 * v_ln_v**2 / (kva * 1e3 / lines)
    r, l_h = _split(z, x_over_r, frequency_hz)
    return SourceImpedance(r, l_h)


def from_short_circuit(
    isc_a: float, x_over_r: float, v_ln_v: float, frequency_hz: float
) -> SourceImpedance:
    """Per-line impedance from the prospective short-circuit current at the panel:
    ``|Z| = V_LN / I_sc`` split by X/R."""
    if not (np.isfinite(isc_a) and isc_a > 0):
        raise InputError(f"short_circuit_a: expected a positive current, got {isc_a}")
    r, l_h = _split(v_ln_v / isc_a, x_over_r, frequency_hz)
    return SourceImpedance(r, l_h)


def harmonic_impedance(r_ohm: float, l_h: float, frequency_hz: float, max_order: int) -> np.ndarray:
    """``Z(h) = R + j h w L`` for orders 0..max_order [ohm] (order 0: R)."""
    h = np.arange(max_order + 1)
    return r_ohm + 1j * h * 2 * np.pi * frequency_hz * l_h


def voltage_drop(
    z: SourceImpedance, line_phasors: np.ndarray, neutral_phasors: np.ndarray | None,
    frequency_hz: float,
) -> np.ndarray:
    """Harmonic voltage drop on the line-to-neutral voltage of one line [V rms phasors].

    ``dV_h = Z_line(h) I_line,h + Z_N(h) I_N,h`` where both currents are RMS phasors on the
    same reference, the line current flowing to the load and the neutral current returning.
    Subtract it from the source EMF to get the voltage at the panel.
    """
    p = np.asarray(line_phasors, dtype=complex)
    top = p.size - 1
    dv = harmonic_impedance(z.r_ohm, z.l_h, frequency_hz, top) * p
    if neutral_phasors is not None:
        dv = dv + harmonic_impedance(z.neutral_r_ohm, z.neutral_l_h, frequency_hz, top) * np.asarray(
            neutral_phasors, dtype=complex
        )
    return dv


# ------------------------------------------------------------------ supply interaction
def ideal_voltage(inst: Installation, line: str) -> np.ndarray:
    """The stiff supply's voltage phasors of ``line`` on the L1 reference [V rms]."""
    v = np.zeros(MAX_ORDER + 1, dtype=complex)
    v[1] = inst.supply.voltage_ln_v * np.exp(
        1j * np.radians(LINE_ANGLES_DEG[inst.supply.system][line]))
    return v


def _loop(inst: Installation, feeder: str | None) -> tuple[float, float]:
    """Loop impedance (line + neutral) of the source and a panel's feeder [ohm], [H]."""
    z = inst.supply.impedance
    r, l_h = z.r_ohm + z.neutral_r_ohm, z.l_h + z.neutral_l_h
    if feeder is not None:
        zf = inst.feeders[feeder].impedance
        r, l_h = r + zf.r_ohm + zf.neutral_r_ohm, l_h + zf.l_h + zf.neutral_l_h
    return round(r, 9), round(l_h, 12)


def _drops(inst: Installation, tot_l: Mapping[str, np.ndarray], tot_n: np.ndarray,
           fdr: Mapping[str, tuple[Mapping[str, np.ndarray], np.ndarray]]
           ) -> dict[tuple[str, str, str], np.ndarray]:
    """The service's and the feeder ends' voltages (L1 frame) [V rms phasors] from the
    line and neutral current phasors through the service (``tot_l``, ``tot_n``) and each
    feeder (``fdr``: id -> (lines, neutral))."""
    sup = inst.supply
    f = sup.frequency_hz
    out = {}
    for ln in tot_l:
        out[("transformer", "service", ln)] = ideal_voltage(inst, ln) - voltage_drop(
            sup.impedance, tot_l[ln], tot_n, f)
    for fid, (fl, fn) in fdr.items():
        for ln in tot_l:
            out[("feeder", fid, ln)] = out[("transformer", "service", ln)] - voltage_drop(
                inst.feeders[fid].impedance, fl[ln], fn, f)
    return out


def node_voltages(inst: Installation, sums: InstallationSums
                  ) -> dict[tuple[str, str, str], np.ndarray]:
    """Harmonic voltage at each panel, feeder end and the service, per line (L1 frame)
    [V rms phasors], from the drops over the source and feeder impedances. Keys are
    (kind, node id, line) with kind ``"panel"``, ``"feeder"`` or ``"transformer"`` (the
    service, id ``"service"``)."""
    tot_l, tot_n = sums.total.phasors(sums.cycles)
    out = _drops(inst, tot_l, tot_n,
                 {k: v.phasors(sums.cycles) for k, v in sums.feeders.items()})
    for p in inst.panels:
        for ln in tot_l:
            out[("panel", p.id, ln)] = (out[("transformer", "service", ln)] if p.feeder is None
                                        else out[("feeder", p.feeder, ln)])
    return out


#: Quantisation of a solve's source harmonics: fraction of V1 and angle [deg]. Circuits
#: whose sources differ by less share one solve.
HARMONIC_STEP = 1e-5
ANGLE_STEP_DEG = 0.1
#: A circuit whose current lands further than JUMP_FRACTION of its fundamental (at any
#: order) from the linear prediction of its harmonic transfer, and whose solved state's
#: discrete pattern changed (:attr:`CaseResult.pattern`: a triac that fires once more or
#: once less per half cycle, drops out, misfires), has changed its firing pattern: a jump,
#: not a smooth response (a small capacitor-input lamp's current can move by a fifth of
#: its fundamental for a 0.2 % harmonic at order 39, smoothly). A jump also explains most
#: of the change itself (more than JUMP_SHARE of it), which a smooth circuit's error of
#: linearisation after a large step does not (about a fifth of the change, measured on the
#: demos' rectifier lamps). A
#: circuit that jumps HOLD_AFTER times has no steady firing pattern near these voltages:
#: it is held (its source kept, its current a fixed injection) so that the rest can settle.
JUMP_FRACTION = 0.25
JUMP_SHARE = 0.5
HOLD_AFTER = 2
#: A circuit whose EMF would move by less than SKIP_STEP times the tolerance (a fraction of
#: V1) keeps its solve: its mismatch stays below the tolerance, and is measured as it is
#: at the next pass like every other (late passes re-solve only what still moves).
SKIP_STEP = 0.25
#: A circuit whose linear prediction is expected to land within STAND_IN times the
#: tolerance of its solve (the error of its last linear prediction, grown with the square of
#: the step) is not re-solved in a pass: its current is that prediction (a stand-in) until
#: a pass that may be the last, which solves every circuit that moved (see settle).
STAND_IN = 0.1
#: After a pass that solved every circuit, a circuit whose error of linearisation over its
#: next step is expected below FINISH times the tolerance (its last measured error per step,
#: scaled linearly with the step: a harmonic transfer holding the events' times errs in
#: proportion to the step where an event time moves, so this overstates the quadratic part)
#: is not re-solved: its current is its last solve corrected through its harmonic transfer
#: (first order). When the mismatch of that pass, measured on the circuits solved in it, is
#: below the tolerance, the iteration ends there and those corrections are its result
#: (Newton's method ending on a step: measured on the campus demo, the corrections landed
#: within a tenth of the tolerance of the solves they replace).
FINISH = 0.1
#: and whose current's error so expected is below FINISH_CURRENT of its fundamental at
#: every order (a capacitor-input lamp's highest orders answer a voltage step least
#: linearly)
FINISH_CURRENT = 1e-3


log = logging.getLogger(__name__)


def _quantise(x: float, step: float) -> float:
    return round(round(x / step) * step, 12)


def own_frame(inst: Installation, line: str, v: np.ndarray,
              loop: tuple[float, float] = (0.0, 0.0)) -> PanelVoltage:
    """A line's voltage phasors (L1 frame) as the source of a solve in the line's own frame.
    Harmonics below 1e-4 of V1 are left out; fractions and angles are rounded (5 digits,
    0.1 deg) so that nearly equal voltages share one solve."""
    own = rotate_phasors(v, -np.radians(LINE_ANGLES_DEG[inst.supply.system][line]))
    v1 = abs(own[1])
    delta = float(np.angle(own[1]))
    orders = np.arange(2, MAX_ORDER + 1)
    ratios = (np.abs(own[2:]) / v1).tolist()
    angles = np.degrees(np.angle(own[2:]) - orders * delta).tolist()
    harm = []
    for h, r, a in zip(orders.tolist(), ratios, angles, strict=True):
        if r > 1e-4:
            harm.append((h, _quantise(r, HARMONIC_STEP), _quantise(a % 360.0, ANGLE_STEP_DEG)))
    return PanelVoltage(float(v1), tuple(harm), delta, loop[0], loop[1])


@dataclass(frozen=True)
class Interaction:
    """The settled state of one scenario: the cases and sums under the settled voltages."""

    cases: dict[str, CaseResult]
    sums: InstallationSums
    iterations: int
    #: the largest mismatch left between the node voltages the circuits were solved under
    #: and those their currents make [fraction of V1]
    change: float
    #: the mismatch grew instead of shrinking (the iteration was stopped)
    diverged: bool = False
    #: the largest mismatch after every pass [fraction of V1]
    history: tuple[float, ...] = ()
    #: where the last mismatch was largest: (kind, node id, line, order), the node as
    #: :func:`node_voltages` keys it (``"transformer", "service"`` or ``"feeder", id``)
    worst: tuple[str, str, str, int] | None = None
    #: circuits whose current jumped away from its linear prediction in a pass (a change of
    #: firing pattern): (id, the largest jump [fraction of I1])
    jumps: tuple[tuple[str, float], ...] = ()
    #: the voltage phasors the last pass's currents make at every node
    #: (:func:`node_voltages`, L1 frame) [V rms]
    voltages: dict[tuple[str, str, str], np.ndarray] | None = None
    #: circuits held in the pattern last solved after jumping HOLD_AFTER times (no steady
    #: firing pattern of their own near the settled voltages), and the largest mismatch
    #: their terminals were left with [fraction of V1]
    held: tuple[str, ...] = ()
    held_mismatch: float = 0.0
    #: circuits whose current is their last solve corrected through their harmonic
    #: transfer over the last step (first order, see FINISH), and the largest error of
    #: linearisation expected of them [fraction of V1]
    corrected: tuple[str, ...] = ()
    corrected_error: float = 0.0


def _real(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``z -> A z + B conj(z)`` as a real matrix on ``[Re z; Im z]``."""
    return np.block([[a.real + b.real, b.imag - a.imag], [a.imag + b.imag, a.real - b.real]])


def _drop_operator(z: SourceImpedance, lines: int, frequency_hz: float) -> np.ndarray:
    """The voltage drop of a shared impedance as a real matrix on the stacked line currents
    (orders 1..MAX_ORDER per line): ``dV_l,h = Z_l(h) I_l,h + Z_N(h) sum_l' I_l',h``."""
    zl = harmonic_impedance(z.r_ohm, z.l_h, frequency_hz, MAX_ORDER)[1:]
    zn = harmonic_impedance(z.neutral_r_ohm, z.neutral_l_h, frequency_hz, MAX_ORDER)[1:]
    d = np.kron(np.eye(lines), np.diag(zl)) + np.kron(np.ones((lines, lines)), np.diag(zn))
    return _real(d, np.zeros_like(d))


def _transfer(c: CaseResult, angle_rad: float) -> np.ndarray | None:
    """A case's harmonic transfer turned to the L1 frame (orders 1..MAX_ORDER) as a real
    matrix; None without one."""
    if c.transfer is None:
        return None
    a, b = turn_transfer(c.transfer, c.turn_rad + angle_rad)
    return _real(a[1:, 1:], b[1:, 1:])


def _admittance(c: CaseResult, angle_rad: float, zloop: np.ndarray | None) -> np.ndarray:
    """A case's terminal admittance (L1 frame, orders 1..MAX_ORDER, real form): its transfer
    ``T`` from the source's EMF made ``T (1 - Z_loop T)^-1`` where the loop was in its solve
    (its terminals see the EMF less the loop's drop)."""
    t = _transfer(c, angle_rad)
    assert t is not None
    if zloop is not None:
        m = MAX_ORDER
        zr = _real(np.diag(zloop[1:]), np.zeros((m, m)))
        t = np.linalg.solve((np.eye(2 * m) - zr @ t).T, t.T).T
    # single precision, as the transfer it comes from: a Jacobian
    return t.astype(np.float32)


def _stack(z: np.ndarray) -> np.ndarray:
    return np.concatenate([z[1:].real, z[1:].imag])


def _unstack(x: np.ndarray) -> np.ndarray:
    m = x.size // 2
    return np.concatenate([[0.0], x[:m] + 1j * x[m:]])


def _voltages_of(inst: Installation, cur: Mapping[str, np.ndarray],
                 where: Mapping[str, tuple[tuple[str, str], str]]
                 ) -> dict[tuple[str, str, str], np.ndarray]:
    """The service's and the feeder ends' voltages (:func:`node_voltages`' keys) from the
    circuits' current phasors (L1 frame) summed, instead of from the waveform sums."""
    lines = inst.supply.lines
    zero = np.zeros(MAX_ORDER + 1, dtype=complex)
    per: dict[tuple[str, str], dict[str, np.ndarray]] = {}
    for cid, (n, ln) in where.items():
        at = per.setdefault(n, {k: zero for k in lines})
        at[ln] = at[ln] + cur[cid]
    tot = {ln: sum((v[ln] for v in per.values()), zero) for ln in lines}
    fdr = {}
    for fid in inst.feeders:
        fl = per.get(("feeder", fid), {k: zero for k in lines})
        fdr[fid] = (fl, sum(fl.values(), zero))
    return _drops(inst, tot, sum(tot.values(), zero), fdr)


def settle(inst: Installation,
           solve_pass: Callable[[dict[str, PanelVoltage | None]],
                                tuple[dict[str, CaseResult], InstallationSums]],
           cases: dict[str, CaseResult], sums: InstallationSums) -> Interaction:
    """The panel voltages and the currents they draw, consistent with each other: Newton's
    method in the harmonic domain, each circuit's harmonic transfer its Jacobian.

    Every circuit is solved with the loop impedance of the source and its feeder (line and
    neutral) in series, so that its own switching meets that impedance exactly, under the
    EMF ``x_c`` that makes its terminal voltage ``u_c = x_c - Z_loop I_c`` its node's (the
    service or its feeder's end; every panel on a feeder sees its end). The mismatch of a
    circuit, ``F_c = u_c - G_n``, is what its terminals saw less what the currents make at
    its node (:func:`node_voltages`, orders 1..MAX_ORDER). Its current answers a change at its
    terminals through its terminal admittance ``Y_c = T_c (1 - Z_loop T_c)^-1``, ``T_c`` the
    transfer from its EMF (:mod:`pqcalc.circuits.smallsignal`, the fundamental's column made
    whole by :func:`~pqcalc.installation.cases.with_fundamental`). Newton's step asks every
    terminal to land on its node's new voltage, ``du_c = dG_n - F_c``, where
    ``dG = -D sum_c Y_c du_c`` over the shared impedances ``D``: per node
    ``(1 + D J) dG = D sum_c Y_c F_c`` with ``J = sum_c Y_c``. The network's tree shape
    (feeders off one service) reduces it to one small dense system per feeder and one for
    the service (a Schur complement). The next EMF is ``x_c = G_n + dG_n + Z_loop (I_c + Y_c
    du_c)``. Circuits that are the same case on the same node and line share their EMF and
    their solve. Where every circuit answers smoothly the mismatch falls quadratically; a
    circuit that lands far from its linear prediction has changed its firing pattern (a
    jump) and is named; one that jumps again (it has no steady firing pattern near these
    voltages: it alternates) is held in the pattern last solved, its source kept and its
    current a fixed injection, so that the rest can settle around it; the result says so.
    The first step starts from the stiff-supply pass (no loop in those solves: their
    transfer is their terminal admittance). A circuit whose EMF would move by less than
    ``SKIP_STEP`` of the tolerance keeps its solve. A circuit whose last linear prediction
    erred little for its step (the error, as a voltage over its loop, grown with the square
    of the step, below ``STAND_IN`` of the tolerance) is not re-solved: its linear
    prediction stands in for its current (inexact Newton), and the node voltages are those
    the circuits' currents make (:func:`node_voltages` on their sum). The first step solves
    one circuit of each stiff-supply case (its probe, the one whose terminals move most);
    the others stand in until the probe's error, per order and per square step, says how
    far their own steps may go without a solve. A pass that may be the
    last (the mismatch below the tolerance, every circuit's expected error below it, or the
    last allowed) solves every circuit that moves, and the mismatch is measured again on
    solved currents only. After such a pass, a circuit whose next step is small (its error
    of linearisation, measured in that pass and scaled linearly with the step, below
    ``FINISH`` of the tolerance and ``FINISH_CURRENT`` of its fundamental) is corrected
    through its harmonic transfer instead of solved again; when the mismatch is then below
    the tolerance the iteration ends there, and those corrections are the result (named in
    ``corrected``, their waveforms and powers moved by the change, :func:`_corrected`):
    Newton's method ending on a step, as it usually does. No other prediction is ever in
    the result.

    It stops when the mismatch is below ``analysis.tolerance`` [fraction of V1] on every
    circuit, after ``analysis.max_iterations`` passes, or when it grows twice in a row
    (``diverged``; a pass that holds a circuit does not count as growing).

    References
    ----------
    J. Arrillaga, N. R. Watson, *Power System Harmonics*, 2nd ed., Wiley 2003, ch. 6 and 7
    (the harmonic domain, Newton's method with the loads' harmonic Norton equivalents; from
    memory); E. Mollerstedt, B. Bernhardsson, IEEE Control Systems 20(4), 2000 (harmonic
    transfer matrices of switched circuits).
    """
    opts = inst.analysis
    sup = inst.supply
    f = sup.frequency_hz
    lines = list(sup.lines)
    nl = len(lines)
    m = MAX_ORDER
    angles = {ln: np.radians(LINE_ANGLES_DEG[sup.system][ln]) for ln in lines}
    # a network node as node_voltages keys it: the service, or a feeder's end (every panel
    # on a feeder sees its end)
    service = ("transformer", "service")
    where = {c.id: (service if p.feeder is None else ("feeder", p.feeder), c.line)
             for p in inst.panels for c in p.circuits}
    loops = {c.id: _loop(inst, p.feeder) for p in inst.panels for c in p.circuits}
    nodes = [service] + [("feeder", fid) for fid in inst.feeders]
    d_s = _drop_operator(sup.impedance, nl, f)
    d_f = {fid: _drop_operator(fd.impedance, nl, f) for fid, fd in inst.feeders.items()}
    eye_n = np.eye(2 * nl * m)
    # a line's rows in a node's stacked vector (real parts, then imaginary parts)
    sel = {ln: np.r_[i * m:(i + 1) * m, nl * m + i * m:nl * m + (i + 1) * m]
           for i, ln in enumerate(lines)}
    hw = harmonic_impedance(0.0, 1.0, f, m)  # j h w
    zloop = {lp: lp[0] + lp[1] * hw for lp in set(loops.values())}
    # what each circuit's terminals saw in the pass just solved (the ideal pass: the
    # stiff supply, no loop in the solve)
    u0 = {cid: ideal_voltage(inst, ln) for cid, (_n, ln) in where.items()}
    u = dict(u0)
    # circuits of one stiff-supply case (one solve, shared) are one family: the first step
    # solves one of each (its probe, the one that moves most) and lets the others stand in;
    # the probe's error of linearisation, per order and per square step [A], is the family's
    family = {cid: id(cases[cid]) for cid in where}
    family_miss: dict[int, np.ndarray] = {}
    history: list[float] = []
    jumps: dict[str, float] = {}
    times: dict[str, int] = {}
    held: set[str] = set()
    prev: dict[str, np.ndarray] = {}
    shape: dict[str, tuple] = {}
    worst = None
    change = float("inf")
    predicted: dict[str, np.ndarray] = {}
    x: dict[str, np.ndarray] = {}
    # the EMF each circuit was last solved under (x differs for a stand-in), the step
    # of that solve [fraction of V1], and its error of linearisation grown with the square
    # of the step, as a voltage over the loop [V per (fraction of V1)^2]
    xs: dict[str, np.ndarray] = {}
    step: dict[str, float] = {}
    curvature: dict[str, float] = {}
    # the same error per step, scaled linearly [V per fraction of V1] (see FINISH)
    rate: dict[str, float] = {}
    # and as a current, per fundamental [per fraction of V1]
    rate_i: dict[str, float] = {}
    stand: set[str] = set()
    # the stand-ins of this pass are corrections that may end the iteration (FINISH), and
    # the largest error expected of them [fraction of V1]
    finishing = False
    finish_error = 0.0
    fresh: set[str] = set()
    growing: list[bool] = []
    held_mismatch = 0.0
    ys_kept: dict[tuple, tuple[object, np.ndarray]] = {}
    it = 0
    for it in range(1, opts.max_iterations + 1):  # noqa: B007 (reported after the loop)
        if it > 1:
            # (a circuit still standing in for its stiff-supply solve keeps that solve)
            at = {cid: own_frame(inst, where[cid][1], xs[cid], loops[cid]) if cid in xs
                  else None for cid in where}
            cases, sums = solve_pass(at)
        cur = {cid: predicted[cid] if cid in stand else
               rotate_phasors(cases[cid].phasors, angles[ln])
               for cid, (_n, ln) in where.items()}
        u = {cid: x[cid] - zloop[loops[cid]] * cur[cid] if cid in x else u0[cid]
             for cid in where}
        # circuits that did not land where their transfer said: a change of firing pattern
        new_holds = False
        jumped = 0
        rated = set()  # circuits whose error of linearisation was measured in this pass
        for cid, pred in predicted.items():
            if cid in stand:
                continue  # its current is this prediction
            miss = np.abs(cur[cid] - pred)
            if cid in fresh and step[cid] > 0:
                err_v = float(np.max(miss * np.abs(zloop[loops[cid]])))
                curvature[cid] = err_v / step[cid] ** 2
                rate[cid] = err_v / step[cid]
                rate_i[cid] = float(np.max(miss)) / max(abs(pred[1]), 1e-12) / step[cid]
                rated.add(cid)
                family_miss.setdefault(family[cid], miss / step[cid] ** 2)
            i1 = abs(pred[1])
            err = float(np.max(miss))
            moved = float(np.max(np.abs(cur[cid] - prev[cid])))
            if i1 > 0 and err > JUMP_FRACTION * i1 and err > JUMP_SHARE * moved and \
                    cases[cid].pattern != shape[cid]:
                jumps[cid] = max(err / i1, jumps.get(cid, 0.0))
                jumped += 1
                times[cid] = times.get(cid, 0) + 1
                if times[cid] >= HOLD_AFTER:
                    held.add(cid)
                    new_holds = True
        if log.isEnabledFor(logging.DEBUG) and predicted:
            errs = sorted(((float(np.max(np.abs(cur[c] - predicted[c]))), c,
                            int(np.argmax(np.abs(cur[c] - predicted[c]))),
                            float(np.max(np.abs(cur[c] - prev[c]))))
                           for c in predicted if c not in stand),
                          reverse=True)
            log.debug("largest prediction errors [A] (error, circuit, order, change): %s",
                      [(round(e, 4), c, k, round(mv, 4)) for e, c, k, mv in errs[:8]])
        prev = cur
        shape = {cid: cases[cid].pattern for cid in where}
        # the voltages the currents make: from the sums where every current is solved,
        # else from the currents (stand-ins' predictions included)
        g = node_voltages(inst, sums) if not stand else _voltages_of(inst, cur, where)
        gn = {(n, ln): g[n + (ln,)] for n in nodes for ln in lines}
        mis = {cid: u[cid] - gn[nln] for cid, nln in where.items()}
        size = {cid: float(np.max(np.abs(r[1:]))) / abs(u[cid][1]) for cid, r in mis.items()}
        free = [cid for cid in where if cid not in held]
        change, worst = 0.0, None
        if free:
            top = max(free, key=lambda cid: size[cid])
            change = size[top]
            n, ln = where[top]
            worst = n + (ln, 1 + int(np.argmax(np.abs(mis[top][1:]))))
        held_mismatch = max((size[cid] for cid in held), default=0.0)
        history.append(change)
        log.debug("pass %d: mismatch %.3g of V1 at %s; %d jumped in this pass, %d held, "
                  "%d stand-ins", it, change, worst, jumped, len(held), len(stand))
        growing[:] = growing[-1:] + [len(history) >= 2 and history[-1] > history[-2]
                                     and not new_holds]
        if (change < opts.tolerance and (not stand or finishing)) or \
                it == opts.max_iterations:
            break
        # every current of this pass was solved (none stood in)
        full = not stand
        # a pass that may be the last solves every circuit (no stand-ins)
        confirm = change < opts.tolerance or it + 1 == opts.max_iterations
        if all(growing) and len(growing) == 2:
            return Interaction(cases, sums, it, change, True, tuple(history), worst,
                               tuple(jumps.items()), g, tuple(sorted(held)), held_mismatch)
        # each distinct circuit's terminal admittance (identical circuits share it)
        # (keyed by the solve's transfer, which its turned copies share, and kept from pass
        # to pass with a reference to it, so that an id is never reused while kept)
        ys: dict[tuple, tuple[object, np.ndarray]] = {}
        yc: dict[str, np.ndarray | None] = {}
        for cid, (_n, ln) in where.items():
            tr = cases[cid].transfer
            if tr is None or cid in held:
                yc[cid] = None
                continue
            # (the loop was in the solve of a circuit solved since the stiff-supply pass)
            looped = cid in xs
            key = (id(tr), cases[cid].turn_rad, ln, loops[cid] if looped else None)
            if key not in ys:
                ys[key] = ys_kept.get(key) or (tr, _admittance(
                    cases[cid], angles[ln], zloop[loops[cid]] if looped else None))
            yc[cid] = ys[key][1]
        ys_kept = ys
        jac = {n: np.zeros((2 * nl * m, 2 * nl * m)) for n in nodes}
        inj = {n: np.zeros(2 * nl * m) for n in nodes}
        for cid, (n, ln) in where.items():
            y = yc[cid]
            if y is None:
                continue
            jac[n][np.ix_(sel[ln], sel[ln])] += y
            inj[n][sel[ln]] += y @ _stack(mis[cid])
        # feeders: (1 + D_f J_f) dG_f = dG_s + D_f s_f; the service:
        # (1 + D_s J_s + D_s sum_f K_f) dG_s = D_s (s_s + sum_f (s_f - K_f D_f s_f)),
        # K_f = J_f (1 + D_f J_f)^-1 (the feeders eliminated: a Schur complement)
        lhs = eye_n + d_s @ jac[service]
        rhs = inj[service].copy()
        mats = {}
        for n in nodes[1:]:
            fid = n[1]
            mf = eye_n + d_f[fid] @ jac[n]
            kf = np.linalg.solve(mf.T, jac[n].T).T
            mats[n] = mf
            lhs = lhs + d_s @ kf
            rhs = rhs + inj[n] - kf @ (d_f[fid] @ inj[n])
        dg = {service: np.linalg.solve(lhs, d_s @ rhs)}
        for n, mf in mats.items():
            dg[n] = np.linalg.solve(mf, dg[service] + d_f[n[1]] @ inj[n])
        predicted = {}
        kept = 0
        fresh = set()
        moving: dict[str, tuple[np.ndarray, float, float]] = {}
        for cid, (n, ln) in where.items():
            dgc = _unstack(dg[n][sel[ln]])
            du = dgc - mis[cid]
            pred = cur[cid].copy()
            if yc[cid] is not None:
                pred = pred + _unstack(yc[cid] @ _stack(du))
                predicted[cid] = pred
            if cid in held and cid in x:
                stand.discard(cid)
                x[cid] = xs[cid]
                continue  # held: its source stays, and so does its solve
            new = gn[(n, ln)] + dgc + zloop[loops[cid]] * pred
            new[0] = 0.0
            v1 = abs(new[1])
            s_c = float(np.max(np.abs(new - xs[cid]))) / v1 if cid in xs else np.inf
            if s_c < SKIP_STEP * opts.tolerance:
                kept += 1
                stand.discard(cid)
                x[cid] = xs[cid]
                continue  # a step far below the tolerance: its solve stands
            # a circuit not yet solved in the loop steps from its stiff-supply solve: its
            # terminals' whole step
            moving[cid] = (new, s_c, float(np.max(np.abs(gn[(n, ln)] + dgc - u0[cid]))) / v1)
        def expected(cid: str, s_c: float, s_u: float) -> float:
            """The error of linearisation expected after the step [V over the loop]."""
            if cid in xs:
                return curvature[cid] * s_c**2 if cid in curvature else np.inf
            fm = family_miss.get(family[cid])
            return np.inf if fm is None else float(
                np.max(fm * np.abs(zloop[loops[cid]]))) * s_u**2

        # the next pass is expected to settle (every circuit's error of linearisation, grown
        # with the square of its step, below the tolerance; unknown where never solved in
        # the loop): it solves every circuit, so that it may be the last
        if not confirm:
            confirm = all(expected(cid, s_c, s_u) < opts.tolerance * abs(new[1])
                          for cid, (new, s_c, s_u) in moving.items())
        first = not xs  # the first step: one probe per family
        # after a pass that solved every circuit, and smoothly, the next may end the
        # iteration with the circuits whose step is small standing in (FINISH)
        finishing = full and not first and not jumped and not new_holds and \
            it + 1 < opts.max_iterations
        finish_error = 0.0
        probes = set()
        if first:
            most: dict[int, tuple[float, str]] = {}
            for cid, (_new, _s_c, s_u) in moving.items():
                if s_u > most.get(family[cid], (-1.0, ""))[0]:
                    most[family[cid]] = (s_u, cid)
            probes = {cid for _s, cid in most.values()}
        for cid, (new, s_c, s_u) in moving.items():
            x[cid] = new
            if finishing:
                e_c = rate[cid] * s_c / abs(new[1]) if (
                    yc[cid] is not None and cid in rated) else np.inf
                if e_c < FINISH * opts.tolerance and rate_i[cid] * s_c < FINISH_CURRENT:
                    stand.add(cid)  # corrected through its transfer; may be the result
                    finish_error = max(finish_error, e_c)
                    continue
            elif not confirm and yc[cid] is not None and cid not in probes and (
                    first or
                    expected(cid, s_c, s_u) < STAND_IN * opts.tolerance * abs(new[1])):
                stand.add(cid)  # its linear prediction stands in for a solve
                continue
            stand.discard(cid)
            xs[cid] = new
            # the first solve in the loop steps from the stiff supply: its terminals' step
            step[cid] = s_c if np.isfinite(s_c) else s_u
            fresh.add(cid)
        log.debug("%d circuits keep their solve (a step below %g of the tolerance), "
                  "%d stand in by their linear prediction, %d are solved", kept, SKIP_STEP,
                  len(stand), len(fresh))
    if stand:  # ended on corrections (FINISH): they are the result
        cases = dict(cases)
        for cid in stand:
            # (its current in the pass, cur, was its prediction; its case is its last solve)
            solved = rotate_phasors(cases[cid].phasors, angles[where[cid][1]])
            cases[cid] = _corrected(cases[cid], cur[cid] - solved, angles[where[cid][1]],
                                    u[cid], cur[cid], xs[cid] - zloop[loops[cid]] * solved,
                                    solved)
        sums = sum_installation(inst, {k: (v.current_a, v.cycles, v.p_w)
                                       for k, v in cases.items()})
        g = node_voltages(inst, sums)
    return Interaction(cases, sums, it, change, False, tuple(history), worst,
                       tuple(jumps.items()), g, tuple(sorted(held)), held_mismatch,
                       tuple(sorted(stand)), finish_error if stand else 0.0)


def _corrected(c: CaseResult, delta: np.ndarray, angle_rad: float, u_new: np.ndarray,
               i_new: np.ndarray, u_old: np.ndarray, i_old: np.ndarray) -> CaseResult:
    """A solve's result moved by the current change ``delta`` (phasors, L1 frame) its
    harmonic transfer predicts for a small step of its terminal voltage: the change added to
    its waveform as sinusoids, and to its mean power the change of ``Re sum_h U_h I_h*``
    from (``u_old``, ``i_old``) to (``u_new``, ``i_new``) (orders 1..MAX_ORDER; what the
    solve holds above them is kept). Its light, flags and lamps' figures are the solve's
    (they move by the step's order, a fraction of the tolerance)."""
    own = rotate_phasors(delta, -angle_rad)
    own[0] = 0.0
    x = c.current_a + phasor_samples(own, c.current_a.size, c.cycles)
    dp = float(np.sum((u_new[1:] * np.conj(i_new[1:])).real)
               - np.sum((u_old[1:] * np.conj(i_old[1:])).real))
    return replace(c, current_a=x, p_w=c.p_w + dp)


def resonance_order(inst: Installation, shunt_c_f: Mapping[str, float]) -> tuple[float, float]:
    """The order of the parallel resonance between the fixtures' shunt (EMI) capacitance
    of the most loaded line [F] and the source's line-to-neutral loop inductance [H]:
    ``h_r = 1 / (w1 sqrt(L C))``; (inf, C) without inductance or capacitance.

    References
    ----------
    IEEE Std 519-2014, 10.6 (resonance of shunt capacitance with the system inductance;
    the usual estimate ``h_r = sqrt(S_sc / Q_c)`` is the same formula).
    """
    z = inst.supply.impedance
    l_h = z.l_h + z.neutral_l_h
    c = max(shunt_c_f.values(), default=0.0)
    if l_h <= 0 or c <= 0:
        return float("inf"), c
    return 1.0 / (2 * np.pi * inst.supply.frequency_hz * float(np.sqrt(l_h * c))), c
