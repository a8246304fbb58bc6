"""The PDF submittal: title block, sections, evidence, ids that wrap only at hyphens, the
paper of the region, pagination, the caution, atomic writes.

The text is extracted with pypdf (an independent PDF reader); page images are rendered with
poppler's pdftoppm to show a second renderer reads the file. The installation is invented:
the demo captures (a measured 9 W downlight), one modelled 10 W sine-following lamp behind
a leading-edge dimmer (several compliance states), and a 60-character fixture-type id.
"""

from __future__ import annotations

import io
import math
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from pqcalc import __version__
from pqcalc.cli import main
from pqcalc.errors import InputError
from pqcalc.installation import assess, evaluate_lineup, load_installation
from pqcalc.installation.lineup import limits_in_amps
from pqcalc.installation.results import CAUTION
from pqcalc.report import APPENDIX_TITLE, SECTION_TITLES, report_pdf_bytes, write_report
from pqcalc.reporting.pdf import Col, Fonts, build_pdf, fit_lines, table
from pqcalc.reporting.story import deciding_state
from pqcalc.spectrum import spectrum
from pqcalc.standards import evaluate_fixture
from pqcalc.waveform import Waveform

pypdf = pytest.importorskip("pypdf")

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"
LONG_ID = "north-wing-ground-floor-corridor-downlight-measured-batch-02"
assert len(LONG_ID) == 60

PROJECT = """
[project]
name = "Report test building"
site = "Test Street 1"
client = "Invented Client Ltd"
document_number = "PQ-0042"
revision = "B"
status = "issued for review"
date = "2026-12-01"
prepared_by = "T. Tester"
checked_by = "C. Checker"
approved_by = "A. Approver"
revisions = [{rev = "A", date = "2026-11-20", description = "first issue", by = "T. Tester"},
             {rev = "B", date = "2026-12-01", description = "dimmers re-rated", by = "T. Tester"}]
"""

SITE = """
[supply]
system = "three-phase-wye"
voltage_ln_v = 230
frequency_hz = 50
{rules}
[supply.transformer]
kva = 100
impedance_pct = 4.0
x_over_r = 3.0

[analysis]
scenarios = ["full output", "evening"]
supply_interaction = false

[fixtures.{long}]
capture = "downlight_full.csv"
power_w = 9
description = "9 W downlight, full output"

[fixtures.dl-dim]
capture = "downlight_dimmed.csv"
power_w = 9

[fixtures.sf]
model = "sine-follow"
power_w = 10
[fixtures.sf.params]
c_in_f = 6.8e-8

[[panels]]
id = "DB-NORTH-WING-1"
neutral_ampacity_a = 25

[[panels.circuits]]
id = "north-corridor-c1"
line = "L1"
dimmer = "leading-edge"
conduction_deg = [180, 120]
fixtures = [{{type = "sf", count = 10}}]

[[panels.circuits]]
id = "c2"
line = "L2"
fixtures = [{{type = "{long}", count = 20}}]

[[panels.circuits]]
id = "c3"
line = "L3"
fixtures = [{{type = "dl-dim", count = 20}}]
{extra}
"""


def make_site(folder: Path, project: str = PROJECT, rules: str = "", extra: str = "") -> Path:
    for f in ("downlight_full.csv", "downlight_dimmed.csv"):
        shutil.copy(DEMO / f, folder)
    p = folder / "site.toml"
    p.write_text(project + SITE.format(long=LONG_ID, rules=rules, extra=extra))
    return p


def pdf_pages_text(data: bytes) -> list[str]:
    r = pypdf.PdfReader(io.BytesIO(data))
    return [" ".join((p.extract_text() or "").split()) for p in r.pages]


def page_sizes(data: bytes) -> set[tuple[int, int]]:
    r = pypdf.PdfReader(io.BytesIO(data))
    return {(round(float(p.mediabox.width)), round(float(p.mediabox.height))) for p in r.pages}


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    return load_installation(make_site(tmp_path_factory.mktemp("site")))


@pytest.fixture(scope="module")
def assessment(site):
    return assess(site)


@pytest.fixture(scope="module")
def lineup(site):
    return evaluate_lineup(site)


@pytest.fixture(scope="module")
def pdf(assessment, lineup):
    return report_pdf_bytes(assessment, lineup, generated="2026-12-01 12:00")


@pytest.fixture(scope="module")
def text(pdf):
    return pdf_pages_text(pdf)


