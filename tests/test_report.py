"""The PDF submittal: sections, standards with editions, cautions, pagination, atomic writes.

The text is extracted with pypdf (an independent PDF reader) and, where installed, with
poppler's pdftotext; the page images are rendered with pdftoppm to show the file is a valid
PDF to a second renderer. The installation is capture-only (demo captures, invented data).
"""

from __future__ import annotations

import io
import re
import shutil
import subprocess

import numpy as np
import pytest

from pqcalc import __version__
from pqcalc.errors import InputError
from pqcalc.installation import assess, evaluate_lineup, load_installation
from pqcalc.installation.lineup import limits_in_amps
from pqcalc.installation.results import CAUTION
from pqcalc.report import SECTION_TITLES, report_pdf_bytes, write_report
from pqcalc.reporting.layout import Col, Doc
from pqcalc.spectrum import spectrum
from pqcalc.standards import evaluate_fixture
from pqcalc.waveform import Waveform

from .test_export import make_site

pypdf = pytest.importorskip("pypdf")


def pdf_pages_text(data: bytes) -> list[str]:
    r = pypdf.PdfReader(io.BytesIO(data))
    return [" ".join((p.extract_text() or "").split()) for p in r.pages]


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    return load_installation(make_site(tmp_path_factory.mktemp("site")))


@pytest.fixture(scope="module")
def assessment(site):
    return assess(site)


@pytest.fixture(scope="module")
def lineup(site):
    return evaluate_lineup(site), []


@pytest.fixture(scope="module")
def pdf(assessment, lineup):
    return report_pdf_bytes(assessment, lineup[0], lineup[1], generated="2026-12-01 12:00")


@pytest.fixture(scope="module")
def text(pdf):
    return pdf_pages_text(pdf)


def test_report_has_every_section_in_order(text):
    whole = " ".join(text)
    pos = [whole.find(t) for t in SECTION_TITLES]
    assert all(p >= 0 for p in pos), dict(zip(SECTION_TITLES, pos, strict=True))
    # each heading appears after the previous one (the contents list on the cover aside)
    body = " ".join(text[1:])
    pos = [body.find(t) for t in SECTION_TITLES]
    assert pos == sorted(pos)


def test_cover_names_project_site_engineer_date_and_version(text):
    cover = text[0]
    for s in ("Export test building", "Test Street 1", "T. Tester", "2026-12-01",
              f"pqcalc {__version__}"):
        assert s in cover


def test_summary_fits_on_one_page(text):
    assert SECTION_TITLES[0] in text[1]
    assert SECTION_TITLES[1] not in text[1]
    assert SECTION_TITLES[1] in text[2]


def test_standards_are_named_with_their_editions(text):
    std = " ".join(t for t in text if SECTION_TITLES[4] in t)
    # IEC 61000-3-2 ed. 5.0 (2018) with AMD1:2020 is the edition of the shipped limit tables
    # (standards_limits/iec61000-3-2_*.toml); Table 3 is Class D, used by option a.
    assert "IEC 61000-3-2" in std and "5.0 (2018)" in std and "AMD1:2020" in std
    assert "Table 3" in std
    # the IEEE 519 check at the service names its edition (2022 by default in assess)
    assert re.search(r"IEEE Std 519-20(14|22)", std)
    assert "IEC 60364-4-43" in std  # the breaker load check's source (an IEC project)


def test_cautions_are_carried(text):
    whole = " ".join(text)
    assert " ".join(CAUTION.split()) in whole
    assert "licensed professional" in text[-1]
    # every page carries the short caution in its footer
    assert all("never replaces, the local electrical code" in t for t in text)


def test_pages_are_numbered(text):
    n = len(text)
    for i, t in enumerate(text, 1):
        assert f"page {i} of {n}" in t


def test_lineup_table_and_one_spectrum_image_per_fixture_type(pdf, lineup, text):
    first = next(i for i, t in enumerate(text) if t.startswith(SECTION_TITLES[1]))
    last = next(i for i, t in enumerate(text) if t.startswith(SECTION_TITLES[2]))
    lu = " ".join(text[first:last])
    for e in lineup[0]:
        assert e.fixture in lu
        assert e.states[0].result.rule in lu  # the deciding rule is tabulated
    # images drawn on the lineup pages: "/Name Do" operators in the content streams (the
    # PDF backend shares one resource dictionary between pages, so count the operators)
    r = pypdf.PdfReader(io.BytesIO(pdf))
    n_img = sum(len(re.findall(rb"/I\d+ Do", r.pages[i].get_contents().get_data()))
                for i in range(first, last))
    assert n_img == len(lineup[0])


