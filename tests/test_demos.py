"""The two demo installations end to end: assessment, figures and the submittal.

Checks of what the demos are for (and what a reviewer reads first): both assess, at least one
panel's neutral carries more than any of its phases (triplen harmonics add: phasor algebra),
every figure renders for both, and the PDF names the standards it applied with the caution.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from pqcalc import plots
from pqcalc.assess import assess
from pqcalc.installation import load_installation

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"
PNG = b"\x89PNG\r\n\x1a\n"  # the PNG signature (PNG specification, 5.2)


@pytest.fixture(scope="module", params=["harbour_school.toml", "cedar_row_offices.toml"])
def demo(request):
    inst = load_installation(DEMO / request.param)
    return inst, assess(inst)


def test_demo_assesses_and_a_neutral_exceeds_its_phases(demo):
    inst, a = demo
    d = a.to_dict()
    assert len(d["circuits"]) == len(inst.circuits)
    ratios = [p.neutral.ratio_to_max_phase for s in a.scenarios for p in s.panels]
    assert max(ratios) > 1.0
    # the neutral never exceeds sqrt(3) times the highest phase (the bound for
    # non-overlapping pulses on three lines; Cauchy-Schwarz on the three line currents)
    assert max(ratios) <= np.sqrt(3) * (1 + 1e-6)
    for s in a.scenarios:
        assert s.interaction_iterations >= 1  # both demos have a source impedance


def test_every_figure_renders_for_the_demo(demo, tmp_path):
    inst, a = demo
    sc = a.design
    p = max(sc.panels, key=lambda p: p.neutral.ratio_to_max_phase)
    rms = {ln: r.i_rms_a for ln, r in p.lines.items()}
    rms["N"] = p.neutral.i_rms_a
    figs = {
        "panel": plots.panel_figure(rms, p.neutral.triplen_share),
        "neutral": plots.neutral_spectrum_figure(p.neutral.magnitudes_a),
    }
    c = sc.circuits[0]
    figs["circuit"] = plots.spectrum_figure(c.magnitudes_a, unit="A")
    for name, fig in figs.items():
        out = plots.save_figure(fig, tmp_path / f"{name}.png")
        assert Path(out).read_bytes()[:8] == PNG


def test_submittal_of_the_school(tmp_path):
    pypdf = pytest.importorskip("pypdf")
    from pqcalc.lineup import evaluate_lineup
    from pqcalc.report import write_report

    inst = load_installation(DEMO / "harbour_school.toml")
    a = assess(inst)
    out = write_report(a, tmp_path / "school.pdf", evaluate_lineup(inst))
    text = " ".join(pg.extract_text() for pg in pypdf.PdfReader(out).pages)
    text = " ".join(text.split())
    for needle in ("Harbour Lane", "IEC 61000-3-2", "IEEE", "licensed professional",
                   "DB-CLASS", "classroom-downlight"):
        assert needle in text, needle
