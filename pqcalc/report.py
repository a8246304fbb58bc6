"""The PDF submittal of an assessed installation, laid out page by page with matplotlib.

:func:`write_report` writes an A4 portrait PDF (matplotlib's PDF backend; no other
dependency) through a temporary file and a rename. Its sections:

1. cover: project, site, engineer, date, tool version, installation file, contents;
2. summary of findings (one page): verdicts, the highest panel and neutral currents, the
   worst voltage distortion, the failed and warned checks;
3. fixture lineup: the IEC 61000-3-2 table per fixture type and state, and a spectrum
   against the limits per fixture type;
4. per panel (then feeders and the service): phase and neutral currents, THDv, K-factor,
   the circuits, checks and flags, the panel figure;
5. assumptions and model parameters: supply, analysis options, fixture types, notes;
6. standards and editions applied: every rule source the checks and the lineup cite;
7. cautions.

Long tables continue on the next page with their header repeated; a table row is never
split across pages. The text is real text (TrueType fonts embedded), so the report can be
searched and its text extracted; the figures are embedded as 200 dpi images.

The lineup is a list of :class:`~pqcalc.installation.lineup.LineupEntry`; when none is
given, :func:`pqcalc.installation.evaluate_lineup` evaluates the installation's.

The report supports, and never replaces, the local electrical code and the design of a
licensed professional; every page says so in its footer and the last section in full.
"""

from __future__ import annotations

import datetime as _dt
import io
import os
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import InputError
from .reporting.layout import Doc
from .reporting.sections import (
    SECTION_TITLES,
    assumptions,
    cautions,
    cover,
    lineup_section,
    panels_section,
    standards_section,
    summary,
)

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.figure import Figure

    from .installation import Assessment, LineupEntry

__all__ = [
    "SECTION_TITLES",
    "report_pages",
    "report_pdf_bytes",
    "write_report",
]


def _now() -> str:
    return _dt.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z").strip()


def report_pages(assessment: Assessment, lineup: Sequence[LineupEntry] | None = None,
                 lineup_notes: Sequence[str] = (), generated: str | None = None
                 ) -> list[Figure]:
    """The report's pages as A4 :class:`~matplotlib.figure.Figure` objects, numbered.

    ``lineup``: the fixture lineup; None evaluates it with
    :func:`pqcalc.installation.evaluate_lineup`.
    """
    from . import __version__
    from .plotting.style import STYLE, _mpl

    if lineup is None:
        from .installation import evaluate_lineup

        entries = evaluate_lineup(assessment.installation)
    else:
        entries = list(lineup)
    generated = generated or _now()
    pj = assessment.installation.project
    doc = Doc(f"{pj.name or assessment.installation.path}  |  pqcalc {__version__}")
    with _mpl().rc_context(STYLE):
        cover(doc, assessment, __version__, generated, len(entries))
        summary(doc, assessment, entries, lineup_notes)
        lineup_section(doc, entries, lineup_notes)
        panels_section(doc, assessment)
        assumptions(doc, assessment, __version__)
        standards_section(doc, assessment, entries)
        cautions(doc, assessment, entries)
        doc.finish(generated)
    return doc.pages


def report_pdf_bytes(assessment: Assessment, lineup: Sequence | None = None,
                     lineup_notes: Sequence[str] = (), generated: str | None = None) -> bytes:
    """The PDF document as bytes (see :func:`report_pages`)."""
    from matplotlib.backends.backend_pdf import PdfPages

    from . import __version__

    pages = report_pages(assessment, lineup, lineup_notes, generated)
    pj = assessment.installation.project
    buf = io.BytesIO()
    meta = {"Title": f"Power-quality assessment: {pj.name or assessment.installation.path}",
            "Author": pj.engineer or "", "Subject": "Dimmed LED lighting: harmonics, neutral "
            "currents, IEC 61000-3-2 lineup", "Creator": f"pqcalc {__version__}"}
    with PdfPages(buf, metadata=meta) as pdf:
        for fig in pages:
            pdf.savefig(fig)
    return buf.getvalue()


def write_report(assessment: Assessment, path: str | os.PathLike,
                 lineup: Sequence | None = None, lineup_notes: Sequence[str] = (),
                 generated: str | None = None) -> Path:
    """Write the PDF submittal to ``path`` atomically (temporary file, then rename).

    The whole document is rendered in memory first; a missing or read-only folder raises
    :class:`~pqcalc.errors.InputError` before any work, and a failure leaves no file.
    """
    from .io.export import check_output_path, write_bytes_atomic

    p = check_output_path(path)
    if p.suffix.lower() != ".pdf":
        raise InputError(f"{p}: expected a file name ending in .pdf")
    return write_bytes_atomic(p, report_pdf_bytes(assessment, lineup, lineup_notes, generated))