def test_per_panel_results_show_phase_neutral_and_thdv(text, assessment):
    pages = " ".join(t for t in text if "Panel results" in t or "Panel DB" in t)
    for p in assessment.design.panels:
        assert f"Panel {p.id}" in pages
        # the neutral current of the design scenario, as tabulated (2 decimals)
        assert f"{p.neutral.i_rms_a:.2f}" in pages
    assert "THDv [%]" in pages


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="poppler's pdftoppm is absent")
def test_a_second_renderer_reads_every_page(pdf, tmp_path, text):
    p = tmp_path / "r.pdf"
    p.write_bytes(pdf)
    subprocess.run(["pdftoppm", "-r", "20", "-png", str(p), str(tmp_path / "pg")], check=True,
                   capture_output=True, timeout=120)
    assert len(list(tmp_path.glob("pg*.png"))) == len(text)


# ----------------------------------------------------------------- lineup handling
def test_limits_in_amperes_from_the_deciding_rule():
    # Class C above 25 W, IEC 61000-3-2:2018 Table 2: h5 at 10 % and h7 at 7 % of the
    # fundamental, h3 at 30 x lambda %. A 60 W load with a 3rd and 5th harmonic:
    n, f = 4096, 50.0
    t = np.arange(n) / (n * f)
    v = 230 * np.sqrt(2) * np.sin(2 * np.pi * f * t)
    i = 0.27 * np.sqrt(2) * (np.sin(2 * np.pi * f * t) + 0.05 * np.sin(6 * np.pi * f * t)
                             + 0.02 * np.sin(10 * np.pi * f * t))
    w = Waveform(i, n * f, f, v, 1)
    r = evaluate_fixture(w, nominal_voltage_v=230, fixture="x")
    s = spectrum(w)
    lim = limits_in_amps(r, s)
    assert r.p_w > 25
    assert lim[5] == pytest.approx(0.10 * s.i1_a, rel=1e-9)
    assert lim[7] == pytest.approx(0.07 * s.i1_a, rel=1e-9)
    # h3: 27 % of I1 in the default edition 5.1 (Table 2 as amended by AMD1:2020; a test
    # laboratory's public summary), 30 x lambda % in edition 5.0
    assert lim[3] == pytest.approx(0.27 * s.i1_a, rel=1e-9)
    r5 = evaluate_fixture(w, nominal_voltage_v=230, fixture="x", edition="5.0")
    assert limits_in_amps(r5, s)[3] == pytest.approx(0.30 * r5.pf * s.i1_a, rel=1e-9)


def _hatched(fig) -> set[int]:
    """Orders whose bar is hatched (drawn as over the limit)."""
    return {int(b.get_gid().split("-")[1]) for b in fig.axes[0].patches
            if (b.get_gid() or "").startswith("order-") and b.get_hatch()}


def test_report_figure_hatches_exactly_the_orders_the_table_fails():
    # 30 W at 230 V: I1 = 0.1304 A. h2 at 3 % of I1 = 3.9 mA is over Table 2's 2 % but below
    # the 5 mA under which harmonics are disregarded (IEC 61000-3-2, clause 7; memory):
    # PASS in the table, so not hatched. h5 at 12 % is over Table 2's 10 %: FAIL, hatched.
    from pqcalc.installation.lineup import LineupEntry, LineupState
    from pqcalc.plots import spectrum_figure
    from pqcalc.reporting.sections import _spectrum_fig

    n, f, i1 = 4096, 50.0, 30 / 230
    wt = 2 * np.pi * f * np.arange(n) / (n * f)
    v = 230 * np.sqrt(2) * np.sin(wt)
    i = i1 * np.sqrt(2) * (np.sin(wt) + 0.03 * np.sin(2 * wt) + 0.12 * np.sin(5 * wt))
    w = Waveform(i, n * f, f, v, 1)
    r = evaluate_fixture(w, nominal_voltage_v=230, fixture="x")
    s = spectrum(w)
    c2 = next(c for c in r.deciding.checks if c.order == 2)
    assert c2.disregarded and c2.status == "pass" and c2.value > c2.limit
    table_fails = {c.order for c in r.deciding.order_checks() if c.status == "fail"}
    assert table_fails == {5}
    st = LineupState("full", 180.0, w, s, r.p_w, r, limits_in_amps(r, s))
    e = LineupEntry("x", "", "capture x.csv", "none", r.verdict, r.rule, (st,), r)
    assert _hatched(_spectrum_fig(e)) == table_fails
    # without the disregard rule the figure would flag h2 as well (the defect this guards)
    lims = {h: 100 * lim / s.i1_a for h, lim in st.limits_a.items()}
    assert _hatched(spectrum_figure(st.magnitudes_a, lims, unit="pct")) == {2, 5}


