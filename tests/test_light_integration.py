"""Temporal light artefacts where the user looks: ``pqcalc lamp`` (one setting and the
dimming curve), the fixture lineup (EU ecodesign verdict at full output), the sweep's netCDF
variables and the dimmer firing jitter.

Sources named beside each check. The light metrics themselves are checked against the
standards' tables in tests/test_light_*.py; here the integration is checked: the figures the
outputs carry equal pqcalc.light's functions on the solved light (consistency), and against
closed forms that do not use the package (the SVM of a sine modulation and the Minkowski sum
by hand with the published threshold function).
"""

from __future__ import annotations

import datetime
import json

import numpy as np
import pytest
from click.testing import CliRunner

from pqcalc.analysis import analyze
from pqcalc.circuits import DimmerSpec, LoadGroup, Supply, dimming_curve, solve_circuit
from pqcalc.cli import main
from pqcalc.errors import InputError
from pqcalc.installation import evaluate_lineup, load_installation
from pqcalc.installation.lineup import eu_ecodesign_default, state_light
from pqcalc.light import light_metrics
from pqcalc.metrics import displacement_power_factor
from pqcalc.spectrum import spectrum
from pqcalc.waveform import Waveform

#: a fixed date for reproducible verdicts: after the SVM limit fell to 0.4 (1 September 2024,
#: Regulation (EU) 2021/341, Annex IV point 2(a))
DAY = "2025-01-01"


def perz_threshold(f_hz):
    """Stroboscopic-effect contrast threshold of the standard observer, typed from the
    published power function (Perz et al., J. Opt. Soc. Am. A 35(2):309, 2018):
    T(f) = 2.865e-5 f^1.543 + 0.225, f in Hz."""
    return 2.865e-5 * np.asarray(f_hz, dtype=float) ** 1.543 + 0.225


def svm_by_hand(light, period_s):
    """IEC TR 63158 Minkowski sum, exponent 3.7, over the Fourier components of the relative
    light from 80 Hz to 2 kHz, written out here without the package."""
    # light is non-negative: the solver's rounding below zero (1e-8 of the peak here) is
    # clipped, as pqcalc.light.svm documents
    x = np.maximum(np.asarray(light, dtype=float), 0.0)
    c = np.fft.rfft(x) / x.size
    f = np.arange(c.size) / period_s
    rel = 2 * np.abs(c[1:]) / np.real(c[0])
    f = f[1:]
    keep = (f >= 80.0) & (f <= 2000.0)
    return float(np.sum((rel[keep] / perz_threshold(f[keep])) ** 3.7) ** (1 / 3.7))


def lamp_json(*args):
    r = CliRunner().invoke(main, ["lamp", *args, "--on-date", DAY, "--json"])
    assert r.exit_code == 0, r.output
    return json.loads(r.stdout)


# --------------------------------------------------------------------- pqcalc lamp
def test_lamp_json_equals_the_light_functions_on_the_solved_light():
    # Consistency: the JSON's SVM, Pst_LM and displacement factor are pqcalc.light's and
    # pqcalc.metrics' figures of the same solve (exact equality up to float formatting).
    d = lamp_json("--model", "dropper", "--power-w", "9", "--dimmer", "trailing-edge",
                  "--conduction-deg", "120")
    supply = Supply(230.0, 50.0)
    sol = solve_circuit(supply, DimmerSpec("trailing-edge", conduction_deg=120.0),
                        [LoadGroup("dropper", 9.0, 1)])
    m = light_metrics(sol.groups[0].light, sol.period_cycles / 50.0, dark_below=1e-6)
    assert d["light"]["svm"] == pytest.approx(m.svm, rel=1e-12)
    assert d["light"]["pst_lm"] == pytest.approx(m.pst_lm, rel=1e-12)
    dpf = displacement_power_factor(analyze(sol.waveform, 40).spectrum)
    assert d["displacement_factor"] == pytest.approx(dpf, rel=1e-12)
    # a dimmed setting is compared with the full-load limits for information only
    assert d["eu_ecodesign"]["applies"] is True
    assert d["eu_ecodesign"]["setting"]["ecodesign"]["verdict"] == "informative"
    assert d["eu_ecodesign"]["full_output"]["full_load"] is True


def test_lamp_svm_is_the_minkowski_sum_by_hand():
    # IEC TR 63158 summation with the Perz et al. (2018) threshold, written out in this test:
    # the filament's ripple (mostly 100 Hz) and the dropper's pulses (many harmonics).
    for model, power in (("resistive", "60"), ("dropper", "9")):
        d = lamp_json("--model", model, "--power-w", power)
        sol = solve_circuit(Supply(230.0, 50.0), DimmerSpec("none"),
                            [LoadGroup(model, float(power), 1)])
        assert d["light"]["svm"] == pytest.approx(
            svm_by_hand(sol.groups[0].light, sol.period_cycles / 50.0), rel=1e-9), model


