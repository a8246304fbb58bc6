"""``pqcalc lamp`` end to end through click's CliRunner: summary JSON, waveform export,
parameter listing and routing, the dimming-curve mode, and every bad input of the issue.

Check values: a resistive lamp on an ideal supply behind an ideal cut has closed forms
(mean power fraction 1 - a/pi + sin(2a)/(2 pi) of V^2/R; PF = sqrt(fraction); at a = 90 deg
PF = 0.7071, REFERENCES closed forms). Fast models only (resistive, dropper), so the file runs
in a few seconds.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from click.testing import CliRunner

from pqcalc.analysis import analyze
from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, model_params, solve_circuit
from pqcalc.cli import main
from pqcalc.errors import ConvergenceError

V, P = 230.0, 60.0
R = V * V / P
#: an ideal cut of an ideal supply: no source impedance, no turn-off ramp
IDEAL = ["--param", "source_r_ohm=0", "--param", "source_l_h=0"]


def run(*args):
    r = CliRunner().invoke(main, ["lamp", *args])
    return r


def run_json(*args):
    r = run(*args, "--json")
    assert r.exit_code == 0, r.output
    return json.loads(r.stdout)


def test_json_summary_closed_form_and_keys():
    d = run_json("--model", "resistive", "--power-w", "60", "--dimmer", "trailing-edge",
                 "--conduction-deg", "90", "--param", "turn_off_s=0", *IDEAL)
    # closed form: trailing edge at 90 deg passes half the power of the sine, V^2/(2R);
    # tolerance: the 0.05 ohm switch (6e-5 of R) and the sampled edges: two per cycle at the
    # crest, each one sample of 2 V^2/R in 4096, up to 0.2 % of the mean V^2/(2R)
    assert d["p_w"] == pytest.approx(V * V / R / 2, rel=2.5e-3)
    # closed form: PF = sqrt(1/2) = 0.7071 (REFERENCES, a = 90 deg)
    assert d["pf"] == pytest.approx(0.7071, abs=2e-3)
    # the same summary keys as `pqcalc analyze` (the library's analyze().to_dict())
    sol = solve_circuit(Supply(V, 50.0, 0.0, 0.0),
                        DimmerSpec("trailing-edge", conduction_deg=90.0,
                                   params={"turn_off_s": 0.0}),
                        [LoadGroup("resistive", P)])
    keys = set(analyze(sol.waveform).to_dict())
    assert keys <= set(d)
    assert d["thd_i_max_order"] == 40 and len(d["harmonics"]) == 40
    # ...plus light, flicker and stresses
    assert {"p_w", "light", "flicker", "stresses", "flags", "period_cycles", "caution"} <= set(d)
    # filament ripple at twice mains frequency (common practice)
    assert d["flicker"]["modulation_frequency_hz"] == pytest.approx(100.0)
    assert 0 < d["flicker"]["percent_flicker_pct"] < 50  # thermal inertia smooths it
    assert d["stresses"]["resistor_w"]["R_lamp"] == pytest.approx(d["p_w"], rel=1e-3)
    # cold tungsten (1/12 of hot by default) gives a crest inrush of sqrt(2) V / R_cold
    r_cold = d["lamp"]["params"]["r_cold_ohm"]
    assert d["stresses"]["inrush_peak_a"] == pytest.approx(np.sqrt(2) * V / r_cold, rel=2e-3)
    assert d["period_cycles"] == 1 and d["flags"] == []
    assert "licensed professional" in d["caution"]


def test_json_norton_admittance_of_resistive_lamps():
    # Ohm's law: undimmed resistive lamps are a conductance 1 / (V^2 / P + r_on) at every
    # order, with the source impedance taken out (pqcalc.circuits.smallsignal)
    d = run_json("--model", "resistive", "--power-w", "60", "--count", "5")
    n = d["norton"]
    g = 1 / (V * V / (5 * P) + d["dimmer"]["params"]["r_on_ohm"])
    assert n["orders"] == list(range(2, 51))
    assert np.allclose(n["conductance_s"], g, rtol=1e-6)
    assert np.allclose(n["susceptance_s"], 0.0, atol=1e-9)


def test_text_output_has_the_figures():
    r = run("--model", "resistive", "--power-w", "60", "--dimmer", "leading-edge",
            "--switch", "transistor", "--conduction-deg", "90", *IDEAL)
    assert r.exit_code == 0, r.output
    # closed form: THD 2..40 of the 90 deg cut sine is 63.94 % (all orders 65.05 %); the
    # sampled edge moves it by under 0.2 percentage points
    line = [ln for ln in r.stdout.splitlines() if "THD i (2..40)" in ln][0]
    assert float(line.split()[-4]) == pytest.approx(63.94, abs=0.2)
    assert "IEEE 1789-2015 region" in r.stdout and "licensed professional" in r.stdout


def test_waveform_csv(tmp_path):
    out = tmp_path / "w.csv"
    d = run_json("--model", "resistive", "--power-w", "60", "--dimmer", "trailing-edge",
                 "--conduction-deg", "120", "--waveform-csv", str(out))
    head = out.read_text().splitlines()[0]
    assert head == "time_s,voltage_v,current_a,light"
    a = np.loadtxt(out, delimiter=",", skiprows=1)
    # at least 4096 samples over one period (the issue), time uniformly spaced
    assert a.shape == (4096, 4)
    assert np.allclose(np.diff(a[:, 0]), 1 / 50 / 4096, rtol=1e-6)
    # the exported samples carry the same power as the summary (definition P = mean(v i)):
    # the summary is integrated exactly over the solution, the samples are its cell means
    # (pqcalc.circuits.exact.SolvedWaveform), whose product loses the covariance of v and i
    # inside a cell at the cut (measured 2.8e-6 here)
    assert np.mean(a[:, 1] * a[:, 2]) == pytest.approx(d["p_w"], rel=1e-5)
    assert np.mean(a[:, 3]) == pytest.approx(d["light"]["mean_pct"] / 100, rel=1e-6)
    assert not list(tmp_path.glob(".*.tmp"))  # no temporary left behind


def test_param_routing_and_scopes():
    d = run_json("--model", "resistive", "--power-w", "60", "--dimmer", "leading-edge",
                 "--conduction-deg", "150", "--param", "holding_current_a=0.03",
                 "--param", "source_l_h=200e-6", "--param", "lamp.r_ohm=1000")
    assert d["dimmer"]["params"]["holding_current_a"] == 0.03
    assert d["supply"]["source_l_h"] == pytest.approx(200e-6)
    assert d["lamp"]["params"]["r_ohm"] == 1000.0
    # the 1000 ohm override is what is solved: the power falls to about V^2/1000 times the
    # conduction's fraction (0.97 at 150 deg, closed form)
    frac = 1 - np.pi / 6 / np.pi + np.sin(np.pi / 3) / (2 * np.pi)
    assert d["p_w"] == pytest.approx(V * V / 1000 * frac, rel=0.02)


def test_knob_setting():
    d = run_json("--model", "resistive", "--power-w", "100", "--dimmer", "leading-edge",
                 "--knob", "0.6")
    # the knob goes through the RC network: the conduction is measured, not set
    assert d["dimmer"]["knob"] == 0.6 and d["dimmer"]["conduction_deg"] is None
    assert 0 < d["conduction_deg_measured"][0] < 180


def test_dropper_surge_resistor_dissipation_rises_under_phase_cut():
    # behaviour that must emerge (issue): each leading edge charges the series capacitor by
    # a voltage step through the surge resistor, which then dissipates about C dV^2 / 2 per
    # step (the classic step-charging loss, independent of R) instead of a sine's small share
    full = run_json("--model", "dropper", "--power-w", "2")
    cut = run_json("--model", "dropper", "--power-w", "2", "--dimmer", "leading-edge",
                   "--switch", "transistor", "--conduction-deg", "90")
    w_full = full["stresses"]["resistor_w"]["R_surge"]
    w_cut = cut["stresses"]["resistor_w"]["R_surge"]
    assert w_cut > 10 * w_full
    # order of magnitude of the step loss: the step at 90 deg is at most Vpk = 325 V,
    # twice per cycle: 2 f C Vpk^2 / 2 bounds it from above
    c = full["lamp"]["params"]["c_series_f"]
    assert w_cut < 2 * 50 * c * (np.sqrt(2) * V) ** 2 / 2


def test_list_params_text_and_json():
    r = run("--model", "bulk-cap", "--power-w", "9", "--dimmer", "leading-edge", "--list-params")
    assert r.exit_code == 0, r.output
    for name in ("c_bulk_f", "r_series_ohm", "r_load_ohm", "holding_current_a",
                 "latching_current_a", "source_r_ohm", "source_l_h"):
        assert name in r.stdout
    d = run_json("--model", "bulk-cap", "--power-w", "9", "--list-params")
    lib = {p["name"]: p["default"] for p in model_params("bulk-cap", 9.0, 230.0, 50.0)}
    got = {p["name"]: p["default"] for p in d["lamp"]}
    assert got == lib  # the library's defaults at the given power, unchanged
    assert [p["name"] for p in d["supply"]] == ["source_r_ohm", "source_l_h",
                                                "source_damping_ohm"]
    assert all({"name", "unit", "default", "doc"} <= set(p) for p in d["dimmer"])
    # without --power-w the names and units are listed, the defaults need the power
    r = run("--model", "dropper", "--list-params")
    assert r.exit_code == 0 and "c_series_f" in r.stdout and "need --power-w" in r.stdout


def test_curve_json_and_table():
    d = run_json("--model", "resistive", "--power-w", "60", "--dimmer", "trailing-edge",
                 "--curve", "--steps", "5")
    assert [row["setting"] for row in d["settings"]] == [20.0, 57.5, 95.0, 132.5, 170.0]
    light = [row["light_pct"][0] for row in d["settings"]]
    assert np.all(np.diff(light) > 0)  # a filament dims smoothly
    assert d["curve_flags"] == [] and "caution" in d
    r = run("--model", "resistive", "--power-w", "60", "--dimmer", "trailing-edge", "--curve",
            "--steps", "3")
    assert r.exit_code == 0, r.output
    assert "curve flags: none" in r.stdout and "IEEE 1789" in r.stdout
    assert len([ln for ln in r.stdout.splitlines() if ln.strip()[:3] in ("20 ", "95 ",
                                                                           "170")]) == 3


# ---------------------------------------------------------------- bad input
BASE = ["--model", "resistive", "--power-w", "60"]


@pytest.mark.parametrize("args,match", [
    (["--model", "halogen", "--power-w", "60"], "resistive, dropper, bulk-cap"),
    (["--power-w", "60"], "--model: required"),
    (["--model", "resistive"], "--power-w: required"),
    ([*BASE, "--param", "c_bulk_f=1e-6"], "expected one of"),
    ([*BASE, "--param", "r_ohm"], "NAME=VALUE"),
    ([*BASE, "--param", "r_ohm=abc"], "expected a number"),
    ([*BASE, "--param", "r_ohm=0"], "r_ohm: expected a value > 0"),
    ([*BASE, "--param", "r_ohm=-5"], "r_ohm: expected a value > 0"),
    ([*BASE, "--param", "source_r_ohm=-1"], "source_r_ohm"),
    ([*BASE, "--param", "gadget.r_ohm=1"], "unknown scope"),
    ([*BASE, "--dimmer", "leading-edge", "--conduction-deg", "90", "--param",
      "holding_current_a=-0.01"], "holding_current_a"),
    ([*BASE, "--dimmer", "leading-edge", "--conduction-deg", "200"], "--conduction-deg: "
                                                                     "expected 0 to 180"),
    ([*BASE, "--dimmer", "leading-edge", "--conduction-deg", "-5"], "0 to 180"),
    ([*BASE, "--dimmer", "leading-edge", "--knob", "1.5"], "--knob: expected 0 to 1"),
    ([*BASE, "--dimmer", "leading-edge", "--knob", "0.5", "--conduction-deg", "90"],
     "not both"),
    ([*BASE, "--dimmer", "leading-edge"], "give a setting"),
    ([*BASE, "--conduction-deg", "90"], "--dimmer none"),
    ([*BASE, "--dimmer", "dual-edge", "--conduction-deg", "90"], "leading-edge, trailing"),
    (["--model", "bulk-cap", "--power-w", "200"], "power_w: expected 0.5 to 25 W"),
    (["--model", "resistive", "--power-w", "-3"], "--power-w: expected a positive"),
    ([*BASE, "--voltage", "400"], "100 to 277"),
    ([*BASE, "--dimmer", "trailing-edge", "--curve", "--steps", "2"], "steps"),
    ([*BASE, "--dimmer", "trailing-edge", "--curve", "--conduction-deg", "90"], "--curve"),
    ([*BASE, "--dimmer", "trailing-edge", "--curve", "--setting-axis", "volts"], "--setting-axis"),
    ([*BASE, "--count", "0"], "--count"),
])
def test_bad_input_one_line_exit_2(args, match):
    r = run(*args)
    assert r.exit_code == 2, r.output
    err = r.stderr.strip()
    assert err.startswith("error: ") and "\n" not in err and "Traceback" not in r.output
    assert match in err
    assert r.stdout == ""


def test_waveform_into_missing_folder_exits_2(tmp_path):
    target = tmp_path / "nope" / "w.csv"
    r = run(*BASE, "--waveform-csv", str(target))
    assert r.exit_code == 2 and "does not exist" in r.stderr
    assert not target.exists()


def test_non_convergence_exits_3(monkeypatch):
    # a solve that could not be done is the tool failing (exit 3), not a finding (exit 1)
    import pqcalc.cli.lamp as lamp

    def fail(*a, **k):
        raise ConvergenceError("no periodic steady state found; tried shooting over 1..4 "
                               "cycle periods")

    monkeypatch.setattr(lamp, "solve_circuit", fail)
    r = run(*BASE)
    assert r.exit_code == 3
    assert r.stderr.startswith("error: pqcalc lamp: a solve could not be done: no periodic "
                               "steady state") and r.stdout == ""
    assert len(r.stderr.splitlines()) == 1 and "Traceback" not in r.stderr


def test_dimmer_off_is_dark_not_flickering():
    # conduction 0: only the switch's 100 Mohm off-state leakage reaches the lamp
    # (P = V^2 / (R + 1e8) ~ 0.5 mW, closed form of the series divider)
    d = run_json(*BASE, "--dimmer", "trailing-edge", "--conduction-deg", "0")
    assert d["p_w"] == pytest.approx(V * V / (R + 1e8), rel=0.01)
    assert d["flicker"]["ieee1789_region"] == "dark"
    assert d["flicker"]["percent_flicker_pct"] is None


def test_curve_on_the_knob_axis():
    d = run_json(*BASE, "--dimmer", "leading-edge", "--curve", "--setting-axis", "knob",
                 "--steps", "3")
    assert d["axis"] == "knob" and [r["setting"] for r in d["settings"]] == [0.0, 0.5, 1.0]
    cond = [r["conduction_deg"] for r in d["settings"]]
    assert cond[0] < cond[1] < cond[2]  # the RC network fires earlier as the knob rises


@pytest.mark.parametrize("figure, extra", [("waveform", ["--dimmer", "trailing-edge",
                                                         "--conduction-deg", "90"]),
                                           ("spectrum", []), ("light", []),
                                           ("curve", ["--dimmer", "trailing-edge", "--curve",
                                                      "--steps", "5"])])
def test_lamp_figures(figure, extra, tmp_path):
    # Each figure of a solved lamp is a valid PNG (signature per the PNG specification).
    out = tmp_path / f"{figure}.png"
    r = CliRunner().invoke(main, ["lamp", "--model", "resistive", "--power-w", "60",
                                  "--figure", figure, "-o", str(out), *extra])
    assert r.exit_code == 0, r.output
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_lamp_figure_needs_its_file(tmp_path):
    r = CliRunner().invoke(main, ["lamp", "--model", "resistive", "--power-w", "60",
                                  "--figure", "waveform"])
    assert r.exit_code == 2 and "go together" in r.output
    r = CliRunner().invoke(main, ["lamp", "--model", "resistive", "--power-w", "60",
                                  "--figure", "waveform", "-o", str(tmp_path / "no" / "x.png")])
    assert r.exit_code == 2 and "does not exist" in r.output


def test_light_figure_of_a_flicker_free_lamp(tmp_path):
    # A bulk-capacitor driver's light is steady (no modulation frequency): the light figure
    # is drawn, not refused (it failed with "freq_hz: expected a positive frequency" before);
    # PNG signature per the PNG specification.
    out = tmp_path / "light.png"
    r = CliRunner().invoke(main, ["lamp", "--model", "bulk-cap", "--power-w", "9",
                                  "--figure", "light", "-o", str(out)])
    assert r.exit_code == 0, r.output
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_text_output_has_svm_pst_lm_and_the_eu_verdict():
    # The dropper's 100 Hz pulses: SVM about 6 (the prototype) fails SVM <= 0.4 at
    # full output (Regulation (EU) 2019/2020 Table 4 as amended by 2021/341, from
    # 1 September 2024); the dimmed setting is informative.
    r = run("--model", "dropper", "--power-w", "9", "--dimmer", "trailing-edge",
            "--conduction-deg", "120", "--on-date", "2025-01-01")
    assert r.exit_code == 0, r.output
    assert "SVM (IEC TR 63158)" in r.stdout and "Pst_LM (IEC TR 61547-1)" in r.stdout
    assert "full output, no dimmer" in r.stdout and "FAIL" in r.stdout
    assert "this setting: informative" in r.stdout
    r = run("--model", "dropper", "--power-w", "9", "--dimmer", "trailing-edge", "--curve",
            "--steps", "3", "--on-date", "2025-01-01")
    assert r.exit_code == 0, r.output
    assert "SVM" in r.stdout and "Pst_LM" in r.stdout and "DPF" in r.stdout


def test_component_value_outside_real_parts_is_refused():
    # a 5e-324 ohm switch (the smallest double) made the solver's matrices singular; the
    # model's parts are held to the range of real parts of their unit
    # (pqcalc.circuits.ranges.COMPONENT_RANGES, the installation file's ranges)
    from click.testing import CliRunner

    from pqcalc.cli import main

    r = CliRunner().invoke(main, ["lamp", "--model", "bulk-cap", "--power-w", "9",
                                  "--param", "r_on_ohm=5e-324"])
    assert r.exit_code == 2
    assert "r_on_ohm: expected 1e-06 to 1e+16 [ohm]" in r.output
