"""Ideal-supply harmonic voltages at the panels against an independent network solver, OpenDSS.

pqcalc gives each node's voltage as the supply EMF less the drops ``Z_line(h) I_line,h +
Z_N(h) I_N,h`` over the source (transformer) and feeder impedances
(:func:`pqcalc.installation.interaction.node_voltages`). Here the same installation is built
as a four-wire circuit in OpenDSS (EPRI's Distribution System Simulator, through the
DSS-Extensions engine of ``dss-python``) and solved by its nodal admittance solver:

* the supply: the circuit's Vsource on bus ``src``, made stiff (Z1 = Z0 = 1e-9 ohm) at the
  installation's line-to-neutral voltage and frequency; ground (node 0) is the transformer's
  star point, the reference of pqcalc's EMF;
* the transformer: one Reactor per line from ``src`` to the service bus ``svc`` with the
  source's R [ohm] and L (``LmH`` [mH]), and one for the neutral from ground to ``svc``'s
  neutral node when the source has a neutral impedance (otherwise that neutral is ground);
* each feeder: one Reactor per line and one for its neutral, ``svc`` to the feeder's bus;
* each panel: on its feeder's bus (or on ``svc``), one single-phase ISource per line from
  the line node to the neutral node carrying the panel's summed line current of the order.

Only the panels' line currents go in (their RMS phasors, L1 frame, from pqcalc's ideal-pass
sums). Feeder and service currents, the neutral currents and every voltage are OpenDSS's:
the check covers the summing of panels into feeders and the service, the neutral as the sum
of the lines, the impedances' frequency scaling (OpenDSS turns ``LmH`` into a reactance at
the solution frequency itself) and the sign and frame conventions of the drops.

One solve per order rather than OpenDSS's harmonic mode: the solution frequency is set to
``h * f`` and every ISource is edited to the order's magnitude, angle and frequency. An
OpenDSS source injects only when its ``Frequency`` equals the solution frequency (engine
behaviour checked by the fundamental solve here: the Vsource's EMF appears at ``f`` and
nowhere else), so the supply EMF is zero at ``h >= 2`` as in pqcalc's ideal supply. This
avoids harmonic mode's spectrum objects, whose angles OpenDSS re-references to the
fundamental and turns by ``h`` times the source angle, and its monitor bookkeeping.
OpenDSS's phasors are RMS, as pqcalc's; both sides use one basis (pqcalc's sine basis goes in
and comes out), which a linear network preserves.

Line-to-neutral voltage at a node = V(line node) - V(neutral node), both to ground.

Tolerance: every order 2..50 of every line at every node within 1 % of the largest harmonic
voltage at that node (the acceptance figure of the check); the two are expected to agree to
rounding, so the 1 % is margin, not slack for a known difference. The fundamental's drop
(EMF - V1) is held to 1 % of the largest line's drop at that node. DC (order 0) is left out:
OpenDSS does not solve at 0 Hz.

References
----------
OpenDSS (EPRI), the DSS language's Vsource, Reactor (R, LmH, Bus1/Bus2 with node 0 as
ground) and ISource (Amps, Angle, Frequency, Bus1/Bus2: the current is injected into Bus1)
elements, as listed in the DSS-Extensions property reference (dss_capi
``docs/dss_properties.md``) and in the engine's own property help.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from pqcalc.installation.cases import CaseSolver
from pqcalc.installation.file import load_installation
from pqcalc.installation.interaction import node_voltages
from pqcalc.installation.model import Installation, SourceImpedance
from pqcalc.installation.scenario import solve_pass
from pqcalc.installation.sums import MAX_ORDER

dss = pytest.importorskip("dss")

DEMOS = ("harbour_school", "cedar_row_offices")
#: Share of the largest harmonic voltage at a node that any order may differ by (the check's
#: acceptance figure).
TOLERANCE = 0.01
#: An order whose largest panel line current is below this share of the largest fundamental
#: is not solved (its OpenDSS voltage is zero); pqcalc's voltage there must still be within
#: the tolerance of zero.
NEGLIGIBLE = 1e-9
#: The stiff Vsource's impedance [ohm] (R, and X at f scaled to h f): it adds about
#: 1e-9 h ohm to each line, parts in 1e7 of the demos' transformer impedance.
STIFF_OHM = 1e-9


def _num(x: float) -> str:
    return f"{x:.17g}"


@dataclass
class OpenDssNetwork:
    """An installation's supply as one OpenDSS circuit, solved one order at a time.

    ``lines`` are the line names in node order (node k + 1 for ``lines[k]``); each bus's
    neutral is node ``len(lines) + 1``, or ground (node 0) at the service when the source
    has no neutral impedance.
    """

    engine: object
    frequency_hz: float
    lines: tuple[str, ...]
    buses: dict[str, str]            # node key ("service" or a feeder id) -> bus name
    neutral_node: dict[str, int]     # bus name -> its neutral node
    panel_bus: dict[str, str]        # panel id -> bus name
    sources: dict[tuple[str, str], str]  # (panel id, line) -> ISource name

    @classmethod
    def build(cls, engine, frequency_hz: float, v_ln_v: float, lines: tuple[str, ...],
              source: SourceImpedance, feeders: Mapping[str, SourceImpedance],
              panel_feeder: Mapping[str, str | None]) -> OpenDssNetwork:
        def cmd(s: str) -> None:
            engine.Text.Command = s

        nn = len(lines) + 1

        def branch(name: str, a: str, b: str, r_ohm: float, l_h: float) -> None:
            # one conductor: R in series with L; OpenDSS gives X = 2 pi f L at the solve's f
            cmd(f"new reactor.{name} phases=1 bus1={a} bus2={b} R={_num(r_ohm)} "
                f"LmH={_num(1e3 * l_h)}")

        cmd("clear")
        cmd(f"set DefaultBaseFrequency={_num(frequency_hz)}")
        cmd(f"new circuit.pqcheck bus1=src phases=3 basekv={_num(np.sqrt(3) * v_ln_v / 1e3)} "
            f"pu=1 angle=0 frequency={_num(frequency_hz)} "
            f"Z1=[{STIFF_OHM} {STIFF_OHM}] Z0=[{STIFF_OHM} {STIFF_OHM}]")
        for k in range(len(lines)):
            branch(f"tr{k + 1}", f"src.{k + 1}", f"svc.{k + 1}", source.r_ohm, source.l_h)
        svc_n = 0
        if source.neutral_r_ohm > 0 or source.neutral_l_h > 0:
            svc_n = nn
            branch("trn", "src.0", f"svc.{nn}", source.neutral_r_ohm, source.neutral_l_h)
        buses = {"service": "svc"}
        neutral = {"svc": svc_n}
        for j, (fid, z) in enumerate(feeders.items()):
            bus = f"fdr{j}"
            buses[fid] = bus
            neutral[bus] = nn
            for k in range(len(lines)):
                branch(f"f{j}_{k + 1}", f"svc.{k + 1}", f"{bus}.{k + 1}", z.r_ohm, z.l_h)
            branch(f"f{j}_n", f"svc.{svc_n}", f"{bus}.{nn}", z.neutral_r_ohm, z.neutral_l_h)
        panel_bus = {}
        sources = {}
        for i, (pid, fid) in enumerate(panel_feeder.items()):
            bus = buses["service"] if fid is None else buses[fid]
            panel_bus[pid] = bus
            for k, ln in enumerate(lines):
                # Bus1 (receives the injection) is the neutral, Bus2 the line: the current
                # leaves the line node and returns by the neutral, the direction of pqcalc's
                # load currents
                name = f"p{i}_{k + 1}"
                sources[(pid, ln)] = name
                cmd(f"new isource.{name} phases=1 bus1={bus}.{neutral[bus]} bus2={bus}.{k + 1} "
                    f"amps=0 angle=0 frequency={_num(frequency_hz)}")
        return cls(engine, frequency_hz, lines, buses, neutral, panel_bus, sources)

    def solve(self, order: int, currents: Mapping[str, Mapping[str, complex]]
              ) -> dict[str, dict[str, complex]]:
        """Line-to-neutral voltage [V rms phasor] of each line at each bus for the panel
        line currents ``currents[panel][line]`` [A rms phasors] of one order."""
        e = self.engine
        f = order * self.frequency_hz
        for (pid, ln), name in self.sources.items():
            i = complex(currents[pid][ln])
            e.Text.Command = (f"edit isource.{name} amps={_num(abs(i))} "
                              f"angle={_num(np.degrees(np.angle(i)))} frequency={_num(f)}")
        sol = e.ActiveCircuit.Solution
        sol.Frequency = f
        sol.Solve()
        assert sol.Converged, f"OpenDSS did not converge at order {order}"
        out = {}
        for bus, n_node in self.neutral_node.items():
            v = self.bus_voltages(bus)
            vn = v.get(n_node, 0j)
            out[bus] = {ln: v[k + 1] - vn for k, ln in enumerate(self.lines)}
        return out

    def bus_voltages(self, bus: str) -> dict[int, complex]:
        ckt = self.engine.ActiveCircuit
        ckt.SetActiveBus(bus)
        raw = np.asarray(ckt.ActiveBus.Voltages, dtype=float)
        return {0: 0j} | {int(n): complex(raw[2 * m], raw[2 * m + 1])
                          for m, n in enumerate(ckt.ActiveBus.Nodes)}


@pytest.fixture(scope="module")
def engine():
    # a context of its own: the engine's global instance stays untouched
    return dss.DSS.NewContext()


@pytest.fixture(scope="module")
def solvers() -> dict[str, tuple[Installation, CaseSolver]]:
    # one CaseSolver per demo, shared by its scenarios (its cache holds the distinct cases)
    return {}


def _cases() -> list[tuple[str, int]]:
    out = []
    for d in DEMOS:
        inst = load_installation(_path(d))
        out += [(d, k) for k in range(inst.n_scenarios)]
    return out


def _path(demo: str) -> str:
    return str(Path(__file__).resolve().parents[1] / "demo_installations" / f"{demo}.toml")


@dataclass
class Compared:
    """pqcalc's node voltages and OpenDSS's, per (kind, node id, line), orders 0..MAX_ORDER
    (OpenDSS's orders 0 and unsolved ones are zero), and the orders OpenDSS solved."""

    inst: Installation
    pq: dict[tuple[str, str, str], np.ndarray]
    ref: dict[tuple[str, str, str], np.ndarray]
    emf: dict[str, complex]
    solved: list[int]


@pytest.fixture(scope="module", params=_cases(), ids=lambda c: f"{c[0]}-scenario{c[1]}")
def compared(request, engine, solvers) -> Compared:
    demo, scenario = request.param
    if demo not in solvers:
        inst = load_installation(_path(demo))
        solvers[demo] = (inst, CaseSolver(inst))
    inst, solver = solvers[demo]
    assert inst.has_source_impedance, f"{demo}: no source impedance, nothing to check"
    _, sums = solve_pass(inst, solver, scenario)
    pq = node_voltages(inst, sums)

    sup = inst.supply
    lines = sup.lines
    net = OpenDssNetwork.build(
        engine, sup.frequency_hz, sup.voltage_ln_v, lines, sup.impedance,
        {fid: f.impedance for fid, f in inst.feeders.items()},
        {p.id: p.feeder for p in inst.panels})
    # the panels' own line currents only (RMS phasors, L1 frame): feeders, the service and
    # the neutrals are left to OpenDSS
    cur = {pid: node.phasors(sums.cycles)[0] for pid, node in sums.panels.items()}
    i1 = max(abs(c[ln][1]) for c in cur.values() for ln in lines)
    keys = ([("transformer", "service", ln) for ln in lines]
            + [("feeder", fid, ln) for fid in inst.feeders for ln in lines]
            + [("panel", p.id, ln) for p in inst.panels for ln in lines])
    bus_of = {("transformer", "service"): net.buses["service"]}
    bus_of |= {("feeder", fid): net.buses[fid] for fid in inst.feeders}
    bus_of |= {("panel", pid): bus for pid, bus in net.panel_bus.items()}
    ref = {k: np.zeros(MAX_ORDER + 1, dtype=complex) for k in keys}
    solved = []
    emf = {}
    for h in range(1, MAX_ORDER + 1):
        if h > 1 and max(abs(c[ln][h]) for c in cur.values() for ln in lines) < NEGLIGIBLE * i1:
            continue
        v = net.solve(h, {pid: {ln: c[ln][h] for ln in lines} for pid, c in cur.items()})
        for kind, nid, ln in keys:
            ref[(kind, nid, ln)][h] = v[bus_of[(kind, nid)]][ln]
        if h == 1:
            emf = {ln: net.bus_voltages("src")[k + 1] for k, ln in enumerate(lines)}
        else:
            solved.append(h)
    return Compared(inst, pq, ref, emf, solved)


def test_harmonic_node_voltages_match_opendss(compared):
    """Every order 2..50 of every line at every panel, feeder end and the service: pqcalc's
    ideal-supply harmonic voltage within 1 % of the node's largest harmonic voltage of the
    OpenDSS solution (OpenDSS via dss-python; the network of the module docstring)."""
    c = compared
    assert len(c.solved) >= 10, f"only orders {c.solved} carry current: too little to compare"
    nodes = {(kind, nid) for kind, nid, _ in c.ref}
    for kind, nid in sorted(nodes):
        lines = c.inst.supply.lines
        vmax = max(float(np.max(np.abs(c.ref[(kind, nid, ln)][2:]))) for ln in lines)
        # the demos' loads distort: a node without harmonic voltage would make this vacuous
        assert vmax > 1e-3, f"{kind} {nid}: largest harmonic voltage {vmax:.2e} V"
        for ln in lines:
            d = np.abs(c.pq[(kind, nid, ln)][2:] - c.ref[(kind, nid, ln)][2:])
            worst = int(np.argmax(d)) + 2
            assert d.max() <= TOLERANCE * vmax, (
                f"{kind} {nid} {ln}: order {worst} differs by {d.max():.4g} V from OpenDSS "
                f"({100 * d.max() / vmax:.3f} % of the node's largest harmonic, "
                f"{vmax:.4g} V); pqcalc {c.pq[(kind, nid, ln)][worst]:.5g}, "
                f"OpenDSS {c.ref[(kind, nid, ln)][worst]:.5g}")


def test_fundamental_drop_matches_opendss(compared):
    """The fundamental's drop from the EMF (EMF - V1) at every node within 1 % of the
    node's largest fundamental drop in OpenDSS: the L1 frame and the line angles of the
    fundamental set (OpenDSS's Vsource: positive sequence, L1 at 0 deg)."""
    c = compared
    if c.inst.supply.system != "three-phase-wye":
        pytest.skip("the Vsource's positive-sequence set stands for a wye supply only")
    nodes = {(kind, nid) for kind, nid, _ in c.ref}
    for kind, nid in sorted(nodes):
        lines = c.inst.supply.lines
        drop_ref = {ln: c.emf[ln] - c.ref[(kind, nid, ln)][1] for ln in lines}
        dmax = max(abs(x) for x in drop_ref.values())
        assert dmax > 1e-3, f"{kind} {nid}: fundamental drop {dmax:.2e} V"
        for ln in lines:
            d = abs(c.pq[(kind, nid, ln)][1] - c.ref[(kind, nid, ln)][1])
            assert d <= TOLERANCE * dmax, (
                f"{kind} {nid} {ln}: V1 differs by {d:.4g} V from OpenDSS "
                f"({100 * d / dmax:.3f} % of the node's largest fundamental drop)")


def test_network_harness_closed_form(engine):
    """The harness itself on one panel behind a transformer and a feeder, against the closed
    form ``V_LN = -(Z_tr + Z_f + Z_fN + Z_trN) I`` (plus the stiff source's own impedance)
    for a load current I on L1 alone (series R-L, ``Z(h) = R + j h w L``; Kirchhoff's laws),
    so a sign slip in the harness cannot hide behind the same slip in pqcalc."""
    f, h = 50.0, 5
    src = SourceImpedance(0.01, 3e-5, 0.004, 1e-5)
    fdr = SourceImpedance(0.03, 2e-5, 0.05, 2.5e-5)
    net = OpenDssNetwork.build(engine, f, 230.0, ("L1", "L2", "L3"), src, {"F": fdr},
                               {"P": "F"})
    i = 2.0 * np.exp(1j * 0.7)
    v = net.solve(h, {"P": {"L1": i, "L2": 0j, "L3": 0j}})

    def z(r: float, l_h: float) -> complex:
        return r + 1j * h * 2 * np.pi * f * l_h

    # the stiff Vsource's own Z1 = R + jX (X at f, scaled to h f) sits in each line too
    z_l = z(src.r_ohm, src.l_h) + z(fdr.r_ohm, fdr.l_h) + STIFF_OHM * (1 + 1j * h)
    z_n = z(src.neutral_r_ohm, src.neutral_l_h) + z(fdr.neutral_r_ohm, fdr.neutral_l_h)
    want = -(z_l + z_n) * i
    assert abs(v[net.panel_bus["P"]]["L1"] - want) <= 1e-9 * abs(want)
    # the unloaded lines see only the neutral's drop (their line conductors carry nothing)
    want_other = -z_n * i
    for ln in ("L2", "L3"):
        assert abs(v[net.panel_bus["P"]][ln] - want_other) <= 1e-9 * abs(want_other)
