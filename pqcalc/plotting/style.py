"""The house style of pqcalc figures, the figure factory and the atomic writer.

One rc dictionary, :data:`STYLE`, applied through :func:`matplotlib.rc_context` while a
figure is built and while it is saved: sized for the text width of an A4 or letter page,
readable when printed in grayscale (fills differ in lightness and hatching, lines in dash
pattern), constrained layout so nothing is clipped. matplotlib is imported on first use, so
importing pqcalc (or its command line) stays fast for work that draws nothing.
"""

from __future__ import annotations

import contextlib
import contextvars
import functools
import io
import os
import textwrap
from collections.abc import Iterator
from pathlib import Path
from types import SimpleNamespace
from typing import TYPE_CHECKING, Any, Literal

import numpy as np
from cycler import cycler

from ..errors import InputError
from ..standards.results import CAUTION  # printed on figures that guide a choice

if TYPE_CHECKING:
    from matplotlib.figure import Figure

# ---------------------------------------------------------------------- house style
#: Ink colours. Each pair that must be told apart differs clearly in lightness as well as
#: hue, so a grayscale print keeps them apart (relative luminances ~0.03, ~0.20, ~0.42, ~0.63).
INK = "#1b2633"  # text, lines of the main quantity
DARK = "#8a2f1f"  # emphasis: values over their limit (also hatched)
MID = "#56789e"  # second quantity, triplen orders
LIGHT = "#a9bdd4"  # ordinary bars
SHADE = "#e4e4e4"  # background bands (dimmer cut)

#: The rc parameters of every pqcalc figure (applied with :func:`matplotlib.rc_context`).
STYLE: dict = {
    "figure.figsize": (6.4, 3.8),  # inches: fits the text width of A4 and letter pages
    "figure.dpi": 100,
    "figure.facecolor": "white",
    "figure.constrained_layout.use": True,
    "savefig.dpi": 200,
    "savefig.facecolor": "white",
    "font.family": "DejaVu Sans",
    "font.size": 9,
    "axes.titlesize": 10,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": 9,
    "axes.edgecolor": "#3a3a3a",
    "axes.labelcolor": INK,
    "axes.linewidth": 0.8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.axisbelow": True,
    "axes.prop_cycle": cycler(color=[INK, DARK, MID, "#777777"], linestyle=["-", "--", "-.", ":"]),
    "grid.color": "#d0d0d0",
    "grid.linewidth": 0.5,
    "grid.linestyle": "-",
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "xtick.color": "#3a3a3a",
    "ytick.color": "#3a3a3a",
    "legend.fontsize": 8,
    "legend.frameon": True,
    "legend.framealpha": 0.9,
    "legend.edgecolor": "#cccccc",
    "lines.linewidth": 1.4,
    "hatch.linewidth": 0.7,
    "hatch.color": "white",
    # free text (a project name, a panel id, a file name) is drawn as written, never parsed
    # as a math formula: the few labels that are formulas ask for it (parse_math=True)
    "text.parse_math": False,
    "svg.fonttype": "none",  # text stays text in SVG (searchable, editable)
    "pdf.fonttype": 42,  # embed TrueType fonts in PDF
    "ps.fonttype": 42,
}

#: File formats :func:`save_figure` writes, by suffix.
FIGURE_FORMATS = ("png", "svg", "pdf")

#: Units of a spectrum figure: amperes rms, or percent of the fundamental.
SpectrumUnit = Literal["A", "pct"]

#: Conductor names of a panel, in display order.
PHASE_NAMES = ("L1", "L2", "L3", "N")



@functools.cache
def _mpl() -> SimpleNamespace:
    """The matplotlib pieces used here, imported on first use (``import pqcalc.cli`` stays
    fast for the commands that draw nothing)."""
    from matplotlib import patheffects, rc_context
    from matplotlib.figure import Figure
    from matplotlib.patches import Patch
    from matplotlib.ticker import FuncFormatter, MaxNLocator, MultipleLocator

    return SimpleNamespace(rc_context=rc_context, Figure=Figure, Patch=Patch,
                           withStroke=patheffects.withStroke, FuncFormatter=FuncFormatter,
                           MaxNLocator=MaxNLocator, MultipleLocator=MultipleLocator)


