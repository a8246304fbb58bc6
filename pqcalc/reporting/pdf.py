"""The typesetting of the PDF submittal: reportlab's platypus with measured text.

A document is a list of flowables (headings, paragraphs, tables, figures) poured into the
frames of a page template; platypus measures every string with the embedded font's own
metrics, breaks tables across pages with their header row repeated, keeps a heading with
what follows it, and gathers the headings into a table of contents and the PDF outline
(bookmarks). This module holds the pieces; :mod:`pqcalc.reporting.story` says what the
submittal contains.

Text is set in DejaVu Sans, the TrueType family matplotlib ships (so the report and its
figures share one face, and Unicode symbols such as ohm and micro print); the fonts are
embedded as subsets with their Unicode maps, so the text can be searched and extracted.

Table cells are broken into lines here, before platypus sees them, by :func:`fit_lines`:
at spaces, or after a hyphen, underscore, slash or dot, measured against the column's
width. An identifier such as ``north-wing-corridor-downlight`` therefore wraps after one of
its hyphens and never inside a word; only a single word wider than the whole column is cut,
as a last resort.

Figures are matplotlib figures saved as PDF and placed as form XObjects (vector: lines,
hatching and text stay as drawn; pdfrw carries the page across).
"""

from __future__ import annotations

import functools
import io
import os
import re
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any
from xml.sax.saxutils import escape

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.figure import Figure
    from reportlab.platypus import Flowable

__all__ = ["Col", "Fonts", "fit_lines", "para", "heading", "table", "fields_table",
           "FigureBook",
           "keep", "toc", "build_pdf", "INK", "GREY", "STATUS_COLOR", "pdf_text"]

INK = "#1b2633"
GREY = "#555555"
RULE = "#9aa5b1"
HEAD_BG = "#e9edf2"
STATUS_COLOR = {"fail": "#8a2f1f", "warn": "#8a5a00", "pass": INK, "info": GREY,
                "n/a": GREY, "not assessed": "#8a2f1f"}

# margins [pt]
_LEFT = _RIGHT = 54.0
_TOP = 50.0
_BOTTOM = 64.0  # room for the two-line footer with the caution


# ------------------------------------------------------------------------------ fonts
class Fonts:
    """The DejaVu Sans family matplotlib ships, registered once with reportlab."""

    regular = "PQSans"
    bold = "PQSans-Bold"
    italic = "PQSans-Oblique"
    _done = False

    @classmethod
    def register(cls) -> None:
        if cls._done:
            return
        import matplotlib
        from reportlab.lib.fonts import addMapping
        from reportlab.pdfbase import pdfmetrics
        from reportlab.pdfbase.ttfonts import TTFont

        d = os.path.join(matplotlib.get_data_path(), "fonts", "ttf")
        files = {cls.regular: "DejaVuSans.ttf", cls.bold: "DejaVuSans-Bold.ttf",
                 cls.italic: "DejaVuSans-Oblique.ttf", "PQSans-BoldOblique":
                 "DejaVuSans-BoldOblique.ttf"}
        for name, f in files.items():
            pdfmetrics.registerFont(TTFont(name, os.path.join(d, f)))
        addMapping(cls.regular, 0, 0, cls.regular)
        addMapping(cls.regular, 1, 0, cls.bold)
        addMapping(cls.regular, 0, 1, cls.italic)
        addMapping(cls.regular, 1, 1, "PQSans-BoldOblique")
        cls._done = True


def _width(s: str, font: str, size: float) -> float:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    return stringWidth(s, font, size)


# --------------------------------------------------------------------------- wrapping
#: Break opportunities inside a word: after a hyphen, underscore or slash that follows a
#: letter or digit (so "-12" and "0.93" stay whole).
_BREAK_AFTER = re.compile(r"(?<=[A-Za-z0-9)\]][-_/])")


def _pieces(word: str) -> list[str]:
    """A word cut after each hyphen, underscore or slash (the places it may wrap)."""
    return [p for p in _BREAK_AFTER.split(word) if p]


def fit_lines(text: str, width: float, font: str, size: float) -> list[str]:
    """See :func:`_fit_lines` (cached: table cells repeat, "ok", "L1", a scenario name)."""
    return list(_fit_cached(str(text), round(width, 3), font, size))


@functools.lru_cache(maxsize=65536)
def _fit_cached(text: str, width: float, font: str, size: float) -> tuple[str, ...]:
    return tuple(_fit_lines(text, width, font, size))