# ------------------------------------------------------------------------ structure
def test_report_has_every_section_in_order(text):
    body = " ".join(text[2:])  # after the title page and the contents
    pos = [body.find(t) for t in SECTION_TITLES + (APPENDIX_TITLE,)]
    assert all(p >= 0 for p in pos), dict(zip(SECTION_TITLES, pos, strict=False))
    assert pos == sorted(pos)
    contents = text[1]
    assert contents.startswith("Contents") or "Contents" in contents
    assert all(t in contents for t in SECTION_TITLES)


def test_outline_bookmarks_name_the_sections(pdf):
    r = pypdf.PdfReader(io.BytesIO(pdf))

    def titles(items):
        for it in items:
            if isinstance(it, list):
                yield from titles(it)
            else:
                yield it.title

    names = list(titles(r.outline))
    for t in SECTION_TITLES:
        assert t in names


def test_title_block_fields_and_revision_table(text):
    first = text[0]
    for s in ("Report test building", "Test Street 1", "Invented Client Ltd", "PQ-0042",
              "issued for review", "2026-12-01", "T. Tester", "C. Checker", "A. Approver",
              "first issue", "dimmers re-rated", "2026-11-20", f"pqcalc {__version__}",
              "prepared by", "checked by", "approved by", "signature"):
        assert s in first, s
    # the document number and revision are in every page's footer
    assert all("PQ-0042" in t and "rev B" in t for t in text)


def test_title_fields_not_given_leave_a_line_to_fill(tmp_path):
    inst = load_installation(make_site(tmp_path, project='[project]\nname = "Bare"\n'))
    assert inst.project.client == "" and inst.project.revisions == ()
    a = assess(inst)
    first = pdf_pages_text(report_pdf_bytes(a, [], generated="now"))[0]
    assert "Client ______" in first and "Document number ______" in first
    assert "no revision table" in first


def test_pages_are_numbered(text):
    n = len(text)
    for i, t in enumerate(text, 1):
        assert f"page {i} of {n}" in t


def test_the_caution_once_in_its_section_and_once_per_page_in_the_footer(text):
    c = " ".join(CAUTION.split())
    counts = [t.count(c) for t in text]
    # every footer carries it; the caution section's page carries it a second time; no
    # figure or note repeats it
    assert all(k >= 1 for k in counts)
    assert sum(k - 1 for k in counts) == 1
    sec = next(i for i, t in enumerate(text) if re.search(r"\bCaution\b" + " " + re.escape(c),
                                                          t))
    assert counts[sec] == 2


# ------------------------------------------------------------------------- the ids
def test_every_fixture_circuit_and_panel_id_is_in_the_text_unbroken(text, site):
    whole = " ".join(text)
    ids = list(site.fixtures) + [c.id for c in site.circuits] + [p.id for p in site.panels]
    for x in ids:
        assert x in whole, x


def _breaks(whole: str, ident: str) -> list[list[int]]:
    """For each occurrence of ``ident`` in ``whole`` with any whitespace between its
    characters: the positions (in the id) where whitespace was found."""
    pat = r"\s?".join(re.escape(ch) for ch in ident)
    out = []
    for m in re.finditer(pat, whole):
        s, k, gaps = m.group(0), 0, []
        for ch in s:
            if ch.isspace():
                gaps.append(k)
            else:
                k += 1
        out.append(gaps)
    return out


def test_a_60_character_id_wraps_at_a_hyphen_never_mid_word(pdf):
    # in the compliance table the fixture-type column is about 110 pt wide: the id must
    # wrap there, and every break falls right after one of its hyphens
    r = pypdf.PdfReader(io.BytesIO(pdf))
    whole = " ".join((p.extract_text() or "") for p in r.pages)
    found = _breaks(whole, LONG_ID)
    assert any(g for g in found), "the long id never wrapped"
    for gaps in found:
        for k in gaps:
            assert LONG_ID[k - 1] == "-", (LONG_ID[:k], LONG_ID[k:])


