"""Whole-installation assessment against closed forms (circuit theory and phasor algebra).

The circuit models used here are the resistive filament (fast and linear) and ideal phase
cuts (a triac with zero latching and holding current opens at current zero), so every
figure has a closed form.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from click.testing import CliRunner

from pqcalc.cli import main
from pqcalc.installation import assess, load_installation

HEAD = """
[supply]
system = "three-phase-wye"
voltage_ln_v = 230
frequency_hz = 50
{impedance}
[analysis]
supply_interaction = {interaction}

[fixtures.lamp]
model = "resistive"
power_w = 100.0
# cold resistance = hot resistance: a linear resistor (no filament thermal model), 230^2/100
params = {{r_ohm = 529.0, r_cold_ohm = 529.0}}

[[panels]]
id = "P1"
"""

CIRCUIT = """
[[panels.circuits]]
id = "{id}"
line = "{phase}"
breaker_a = 16
dimmer = "{dimmer}"
{setting}
{dimmer_params}
fixtures = [{{type = "lamp", count = {count}}}]
"""


def build(tmp_path, circuits, impedance="source_r_ohm = 0.0", interaction="false"):
    text = HEAD.format(impedance=impedance, interaction=interaction)
    for i, (phase, dimmer, cond, count) in enumerate(circuits):
        setting = "" if dimmer == "none" else f"conduction_deg = {cond}"
        # the triac's latching and holding currents set to zero (an ideal switch); other
        # dimmers have no such parameters
        params = ("dimmer_params = {latching_current_a = 0.0, holding_current_a = 0.0}"
                  if dimmer == "leading-edge" else "")
        text += CIRCUIT.format(id=f"c{i}", phase=phase, dimmer=dimmer, setting=setting,
                               count=count, dimmer_params=params)
    p = tmp_path / "site.toml"
    p.write_text(text)
    return load_installation(p)


def test_balanced_90_deg_resistive_neutral_is_sqrt2(tmp_path):
    # Closed form (Fourier series of the phase-controlled sine; reference list): balanced
    # resistive loads cut at 90 deg on three lines give I_N / I_ph = sqrt(2). Tolerance 1 %:
    # the dimmer model's snubber and off-state leakage add a little current.
    inst = build(tmp_path, [(ph, "leading-edge", 90, 4) for ph in ("L1", "L2", "L3")])
    a = assess(inst)
    p = a.design.panels[0]
    assert p.neutral.ratio_to_max_line == pytest.approx(np.sqrt(2), rel=0.01)
    # each line: I_rms = (V/R) sqrt(1/2) for 4 lamps of R = V^2/P (closed form)
    r = 230.0**2 / 100.0
    assert p.lines["L1"].i_rms_a == pytest.approx(4 * 230.0 / r * np.sqrt(0.5), rel=0.01)


def test_uncut_balanced_resistive_has_no_neutral_current(tmp_path):
    # Phasor algebra: a balanced set of sinusoidal currents sums to zero in the neutral.
    inst = build(tmp_path, [(ph, "none", 180, 10) for ph in ("L1", "L2", "L3")])
    p = assess(inst).design.panels[0]
    assert p.neutral.i_rms_a < 1e-6 * p.lines["L1"].i_rms_a
    assert p.lines["L2"].pf == pytest.approx(1.0, abs=1e-6)


def test_lamp_count_linearity(tmp_path):
    # Linearity: N identical lamps on a stiff supply draw N times one lamp's current.
    one = assess(build(tmp_path, [("L1", "none", 180, 1)])).design.circuits[0]
    many = assess(build(tmp_path, [("L1", "none", 180, 37)])).design.circuits[0]
    assert many.i_rms_a == pytest.approx(37 * one.i_rms_a, rel=1e-9)


def test_supply_interaction_matches_voltage_divider(tmp_path):
    # Circuit theory: resistive lamps behind a source impedance Z form a voltage divider; the
    # converged current is E / |R_eq + r_on + Z| with R_eq = R_lamp / n and r_on the dimmer
    # switch's on-resistance (set here explicitly; a balanced set, so no neutral current).
    z_r, z_l, n, r_on = 0.5, 1e-3, 20, 0.05
    imp = f"source_r_ohm = {z_r}\nsource_l_h = {z_l}"
    inst = build(tmp_path, [(ph, "trailing-edge", 180, n) for ph in ("L1", "L2", "L3")], imp,
                 "true")
    text = (tmp_path / "site.toml").read_text().replace(
        "dimmer_params = {latching_current_a = 0.0, holding_current_a = 0.0}",
        f"dimmer_params = {{r_on_ohm = {r_on}}}")
    (tmp_path / "site.toml").write_text(text)
    inst = load_installation(tmp_path / "site.toml")
    sc = assess(inst).design
    r_eq = 230.0**2 / 100.0 / n + r_on
    z = z_r + 1j * 2 * np.pi * 50 * z_l
    i_expect = 230.0 / abs(r_eq + z)
    assert sc.interaction_iterations >= 1
    assert sc.ideal is not None
    # 1e-3: the switch's off-state conductance and the source's damping resistor
    assert sc.panels[0].lines["L1"].i_rms_a == pytest.approx(i_expect, rel=1e-3)
    # the ideal-supply pass solves one lamp and multiplies (a stiff supply, no triac), so the
    # switch's on-resistance counts once per lamp there: n E / (R_lamp + r_on)
    assert sc.ideal.panels[0].lines["L1"].i_rms_a == pytest.approx(
        n * 230.0 / (230.0**2 / 100.0 + r_on), rel=1e-3)


def test_assess_json_keys_and_exit_codes(tmp_path):
    build(tmp_path, [(ph, "leading-edge", 90, 4) for ph in ("L1", "L2", "L3")])
    r = CliRunner().invoke(main, ["assess", str(tmp_path / "site.toml"), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    c = d["circuits"][0]
    assert {"id", "panel", "line", "i_rms_a", "thd_i_pct", "pf", "flags"} <= set(c)
    p = d["panels"][0]
    assert set(p["lines"]) == {"L1", "L2", "L3"}
    assert {"i_rms_a", "thd_i_pct"} <= set(p["lines"]["L1"])
    assert {"i_rms_a", "ratio_to_max_line", "triplen_share_pct"} <= set(p["neutral"])
    assert "licensed professional" in d["caution"]
    # a neutral ampacity below the neutral current fails the neutral check: exit 1
    text = (tmp_path / "site.toml").read_text().replace('id = "P1"',
                                                        'id = "P1"\nneutral_ampacity_a = 1')
    (tmp_path / "site.toml").write_text(text)
    r = CliRunner().invoke(main, ["assess", str(tmp_path / "site.toml")])
    assert r.exit_code == 1
    assert re.search(r"FAIL\s+neutral conductor", r.output)


def test_summation_diversity_triplens_add(tmp_path):
    # IEC TR 61000-3-6 summation law (exponent 1 below order 5, from memory): the third
    # harmonic of independently dimmed circuits on one line adds arithmetically.
    inst = build(tmp_path, [("L1", "leading-edge", 90, 2), ("L1", "leading-edge", 90, 2)])
    from dataclasses import replace

    from pqcalc.installation.model import Diversity

    inst = replace(inst, diversity=Diversity(mode="summation"))
    a = assess(inst)
    one = a.design.circuits[0]
    i3 = a.diversity.panels[0].lines["L1"][1]
    assert i3 == pytest.approx(2 * one.magnitudes_a[3], rel=1e-9)


def test_summation_neutral_respects_sequence(tmp_path):
    # Closed form (phasor algebra of a balanced three-phase set): three identical circuits,
    # one per line, cut at 90 deg. In the neutral the zero-sequence orders (3, 9, 15) add to
    # three times a line's, and the positive/negative-sequence orders (5, 7, 11, 13) cancel.
    # The summation-law neutral must say the same: its rms equals sqrt(sum over triplens of
    # (3 I_h)^2) of one line (the fundamental cancels too: balanced), and its triplen share
    # is 1.
    from dataclasses import replace

    from pqcalc.installation.model import Diversity

    inst = build(tmp_path, [(ph, "leading-edge", 90, 2) for ph in ("L1", "L2", "L3")])
    a = assess(replace(inst, diversity=Diversity(mode="summation")))
    m = a.design.circuits[0].magnitudes_a  # one circuit = one line's total here
    trip = np.arange(m.size) % 3 == 0
    trip[0] = False
    i_n, share = a.diversity.panels[0].neutral
    assert i_n == pytest.approx(3 * np.sqrt(np.sum(m[trip] ** 2)), rel=1e-6)
    assert share == pytest.approx(1.0, abs=1e-6)
    # and the phase-aligned neutral of the same installation agrees over the same orders
    # 1..50 (its time-domain rms also holds the orders above 50)
    mn = a.design.panels[0].neutral.magnitudes_a
    assert np.sqrt(np.sum(mn[1:] ** 2)) == pytest.approx(i_n, rel=1e-6)


def test_workers_give_the_in_process_results(tmp_path):
    # Distinct cases solved in two local worker processes: every number equals the
    # in-process run (the same code on the same inputs, whatever order the cases are met
    # in). Only the count of distinct solves may differ (a worker cannot share a solve with
    # a case another worker met).
    import json

    from pqcalc.installation.assess import workers
    from pqcalc.io.jsonsafe import json_safe

    inst = build(tmp_path, [("L1", "leading-edge", 90, 2), ("L2", "leading-edge", 120, 3),
                            ("L3", "leading-edge", 150, 4)],
                 impedance="source_r_ohm = 0.05\nsource_l_h = 1e-4", interaction="true")
    here = json.loads(json.dumps(json_safe(assess(inst).to_dict())))
    with workers(2) as ex:
        there = json.loads(json.dumps(json_safe(assess(inst, executor=ex).to_dict())))
    here.pop("distinct_solves"), there.pop("distinct_solves")
    assert there == here


def test_a_dimmer_conducts_at_most_its_own_top(tmp_path):
    # A transistor dimmer's knob ends short of the full wave (its max_conduction_deg, 170 deg
    # by default, common practice): set to 180 deg it conducts 170 deg, and says so. The
    # closed form of a resistive load behind a cut at conduction c (REFERENCES: ideal
    # phase cut): I_rms = I_full sqrt(c/pi - sin(2 (pi - c))/(2 pi)) at 170 deg = 0.99946.
    inst = build(tmp_path, [("L1", "trailing-edge", 180, 1)])
    c = assess(inst).design.circuits[0]
    assert any("conducts at most 170 deg" in n for n in c.notes)
    full = 230.0 / 529.0
    a = np.radians(10.0)  # the cut
    ratio = np.sqrt(1 - a / np.pi + np.sin(2 * a) / (2 * np.pi))
    assert c.i_rms_a == pytest.approx(full * ratio, rel=2e-3)  # the switch's 0.05 ohm


def test_capacitor_resonance_order_closed_form():
    # Parallel resonance of a shunt capacitance C with a source inductance L: h_r =
    # 1 / (w1 sqrt(L C)) (IEEE Std 519-2014, 10.6; circuit theory). The school demo's lamps'
    # input (EMI) capacitors per line against its transformer's inductance (line + neutral).
    from pathlib import Path

    from pqcalc.installation.cases import CaseSolver
    from pqcalc.installation.interaction import resonance_order
    from pqcalc.installation.scenario import resonance_check

    inst = load_installation(Path(__file__).resolve().parents[1] / "demo_installations" /
                             "harbour_school.toml")
    solver = CaseSolver(inst)
    c = solver.shunt_capacitance_f()
    expect_c = max(c.values())
    z = inst.supply.impedance
    h_r, c_f = resonance_order(inst, c)
    assert c_f == expect_c > 0
    assert h_r == pytest.approx(1 / (2 * np.pi * 50.0 * np.sqrt((z.l_h + z.neutral_l_h) * c_f)),
                                rel=1e-12)
    chk = resonance_check(inst, solver)
    assert chk.value == pytest.approx(h_r) and chk.status == ("warn" if h_r <= 50 else "info")


def test_interaction_names_circuits_whose_current_jumps(tmp_path):
    # The iteration's own diagnostic (pqcalc.installation.interaction, JUMP_FRACTION): a
    # circuit whose current lands far from what its harmonic transfer predicted for the
    # voltage change is named as having changed its firing pattern. The solves are the real
    # ones; one circuit's current is doubled by hand on alternate passes, its discrete
    # pattern changed with it, as a triac at the edge of re-firing answers a small voltage
    # change.
    from dataclasses import replace

    from pqcalc.installation.cases import CaseSolver
    from pqcalc.installation.interaction import settle
    from pqcalc.installation.scenario import solve_pass

    # (the flipping circuit has a lamp more than the others: a case of its own, solved in
    # the first step, not standing in for its family's probe)
    inst = build(tmp_path, [(ph, "none", 180, n) for ph, n in (("L1", 21), ("L2", 20),
                                                               ("L3", 20))],
                 "source_r_ohm = 0.05\nsource_l_h = 2e-4\nneutral_r_ohm = 0.05", "true")
    solver = CaseSolver(inst, transfer=True)
    cases, sums = solve_pass(inst, solver, 0)
    flip = inst.circuits[0].id

    def flipping(at):
        cs, _ = solve_pass(inst, solver, 0, at)
        cs = dict(cs)
        if not len(fp_calls) % 2:  # a re-fire: twice the current, another pattern
            cs[flip] = replace(cs[flip].scaled(2), pattern=("re-fire",))
        fp_calls.append(len(fp_calls))
        from pqcalc.installation.sums import sum_installation
        return cs, sum_installation(inst, {k: (v.current_a, v.cycles, v.p_w)
                                           for k, v in cs.items()})

    fp_calls: list[int] = []
    fp = settle(replace(inst, analysis=replace(inst.analysis, max_iterations=4)),
                flipping, cases, sums)
    assert flip in dict(fp.jumps), (fp.history, fp.iterations, fp_calls)
    assert dict(fp.jumps)[flip] == pytest.approx(1.0, rel=0.05)  # the current doubled
    assert set(dict(fp.jumps)) == {flip}  # the smooth resistive circuits are not named
    assert fp.held == (flip,)  # it jumped back: held, so that the others settle
    assert not fp.diverged


def test_interaction_cache_holds_one_pass():
    # Memory bound (the design of CaseSolver.retain): after the supply-interaction
    # iteration, the cache holds the ideal pass and one interacting pass's cases, at most
    # one per circuit, not every pass's; the figures are those of the final pass.
    from pathlib import Path

    from pqcalc.installation.cases import CaseConditions, CaseSolver
    from pqcalc.installation.scenario import evaluate_scenario

    inst = load_installation(Path(__file__).resolve().parents[1] / "demo_installations"
                             / "harbour_school.toml")
    solver = CaseSolver(inst)
    res = evaluate_scenario(inst, solver, 0)
    assert res.interaction_iterations >= 2  # several passes were made
    interacting = [k for k in solver.cache
                   if isinstance(k, CaseConditions) and k.voltage is not None]
    assert 0 < len(interacting) <= len(inst.circuits)


@pytest.mark.parametrize("demo_file,scenario,tolerance", [
    ("cedar_row_offices.toml", 1, None), ("harbour_school.toml", 1, None),
    # a tolerance ten times tighter: the iteration ends on first-order corrections
    # (interaction.FINISH) of circuits whose last step was small
    ("harbour_school.toml", 0, 2e-5)])
def test_settled_interaction_equals_the_substitution_fixed_point(demo_file, scenario,
                                                                 tolerance):
    # The interacting state is the fixed point of "every circuit solved under the EMF its
    # panel's other currents leave it, behind its own loop": E_c = E - Z (I_all - I_c).
    # Reference: that fixed point found by the plainest iteration there is, damped
    # substitution E_c <- E_c + b (G_c(E) - E_c) (the classic harmonic iteration; a fact of
    # the method, not of this project), run far below the default tolerance. Newton's
    # method on the node voltages with the circuits' harmonic transfers
    # (interaction.settle, at the file's default tolerance) must land on it: every circuit
    # within 0.5 % of its I1 at every order, every node voltage within 0.05 % of V1, the
    # circuits it ended on corrections of (interaction.FINISH) included.
    from dataclasses import replace
    from pathlib import Path

    from pqcalc.installation.cases import CaseSolver
    from pqcalc.installation.interaction import ideal_voltage, node_voltages, own_frame, settle
    from pqcalc.installation.model import LINE_ANGLES_DEG
    from pqcalc.installation.scenario import solve_pass
    from pqcalc.spectrum import rotate_phasors

    inst = load_installation(Path(__file__).resolve().parents[1] / "demo_installations"
                             / demo_file)
    if tolerance is not None:
        inst = replace(inst, analysis=replace(inst.analysis, tolerance=tolerance))
    sup = inst.supply
    w = 2 * np.pi * sup.frequency_hz
    h = np.arange(51)
    ang = {ln: np.radians(a) for ln, a in LINE_ANGLES_DEG[sup.system].items()}
    node = {}
    zloop = {}
    loop = {}
    for p in inst.panels:
        z = sup.impedance if p.feeder is None else sup.impedance + inst.feeders[p.feeder].impedance
        r, lh = z.r_ohm + z.neutral_r_ohm, z.l_h + z.neutral_l_h
        for c in p.circuits:
            node[c.id] = (("transformer", "service", c.line) if p.feeder is None
                          else ("feeder", p.feeder, c.line))
            loop[c.id] = (round(r, 9), round(lh, 12))
            zloop[c.id] = r + 1j * h * w * lh

    solver = CaseSolver(inst, transfer=True)
    cases, sums = solve_pass(inst, solver, scenario)
    fp = settle(inst, lambda at: solve_pass(inst, solver, scenario, at), cases, sums)
    assert not fp.diverged and fp.change < inst.analysis.tolerance
    assert bool(fp.corrected) == (tolerance is not None)

    plain = CaseSolver(inst)
    e = {c.id: ideal_voltage(inst, c.line) for c in inst.circuits}
    cs, sm = solve_pass(inst, plain, scenario)
    for _ in range(60):
        g = node_voltages(inst, sm)
        new = {cid: g[node[cid]] + zloop[cid] * rotate_phasors(cs[cid].phasors, ang[c.line])
               for c in inst.circuits for cid in [c.id]}
        step = max(float(np.max(np.abs(new[k] - e[k]))) / sup.voltage_ln_v for k in e)
        e = {k: e[k] + 0.6 * (new[k] - e[k]) for k in e}
        cs, sm = solve_pass(inst, plain, scenario,
                            {c.id: own_frame(inst, c.line, e[c.id], loop[c.id])
                             for c in inst.circuits})
        if step < 2e-6:
            break
    assert step < 2e-5  # the reference settled far below the default tolerance (2e-4)
    for c in inst.circuits:
        a, b = fp.cases[c.id].phasors, cs[c.id].phasors
        assert np.max(np.abs(a - b)) <= 0.005 * abs(b[1]), c.id
    ga, gb = node_voltages(inst, fp.sums), node_voltages(inst, sm)
    for k in gb:
        assert np.max(np.abs(ga[k] - gb[k])) <= 5e-4 * sup.voltage_ln_v, k


@pytest.mark.parametrize("demo_file", ["harbour_school.toml", "cedar_row_offices.toml"])
def test_node_voltages_from_phasor_sums_equal_those_from_waveform_sums(demo_file):
    # Linearity of the Fourier series: the node voltages the interaction iterates on
    # (interaction._voltages_of: plain sums of the circuits' phasors, L1 frame) equal those
    # of the phase-aligned waveform sums every report uses (node_voltages on sums.py's
    # sums), to round-off.
    from pathlib import Path

    from pqcalc.installation.cases import CaseSolver
    from pqcalc.installation.interaction import _voltages_of, node_voltages
    from pqcalc.installation.model import LINE_ANGLES_DEG
    from pqcalc.installation.scenario import solve_pass
    from pqcalc.spectrum import rotate_phasors

    inst = load_installation(Path(__file__).resolve().parents[1] / "demo_installations"
                             / demo_file)
    sup = inst.supply
    cases, sums = solve_pass(inst, CaseSolver(inst), 0)
    where = {c.id: (("transformer", "service") if p.feeder is None else ("feeder", p.feeder),
                    c.line) for p in inst.panels for c in p.circuits}
    cur = {cid: rotate_phasors(cases[cid].phasors,
                               np.radians(LINE_ANGLES_DEG[sup.system][ln]))
           for cid, (_n, ln) in where.items()}
    a, b = node_voltages(inst, sums), _voltages_of(inst, cur, where)
    assert set(b) <= set(a)
    for k in b:
        assert np.max(np.abs(a[k] - b[k])) <= 1e-9 * sup.voltage_ln_v, k
    assert max(float(np.max(np.abs(b[k][2:]))) for k in b) > 0.01  # distortion to compare


def test_stand_ins_leave_no_prediction_in_the_result(monkeypatch, caplog):
    # interaction.settle's inexact Newton: a circuit whose linear prediction erred little
    # stands in for its solve in intermediate passes; the result is measured on solved
    # currents only (the corrections a run may end on, interaction.FINISH, are checked
    # against the substitution fixed point above). Checked against the same iteration
    # with every circuit solved in every pass (STAND_IN = 0), which the substitution fixed
    # point above checks in turn (the outside reference: damped substitution, the classic
    # harmonic iteration, a fact of the method): the same state within the tolerance
    # (0.5 % of I1 per order, 0.05 % of V1), no more solves, and the voltages reported are
    # those the returned currents make. (On this small file the stand-ins save no solve;
    # on the campus demo they save a quarter: tests/benchmarks/bench_installation.py.)
    import logging
    from pathlib import Path

    from pqcalc.installation import interaction
    from pqcalc.installation.cases import CaseSolver
    from pqcalc.installation.interaction import node_voltages, settle
    from pqcalc.installation.scenario import solve_pass

    inst = load_installation(Path(__file__).resolve().parents[1] / "demo_installations"
                             / "harbour_school.toml")
    runs = {}
    caplog.set_level(logging.DEBUG, logger="pqcalc.installation.interaction")
    for stand_in in (0.0, interaction.STAND_IN):
        monkeypatch.setattr(interaction, "STAND_IN", stand_in)
        solver = CaseSolver(inst, transfer=True)
        cases, sums = solve_pass(inst, solver, 0)
        n0 = solver.solves
        fp = settle(inst, lambda at, solver=solver: solve_pass(inst, solver, 0, at), cases,
                    sums)
        assert not fp.diverged and fp.change < inst.analysis.tolerance
        g = node_voltages(inst, fp.sums)
        assert all(np.array_equal(g[k], fp.voltages[k]) for k in g)
        runs[stand_in] = (fp, solver.solves - n0)
    (every, n_every), (some, n_some) = runs.values()
    assert n_some <= n_every, (n_some, n_every)
    used = [int(m.group(1)) for r in caplog.records
            for m in [re.search(r"(\d+) stand in by their linear prediction", r.getMessage())]
            if m]
    assert max(used) > 0  # the default run did stand circuits in
    for c in inst.circuits:
        a, b = some.cases[c.id].phasors, every.cases[c.id].phasors
        assert np.max(np.abs(a - b)) <= 0.005 * abs(b[1]), c.id
    for k, v in every.voltages.items():
        assert np.max(np.abs(some.voltages[k] - v)) <= 5e-4 * inst.supply.voltage_ln_v, k


def test_progress_reports_every_unit_it_announces():
    # The progress bar's contract (pqcalc.installation.assess.progress_units): the units
    # reported over a whole assessment, supply interaction on, add up to the announced
    # total, never beyond it, so the bar ends full.
    from pathlib import Path

    from pqcalc.installation.assess import progress_units

    inst = load_installation(Path(__file__).resolve().parents[1] / "demo_installations"
                             / "cedar_row_offices.toml")
    seen: list[int] = []
    assess(inst, progress=seen.append)
    assert all(n >= 0 for n in seen)
    assert sum(seen) == progress_units(inst) == len(inst.circuits) * inst.n_scenarios * (
        1 + inst.analysis.max_iterations)


def test_interaction_of_a_linear_load_is_the_voltage_divider(tmp_path):
    # Closed form (Ohm's law, the voltage divider): a linear resistive load R behind a
    # source of EMF E draws I = E / (R + Z_s), and the panel sees V = E - Z I. Here R is
    # ten 529-ohm lamps in parallel and the switch's 0.05 ohm (the model's values: the
    # lamps of a circuit behind a loop impedance are solved together, the switch once);
    # Z = R_s + j w L_s over line and neutral; the solver's own source branch Z_s damps the
    # inductance with 100 ohm in parallel (Supply.source_damping_ohm; 0.006 % here). Newton's
    # method on a linear network lands on it in one step: two passes, the second confirming.
    from pqcalc.circuits import Supply

    inst = build(tmp_path, [("L1", "none", 180, 10)],
                 "source_r_ohm = 0.4\nsource_l_h = 2e-3\nneutral_r_ohm = 0.3", "true")
    a = assess(inst).design
    r = 529.0 / 10 + 0.05
    zl = 1j * 2 * np.pi * 50 * 2e-3
    damp = Supply(v_rms_v=230.0, frequency_hz=50.0).source_damping_ohm
    i = 230.0 / (r + 0.7 + zl * damp / (zl + damp))
    v = 230.0 - (0.7 + zl) * i
    assert a.basis == "interacting supply" and a.interaction_iterations <= 2
    assert a.circuits[0].i1_a == pytest.approx(abs(i), rel=1e-6)
    assert a.transformer.lines["L1"].v_rms_v == pytest.approx(abs(v), rel=1e-6)