def new_figure(figsize: tuple[float, float] | None = None, **kw: Any) -> Figure:
    """A blank :class:`~matplotlib.figure.Figure` in the house style (constrained layout)."""
    with _mpl().rc_context(STYLE):
        return _mpl().Figure(figsize=figsize or STYLE["figure.figsize"], layout="constrained",
                             **kw)


def _legend_below(fig: Figure, handles) -> None:
    """The legend in one row under the axes, outside the data (constrained layout)."""
    # as many columns as fit the width: ~95 character widths of 8 pt text (with ~6 for each
    # key and gap) span the 6.2 in inside a 6.4 in figure
    widths = [max(map(len, h.get_label().splitlines())) for h in handles]
    n = len(handles)
    ncols = 1
    for nc in range(n, 0, -1):
        rows = -(-n // nc)  # legends fill column by column
        cols = [widths[k:k + rows] for k in range(0, n, rows)]
        if sum(max(c) + 6 for c in cols) <= 95:
            ncols = nc
            break
    fig.legend(handles=handles, loc="outside lower center", ncols=ncols)


#: False while a document that carries the caution itself (the PDF submittal) draws its
#: figures: :func:`_caution` then leaves them without it.
_CAUTION_ON_FIGURES: contextvars.ContextVar[bool] = contextvars.ContextVar(
    "pqcalc_caution_on_figures", default=True)


@contextlib.contextmanager
def figures_without_caution() -> Iterator[None]:
    """Figures made inside this block carry no caution line (the document that holds them
    prints it in its own section and footer)."""
    token = _CAUTION_ON_FIGURES.set(False)
    try:
        yield
    finally:
        _CAUTION_ON_FIGURES.reset(token)


def _caution(fig: Figure) -> None:
    if not _CAUTION_ON_FIGURES.get():
        return
    from matplotlib.layout_engine import ConstrainedLayoutEngine

    engine = fig.get_layout_engine()
    assert isinstance(engine, ConstrainedLayoutEngine)  # new_figure() makes every figure
    with _mpl().rc_context(STYLE):
        engine.set(h_pad=0.06)
        fig.supxlabel(textwrap.fill(CAUTION, 120), fontsize=5.5, color="#555555", x=0.01,
                      ha="left")


# ---------------------------------------------------------------------- data helpers
def _finite(a, name: str, allow_nan: bool = False) -> np.ndarray:
    try:
        x = np.asarray(a, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected numbers, got {a!r:.60}") from None
    if x.ndim != 1:
        raise InputError(f"{name}: expected a one-dimensional series, got shape {x.shape}")
    bad = np.isinf(x) if allow_nan else ~np.isfinite(x)
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        raise InputError(f"{name}: value {k} is {x[k]}; expected a finite number")
    return x


# ---------------------------------------------------------------------- output
def save_figure(fig: Figure, path: str | os.PathLike[str], dpi: float | None = None) -> Path:
    """Write ``fig`` to ``path`` as PNG, SVG or PDF (by suffix), atomically.

    The figure is rendered in memory first, then written through a temporary file in the
    target folder and renamed, so a failure leaves no partial file. A missing or read-only
    folder, or an unknown suffix, raises :class:`~pqcalc.errors.InputError`.
    """
    p = Path(path)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in FIGURE_FORMATS:
        suffixes = ", ".join("." + f for f in FIGURE_FORMATS)
        raise InputError(f"{p}: expected a file ending in {suffixes}, got {p.suffix or 'none'!r}")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{p}: the folder {folder} does not exist")
    buf = io.BytesIO()
    with _mpl().rc_context(STYLE):
        fig.savefig(buf, format=fmt, dpi=dpi or STYLE["savefig.dpi"],
                    metadata={"Creator": "pqcalc"} if fmt != "png" else {"Software": "pqcalc"})
    from ..io.atomic import write_atomic

    write_atomic(p, buf.getvalue())
    return p