def test_steady_100_hz_ripple_svm_is_c_over_t100():
    # A single sine modulation of relative amplitude C at 100 Hz: SVM = C / T(100)
    # (IEC TR 63158, single-component case; T from Perz et al. 2018), and Pst_LM near 0:
    # the IEC TR 61547-1 eye-brain filter passes almost nothing at 100 Hz.
    n, f0, C = 4096, 50.0, 0.25
    t = np.arange(n) / n / f0
    light = 1.0 + C * np.sin(2 * np.pi * 100.0 * t)
    v = 230 * np.sqrt(2) * np.sin(2 * np.pi * f0 * t)
    i = 0.04 * np.sqrt(2) * np.sin(2 * np.pi * f0 * t - np.arccos(0.8))  # cos phi1 = 0.8
    s = spectrum(Waveform(i, n * f0, f0, voltage_v=v))
    sl = state_light(light, 1 / f0, s, 9.2, full_load=True, eu_ecodesign=True, on_date=DAY)
    assert sl.svm == pytest.approx(C / float(perz_threshold(100.0)), rel=1e-9)
    assert sl.pst_lm < 0.05
    assert sl.displacement_factor == pytest.approx(0.8, rel=1e-9)
    # Regulation (EU) 2019/2020 Table 4 (as amended by 2021/341): SVM 0.96 > 0.4 fails;
    # DF 0.8 >= 0.5 passes for 5 W < P <= 10 W; Pst_LM <= 1 passes
    got = {v.quantity: v.verdict for v in sl.ecodesign.verdicts}
    assert got == {"pst_lm": "pass", "svm": "fail", "displacement_factor": "pass"}


def test_curve_json_carries_svm_pst_lm_and_dpf_per_setting():
    d = lamp_json("--model", "sine-follow", "--power-w", "9", "--dimmer", "trailing-edge",
                  "--curve", "--steps", "3")
    c = dimming_curve(Supply(230.0, 50.0), "trailing-edge", [LoadGroup("sine-follow", 9.0, 1)],
                      steps=3)
    for k, row in enumerate(d["settings"]):
        # consistency with the library's curve, itself light_metrics per setting
        assert row["svm"][0] == pytest.approx(c.svm[0, k], rel=1e-12)
        assert row["pst_lm"][0] == pytest.approx(c.pst_lm[0, k], rel=1e-12)
        assert row["dpf"] == pytest.approx(c.dpf[k], rel=1e-12)
        assert set(row["eu_limits_met"]) == {"pst_lm", "svm", "displacement_factor"}
    sol = solve_circuit(Supply(230.0, 50.0), DimmerSpec("trailing-edge", conduction_deg=95.0),
                        [LoadGroup("sine-follow", 9.0, 1)])
    m = light_metrics(sol.groups[0].light, sol.period_cycles / 50.0, dark_below=1e-6)
    assert d["settings"][1]["svm"][0] == pytest.approx(m.svm, rel=1e-9)
    # full output: the prototype gives SVM about 4 for the sine-following model
    full = d["eu_ecodesign"]["full_output"]
    assert 3.0 < full["svm"] < 5.0 and full["ecodesign"]["verdict"] == "fail"
    # the netCDF form of the curve carries them with units
    ds = c.to_dataset()
    assert ds["svm"].attrs["units"] == "1" and ds["pst_lm"].attrs["units"] == "1"
    assert ds["dpf"].attrs["units"] == "1"


def test_eu_rules_default_by_supply_and_scope():
    # default on for the EU's 230/400 V 50 Hz mains, off for 120 V 60 Hz (the issue)
    assert eu_ecodesign_default(230.0, 50.0) and not eu_ecodesign_default(120.0, 60.0)
    d = lamp_json("--model", "dropper", "--power-w", "9", "--voltage", "120",
                  "--frequency", "60")
    assert d["eu_ecodesign"]["applies"] is False
    assert d["light"]["svm"] > 0  # the figures stay, only the verdict goes
    d = lamp_json("--model", "dropper", "--power-w", "9", "--voltage", "120",
                  "--frequency", "60", "--eu-ecodesign")
    assert d["eu_ecodesign"]["applies"] is True
    # a filament is no LED or OLED light source: the rows do not apply (Regulation (EU)
    # 2019/2020, Table 4 heading "LED and OLED MLS")
    d = lamp_json("--model", "resistive", "--power-w", "60")
    assert d["eu_ecodesign"]["applies"] is False and "LED" in d["eu_ecodesign"]["note"]