@pytest.mark.parametrize("width", [30, 45, 60, 90, 120, 200, 400])
def test_fit_lines_breaks_after_hyphens_and_measures_with_the_font(width):
    # the lines join back to the id; each line but the last ends with a hyphen; each fits
    # its width as measured by reportlab's metrics of the embedded font (DejaVu Sans)
    from reportlab.pdfbase.pdfmetrics import stringWidth

    Fonts.register()
    lines = fit_lines(LONG_ID, width, Fonts.regular, 7.5)
    assert "".join(lines) == LONG_ID
    assert all(stringWidth(ln, Fonts.regular, 7.5) <= width + 1e-9 for ln in lines)
    widest_piece = max(stringWidth(p + "-", Fonts.regular, 7.5) for p in LONG_ID.split("-"))
    if width >= widest_piece:  # narrower than a word: cut as a last resort (not tested)
        assert all(ln.endswith("-") for ln in lines[:-1])
    else:
        assert width < 45  # the longest word, "downlight-", is about 37 pt at 7.5 pt


def test_fit_lines_keeps_words_and_numbers_whole():
    Fonts.register()
    lines = fit_lines("margin -12.5 % at order 5, value 0.935 A", 40, Fonts.regular, 8)
    assert " ".join(lines) == "margin -12.5 % at order 5, value 0.935 A"


# ------------------------------------------------------------------------ evidence
def _margin(state) -> float:
    """Least relative margin over the deciding rule's checks, computed here from the
    value and the limit (IEC 61000-3-2 limits are upper bounds except the waveform
    test's 'stay above' angle), disregarded harmonics left out."""
    dec = state.result.deciding
    if dec is None:
        return math.inf
    ms = [((c.limit - c.value) if c.bound != "min" else (c.value - c.limit)) / abs(c.limit)
          for c in dec.checks if c.limit and math.isfinite(c.limit) and not c.disregarded]
    return min(ms, default=math.inf)


def test_the_deciding_state_is_named_per_fixture_type(text, lineup):
    whole = " ".join(text)
    assert any(len(e.states) > 1 for e in lineup)  # the sine-following lamp, dimmed
    for e in lineup:
        counted = [s for s in e.states if s.result.role != "informative"] or list(e.states)
        failing = [s for s in counted if s.result.verdict == "fail"]
        expect = min(failing or counted, key=_margin)
        assert deciding_state(e) is expect
        assert f"Deciding state: {expect.state}" in whole, e.fixture


def test_appendix_has_every_order_of_every_state(text, lineup):
    i = next(k for k, t in enumerate(text) if t.startswith(APPENDIX_TITLE)
             or APPENDIX_TITLE in t.split("Contents")[-1] and k > 1)
    app = " ".join(text[i:])
    assert "margin [% of limit]" in app
    for e in lineup:
        for s in e.states:
            dec = s.result.deciding
            if dec is None:
                continue
            # each order's limit row: "I<h> <value> <limit> <unit>"
            for c in dec.order_checks():
                assert re.search(rf"\bI{c.order} ", app), (e.fixture, s.state, c.order)


def test_per_panel_line_and_neutral_currents_and_thdv(text, assessment):
    pages = " ".join(t for t in text if "Panel " in t)
    for p in assessment.design.panels:
        assert f"Panel {p.id}" in pages
        assert f"{p.neutral.i_rms_a:.2f}" in pages
    assert "THDv [%]" in pages and "Neutral current spectrum" in pages


def test_assumptions_give_values_and_their_origin(text, site):
    from pqcalc.circuits.drivers import resolve_params

    s = " ".join(t for t in text if SECTION_TITLES[4] in t or "component value origin" in t
                 or "origin" in t)
    assert "file" in s and "model default" in s and "derived" in s
    # the file's filter capacitor (68 nF) and a derived default are printed as used
    assert "68 nF" in s
    used = resolve_params("sine-follow", 10.0, 230.0, 50.0, {"c_in_f": 6.8e-8})
    assert f"{used['n_segments']:g}" in s
    # the dimmer's holding current (model default, 50 mA) and the source impedance
    assert "holding_current_a" in s and "50 mA" in s
    assert "100 kVA transformer" in s


def test_figures_are_vector_drawings_not_images(pdf):
    r = pypdf.PdfReader(io.BytesIO(pdf))
    forms = images = 0
    for page in r.pages:
        xo = page.get("/Resources", {}).get("/XObject", {})
        for v in xo.values():
            sub = v.get_object().get("/Subtype")
            forms += sub == "/Form"
            images += sub == "/Image"
    assert forms >= 3 and images == 0


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="poppler's pdftoppm is absent")
def test_a_second_renderer_reads_every_page(pdf, tmp_path, text):
    p = tmp_path / "r.pdf"
    p.write_bytes(pdf)
    out = subprocess.run(["pdftoppm", "-r", "20", "-png", str(p), str(tmp_path / "pg")],
                         check=True, capture_output=True, timeout=120)
    assert len(list(tmp_path.glob("pg*.png"))) == len(text)
    assert b"Error" not in out.stderr  # no broken fonts or objects