def _fit_lines(text: str, width: float, font: str, size: float) -> list[str]:
    """``text`` broken into lines no wider than ``width`` [pt] in ``font`` at ``size``.

    Lines break at spaces (the space is dropped) or after a hyphen, underscore or slash
    inside a word (kept at the end of the line). A single piece wider than
    the column is cut at the last character that fits (the only break inside a word, and
    only where nothing else fits). Explicit newlines are kept.

    >>> Fonts.register()
    >>> fit_lines("north-wing-corridor-downlight", 60, Fonts.regular, 8)
    ['north-wing-', 'corridor-', 'downlight']
    """
    out: list[str] = []
    space = _width(" ", font, size)
    for raw in str(text).split("\n"):
        words = raw.split()
        line, lw = "", 0.0
        for w in words:
            ww = _width(w, font, size)
            if not line:
                if ww <= width:
                    line, lw = w, ww
                    continue
            elif lw + space + ww <= width:
                line, lw = f"{line} {w}", lw + space + ww
                continue
            # the word does not fit on this line: fill it with the word's pieces
            pieces = _pieces(w)
            sep = " " if line else ""
            for k, p in enumerate(pieces):
                pw = _width(p, font, size)
                add = (space if sep else 0.0) + pw
                if line and lw + add <= width:
                    line, lw = f"{line}{sep}{p}", lw + add
                    sep = ""
                    continue
                if line:
                    out.append(line)
                line, lw, sep = "", 0.0, ""
                while pw > width and len(p) > 1:  # a piece wider than the column: cut it
                    n = len(p) - 1
                    while n > 1 and _width(p[:n], font, size) > width:
                        n -= 1
                    out.append(p[:n])
                    p = p[n:]
                    pw = _width(p, font, size)
                line, lw = p, pw
                del k
        out.append(line)
    return out


# ----------------------------------------------------------------------------- styles
def _styles() -> dict[str, Any]:
    from reportlab.lib.colors import HexColor
    from reportlab.lib.styles import ParagraphStyle

    Fonts.register()
    ink, grey = HexColor(INK), HexColor(GREY)
    base = ParagraphStyle("body", fontName=Fonts.regular, fontSize=9, leading=11.5,
                          textColor=ink, spaceAfter=4)
    return {
        "body": base,
        "bold": ParagraphStyle("bold", parent=base, fontName=Fonts.bold),
        "small": ParagraphStyle("small", parent=base, fontSize=7.5, leading=9.5,
                                textColor=grey),
        "note": ParagraphStyle("note", parent=base, fontSize=8, leading=10, textColor=grey),
        "title": ParagraphStyle("title", parent=base, fontName=Fonts.bold, fontSize=20,
                                leading=24, spaceAfter=8),
        "subtitle": ParagraphStyle("subtitle", parent=base, fontSize=11, leading=14,
                                   textColor=grey, spaceAfter=6),
        "h1": ParagraphStyle("h1", parent=base, fontName=Fonts.bold, fontSize=14, leading=17,
                             spaceBefore=4, spaceAfter=8),
        "h2": ParagraphStyle("h2", parent=base, fontName=Fonts.bold, fontSize=11.5, leading=14,
                             spaceBefore=10, spaceAfter=5),
        "h3": ParagraphStyle("h3", parent=base, fontName=Fonts.bold, fontSize=9.5, leading=12,
                             spaceBefore=8, spaceAfter=3),
        "caption": ParagraphStyle("caption", parent=base, fontSize=7.5, leading=9.5,
                                  textColor=grey, spaceBefore=2, spaceAfter=8),
        "toc1": ParagraphStyle("toc1", parent=base, fontSize=9.5, leading=13, leftIndent=0),
        "toc2": ParagraphStyle("toc2", parent=base, fontSize=8.5, leading=11, leftIndent=14,
                               textColor=grey),
    }


_STYLES: dict[str, Any] | None = None


def style(name: str) -> Any:
    global _STYLES
    if _STYLES is None:
        _STYLES = _styles()
    return _STYLES[name]


def para(text: str, kind: str = "body", markup: bool = False) -> Flowable:
    """A paragraph; ``text`` is plain (escaped here) unless ``markup`` says it is already
    reportlab's XML (``<b>``, ``<font>``)."""
    from reportlab.platypus import Paragraph

    return Paragraph(text if markup else escape(str(text)), style(kind))


