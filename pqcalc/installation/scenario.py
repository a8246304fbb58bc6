"""One scenario: solve every circuit, sum, interact with the supply, build the results.

The ideal-supply pass is always made and kept; with supply interaction on and a source
impedance known, :func:`~pqcalc.installation.interaction.settle` gives the interacting
result, and the ideal one stays beside it.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import replace

import numpy as np

from ..metrics import harmonic_loss_factor, k_factor, thd
from .cases import CaseResult, CaseSolver, PanelVoltage
from .checks import circuit_checks, node_checks, pcc_checks, rules_of
from .interaction import (
    FINISH_CURRENT,
    Interaction,
    ideal_voltage,
    node_voltages,
    own_frame,
    resonance_order,
    settle,
)
from .model import Circuit, Installation, Panel
from .results import UNSETTLED, Check, CircuitResult, NodeResult, ScenarioResult
from .sums import InstallationSums, NodeSum, line_result, neutral_result, sum_installation

__all__ = ["solve_pass", "evaluate_scenario"]

SETTLE_METHOD = ("Newton's method on the node voltages with the circuits' harmonic transfers "
                 "(harmonic domain)")

Progress = Callable[[int], None]


def solve_pass(inst: Installation, solver: CaseSolver, scenario: int,
               voltages: dict[str, PanelVoltage | None] | None = None,
               progress: Progress | None = None
               ) -> tuple[dict[str, CaseResult], InstallationSums]:
    """Every circuit's case at a scenario (under ``voltages`` per circuit id, None: the
    ideal supply) and the sums they make."""
    solver.prefetch([(c, scenario, None if voltages is None else voltages[c.id])
                     for c in inst.circuits])
    cases = {}
    for c in inst.circuits:
        cases[c.id] = solver.case(c, scenario, None if voltages is None else voltages[c.id])
        if progress is not None:
            progress(1)
    return cases, sum_installation(inst, {k: (v.current_a, v.cycles, v.p_w)
                                          for k, v in cases.items()})


def _circuit_result(inst: Installation, solver: CaseSolver, c: Circuit, cs: CaseResult,
                    scenario: int, v: PanelVoltage | None,
                    memo: dict[tuple[int, PanelVoltage | None], tuple]) -> CircuitResult:
    key = (id(cs), v)
    hit = memo.get(key)
    if hit is None:  # identical circuits share a case object: its figures once
        ph = cs.phasors
        m = np.abs(ph)
        i_rms = float(np.sqrt(np.mean(cs.current_a**2)))
        i1 = float(m[1])
        delta = 0.0 if v is None else v.delta_rad
        dpf = float(np.cos(delta - np.angle(ph[1]))) if i1 > 0 else None
        v_rms = inst.supply.voltage_ln_v if v is None else v.v_rms_v
        pf = cs.p_w / (v_rms * i_rms) if i_rms > 0 else None
        hit = (m, i_rms, i1, float(np.max(np.abs(cs.current_a))),
               float(thd(m, 40)) if i1 > 0 else 0.0, pf, dpf)
        memo[key] = hit
    m, i_rms, i1, i_peak, thd_i, pf, dpf = hit
    cond, knob = c.setting(scenario)
    inrush, fixtures = solver.inrush(c, scenario)
    checks, peak, mx = circuit_checks(inst, rules_of(inst), c, cs, i_rms, inrush, fixtures)
    return CircuitResult(c.id, c.panel, c.line, cond if c.dimmer != "none" else None, knob,
                         i_rms, i1, i_peak, thd_i, cs.p_w, pf, dpf, peak,
                         cs.flags, checks, mx, cs.notes, m)


def _node_result(inst: Installation, name: str, kind: str, node: NodeSum, cycles: int,
                 vmap: dict[tuple[str, str, str], np.ndarray] | None,
                 panel: Panel | None = None, left_out: tuple[str, ...] = ()) -> NodeResult:
    sup = inst.supply
    lines = {}
    for ln in sup.lines:
        v = ideal_voltage(inst, ln) if vmap is None else vmap[(kind, name, ln)]
        lines[ln] = line_result(node.line(ln), cycles, v, node.p[ln])
    max_line = max(r.i_rms_a for r in lines.values())
    neutral = None
    if sup.system != "single-phase":
        neutral = neutral_result(node.neutral, cycles, max_line)
    mw = lines[max(lines, key=lambda k: lines[k].i_rms_a)].magnitudes_a
    kf = float(k_factor(mw)) if mw[1] > 0 else 1.0
    fhl = float(harmonic_loss_factor(mw)) if mw[1] > 0 else 1.0
    return NodeResult(name, kind, lines, neutral,
                      node_checks(inst, kind, lines, neutral, kf, fhl, panel, left_out), kf, fhl,
                      left_out)


def _assemble(inst: Installation, solver: CaseSolver, scenario: int,
              cases: dict[str, CaseResult],
              sums: InstallationSums, iterations: int, interacting: bool) -> ScenarioResult:
    """Results of one pass. Every node's voltage (panels, feeder ends, the service) is the
    supply's EMF less the drops its currents make over the source and feeder impedances,
    wherever an impedance is known; circuits are reported on the voltage they were solved
    under (their panel's in the interacting pass, the stiff supply's in the ideal pass)."""
    cyc = sums.cycles
    vmap = node_voltages(inst, sums) if inst.has_source_impedance else None
    memo: dict[tuple[int, PanelVoltage | None], tuple] = {}
    circuits = []
    for p in inst.panels:
        for c in p.circuits:
            v = (own_frame(inst, c.line, vmap[("panel", p.id, c.line)])
                 if interacting and vmap else None)
            circuits.append(_circuit_result(inst, solver, c, cases[c.id], scenario, v, memo))
    # circuits without a solution are missing from the totals of every node above them
    gone = {p.id: tuple(c.id for c in p.circuits if "no-solution" in cases[c.id].flags)
            for p in inst.panels}
    pres = tuple(_node_result(inst, p.id, "panel", sums.panels[p.id], cyc, vmap, p, gone[p.id])
                 for p in inst.panels)
    fres = tuple(_node_result(inst, f, "feeder", sums.feeders[f], cyc, vmap, None,
                              tuple(x for p in inst.panels if p.feeder == f for x in gone[p.id]))
                 for f in inst.feeders)
    tres = _node_result(inst, "service", "transformer", sums.total, cyc, vmap, None,
                        tuple(x for p in inst.panels for x in gone[p.id]))
    extra: list[Check] = list(pcc_checks(inst, sums.total, cyc))
    if inst.has_source_impedance:
        extra.append(resonance_check(inst, solver))
    return ScenarioResult(inst.scenario_name(scenario), tuple(circuits), pres, fres, tres,
                          iterations, None, tuple(extra))


def resonance_check(inst: Installation, solver: CaseSolver) -> Check:
    """The parallel resonance of the fixtures' input (EMI) capacitors with the source
    inductance, seen at the service: a warning when it falls within the orders assessed
    (50), where it amplifies the harmonic voltages."""
    h_r, c_f = resonance_order(inst, solver.shunt_capacitance_f())
    src = ("parallel resonance of shunt capacitance and source inductance, h_r = 1 / (w1 "
           "sqrt(L C)) (IEEE Std 519-2014, 10.6; the drivers' EMI capacitors: model values)")
    if not np.isfinite(h_r):
        return Check("capacitor resonance", "info", "no source inductance or no input "
                     "capacitance: no parallel resonance", src)
    msg = (f"the fixtures' input capacitance, {1e6 * c_f:.1f} uF on the most loaded line, "
           f"resonates with the source's line-to-neutral inductance near order {h_r:.1f} "
           f"({h_r * inst.supply.frequency_hz:.0f} Hz)")
    if h_r <= 50:
        return Check("capacitor resonance", "warn", msg + ": harmonic voltages near that "
                     "order are amplified; confirm with the utility and the drivers' maker",
                     src, h_r, 50.0, "order", {"c_per_line_f": c_f}, bound="min")
    return Check("capacitor resonance", "info", msg + ", above the orders assessed", src, h_r,
                 50.0, "order", {"c_per_line_f": c_f}, bound="min")


def _named(ids: Sequence[str], most: int) -> str:
    """``a, b, c and 4 more``: the first ``most`` ids of a list for a message."""
    return ", ".join(ids[:most]) + (f" and {len(ids) - most} more" if len(ids) > most else "")


def _jump_text(fp: Interaction) -> str:
    """The circuits that changed firing pattern during the iteration, for a warning."""
    if not fp.jumps:
        return ""
    big = sorted(fp.jumps, key=lambda j: -j[1])
    names = _named([cid for cid, _ in big], 6)
    return (f"; {len(big)} {'circuit changes' if len(big) == 1 else 'circuits change'} "
            f"firing pattern under the distortion (the current lands up to "
            f"{100 * big[0][1]:.0f} % of its fundamental away from the smooth answer): {names}")


def evaluate_scenario(inst: Installation, solver: CaseSolver, scenario: int,
                      progress: Progress | None = None) -> ScenarioResult:
    """Solve, sum and check one scenario; with supply interaction, the ideal-supply result
    is kept as ``ideal``."""
    cases, sums = solve_pass(inst, solver, scenario, None, progress)
    solver.prefetch_inrush(inst.circuits, scenario)  # on the workers, if any
    ideal = _assemble(inst, solver, scenario, cases, sums, 0, False)
    if not (inst.analysis.supply_interaction and inst.has_source_impedance):
        return ideal
    def one_pass(at: dict[str, PanelVoltage | None]
                 ) -> tuple[dict[str, CaseResult], InstallationSums]:
        solver.retain(at.values())  # the cache holds one pass's cases, not every pass's
        return solve_pass(inst, solver, scenario, at, progress)

    fp = settle(inst, one_pass, cases, sums)
    opts = inst.analysis
    if progress is not None:  # the passes this scenario did not need (progress_units)
        progress(len(inst.circuits) * (opts.max_iterations - (fp.iterations - 1)))
    if fp.diverged:
        # no interacting figures: the ideal-supply result stands, and says why
        h_r, c_f = resonance_order(inst, solver.shunt_capacitance_f())
        why = (f"; the fixtures' input capacitance ({1e6 * c_f:.0f} uF on the most loaded line) "
               f"resonates with the source inductance near order {h_r:.0f}, which amplifies "
               "the harmonic voltages there" if h_r <= 60 else "")
        if fp.worst is not None:
            kind, n, ln, h = fp.worst
            where = "the service" if kind == "transformer" else f"the end of feeder {n}"
            why += f"; the largest mismatch was at order {h} at {where}, line {ln}"
        why += _jump_text(fp)
        warn = Check("supply interaction", "warn",
                     f"the supply-interaction iteration diverged (the mismatch grew to "
                     f"{100 * fp.change:.2f} % of V1 after {fp.iterations} iterations){why}: "
                     "the figures are the ideal-supply ones (the panel voltages are the drops "
                     "the ideal-supply currents make, without the loads' answer to them); " + (
                         "the circuits named are at the edge of a firing pattern: check those "
                         "dimmer and lamp pairs (minimum load, holding current) with their "
                         "makers" if fp.jumps else
                         "check the resonance with the utility and the drivers' maker")
                     + ", or run with supply_interaction = false",
                     SETTLE_METHOD, fp.change, opts.tolerance, "-", {"resonance_order": h_r})
        return replace(ideal, checks=ideal.checks + (warn,), basis=UNSETTLED)
    res = _assemble(inst, solver, scenario, fp.cases, fp.sums, fp.iterations, True)
    extra = res.checks
    if fp.change >= opts.tolerance:
        extra = extra + (Check(
            "supply interaction", "warn",
            f"the panel voltages had not settled after {fp.iterations} iterations (mismatch "
            f"{100 * fp.change:.3f} % of V1, tolerance {100 * opts.tolerance:.3f} %): the "
            f"interacting figures are approximate{_jump_text(fp)}; raise "
            "analysis.max_iterations" + (", and check the circuits named (minimum load, "
                                         "holding current) with the makers" if fp.jumps else ""),
            SETTLE_METHOD, fp.change, opts.tolerance, "-"),)
    if fp.corrected:
        nc = len(fp.corrected)
        extra = extra + (Check(
            "supply interaction", "info",
            f"the last step moved {nc} {'circuit' if nc == 1 else 'circuits'} by little: "
            f"{'its current is its' if nc == 1 else 'their currents are their'} last solve "
            "corrected through the harmonic transfer (first order, expected error below "
            f"{100 * FINISH_CURRENT:.1f} % of I1 per order and "
            f"{100 * fp.corrected_error:.4f} % of V1), not solved again",
            SETTLE_METHOD, fp.corrected_error, opts.tolerance, "-",
            {"corrected": list(fp.corrected)}),)
    if fp.held:
        names = _named(fp.held, 8)
        extra = extra + (Check(
            "supply interaction", "warn",
            f"{len(fp.held)} {'circuit has' if len(fp.held) == 1 else 'circuits have'} no "
            "steady firing pattern near the settled panel voltages (the current changed "
            "pattern twice under changes of the voltage far too small for a smooth answer): "
            f"{names}; held in the pattern last solved, with up to "
            f"{100 * fp.held_mismatch:.3f} % of V1 between their terminals and their panel; "
            "their figures are one of the patterns they alternate between, and such a "
            "dimmer and lamp pair is likely to flicker on this supply: check it (minimum "
            "load, holding current) with the makers",
            SETTLE_METHOD, fp.held_mismatch, opts.tolerance, "-",
            {"held": list(fp.held)}),)
    return ScenarioResult(res.name, res.circuits, res.panels, res.feeders, res.transformer,
                          fp.iterations, ideal, extra, "interacting supply")