# -------------------------------------------------------------------------- paper
def test_page_size_follows_the_region(tmp_path, assessment, lineup, pdf):
    # ISO 216 A4 210 x 297 mm = 595 x 842 pt; ANSI letter 8.5 x 11 in = 612 x 792 pt
    assert page_sizes(pdf) == {(595, 842)}
    us = load_installation(make_site(tmp_path, rules='rules = "US"'))
    assert us.supply.rules == "US"
    a_us = assess(us)
    assert page_sizes(report_pdf_bytes(a_us, [], generated="now")) == {(612, 792)}
    # overridden: by the file's [report] paper, and by the argument
    (tmp_path / "b").mkdir()
    over = load_installation(make_site(tmp_path / "b", extra='[report]\npaper = "letter"'))
    assert over.report.paper == "Letter"
    assert page_sizes(report_pdf_bytes(assess(over), [], generated="now")) == {(612, 792)}
    assert page_sizes(report_pdf_bytes(a_us, [], generated="now", paper="A4")) == {(595, 842)}
    with pytest.raises(InputError, match="paper"):
        report_pdf_bytes(a_us, [], paper="A5")


def test_nothing_is_drawn_outside_the_margins(pdf):
    r = pypdf.PdfReader(io.BytesIO(pdf))
    for page in r.pages:
        w, h = float(page.mediabox.width), float(page.mediabox.height)
        pos = []

        def visit(text, cm, tm, font, size, pos=pos):
            # the document's own text (TrueType fonts); the figures' text (matplotlib's
            # Type 0 fonts) sits inside form XObjects whose matrix the visitor leaves out
            if text.strip() and font and font.get("/Subtype") == "/TrueType":
                pos.append((tm[4] * cm[0] + cm[4], tm[5] * cm[3] + cm[5]))

        page.extract_text(visitor_text=visit)
        assert pos
        xs, ys = zip(*pos, strict=True)
        assert min(xs) >= 36 and max(xs) <= w - 36  # inside half an inch of each edge
        assert min(ys) >= 18 and max(ys) <= h - 18