def heading(text: str, level: int = 1, new_page: bool = False, toc: bool = True
            ) -> list[Flowable]:
    """A heading of level 1..3; level 1 and 2 go to the contents and the outline.

    Kept with what follows: the heading starts a new page when less than a few lines of
    room (:data:`KEEP_PT`) would be left under it (a conditional page break, so a long
    table under it still starts on the same page and splits)."""
    from reportlab.platypus import CondPageBreak, PageBreak, Paragraph

    p = Paragraph(escape(text), style(f"h{level}"))
    p._pq_heading = (level, text, toc)
    return [PageBreak() if new_page else CondPageBreak(KEEP_PT[level]), p]


#: Room [pt] a heading of each level needs under it to stay on its page.
KEEP_PT = {1: 150.0, 2: 110.0, 3: 70.0}


def keep(items: Sequence[Flowable]) -> Flowable:
    from reportlab.platypus import KeepTogether

    return KeepTogether(list(items))


# ------------------------------------------------------------------------------ tables
@dataclass(frozen=True)
class Col:
    """A table column: its title, its share of the text width [-], its alignment."""

    title: str
    share: float
    align: str = "left"


def table(cols: Sequence[Col], rows: Iterable[Sequence[Any]], *, status_col: int | None = None,
          size: float = 7.5, width: float | None = None, header: bool = True,
          bold_col: int | None = None) -> Flowable:
    """A table whose cells are measured and wrapped by :func:`fit_lines`; it splits between
    rows across pages with its header row repeated. ``status_col``: a column of statuses
    (PASS, FAIL, WARN...) printed in their colour and bold. ``width`` [pt]: the text width
    (default: the frame width of the current paper, set by :func:`build_pdf`)."""
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    Fonts.register()
    total = width if width is not None else _FRAME_WIDTH[0]
    tot_share = sum(c.share for c in cols)
    widths = [total * c.share / tot_share for c in cols]
    pad = 3.0
    lead = size * 1.22
    data: list[list[str]] = []
    cmds: list[tuple] = [
        ("FONT", (0, 0), (-1, -1), Fonts.regular, size, lead),
        ("TEXTCOLOR", (0, 0), (-1, -1), colors.HexColor(INK)),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), pad), ("RIGHTPADDING", (0, 0), (-1, -1), pad),
        ("TOPPADDING", (0, 0), (-1, -1), 1.6), ("BOTTOMPADDING", (0, 0), (-1, -1), 2.4),
        ("LINEBELOW", (0, 0), (-1, -1), 0.25, colors.HexColor("#c9d0d8")),
    ]
    if header:
        data.append(["\n".join(fit_lines(c.title, w - 2 * pad, Fonts.bold, size))
                     for c, w in zip(cols, widths, strict=True)])
        cmds += [("FONT", (0, 0), (-1, 0), Fonts.bold, size, lead),
                 ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor(HEAD_BG)),
                 ("LINEBELOW", (0, 0), (-1, 0), 0.6, colors.HexColor(RULE)),
                 ("VALIGN", (0, 0), (-1, 0), "BOTTOM")]
    for k, c in enumerate(cols):
        if c.align != "left":
            cmds.append(("ALIGN", (k, 0), (k, -1), c.align.upper()))
    if bold_col is not None:
        cmds.append(("FONT", (bold_col, 1 if header else 0), (bold_col, -1), Fonts.bold, size,
                     lead))
    r0 = len(data)
    for i, row in enumerate(rows):
        cells = []
        for k, (v, w) in enumerate(zip(row, widths, strict=True)):
            s = "-" if v is None else str(v)
            font = Fonts.bold if (k == status_col or k == bold_col) else Fonts.regular
            cells.append("\n".join(fit_lines(s, w - 2 * pad, font, size)))
            if k == status_col:
                col = STATUS_COLOR.get(s.lower().split(" ")[0], INK)
                cmds.append(("TEXTCOLOR", (k, r0 + i), (k, r0 + i), colors.HexColor(col)))
                cmds.append(("FONT", (k, r0 + i), (k, r0 + i), Fonts.bold, size, lead))
        data.append(cells)
    if len(data) == (1 if header else 0):
        data.append(["(none)"] + [""] * (len(cols) - 1))
    t = Table(data, colWidths=widths, repeatRows=1 if header else 0, hAlign="LEFT")
    t.setStyle(TableStyle(cmds))
    return t