def test_svm_limit_follows_the_date():
    # Regulation (EU) 2021/341, Annex IV point 2(a): SVM <= 0.9 until 31 August 2024,
    # <= 0.4 from 1 September 2024
    lim = {}
    for day in ("2024-08-31", "2024-09-01"):
        r = CliRunner().invoke(main, ["lamp", "--model", "dropper", "--power-w", "9",
                                      "--on-date", day, "--json"])
        checks = json.loads(r.stdout)["eu_ecodesign"]["full_output"]["ecodesign"]["checks"]
        lim[day] = next(c["limit"] for c in checks if c["quantity"] == "svm")
    assert lim == {"2024-08-31": 0.9, "2024-09-01": 0.4}


# --------------------------------------------------------------------- the lineup
SITE = """
[supply]
system = "single-phase"
voltage_ln_v = {v}
frequency_hz = {f}
{compliance}
[fixtures.drop]
model = "dropper"
power_w = 9.0
[[panels]]
id = "P"
[[panels.circuits]]
id = "1"
line = "L1"
dimmer = "trailing-edge"
conduction_deg = 120
{jitter}
fixtures = [{{type = "drop", count = 4}}]
"""


def site(tmp_path, v=230, f=50, compliance="", jitter=""):
    p = tmp_path / "site.toml"
    p.write_text(SITE.format(v=v, f=f, compliance=compliance, jitter=jitter))
    return p


def test_lineup_dropper_fails_the_eu_svm_limit_at_full_output(tmp_path):
    inst = load_installation(site(tmp_path))
    (e,) = evaluate_lineup(inst, on_date=DAY)
    assert e.eu_ecodesign is True and e.ecodesign == "fail"
    full = next(s for s in e.states if s.state == "full")
    # the prototype: the default 9 W dropper gives SVM about 6 at full output
    assert 5.0 < full.light.svm < 7.0
    v = {x.quantity: x for x in full.light.ecodesign.verdicts}
    # Regulation (EU) 2019/2020 Table 4 as amended by 2021/341: SVM <= 0.4 at full load
    assert v["svm"].verdict == "fail" and v["svm"].requirement.limit == 0.4
    assert v["pst_lm"].verdict == "pass"  # a steady 100 Hz ripple: Pst_LM well below 1
    # displacement factor = cos phi1 of the state's input current (IEEE 1459 definition)
    assert full.light.displacement_factor == pytest.approx(
        displacement_power_factor(full.spectrum), rel=1e-12)
    # dimmed states: informative, never a verdict
    dimmed = [s for s in e.states if s.state != "full"]
    assert dimmed and all(s.light.ecodesign.verdict == "informative" for s in dimmed)
    d = e.to_dict()
    assert d["ecodesign"] == "fail" and d["eu_ecodesign"] is True
    sd = next(s for s in d["states"] if s["state"] == "full")["light"]
    assert sd["svm"] == full.light.svm and sd["ecodesign"]["verdict"] == "fail"


def test_lineup_120_v_project_has_the_eu_rules_off_by_default(tmp_path):
    inst = load_installation(site(tmp_path, 120, 60))
    (e,) = evaluate_lineup(inst, on_date=DAY)
    assert e.eu_ecodesign is False and e.ecodesign is None
    assert all(s.light.ecodesign is None and s.light.svm is not None for s in e.states)
    # the file can turn them on (and a 230 V project off)
    inst = load_installation(site(tmp_path, 120, 60, "[compliance]\neu_ecodesign = true"))
    assert evaluate_lineup(inst, on_date=DAY)[0].ecodesign == "fail"
    inst = load_installation(site(tmp_path, compliance="[compliance]\neu_ecodesign = false"))
    assert evaluate_lineup(inst, on_date=DAY)[0].ecodesign is None


def test_compliance_eu_ecodesign_must_be_boolean(tmp_path):
    p = site(tmp_path, compliance='[compliance]\neu_ecodesign = "yes"')
    with pytest.raises(InputError, match=r"site\.toml:\d+.*compliance\.eu_ecodesign.*true or "
                                         r"false"):
        load_installation(p)