# ------------------------------------------------------------------- bad input
def test_revisions_that_are_not_a_list_name_file_line_and_field(tmp_path):
    bad = PROJECT.replace('revisions = [{rev = "A", date = "2026-11-20", description = "first '
                          'issue", by = "T. Tester"},\n             {rev = "B", date = '
                          '"2026-12-01", description = "dimmers re-rated", by = "T. Tester"}]',
                          'revisions = "A: first issue"')
    assert bad != PROJECT
    p = make_site(tmp_path, project=bad)
    with pytest.raises(InputError) as e:
        load_installation(p)
    line = PROJECT.count("\n", 0, PROJECT.index("revisions")) + 1
    assert re.match(rf".*site\.toml:{line}: project\.revisions: expected a list", str(e.value))
    r = CliRunner().invoke(main, ["report", str(p), "-o", str(tmp_path / "r.pdf")])
    assert r.exit_code == 2
    lines = [ln for ln in r.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "project.revisions" in lines[0]
    assert not (tmp_path / "r.pdf").exists()


def test_a_paper_size_that_does_not_exist_is_one_line_exit_2(tmp_path):
    p = make_site(tmp_path, extra='[report]\npaper = "A5"')
    with pytest.raises(InputError, match=r"site\.toml:\d+: report\.paper: expected one of A4, "
                                         r"Letter, got 'A5'"):
        load_installation(p)
    ok = make_site(tmp_path)
    r = CliRunner().invoke(main, ["report", str(ok), "--paper", "B5", "-o",
                                  str(tmp_path / "r.pdf")])
    assert r.exit_code == 2, r.output
    lines = [ln for ln in r.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "--paper" in lines[0] and "B5" in lines[0]
    assert not (tmp_path / "r.pdf").exists()


# ----------------------------------------------------------------- lineup handling
def test_limits_in_amperes_from_the_deciding_rule():
    # Class C above 25 W, IEC 61000-3-2:2018 Table 2: h5 at 10 % and h7 at 7 % of the
    # fundamental, h3 at 30 x lambda % (ed. 5.0) or 27 % (ed. 5.1). A 60 W load:
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
    assert lim[3] == pytest.approx(0.27 * s.i1_a, rel=1e-9)
    r5 = evaluate_fixture(w, nominal_voltage_v=230, fixture="x", edition="5.0")
    assert limits_in_amps(r5, s)[3] == pytest.approx(0.30 * r5.pf * s.i1_a, rel=1e-9)


def _hatched(fig) -> set[int]:
    return {int(b.get_gid().split("-")[1]) for b in fig.axes[0].patches
            if (b.get_gid() or "").startswith("order-") and b.get_hatch()}


def test_report_figure_hatches_exactly_the_orders_the_table_fails():
    # 30 W at 230 V: I1 = 0.1304 A. h2 at 3 % of I1 = 3.9 mA is over Table 2's 2 % but below
    # the 5 mA under which harmonics are disregarded (IEC 61000-3-2, clause 7; memory):
    # PASS in the table, so not hatched. h5 at 12 % is over Table 2's 10 %: FAIL, hatched.
    from pqcalc.installation.lineup import LineupEntry, LineupState
    from pqcalc.plots import spectrum_figure
    from pqcalc.reporting.story import spectrum_fig

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
    fig = spectrum_fig(e)
    assert _hatched(fig) == table_fails
    # the legend names the rule once, not "Class C, class C"
    labels = [t.get_text() for lg in fig.legends + [fig.axes[0].get_legend()] if lg
              for t in lg.get_texts()]
    assert not any(re.search(r"class C.*class C", t, re.I) for t in labels), labels
    lims = {h: 100 * lim / s.i1_a for h, lim in st.limits_a.items()}
    assert _hatched(spectrum_figure(st.magnitudes_a, lims, unit="pct")) == {2, 5}


def test_summary_of_a_120_v_lineup_is_information_only(tmp_path):
    # IEC 61000-3-2, clause 1: no limits below 220 V line-to-neutral
    from types import SimpleNamespace

    from pqcalc.reporting.story import lineup_summary

    from .test_lineup import led_site

    entries = evaluate_lineup(load_installation(led_site(tmp_path, 120, 60)))
    a = SimpleNamespace(installation=SimpleNamespace(supply=SimpleNamespace(voltage_ln_v=120.0)))
    line = lineup_summary(a, entries)
    assert "information only" in line and "220 V" in line and "failing" not in line


def test_summary_with_an_empty_lineup_says_so(assessment):
    from pqcalc.reporting.story import summary

    texts = [getattr(f, "text", "") for f in summary(assessment, [], [])]
    assert any("Fixture lineup: not evaluated" in t for t in texts)


# ---------------------------------------------------------------------- pagination
def test_long_tables_repeat_their_header_and_never_split_a_row():
    rows = [(f"row{k:03d}", "word " * (3 + k % 17)) for k in range(150)]
    data = build_pdf([table([Col("first column", 1.0), Col("wrapped text", 2.0)], rows)],
                     (595.27, 841.89), footer_left="f", footer_caution="c", header="h",
                     meta={})
    pages = pdf_pages_text(data)
    assert len(pages) > 2
    assert all("first column" in t for t in pages)  # the header row on every page
    found = [m for t in pages for m in re.findall(r"row\d{3}", t)]
    assert found == [f"row{k:03d}" for k in range(150)]  # each row once, in order


# ----------------------------------------------------------------------- writing
def test_write_report_is_atomic(assessment, lineup, tmp_path, monkeypatch):
    out = write_report(assessment, tmp_path / "r.pdf", lineup)
    assert out.read_bytes().startswith(b"%PDF-")
    assert [x.name for x in tmp_path.iterdir()] == ["r.pdf"]
    from pqcalc.installation import export

    def boom(src, dst):
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(export.os, "replace", boom)
    with pytest.raises((OSError, InputError), match="disk full"):
        write_report(assessment, tmp_path / "s.pdf", lineup)
    assert [x.name for x in tmp_path.iterdir()] == ["r.pdf"]


def test_write_report_refuses_a_missing_folder_or_wrong_suffix(assessment, tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        write_report(assessment, tmp_path / "nope" / "r.pdf", [])
    with pytest.raises(InputError, match=r"\.pdf"):
        write_report(assessment, tmp_path / "r.txt", [])
    assert list(tmp_path.iterdir()) == []