def fields_table(rows: Sequence[tuple[str, str]], shares: tuple[float, float] = (0.28, 0.72),
                 size: float = 9.0) -> Flowable:
    """Label / value pairs without a header (a title block, a list of assumptions)."""
    return table([Col("", shares[0]), Col("", shares[1])], rows, size=size, header=False,
                 bold_col=None)


# ----------------------------------------------------------------------------- figures
class FigureBook:
    """Figures saved one after another into one matplotlib PDF (so their fonts are
    embedded once, not once per figure), each closed as soon as it is drawn; placed in the
    report as form XObjects read back from that file (vector: lines, hatching and text
    stay as drawn). A figure is kept under a key of its content and drawn once however
    often it is placed.
    """

    def __init__(self) -> None:
        from matplotlib.backends.backend_pdf import PdfPages

        self._buf = io.BytesIO()
        self._pages = PdfPages(self._buf)
        self._slots: dict[Any, tuple[int, float, float]] = {}
        self._xobjs: list[Any] = []
        self.drawn = 0

    def add(self, key: Any, make: Callable[[], Figure]) -> tuple[int, float, float]:
        """Draw the figure ``make()`` unless ``key`` is known; (page, width, height [pt])."""
        if key not in self._slots:
            from ..plotting.style import STYLE, _mpl, figures_without_caution

            with figures_without_caution():
                fig = make()
            w, h = fig.get_size_inches()
            with _mpl().rc_context(STYLE):
                self._pages.savefig(fig)
            fig.clear()
            self._slots[key] = (self.drawn, float(w) * 72.0, float(h) * 72.0)
            self.drawn += 1
        return self._slots[key]

    def place(self, key: Any, make: Callable[[], Figure], width_frac: float = 0.82
              ) -> Flowable:
        """A flowable showing the figure at ``width_frac`` of the text width."""
        page, w, h = self.add(key, make)
        return _FigureFlowable(self, page, w, h, width_frac)

    def xobject(self, page: int) -> Any:
        if not self._xobjs:
            from pdfrw import PdfReader
            from pdfrw.buildxobj import pagexobj

            from ..plotting.style import STYLE, _mpl

            with _mpl().rc_context(STYLE):  # the fonts are written here: TrueType (Type 42)
                self._pages.close()
            data = self._buf.getvalue()
            self._xobjs = [pagexobj(pg) for pg in PdfReader(fdata=data).pages] if data else []
        return self._xobjs[page]


def _figure_flowable_class() -> type:
    from reportlab.platypus import Flowable

    class FigureFlowable(Flowable):
        def __init__(self, book: FigureBook, page: int, w: float, h: float,
                     width_frac: float) -> None:
            super().__init__()
            self.hAlign = "CENTER"
            self.book, self.page, self.w0, self.h0 = book, page, w, h
            self.width_frac = width_frac
            self.scale = 1.0

        def wrap(self, aw: float, ah: float) -> tuple[float, float]:
            self.scale = min(self.width_frac * _FRAME_WIDTH[0], aw) / self.w0
            self.width, self.height = self.w0 * self.scale, self.h0 * self.scale
            return self.width, self.height

        def draw(self) -> None:
            from pdfrw.toreportlab import makerl

            xobj = self.book.xobject(self.page)
            c = self.canv
            c.saveState()
            c.scale(self.scale, self.scale)
            c.doForm(makerl(c, xobj))
            c.restoreState()

    return FigureFlowable


def _FigureFlowable(*args: Any) -> Flowable:  # noqa: N802 (a class made on first use)
    global _FF
    if _FF is None:
        _FF = _figure_flowable_class()
    return _FF(*args)


_FF: Any = None


# ---------------------------------------------------------------------------- document
_FRAME_WIDTH = [595.27 - _LEFT - _RIGHT]  # set by build_pdf for the chosen paper


def frame_width() -> float:
    return _FRAME_WIDTH[0]


def set_paper(size_pt: tuple[float, float]) -> None:
    """Set the text width the tables and figures are measured against."""
    _FRAME_WIDTH[0] = size_pt[0] - _LEFT - _RIGHT


