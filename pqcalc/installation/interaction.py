"""Source impedance and supply interaction: the panel voltages the load currents make.

The source impedance per line is a resistance in series with an inductance, given directly,
from transformer data (kVA, %Z, X/R) or from the short-circuit current at the panel (and
X/R). Harmonic currents flowing through it drop harmonic voltages:
``V_h = E_h - Z_line(h) I_line,h - Z_neutral(h) I_N,h`` with ``Z(h) = R + j h w L``.
Resistance is taken as independent of frequency (skin effect neglected: it would raise R at
high orders and lower the drop's phase angle slightly).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..spectrum import rotate_phasors
from .cases import CaseResult, PanelVoltage
from .model import LINE_ANGLES_DEG, Installation, SourceImpedance
from .sums import MAX_ORDER, InstallationSums

__all__ = [
    "from_transformer",
    "from_short_circuit",
    "harmonic_impedance",
    "voltage_drop",
    "ideal_voltage",
    "circuit_sources",
    "node_voltages",
    "own_frame",
    "Interaction",
    "fixed_point",
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


def circuit_sources(inst: Installation, cases: Mapping[str, CaseResult],
                    sums: InstallationSums) -> dict[str, np.ndarray]:
    """The Thevenin EMF each circuit sees at its panel (L1 frame) [V rms phasors].

    The loop impedance of the source and feeder (line and neutral) goes into the circuit's
    own solve, so a circuit's own switching transients meet the impedance exactly; the drop
    that the *other* circuits' currents cause across the shared impedances distorts its EMF:
    ``E_c = E - Z_tr (I_tr - I_c) - Z_trN (I_trN - I_c) - Z_f (I_f - I_c) - Z_fN (I_fN - I_c)``.
    """
    sup = inst.supply
    f = sup.frequency_hz
    angles = LINE_ANGLES_DEG[sup.system]
    tot_l, tot_n = sums.total.phasors(sums.cycles)
    fdr = {k: v.phasors(sums.cycles) for k, v in sums.feeders.items()}
    out = {}
    for p in inst.panels:
        for c in p.circuits:
            ic = rotate_phasors(cases[c.id].phasors, np.radians(angles[c.line]))
            ln = c.line
            v = ideal_voltage(inst, ln) - voltage_drop(sup.impedance, tot_l[ln] - ic,
                                                       tot_n - ic, f)
            if p.feeder is not None:
                fl, fn = fdr[p.feeder]
                v = v - voltage_drop(inst.feeders[p.feeder].impedance, fl[ln] - ic, fn - ic, f)
            out[c.id] = v
    return out


def node_voltages(inst: Installation, sums: InstallationSums
                  ) -> dict[tuple[str, str, str], np.ndarray]:
    """Harmonic voltage at each panel, feeder end and the service, per line (L1 frame)
    [V rms phasors], from the drops over the source and feeder impedances. Keys are
    (kind, node id, line) with kind ``"panel"``, ``"feeder"`` or ``"transformer"`` (the
    service, id ``"service"``)."""
    sup = inst.supply
    f = sup.frequency_hz
    tot_l, tot_n = sums.total.phasors(sums.cycles)
    fdr = {k: v.phasors(sums.cycles) for k, v in sums.feeders.items()}
    out = {}
    for ln in tot_l:
        out[("transformer", "service", ln)] = ideal_voltage(inst, ln) - voltage_drop(
            sup.impedance, tot_l[ln], tot_n, f)
    for fid, (fl, fn) in fdr.items():
        for ln in tot_l:
            out[("feeder", fid, ln)] = out[("transformer", "service", ln)] - voltage_drop(
                inst.feeders[fid].impedance, fl[ln], fn, f)
    for p in inst.panels:
        for ln in tot_l:
            out[("panel", p.id, ln)] = (out[("transformer", "service", ln)] if p.feeder is None
                                        else out[("feeder", p.feeder, ln)])
    return out


#: Quantisation of a solve's source harmonics: fraction of V1 and angle [deg]. Circuits
#: whose sources differ by less share one solve (identical circuits on the three lines of a
#: balanced panel see the same voltage in their own frames).
HARMONIC_STEP = 1e-5
ANGLE_STEP_DEG = 0.1
#: A circuit whose current moves by more than JUMP_FRACTION of its fundamental (at any
#: order) from one pass to the next, and by more than JUMP_GAIN times the change of its EMF
#: (both as fractions, of I1 and V1), has changed its firing pattern (a triac that re-fires
#: once more or once less per half cycle): a jump, not a smooth response (a bulk-capacitor
#: lamp's harmonic currents move by about 20 times a voltage harmonic's fraction).
JUMP_FRACTION = 0.25
JUMP_GAIN = 200.0
#: Damping of the fixed-point step (1 = undamped) and the number of earlier steps
#: Anderson's method combines (0 = plain damped substitution). Eight steps, not three: a
#: panel of rectifier loads at the end of a long feeder (the campus demo's RES-B2 alone)
#: diverged with three and settles in 11 iterations with eight (SPC-1: 15 -> 9); the demos
#: that settle within four iterations are unchanged.
RELAX = 0.8
MEMORY = 8


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
    harm = []
    for h in range(2, MAX_ORDER + 1):
        r = abs(own[h]) / v1
        if r > 1e-4:
            harm.append((h, _quantise(float(r), HARMONIC_STEP),
                         _quantise(float(np.degrees(np.angle(own[h]) - h * delta)) % 360.0,
                                   ANGLE_STEP_DEG)))
    return PanelVoltage(float(v1), tuple(harm), delta, loop[0], loop[1])


@dataclass(frozen=True)
class Interaction:
    """The fixed point of one scenario: the cases and sums under the settled voltages."""

    cases: dict[str, CaseResult]
    sums: InstallationSums
    iterations: int
    change: float
    #: the updates grew instead of shrinking (the iteration was stopped)
    diverged: bool = False
    #: the largest update of every iteration [fraction of V1]
    history: tuple[float, ...] = ()
    #: where the last update was largest: (circuit id, order)
    worst: tuple[str, int] | None = None
    #: circuits whose current jumped between two passes (a change of firing pattern):
    #: (id, the largest jump [fraction of I1])
    jumps: tuple[tuple[str, float], ...] = ()


def fixed_point(inst: Installation,
                solve_pass: Callable[[dict[str, PanelVoltage]],
                                     tuple[dict[str, CaseResult], InstallationSums]],
                cases: dict[str, CaseResult], sums: InstallationSums,
                relax: float | None = None, memory: int | None = None) -> Interaction:
    """Fixed point on the circuits' source EMFs ``E = G(E)``, starting from the
    ideal-supply currents, with Anderson acceleration.

    ``G`` solves every circuit under its EMF and returns the EMFs the new currents make.
    Plain substitution converges slowly or not at all where dimmed circuits respond
    strongly to the distortion; Anderson's method (type II, the last ``memory`` steps,
    damped by ``relax``) takes the combination of recent steps that minimises the
    residual: ``E_{k+1} = E_k + b f_k - (dE + b dF) gamma`` with ``gamma`` the least-squares
    solution of ``dF gamma = f_k``, ``f = G(E) - E``. It stops when the update is below
    ``analysis.tolerance`` [fraction of V1] on every circuit, after
    ``analysis.max_iterations``, or when two updates in a row grow (``diverged``).

    References
    ----------
    D. G. Anderson, "Iterative procedures for nonlinear integral equations", J. ACM 12(4),
    547-560, 1965; H. F. Walker and P. Ni, "Anderson acceleration for fixed-point
    iterations", SIAM J. Numer. Anal. 49(4), 1715-1735, 2011.
    """
    opts = inst.analysis
    beta = RELAX if relax is None else relax
    m = MEMORY if memory is None else memory
    line_of = {c.id: c.line for c in inst.circuits}
    loops = {c.id: _loop(inst, p.feeder) for p in inst.panels for c in p.circuits}
    src = circuit_sources(inst, cases, sums)
    ids = list(src)
    scale = np.array([abs(src[cid][1]) for cid in ids])

    def pack(d: dict[str, np.ndarray]) -> np.ndarray:
        z = np.stack([d[cid] / s for cid, s in zip(ids, scale, strict=True)])
        return np.concatenate([z.real.ravel(), z.imag.ravel()])

    def unpack(x: np.ndarray) -> dict[str, np.ndarray]:
        n = x.size // 2
        z = (x[:n] + 1j * x[n:]).reshape(len(ids), -1)
        return {cid: z[k] * scale[k] for k, cid in enumerate(ids)}

    x = pack(src)
    xs: list[np.ndarray] = []
    fs: list[np.ndarray] = []
    history: list[float] = []
    change = float("inf")
    it = 0
    jumps: dict[str, float] = {}
    worst: tuple[str, int] | None = None
    last = x
    for it in range(1, opts.max_iterations + 1):  # noqa: B007 (reported after the loop)
        cur = unpack(x)
        at = {cid: own_frame(inst, line_of[cid], v, loops[cid]) for cid, v in cur.items()}
        before = cases
        cases, sums = solve_pass(at)
        # how far each circuit's EMF moved for this pass [fraction of V1]: the first pass
        # from the stiff supply, the others from the pass before
        dx = np.abs(x - last) if it > 1 else np.abs(x - pack({
            cid: ideal_voltage(inst, line_of[cid]) for cid in ids}))
        half = dx.size // 2
        moved = np.max(np.hypot(dx[:half], dx[half:]).reshape(len(ids), -1), axis=1)
        last = x
        for k, cid in enumerate(ids):
            a, b = before[cid].phasors, cases[cid].phasors
            i1 = abs(a[1])
            jump = float(np.max(np.abs(b - a))) / i1 if i1 > 0 else 0.0
            if jump > JUMP_FRACTION and jump > JUMP_GAIN * moved[k]:
                jumps[cid] = max(jump, jumps.get(cid, 0.0))
        g = pack(circuit_sources(inst, cases, sums))
        f = g - x
        fz = np.abs(f[:half] + 1j * f[half:]).reshape(len(ids), -1)
        change = float(np.max(fz))
        kw, hw = np.unravel_index(int(np.argmax(fz)), fz.shape)
        worst = (ids[int(kw)], int(hw))
        history.append(change)
        if change < opts.tolerance:
            break
        if len(history) >= 3 and history[-1] > history[-2] > history[-3]:
            # two growing updates in a row: not converging (a resonance, or circuits that
            # change their firing pattern); more iterations cost many solves and would
            # only report a wrong number
            return Interaction(cases, sums, it, change, True, tuple(history), worst,
                               tuple(jumps.items()))
        xs.append(x)
        fs.append(f)
        xs, fs = xs[-(m + 1):], fs[-(m + 1):]
        if len(fs) > 1:
            dF = np.stack([fs[k + 1] - fs[k] for k in range(len(fs) - 1)], axis=1)
            dX = np.stack([xs[k + 1] - xs[k] for k in range(len(xs) - 1)], axis=1)
            gamma = np.linalg.lstsq(dF, f, rcond=None)[0]
            x = x + beta * f - (dX + beta * dF) @ gamma
        else:
            x = x + beta * f
    return Interaction(cases, sums, it, change, False, tuple(history), worst,
                       tuple(jumps.items()))


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