def test_summary_of_a_120_v_lineup_is_information_only(tmp_path):
    # IEC 61000-3-2, clause 1: no limits below 220 V line-to-neutral; the lineup line of the
    # summary says "information only" and names no failing fixture type
    from types import SimpleNamespace

    from pqcalc.reporting.sections import _lineup_summary

    from .test_lineup import led_site

    entries = evaluate_lineup(load_installation(led_site(tmp_path, 120, 60)))
    a = SimpleNamespace(installation=SimpleNamespace(supply=SimpleNamespace(voltage_ln_v=120.0)))
    line = _lineup_summary(a, entries)
    assert "information only" in line and "220 V" in line and "failing" not in line


def test_lineup_entry_title_names_the_dimmer(lineup):
    from dataclasses import replace

    e = lineup[0][0]
    assert replace(e, fixture="other", dimmer="trailing-edge").title == \
        "other behind trailing-edge dimmer"
    assert replace(e, fixture="other", dimmer="none").title == "other"


def test_summary_with_an_empty_lineup_says_so(assessment):
    from pqcalc.reporting.sections import summary

    doc = Doc("footer")
    summary(doc, assessment, [], [])
    texts = [t.get_text() for t in doc.pages[0].texts]
    assert any("Fixture lineup: not evaluated" in t for t in texts)


# ---------------------------------------------------------------------- pagination
def test_long_tables_repeat_their_header_and_never_split_a_row():
    doc = Doc("footer")
    doc.new_page()
    rows = [(f"row{k:03d}", "word " * (3 + k % 17)) for k in range(150)]
    doc.table([Col("first column", 1.0), Col("wrapped text", 2.0, wrap=True)], rows,
              title="Long table")
    doc.finish("now")
    buf = io.BytesIO()
    from matplotlib.backends.backend_pdf import PdfPages

    with PdfPages(buf) as pdf:
        for p in doc.pages:
            pdf.savefig(p)
    pages = pdf_pages_text(buf.getvalue())
    assert len(pages) > 2
    for k, t in enumerate(pages):
        assert "first column" in t  # header on every page
        if k:
            assert "Long table (continued)" in t
    found = [m for t in pages for m in re.findall(r"row\d{3}", t)]
    assert found == [f"row{k:03d}" for k in range(150)]  # each row once, in order


def test_nothing_is_drawn_outside_the_margins(pdf):
    # every text of every page lies inside the sheet (no clipped labels): pypdf's visitor
    # gives the text matrix of each run; x and y in points on a 595 x 842 pt A4 page
    r = pypdf.PdfReader(io.BytesIO(pdf))
    for page in r.pages:
        w, h = float(page.mediabox.width), float(page.mediabox.height)
        assert (round(w), round(h)) == (595, 842)  # A4 portrait (ISO 216: 210 x 297 mm)
        pos = []

        def visit(text, cm, tm, font, size, pos=pos):
            if text.strip():
                pos.append((tm[4] * cm[0] + cm[4], tm[5] * cm[3] + cm[5]))

        page.extract_text(visitor_text=visit)
        assert pos
        xs, ys = zip(*pos, strict=True)
        assert min(xs) >= 36 and max(xs) <= w - 36  # inside half an inch of each edge
        assert min(ys) >= 18 and max(ys) <= h - 36


# ----------------------------------------------------------------------- writing
def test_write_report_is_atomic(assessment, lineup, tmp_path, monkeypatch):
    out = write_report(assessment, tmp_path / "r.pdf", lineup[0], lineup[1])
    assert out.read_bytes().startswith(b"%PDF-")
    assert [x.name for x in tmp_path.iterdir()] == ["r.pdf"]
    from pqcalc.installation import export

    def boom(src, dst):
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(export.os, "replace", boom)
    # a failed write is one named error (InputError) and leaves nothing behind
    with pytest.raises((OSError, InputError), match="disk full"):
        write_report(assessment, tmp_path / "s.pdf", lineup[0], lineup[1])
    assert [x.name for x in tmp_path.iterdir()] == ["r.pdf"]  # no s.pdf, no temporary


def test_write_report_refuses_a_missing_folder_or_wrong_suffix(assessment, tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        write_report(assessment, tmp_path / "nope" / "r.pdf", [])
    with pytest.raises(InputError, match=r"\.pdf"):
        write_report(assessment, tmp_path / "r.txt", [])
    assert list(tmp_path.iterdir()) == []
