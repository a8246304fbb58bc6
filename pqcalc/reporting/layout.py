"""Page layout for the PDF submittal: A4 portrait pages, text, tables and images drawn
with matplotlib; tables continue on the next page with their header repeated."""

from __future__ import annotations

import io
import textwrap
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, SupportsFloat

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.figure import Figure


__all__ = ["A4_IN", "Col", "Doc", "fmt_num", "fmt_pct"]


# ----------------------------------------------------------------------------- layout
A4_IN = (8.27, 11.69)
_LEFT, _RIGHT, _TOP, _BOTTOM = 0.75, 0.75, 0.75, 0.85
_WIDTH = A4_IN[0] - _LEFT - _RIGHT
_INK = "#1b2633"
_GREY = "#555555"
_RULE = "#9aa5b1"
_STATUS_COLOR = {"fail": "#8a2f1f", "warn": "#8a5a00", "pass": _INK, "info": _GREY}


def _chars(width_in: float, size: float) -> int:
    """Characters of DejaVu Sans at ``size`` pt that fit ``width_in`` (mean glyph width
    about 0.55 em, measured on mixed text; a little conservative)."""
    return max(4, int(width_in * 72 / (0.58 * size)))


@dataclass
class Col:
    title: str
    width_in: float
    align: str = "left"
    wrap: bool = False


