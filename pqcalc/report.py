"""The PDF submittal of an assessed installation, typeset with reportlab.

:func:`write_report` writes the document atomically (a temporary file, then a rename);
:func:`report_pdf_bytes` returns it. What it contains is described in
:mod:`pqcalc.reporting.story`: a title page with the title block and the revision table
(from the installation file's ``[project]`` table), the contents, the summary of findings,
the fixture lineup with the spectrum of each fixture type's deciding state, the panel
results with the neutral spectrum, the diversity results, the assumptions in numbers, the
standards applied, the caution, and an appendix with the per-order table of every state.

The paper is the rule set's (A4 for IEC, Letter for US projects), or the installation
file's ``[report] paper``, or the ``paper`` argument. The text is real text in an embedded
TrueType font (searchable, extractable); figures are vector drawings; the headings form the
PDF outline (bookmarks) and the contents. reportlab's open-source edition does not write
PDF/A, so the file is plain PDF 1.4.

The lineup is a list of :class:`~pqcalc.installation.lineup.LineupEntry`; when none is
given, :func:`pqcalc.installation.evaluate_lineup` evaluates the installation's.

The report supports, and never replaces, the local electrical code and the design of a
licensed professional: its caution section says so in full, and every page's footer.
"""

from __future__ import annotations

import datetime as _dt
import os
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import InputError
from .reporting.story import APPENDIX_TITLE, SECTION_TITLES

if TYPE_CHECKING:  # pragma: no cover
    from .installation import Assessment, LineupEntry
    from .standards.regions import Paper

__all__ = ["SECTION_TITLES", "APPENDIX_TITLE", "report_paper", "report_pdf_bytes",
           "write_report"]


def _now() -> str:
    return _dt.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z").strip()


def report_paper(assessment: Assessment, paper: str | None = None) -> Paper:
    """The paper of the report: ``paper`` ("A4" or "Letter"), else the installation file's
    ``[report] paper``, else the rule set's (A4 for IEC, Letter for US)."""
    from .standards.regions import paper as region_paper
    from .standards.regions import rule_set

    inst = assessment.installation
    return region_paper(rule_set(inst.supply.rules),
                        paper if paper is not None else inst.report.paper)


def report_pdf_bytes(assessment: Assessment, lineup: Sequence[LineupEntry] | None = None,
                     lineup_notes: Sequence[str] = (), generated: str | None = None,
                     paper: str | None = None) -> bytes:
    """The PDF document as bytes.

    ``lineup``: the fixture lineup (None evaluates it); ``generated``: the time stamp
    printed on the title page (default: now); ``paper``: "A4" or "Letter" (see
    :func:`report_paper`); an unknown paper size raises :class:`~pqcalc.errors.InputError`.
    """
    from . import __version__
    from .reporting.pdf import build_pdf
    from .reporting.story import build_story

    pap = report_paper(assessment, paper)
    if lineup is None:
        from .installation import evaluate_lineup

        entries = evaluate_lineup(assessment.installation)
    else:
        entries = list(lineup)
    generated = generated or _now()
    inst = assessment.installation
    pj = inst.project
    name = pj.name or inst.path
    doc = " ".join(x for x in (pj.document_number, f"rev {pj.revision}" if pj.revision else "",
                               pj.status) if x)
    meta = {"Title": f"Power-quality assessment: {name}", "Author": pj.preparer,
            "Subject": "Dimmed LED lighting: harmonics, neutral currents, IEC 61000-3-2 "
                       "lineup", "Creator": f"pqcalc {__version__}",
            "Keywords": ", ".join(x for x in (pj.document_number, pj.revision) if x)}
    story = build_story(assessment, entries, lineup_notes, __version__, generated)
    w_in, h_in = pap.size_in
    return build_pdf(story, (w_in * 72.0, h_in * 72.0),
                     footer_left=" | ".join(x for x in (name, doc, f"pqcalc {__version__}") if x),
                     footer_caution=assessment.caution,
                     header=f"Power-quality assessment - {name}" + (f" - {doc}" if doc else ""),
                     meta=meta)


def write_report(assessment: Assessment, path: str | os.PathLike,
                 lineup: Sequence[LineupEntry] | None = None, lineup_notes: Sequence[str] = (),
                 generated: str | None = None, paper: str | None = None) -> Path:
    """Write the PDF submittal to ``path`` atomically (temporary file, then rename).

    The whole document is typeset in memory first; a missing or read-only folder raises
    :class:`~pqcalc.errors.InputError` before any work, and a failure leaves no file.
    """
    from .io.export import check_output_path, write_bytes_atomic

    p = check_output_path(path)
    if p.suffix.lower() != ".pdf":
        raise InputError(f"{p}: expected a file name ending in .pdf")
    return write_bytes_atomic(p, report_pdf_bytes(assessment, lineup, lineup_notes, generated,
                                                  paper))
