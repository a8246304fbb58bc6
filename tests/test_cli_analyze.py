"""``pqcalc analyze`` end to end: tables, JSON keys, windows, and every bad input of the issue.

Captures are sums of sines written to files here, so the figures are known in closed form:
with v = sqrt(2) V sin(wt) and i = sqrt(2) (I1 sin(wt - phi) + I3 sin(3wt)),
I_rms = sqrt(I1^2 + I3^2), THD = I3/I1, P = V I1 cos(phi), DPF = cos(phi).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from pqcalc import __version__
from pqcalc.cli import main
from pqcalc.io.comtrade import write_comtrade

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"
V, I1, I3, PHI = 230.0, 2.0, 0.6, 0.3


def signals(f=50.0, fs=10000.0, dur=0.5):
    t = np.arange(int(dur * fs)) / fs
    wt = 2 * np.pi * f * t
    i = np.sqrt(2) * (I1 * np.sin(wt - PHI) + I3 * np.sin(3 * wt))
    v = np.sqrt(2) * V * np.sin(wt)
    return t, v, i


def write(path, header="time_s,voltage_v,current_a", rows=None, f=50.0, dur=0.5):
    if rows is None:
        t, v, i = signals(f, dur=dur)
        rows = [f"{a:.6f},{b:.5f},{c:.7f}" for a, b, c in zip(t, v, i, strict=True)]
    path.write_text(header + "\n" + "\n".join(rows) + "\n")
    return str(path)


def run(*args):
    return CliRunner().invoke(main, ["analyze", *map(str, args)])


def test_help_and_version():
    r = CliRunner().invoke(main, ["analyze", "--help"])
    assert r.exit_code == 0 and "--windows" in r.output and "--json" in r.output
    r = CliRunner().invoke(main, ["--version"])
    assert r.exit_code == 0 and __version__ in r.output


def test_json_keys_and_values(tmp_path):
    r = run(write(tmp_path / "c.csv"), "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    for key in ("frequency_hz", "i_rms_a", "i1_rms_a", "thd_i_pct", "pf", "dpf",
                "crest_factor", "harmonics", "v_rms_v", "thd_v_pct", "p_w"):
        assert key in d, key
    assert set(d["harmonics"][0]) >= {"order", "i_rms_a", "pct_of_fundamental", "phase_deg"}
    assert [h["order"] for h in d["harmonics"]] == list(range(1, 41))
    # closed forms of the sum of sines; 1e-4 relative covers the 6-7 written digits
    assert d["frequency_hz"] == pytest.approx(50.0, abs=1e-3)
    assert d["i_rms_a"] == pytest.approx(np.hypot(I1, I3), rel=1e-4)
    assert d["i1_rms_a"] == pytest.approx(I1, rel=1e-4)
    assert d["thd_i_pct"] == pytest.approx(100 * I3 / I1, rel=1e-3)
    assert d["dpf"] == pytest.approx(np.cos(PHI), abs=1e-4)
    assert d["p_w"] == pytest.approx(V * I1 * np.cos(PHI), rel=1e-4)
    assert d["harmonics"][0]["phase_deg"] == pytest.approx(-np.degrees(PHI), abs=0.05)


def test_table_current_only_and_max_order(tmp_path):
    t, _, i = signals()
    p = tmp_path / "i.csv"
    p.write_text("t,i\n" + "\n".join(f"{a:.6f},{c:.7f}" for a, c in zip(t, i, strict=True)))
    r = run(p, "--max-order", 25)
    assert r.exit_code == 0, r.output
    assert "THD i (2..25)" in r.output and "note: no voltage channel" in r.output
    rows = [ln.split() for ln in r.output.splitlines() if ln.strip()[:2].strip().isdigit()]
    assert rows[-1][0] == "25"


def test_scaling_options(tmp_path):
    # current column in mA through a 10:1 probe: I = column * 1e-3 * 10
    t, v, i = signals()
    p = tmp_path / "ma.csv"
    p.write_text("time_s,voltage_v,current_a\n" + "\n".join(
        f"{a:.6f},{b:.5f},{c * 100:.5f}" for a, b, c in zip(t, v, i, strict=True)))
    r = run(p, "--current-unit", "mA", "--current-scale", 10, "--json")
    assert json.loads(r.stdout)["i1_rms_a"] == pytest.approx(I1, rel=1e-4)


def test_comtrade_capture(tmp_path):
    t, v, i = signals(60.0, 7680.0)
    cfg = tmp_path / "rec.cfg"
    write_comtrade(cfg, {"IA": ("A", i), "VA": ("V", v)}, 7680.0, 2013, "BINARY32",
                   line_frequency_hz=60.0)
    r = run(cfg, "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    assert d["frequency_hz"] == pytest.approx(60.0, abs=1e-3)
    assert d["thd_i_pct"] == pytest.approx(100 * I3 / I1, rel=1e-4)


def test_windows_json_and_table(tmp_path):
    p = write(tmp_path / "w.csv", f=60.0, dur=2.0)
    r = run(p, "--windows", "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    assert d["window_cycles"] == 12  # IEC 61000-4-7 4.4: 12 cycles at 60 Hz
    assert len(d["windows"]) == 10 and d["summary"]["windows"] == 10
    w0 = d["windows"][0]
    assert w0["thd_i_pct"] == pytest.approx(100 * I3 / I1, rel=1e-3)
    assert d["summary"]["p95"]["i_group_a"][3] == pytest.approx(I3, rel=3e-3)
    r = run(p, "--windows", "--smooth")
    assert r.exit_code == 0 and "95th pct" in r.output and "smoothed" in r.output
    r = run(p, "--windows", "--summary-only", "--json")
    assert "windows" not in json.loads(r.stdout)


def test_demo_capture_runs():
    r = run(DEMO / "downlight_dimmed.csv")
    assert r.exit_code == 0 and "THD i" in r.output


def test_clipped_record_warns_and_analyses(tmp_path):
    t, v, i = signals()
    rows = [f"{a:.6f},{b:.5f},{c:.7f}" for a, b, c in zip(t, v, np.clip(i, -2.5, 2.5),
                                                          strict=True)]
    r = run(write(tmp_path / "clip.csv", rows=rows))
    assert r.exit_code == 0
    assert "warning:" in r.stderr and "clip.csv" in r.stderr and "flat tops" in r.stderr
    assert "THD i" in r.stdout


# ---------------------------------------------------------------------- bad input
def _bad_cases(tmp_path):
    t, v, i = signals()
    good = [f"{a:.6f},{b:.5f},{c:.7f}" for a, b, c in zip(t, v, i, strict=True)]
    cases = {}

    def case(name, text=None, data=None, where=None):
        p = tmp_path / name
        if data is not None:
            p.write_bytes(data)
        elif text is not None:
            p.write_text(text)
        cases[name] = (p, where)

    case("empty.csv", "")
    case("header_only.csv", "time_s,voltage_v,current_a\n")
    rows = list(good)
    rows[10] = "0.001000,1.0,nan"
    case("nan.csv", "time_s,voltage_v,current_a\n" + "\n".join(rows), where=":12:")
    rows = list(good)
    rows[20] = "0.002000,1.0,oops"
    case("text.csv", "time_s,voltage_v,current_a\n" + "\n".join(rows), where=":22:")
    rows = list(good)
    rows[30], rows[31] = rows[31], rows[30]
    case("nonmono.csv", "time_s,voltage_v,current_a\n" + "\n".join(rows), where=":33:")
    rows = list(good)
    rows[40] = rows[39]
    case("dup.csv", "time_s,voltage_v,current_a\n" + "\n".join(rows), where=":42:")
    rows = list(good)
    rows[50] = rows[50].rsplit(",", 1)[0]
    case("unequal.csv", "time_s,voltage_v,current_a\n" + "\n".join(rows), where=":52:")
    case("short.csv", "time_s,voltage_v,current_a\n" + "\n".join(good[:150]))
    case("garbage.csv", data=bytes(range(256)) * 64)
    # random bytes without a NUL: still not text
    case("noise.csv", data=np.random.default_rng(7).integers(1, 256, 20000, np.uint8).tobytes())
    (tmp_path / "adir").mkdir()
    cases["adir"] = (tmp_path / "adir", None)
    cfg = tmp_path / "mism.cfg"
    write_comtrade(cfg, {"IA": ("A", i), "VA": ("V", v)}, 10000.0, 1999, "BINARY")
    cfg.with_suffix(".dat").write_bytes(cfg.with_suffix(".dat").read_bytes()[:-7])
    cases["mism.dat"] = (cfg, None)
    gcfg = tmp_path / "junk.cfg"
    gcfg.write_bytes(bytes(range(1, 256)) * 8)
    (tmp_path / "junk.dat").write_bytes(b"\x01" * 100)
    cases["junk.cfg"] = (gcfg, None)
    return cases


BAD = ["empty.csv", "header_only.csv", "nan.csv", "text.csv", "nonmono.csv", "dup.csv",
       "unequal.csv", "short.csv", "garbage.csv", "noise.csv", "adir", "mism.dat", "junk.cfg"]


@pytest.mark.parametrize("name", BAD)
@pytest.mark.parametrize("windows", [False, True])
def test_bad_input_one_line_exit_2(tmp_path, name, windows):
    # the project's rule: one line on stderr naming the file (and line), exit code 2,
    # no traceback; the same through the windowed (streaming) path
    path, where = _bad_cases(tmp_path)[name]
    r = run(path, *(["--windows"] if windows else []))
    assert r.exit_code == 2, (r.output, r.exception)
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, r.stderr
    assert lines[0].startswith("error: ")
    assert "Traceback" not in r.output
    assert path.name in lines[0] or path.stem in lines[0]
    if where:
        assert where in lines[0], lines[0]


def test_unknown_column_lists_available(tmp_path):
    r = run(write(tmp_path / "c.csv"), "--current-col", "I_L2")
    assert r.exit_code == 2
    assert "c.csv" in r.stderr and "available: time_s, voltage_v, current_a" in r.stderr


def test_smooth_needs_windows(tmp_path):
    r = run(write(tmp_path / "c.csv"), "--smooth")
    assert r.exit_code == 2 and "--windows" in r.stderr


def test_usage_mistakes_are_one_line_with_exit_2():
    # House rule for bad input (one line on stderr, exit code 2) also for click's own
    # usage errors: an out-of-range option, an unknown command.
    from click.testing import CliRunner

    from pqcalc.cli import main

    for args in (["analyze", "x.csv", "--max-order", "99"], ["no-such-command"]):
        r = CliRunner().invoke(main, args)
        assert r.exit_code == 2
        assert len(r.stderr.strip().splitlines()) == 1 and r.stderr.startswith("error:")


@pytest.mark.parametrize("fs", [9871.0, 10000.0])
def test_crest_factor_of_a_dimmer_capture(tmp_path, fs):
    # A resistive load behind a 90 deg leading-edge cut (the dimmer capture): the cut
    # keeps the sine's crest and I_rms = I_pk/2 (closed form, REFERENCES.md), so the crest
    # factor is 2.000. The old spline-resampled record read 2.22. Tolerance from the
    # sampling: 2/N + (1 - cos(2 pi/N)) relative with N samples per cycle (the firing is
    # placed only within one sample interval; tests/test_capture.py derives it).
    t = np.arange(int(fs * 0.6)) / fs + 0.0007
    wt = 2 * np.pi * 50.0 * t
    v = 325.0 * np.sin(wt)
    i = np.where(np.mod(wt, np.pi) >= np.pi / 2, 1.5 * np.sin(wt), 0.0)
    rows = [f"{a:.8f},{b:.4f},{c:.6f}" for a, b, c in zip(t, v, i, strict=True)]
    r = run(write(tmp_path / "dimmer.csv", rows=rows), "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    n = fs / 50.0
    assert d["crest_factor"] == pytest.approx(2.0, abs=2 * (2 / n + 1 - np.cos(2 * np.pi / n)))
    assert d["i_peak_a"] <= 1.5 + 1e-6  # a recorded sample, never an interpolant's overshoot
    assert any("recorded samples" in note for note in d["notes"])
    # the terminal table shows the same figure
    r = run(str(tmp_path / "dimmer.csv"))
    assert r.exit_code == 0 and f"{d['crest_factor']:.3f}" in r.output
