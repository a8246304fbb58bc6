"""``pqcalc plot``: figures from a capture, and its refusals (one line, exit 2, no file).

File checks follow the PNG specification (ISO/IEC 15948:2004, 5.2 signature, 11.2.2 IHDR),
PDF (ISO 32000-1, 7.5.2 header) and SVG 1.1 (root element ``svg``).
"""

from __future__ import annotations

import os
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from pqcalc.cli import main
from tests.conftest import phase_cut_resistive
from tests.test_plots import cut_harmonic_pct, png_size

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"


@pytest.fixture(scope="module")
def cut_capture(tmp_path_factory) -> Path:
    """An ideal 90-deg leading-edge cut of a 100 ohm load, 10 cycles at 50 Hz, as a CSV
    capture with a time column (25.6 kS/s: 512 samples per cycle)."""
    w = phase_cut_resistive(np.pi / 2, n=512)
    n = 512 * 10
    t = np.arange(n) / w.sample_rate_hz
    i, v = np.tile(w.current_a, 10), np.tile(w.voltage_v, 10)
    p = tmp_path_factory.mktemp("cap") / "cut90.csv"
    rows = "\n".join(f"{a:.9f},{b:.6f},{c:.8f}" for a, b, c in zip(t, v, i, strict=True))
    p.write_text("time_s,voltage_v,current_a\n" + rows + "\n")
    return p


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def test_spectrum_png_from_capture(cut_capture, tmp_path):
    out = tmp_path / "spec.png"
    r = run("plot", "spectrum", cut_capture, "-o", out, "--dpi", 100)
    assert r.exit_code == 0, r.output
    assert png_size(out.read_bytes()) == (640, 380)  # house style 6.4 x 3.8 in at 100 dpi


def test_spectrum_svg_shows_the_closed_form_thd(cut_capture, tmp_path):
    out = tmp_path / "spec.svg"
    r = run("plot", "spectrum", cut_capture, "-o", out, "--max-order", 40, "--log")
    assert r.exit_code == 0, r.output
    root = ET.parse(out).getroot()
    assert root.tag.endswith("svg")
    text = out.read_text()  # svg.fonttype "none": text stays searchable
    # THD over 2..40 of the 90-deg cut, by quadrature of its Fourier integrals; one decimal
    # printed. A 512-sample record with a time column is resampled by the capture reader
    # (cubic spline), so allow 0.2 points of percent.
    thd = np.sqrt(sum(cut_harmonic_pct(h, np.pi / 2) ** 2 for h in range(2, 41)))
    shown = float(text.split("THD (2..40) = ")[1].split(" %")[0])
    assert shown == pytest.approx(thd, abs=0.2)


def test_waveform_pdf_from_demo_capture(tmp_path):
    out = tmp_path / "wave.pdf"
    r = run("plot", "waveform", DEMO / "downlight_dimmed.csv", "-o", out, "--cycles", 2)
    assert r.exit_code == 0, r.output
    assert out.read_bytes().startswith(b"%PDF-")
    assert f"wrote {out}" in r.output


@pytest.mark.parametrize("figure", ["bars", "panel"])
def test_unknown_or_unavailable_figure(figure, cut_capture, tmp_path):
    out = tmp_path / "x.png"
    r = run("plot", figure, cut_capture, "-o", out)
    assert r.exit_code == 2
    msg = r.stderr.strip()
    # an unknown name lists the figures; a panel figure needs an installation, not a capture
    expect = "spectrum, waveform" if figure == "bars" else "installation"
    assert len(msg.splitlines()) == 1 and expect in msg
    assert not out.exists()


def test_output_folder_missing_or_read_only(cut_capture, tmp_path, monkeypatch):
    r = run("plot", "spectrum", cut_capture, "-o", tmp_path / "nope" / "s.png")
    assert r.exit_code == 2 and "does not exist" in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        if os.access(ro, os.W_OK):  # running as root: permission bits do not bind
            monkeypatch.setattr(os, "access", lambda p, mode: Path(p) != ro)
        r = run("plot", "waveform", cut_capture, "-o", ro / "w.svg")
    finally:
        ro.chmod(0o755)
    assert r.exit_code == 2 and "not writable" in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    assert list(ro.iterdir()) == []  # no partial or temporary file


@pytest.mark.parametrize("args, msg", [
    (["-o", "{tmp}/s.jpg"], ".png, .svg, .pdf"),
    (["-o", "{tmp}/s.png", "--cycles", "20"], "--cycles"),
])
def test_bad_suffix_and_too_many_cycles(args, msg, cut_capture, tmp_path):
    fig = "waveform" if "--cycles" in args else "spectrum"
    args = [a.format(tmp=tmp_path) for a in args]
    r = run("plot", fig, cut_capture, *args)
    assert r.exit_code == 2 and msg in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    assert list(tmp_path.iterdir()) == []


def test_missing_capture(tmp_path):
    r = run("plot", "spectrum", tmp_path / "absent.csv", "-o", tmp_path / "s.png")
    assert r.exit_code == 2
    assert len(r.stderr.strip().splitlines()) == 1 and "absent.csv" in r.stderr
    assert not (tmp_path / "s.png").exists()


def test_spectrum_with_class_c_limits(cut_capture, tmp_path):
    out = tmp_path / "lim.svg"
    r = run("plot", "spectrum", cut_capture, "-o", out, "--class", "C")
    assert r.exit_code == 0, r.output
    text = out.read_text()
    # 264.5 W (V^2 / 2R at 90 deg): IEC 61000-3-2 Table 2 applies, named in the legend
    assert "Table 2" in text and "over limit" in text


def test_limits_that_do_not_apply_warn(tmp_path):
    out = tmp_path / "d.png"
    # the demo downlight draws about 10 W; Class D starts above 75 W (IEC 61000-3-2, 7.3)
    r = run("plot", "spectrum", DEMO / "downlight_full.csv", "-o", out, "--class", "D")
    assert r.exit_code == 0
    assert "warning:" in r.stderr and "no limits drawn" in r.stderr
    assert png_size(out.read_bytes()) == (1280, 760)


def test_limits_without_voltage_need_power(cut_capture, tmp_path):
    cur_only = tmp_path / "i.csv"
    lines = cut_capture.read_text().splitlines()
    cur_only.write_text("\n".join(",".join(ln.split(",")[::2]) for ln in lines) + "\n")
    out = tmp_path / "s.png"
    r = run("plot", "spectrum", cur_only, "-o", out, "--class", "C")
    assert r.exit_code == 2 and "--power-w" in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
    assert not out.exists()
    r = run("plot", "spectrum", cur_only, "-o", out, "--class", "C", "--power-w", 264.5,
            "--pf", 0.7071)
    assert r.exit_code == 0, r.stderr