def build_pdf(story: list[Flowable], size_pt: tuple[float, float], *, footer_left: str,
              footer_caution: str, header: str, meta: dict[str, str]) -> bytes:
    """Typeset ``story`` into PDF bytes on pages of ``size_pt`` [pt].

    Passes are repeated (platypus' ``multiBuild``) until the table of contents, if the
    story holds one, and the page count of "page n of N" are settled; the flowables are
    reused from pass to pass, so figures are drawn once.
    """
    from reportlab.lib.colors import HexColor
    from reportlab.platypus import BaseDocTemplate, Flowable, Frame, PageTemplate

    Fonts.register()
    set_paper(size_pt)
    w, h = size_pt
    grey = HexColor(GREY)

    class PageCount(Flowable):
        """Not drawn: settles the page count (one more pass when it changed)."""

        def __init__(self) -> None:
            super().__init__()
            self.used = self.last = 0
            self.doc: Any = None

        def isIndexing(self) -> int:
            return 1

        def isSatisfied(self) -> bool:
            return self.used == self.last > 0

        def beforeBuild(self) -> None:
            self.used = self.last

        def notify(self, kind: str, stuff: Any) -> None:
            pass

        def afterBuild(self) -> None:
            self.last = self.doc.page

        def wrap(self, aw: float, ah: float) -> tuple[float, float]:
            return 0.0, 0.0

        def draw(self) -> None:
            pass

    count = PageCount()

    def decorate(canv: Any, doc: Any) -> None:
        canv.saveState()
        canv.setStrokeColor(HexColor(RULE))
        canv.setLineWidth(0.5)
        if doc.page > 1:
            canv.setFont(Fonts.regular, 7)
            canv.setFillColor(grey)
            canv.drawString(_LEFT, h - 32, fit_lines(header, w - _LEFT - _RIGHT, Fonts.regular,
                                                     7)[0])
            canv.line(_LEFT, h - 36, w - _RIGHT, h - 36)
        canv.line(_LEFT, _BOTTOM - 12, w - _RIGHT, _BOTTOM - 12)
        canv.setFont(Fonts.regular, 7)
        canv.setFillColor(HexColor(INK))
        n = f"page {doc.page} of {count.used}" if count.used else f"page {doc.page}"
        canv.drawRightString(w - _RIGHT, _BOTTOM - 21, n)
        left = fit_lines(footer_left, w - _LEFT - _RIGHT - 70, Fonts.regular, 7)[0]
        canv.drawString(_LEFT, _BOTTOM - 21, left)
        canv.setFont(Fonts.regular, 6)
        canv.setFillColor(grey)
        for k, line in enumerate(fit_lines(footer_caution, w - _LEFT - _RIGHT, Fonts.regular,
                                           6)[:3]):
            canv.drawString(_LEFT, _BOTTOM - 30 - 7 * k, line)
        canv.restoreState()

    class Doc(BaseDocTemplate):
        def afterFlowable(self, flowable: Any) -> None:
            info = getattr(flowable, "_pq_heading", None)
            if info is None:
                return
            level, text, in_toc = info
            if level > 2:
                return
            key = f"h{id(flowable)}"
            self.canv.bookmarkPage(key)
            self.canv.addOutlineEntry(text, key, level=level - 1, closed=level > 1)
            if in_toc:
                self.notify("TOCEntry", (level - 1, text, self.page, key))

    buf = io.BytesIO()
    doc = Doc(buf, pagesize=size_pt, leftMargin=_LEFT, rightMargin=_RIGHT,
              topMargin=_TOP, bottomMargin=_BOTTOM, title=meta.get("Title", ""),
              author=meta.get("Author", ""), subject=meta.get("Subject", ""),
              creator=meta.get("Creator", ""), keywords=meta.get("Keywords", ""),
              producer=meta.get("Creator", ""), lang="en", pageCompression=1,
              initialFontName=Fonts.regular, initialFontSize=9,
              displayDocTitle=True)
    frame = Frame(_LEFT, _BOTTOM, w - _LEFT - _RIGHT, h - _TOP - _BOTTOM, id="body",
                  leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0)
    doc.addPageTemplates([PageTemplate("page", [frame], onPage=decorate)])
    count.doc = doc
    doc.multiBuild([count, *story], maxPasses=6)
    return buf.getvalue()


def toc() -> Flowable:
    """The table of contents (filled from the level-1 and level-2 headings)."""
    from reportlab.platypus.tableofcontents import TableOfContents

    t = TableOfContents(dotsMinLevel=0)
    t.levelStyles = [style("toc1"), style("toc2")]
    return t


def pdf_text(data: bytes) -> list[str]:
    """The text of each page (pypdf), whitespace collapsed: for checks and tests."""
    import pypdf

    r = pypdf.PdfReader(io.BytesIO(data))
    return [" ".join((p.extract_text() or "").split()) for p in r.pages]