# --------------------------------------------------------------------- firing jitter
def test_lineup_jitter_gives_pst_lm_per_dimmed_state(tmp_path):
    inst = load_installation(site(tmp_path, jitter="dimmer_jitter_deg = 2.0"))
    assert inst.circuits[0].dimmer_jitter_deg == 2.0
    (e,) = evaluate_lineup(inst, on_date=DAY)
    dimmed = [s for s in e.states if s.state != "full"]
    assert all(s.light.jitter is not None for s in dimmed)
    # a random firing spread makes the half cycles unequal where the light depends on the
    # angle: at the deepest dimmed state (light steepest against the angle) the flicker is
    # visible (Pst_LM > 1, IEC TR 61547-1 threshold), far above the steady state's
    deep = min(dimmed, key=lambda s: s.p_w)
    assert deep.light.jitter.pst_lm > 1.0
    assert deep.light.jitter.pst_lm > 10 * deep.light.pst_lm
    # where the cut falls after the dropper's conduction window the light does not depend
    # on the angle: no more flicker than steady, within 10 % (the jittered record is
    # band-limited to 2 kHz, the steady meter is exact: two methods)
    assert all(s.light.jitter.pst_lm > 0.9 * s.light.pst_lm for s in dimmed)
    assert e.to_dict()["states"][1]["light"]["jitter"]["jitter_deg"] == 2.0


@pytest.mark.parametrize("value", ["-1.0", "45.0", '"two"'])
def test_circuit_jitter_bad_value_names_the_field(tmp_path, value):
    p = site(tmp_path, jitter=f"dimmer_jitter_deg = {value}")
    with pytest.raises(InputError, match=r"panels\[0\]\.circuits\[0\]\.dimmer_jitter_deg"):
        load_installation(p)


def test_lamp_jitter_json_and_zero_jitter_is_the_steady_state():
    base = ["--model", "dropper", "--power-w", "9", "--dimmer", "trailing-edge",
            "--conduction-deg", "90"]
    d0 = lamp_json(*base, "--jitter-deg", "0")
    # no spread: the steady state's Pst_LM (pqcalc.light.dimmer_jitter_pst_lm's definition)
    assert d0["jitter"]["pst_lm"] == pytest.approx(d0["light"]["pst_lm"], rel=1e-12)
    d2 = lamp_json(*base, "--jitter-deg", "2")
    assert d2["jitter"]["pst_lm"] > d0["jitter"]["pst_lm"] and d2["jitter"]["seed"] == 0


@pytest.mark.parametrize("args, match", [
    (["--dimmer", "trailing-edge", "--conduction-deg", "90", "--jitter-deg", "-1"],
     "--jitter-deg: expected a standard deviation >= 0"),
    (["--dimmer", "trailing-edge", "--conduction-deg", "90", "--jitter-deg", "nan"],
     "--jitter-deg"),
    (["--jitter-deg", "1"], "--jitter-deg: firing jitter needs a dimmer"),
    (["--on-date", "2025-02-30"], "--on-date: expected a date"),
])
def test_bad_light_input_one_line_exit_2(args, match):
    r = CliRunner().invoke(main, ["lamp", "--model", "dropper", "--power-w", "9", *args])
    assert r.exit_code == 2, r.output
    err = r.stderr.strip()
    assert err.startswith("error: ") and "\n" not in err and match in err
    assert r.stdout == "" and "Traceback" not in r.output


# --------------------------------------------------------------------- netCDF
def test_sweep_dataset_has_svm_and_pst_lm(tmp_path):
    from pqcalc.sweep import Fixture, SweepSpec, sweep, write_netcdf

    spec = SweepSpec((Fixture("drop9", "dropper", 9.0),), settings=(90.0, 180.0),
                     dimmer="trailing-edge")
    ds = sweep(spec)
    for name in ("svm", "pst_lm"):
        assert ds[name].attrs["units"] == "1" and "IEC TR" in ds[name].attrs["long_name"]
    # consistency with light_metrics of the same solve
    sol = solve_circuit(Supply(230.0, 50.0), DimmerSpec("trailing-edge", conduction_deg=90.0),
                        [LoadGroup("dropper", 9.0, 1)])
    m = light_metrics(sol.groups[0].light, sol.period_cycles / 50.0, dark_below=1e-6)
    assert float(ds.svm.sel(setting=90.0).squeeze()) == pytest.approx(m.svm, rel=1e-9)
    write_netcdf(ds, tmp_path / "s.nc")
    import xarray as xr

    with xr.open_dataset(tmp_path / "s.nc") as back:
        assert back["pst_lm"].attrs["units"] == "1"


def test_on_date_is_reproducible():
    d = lamp_json("--model", "dropper", "--power-w", "9")
    assert d["eu_ecodesign"]["on_date"] == DAY
    assert datetime.date.fromisoformat(DAY) >= datetime.date(2024, 9, 1)