class Doc:
    """Pages under construction: a cursor ``y`` [in from the bottom] on the last page."""

    def __init__(self, footer: str):
        self.pages: list[Figure] = []
        self.footer = footer
        self.section = ""
        self.y = 0.0

    def new_page(self) -> None:
        from matplotlib.figure import Figure

        # "none" (no layout engine) is documented by matplotlib but missing from its stubs
        fig = Figure(figsize=A4_IN, layout="none")  # type: ignore[arg-type]
        fig.patch.set_facecolor("white")
        self.pages.append(fig)
        self.y = A4_IN[1] - _TOP

    @property
    def fig(self) -> Figure:
        return self.pages[-1]

    def need(self, h_in: float) -> bool:
        """Start a new page when less than ``h_in`` is left; True when it did."""
        if not self.pages or self.y - h_in < _BOTTOM:
            self.new_page()
            return True
        return False

    def text(self, x_in: float, y_in: float, s: str, size: float = 9.0, weight: str = "normal",
             color: str = _INK, ha: str = "left", **kw: Any) -> None:
        self.fig.text(x_in / A4_IN[0], y_in / A4_IN[1], s, fontsize=size, fontweight=weight,
                      color=color, ha=ha, va="top", family="DejaVu Sans", **kw)

    def rule(self, y_in: float, x0: float = _LEFT, x1: float = A4_IN[0] - _RIGHT,
             color: str = _RULE, lw: float = 0.6) -> None:
        from matplotlib.lines import Line2D

        self.fig.add_artist(Line2D([x0 / A4_IN[0], x1 / A4_IN[0]], [y_in / A4_IN[1]] * 2,
                                   color=color, lw=lw, transform=self.fig.transFigure))

    def heading(self, s: str, level: int = 1, new_page: bool = False) -> None:
        size = {1: 15.0, 2: 11.5, 3: 10.0}[level]
        h = size / 72 * 1.6
        if new_page:
            self.new_page()
        else:
            self.need(h + 0.9)  # keep a heading with at least a few lines of what follows
            self.y -= 0.12 if self.y < A4_IN[1] - _TOP - 0.01 else 0
        if level == 1:
            self.section = s
        # long headings wrap (bold glyphs are about 10 % wider than the regular ones)
        for line in _wrap(s, int(_chars(_WIDTH, size) / 1.1)):
            self.text(_LEFT, self.y, line, size=size, weight="bold")
            self.y -= h
        if level == 1:
            self.rule(self.y + 0.06, color=_INK, lw=0.9)
            self.y -= 0.08

    def para(self, s: str, size: float = 9.0, color: str = _INK, indent_in: float = 0.0,
             weight: str = "normal", gap_in: float = 0.06) -> None:
        lh = size / 72 * 1.35
        for line in _wrap(s, _chars(_WIDTH - indent_in, size)):
            self.need(lh)
            self.text(_LEFT + indent_in, self.y, line, size=size, color=color, weight=weight)
            self.y -= lh
        self.y -= gap_in

    def bullets(self, items: Iterable[str], size: float = 9.0, color: str = _INK) -> None:
        lh = size / 72 * 1.35
        for it in items:
            lines = _wrap(it, _chars(_WIDTH - 0.2, size))
            self.need(lh * min(len(lines), 3))
            for k, line in enumerate(lines):
                self.need(lh)
                if k == 0:
                    self.text(_LEFT + 0.03, self.y, "\u2022", size=size, color=color)
                self.text(_LEFT + 0.2, self.y, line, size=size, color=color)
                self.y -= lh
            self.y -= 0.03

    def table(self, cols: Sequence[Col], rows: Sequence[Sequence], size: float = 7.5,
              status_col: int | None = None, title: str | None = None) -> None:
        """A table with a header; continues on the next page with the header repeated.
        A row is never split; wrapped cells grow their row."""
        lh = size / 72 * 1.3
        pad = 0.05
        scale = _WIDTH / sum(c.width_in for c in cols)
        widths = [c.width_in * scale for c in cols]
        xs = np.concatenate([[_LEFT], _LEFT + np.cumsum(widths)])

        def cell_lines(c: Col, w: float, v) -> list[str]:
            s = "" if v is None else str(v)
            n = _chars(w - 2 * pad, size)
            if c.wrap:
                return _wrap(s, n) or [""]
            return [s if len(s) <= n else s[: n - 1] + "\u2026"]

        head = [cell_lines(Col(c.title, 0, wrap=True), w, c.title) for c, w in
                zip(cols, widths, strict=True)]
        head_h = max(len(h) for h in head) * lh + 2 * pad

        def draw_head(cont: bool) -> None:
            if title:
                self.text(_LEFT, self.y, title + (" (continued)" if cont else ""),
                          size=size + 1, weight="bold")
                self.y -= (size + 1) / 72 * 1.5
            self.rule(self.y, color=_INK, lw=0.8)
            for k, (c, w) in enumerate(zip(cols, widths, strict=True)):
                x = xs[k] + pad if c.align == "left" else xs[k] + w - pad
                for j, ln in enumerate(head[k]):
                    self.text(x, self.y - pad - j * lh, ln, size=size, weight="bold",
                              ha=c.align)
            self.y -= head_h
            self.rule(self.y, color=_INK, lw=0.6)

        title_h = (size + 1) / 72 * 1.5 if title else 0.0
        first = True
        for r_i, row in enumerate(rows):
            cells = [cell_lines(c, w, v) for c, w, v in zip(cols, widths, row, strict=True)]
            h = max(len(x) for x in cells) * lh + 2 * pad
            if first:
                self.need(title_h + head_h + h * min(len(rows), 3))
                draw_head(False)
                first = False
            elif self.y - h < _BOTTOM:
                self.new_page()
                draw_head(True)
            color = _INK
            if status_col is not None:
                color = _STATUS_COLOR.get(str(row[status_col]).lower(), _INK)
            for k, (c, w) in enumerate(zip(cols, widths, strict=True)):
                x = xs[k] + pad if c.align == "left" else xs[k] + w - pad
                for j, ln in enumerate(cells[k]):
                    self.text(x, self.y - pad - j * lh, ln, size=size,
                              color=color if k == status_col else _INK, ha=c.align,
                              weight="bold" if k == status_col and color != _INK else "normal")
            self.y -= h
            if r_i < len(rows) - 1:
                self.rule(self.y, color="#d5dae0", lw=0.4)
        if first:  # no rows
            self.need(title_h + head_h + lh)
            draw_head(False)
            self.para("(none)", size=size, color=_GREY)
        self.rule(self.y, color=_INK, lw=0.8)
        self.y -= 0.15

    def image(self, fig: Figure, width_in: float | None = None, caption: str | None = None,
              heading: str | None = None, keep_with_in: float = 0.0) -> None:
        """Embed a figure as a 200 dpi image, width ``width_in`` (default full width); a
        ``heading`` (level 3) is kept on the same page as the image, and so is
        ``keep_with_in`` of what follows it (its notes) [in]."""
        from matplotlib.image import imread

        from ..plotting.style import STYLE, _mpl

        buf = io.BytesIO()
        with _mpl().rc_context(STYLE):
            fig.savefig(buf, format="png", dpi=200)
        buf.seek(0)
        img = imread(buf, format="png")
        w = min(width_in or _WIDTH, _WIDTH)
        h = w * img.shape[0] / img.shape[1]
        cap_h = 0.3 if caption else 0.0
        head_h = 10.0 / 72 * 1.6 + 0.12 if heading else 0.0
        self.need(h + cap_h + head_h + keep_with_in)
        if heading:
            self.heading(heading, level=3)
        ax = self.fig.add_axes(((_LEFT + (_WIDTH - w) / 2) / A4_IN[0], (self.y - h) / A4_IN[1],
                                w / A4_IN[0], h / A4_IN[1]))
        ax.imshow(img, interpolation="none")  # embedded at its own 200 dpi
        ax.set_axis_off()
        self.y -= h + 0.05
        if caption:
            self.para(caption, size=7.5, color=_GREY)

    def finish(self, generated: str) -> None:
        n = len(self.pages)
        for i, fig in enumerate(self.pages, 1):
            self.pages[i - 1] = fig
            y = 0.55
            self.fig_rule(fig, y + 0.1)
            fig.text(_LEFT / A4_IN[0], y / A4_IN[1], self.footer, fontsize=7, color=_GREY,
                     va="top", family="DejaVu Sans")
            fig.text((A4_IN[0] - _RIGHT) / A4_IN[0], y / A4_IN[1], f"page {i} of {n}",
                     fontsize=7, color=_GREY, va="top", ha="right", family="DejaVu Sans")
            fig.text(_LEFT / A4_IN[0], (y - 0.14) / A4_IN[1],
                     "Supports, and never replaces, the local electrical code and the design "
                     f"of a licensed professional.  Generated {generated}.", fontsize=6.5,
                     color=_GREY, va="top", family="DejaVu Sans")

    @staticmethod
    def fig_rule(fig: Figure, y_in: float) -> None:
        from matplotlib.lines import Line2D

        fig.add_artist(Line2D([_LEFT / A4_IN[0], 1 - _RIGHT / A4_IN[0]], [y_in / A4_IN[1]] * 2,
                              color=_RULE, lw=0.5, transform=fig.transFigure))


def _wrap(s: str, width: int) -> list[str]:
    out: list[str] = []
    for part in str(s).split("\n"):
        out.extend(textwrap.wrap(part, width, break_long_words=True,
                                 break_on_hyphens=False) or [""])
    return out


def fmt_num(x: SupportsFloat | None, spec: str = ".2f", none: str = "-") -> str:
    """``x`` formatted by ``spec``; ``none`` for None or a value that is not finite."""
    if x is None:
        return none
    v = float(x)
    return none if not np.isfinite(v) else format(v, spec)


def fmt_pct(x: SupportsFloat | None, spec: str = ".1f") -> str:
    """A fraction [-] as percent by ``spec`` (without the sign); "-" for None."""
    return "-" if x is None else format(100 * float(x), spec)
