"""What the PDF submittal says, section by section, as platypus flowables.

Sections (the titles are :data:`SECTION_TITLES`, in order):

1. title page: the title block from the installation file's ``[project]`` table (project,
   site, client, document number, revision and status, date; prepared, checked and
   approved by, with lines to sign), the revision table, then the contents;
2. summary of findings: the verdict, per scenario; the fixture lineup's; the currents of
   the design scenario; every failed and warned check;
3. fixture lineup: the IEC 61000-3-2 table per fixture type and state, and per fixture
   type the spectrum of its deciding state (the failing one, else the one closest to a
   limit);
4. panel results: per panel the line and neutral currents of every scenario, THDv, the
   neutral spectrum, the circuits and the checks; then the feeders and the service;
5. diversity: the summation-law or Monte Carlo results;
6. assumptions in numbers: the supply, every impedance, component value and dimmer
   parameter used, each with its origin (file, model default, derived);
7. standards and editions applied;
8. caution (the one place the caution is printed in full besides the page footer);
appendix A: the per-order table of every state of every fixture type.

Figures are made once per distinct content (a figure shared by identical panels is
drawn once and placed in each).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from functools import partial
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from ..standards.results import CAUTION
from .assumptions import dimmer_param_sets, fixture_params, impedance_rows, si
from .pdf import Col, FigureBook, fields_table, heading, keep, para, table
from .sources import standards_applied

if TYPE_CHECKING:  # pragma: no cover
    from reportlab.platypus import Flowable

    from ..installation import Assessment, LineupEntry, LineupState, ScenarioResult
    from ..installation.results import NodeResult

__all__ = ["SECTION_TITLES", "APPENDIX_TITLE", "deciding_state", "lineup_summary",
           "build_story"]

#: Section headings, in order (the tests look for them in the extracted text).
SECTION_TITLES = ("Summary of findings", "Fixture lineup: IEC 61000-3-2 harmonic emission",
                  "Panel results", "Diversity of independently dimmed circuits",
                  "Assumptions in numbers", "Standards and editions applied", "Caution")
APPENDIX_TITLE = "Appendix A: per-order results of every fixture state"

_ORDER = {"fail": 0, "warn": 1, "info": 2, "pass": 3}
_BLANK = "_" * 14  # a line to write on, where the file gives nothing


def plural(n: int, word: str, many: str | None = None) -> str:
    """``1 circuit``, ``2 circuits``."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def _num(x: Any, spec: str = ".2f") -> str:
    if x is None:
        return "-"
    v = float(x)
    return "-" if not math.isfinite(v) else format(v, spec)


def _pct(x: Any, spec: str = ".1f") -> str:
    return "-" if x is None or not math.isfinite(float(x)) else format(100 * float(x), spec)


def _nodes(s: ScenarioResult) -> tuple[NodeResult, ...]:
    return tuple(s.panels) + tuple(s.feeders) + (s.transformer,)


# ---------------------------------------------------------------------------- title page
def title_page(a: Assessment, version: str, generated: str) -> list[Flowable]:
    from reportlab.platypus import Spacer

    inst = a.installation
    pj = inst.project
    out: list[Flowable] = [Spacer(1, 30),
                           para("Power-quality assessment of a dimmed LED lighting installation",
                                "subtitle"),
                           para(pj.name or inst.path, "title"), Spacer(1, 8)]
    rows = [("Project", pj.name), ("Site", pj.site), ("Client", pj.client),
            ("Document number", pj.document_number), ("Revision", pj.revision),
            ("Status", pj.status), ("Date", pj.date),
            ("Installation file", inst.path), ("Calculated with", f"pqcalc {version}"),
            ("Generated", generated)]
    out.append(fields_table([(k, v or _BLANK) for k, v in rows], (0.25, 0.75), size=9))
    out.append(Spacer(1, 14))
    out.append(para("Responsibility", "h3"))
    sig = [("prepared by", pj.preparer), ("checked by", pj.checked_by),
           ("approved by", pj.approved_by)]
    # the row's rule is the line to sign on; the row is tall enough to sign
    out.append(table([Col("", 0.2), Col("name", 0.34), Col("signature", 0.28),
                      Col("date", 0.18)],
                     [(k, (v or "") + "\n\n", "", "") for k, v in sig], size=9))
    out.append(Spacer(1, 14))
    out.append(para("Revisions", "h3"))
    revs = [(r.rev, r.date, r.description, r.by) for r in pj.revisions]
    if not revs:
        revs = [(pj.revision or "-", pj.date or "-", "(no revision table in the "
                 "installation file)", pj.preparer or "-")]
    out.append(table([Col("rev", 0.1), Col("date", 0.16), Col("description", 0.52),
                      Col("by", 0.22)], revs, size=8.5))
    s = inst.supply
    out += [Spacer(1, 14), para(
        f"Supply: {s.system}, {s.voltage_ln_v:g} V line-to-neutral, {s.frequency_hz:g} Hz "
        f"({s.rules} rule set); {plural(inst.n_lamps, 'lamp')} in "
        f"{plural(len(inst.circuits), 'circuit')} on {plural(len(inst.panels), 'panel')}; "
        f"{plural(len(a.scenarios), 'scenario')} "
        f"({', '.join(sc.name for sc in a.scenarios)}).", "body")]
    if pj.notes:
        out.append(para(pj.notes, "note"))
    return out


# ---------------------------------------------------------------------------- summary
def _where_checks(sc: ScenarioResult) -> list[tuple[str, Any]]:
    items = [(f"circuit {c.id}", c.checks) for c in sc.circuits]
    items += [(f"{p.kind} {p.id}", p.checks) for p in _nodes(sc)]
    items.append(("installation", sc.checks))
    return items


def findings(a: Assessment) -> list[tuple[str, str, str, str]]:
    """(status, where, check, message [scenarios]) of every failed and warned check,
    merged over the scenarios it occurs in with the same message (a finding whose figures
    differ between scenarios is listed once per message, each with its scenarios), worst
    first."""
    seen: dict[tuple, list[str]] = {}
    for sc in a.scenarios:
        for where, checks in _where_checks(sc):
            for c in checks:
                if c.status not in ("fail", "warn"):
                    continue
                seen.setdefault((c.status, where, c.name, c.message), []).append(sc.name)
    out = []
    for key, scen in seen.items():
        which = "all scenarios" if len(scen) == len(a.scenarios) and len(scen) > 1 else \
            ", ".join(scen)
        out.append((key[0], key[1], key[2], f"{key[3]} [{which}]"))
    out.sort(key=lambda r: (_ORDER[r[0]], r[1], r[2]))
    return out


def _counts(checks: Any) -> str:
    checks = list(checks)
    f = sum(c.status == "fail" for c in checks)
    w = sum(c.status == "warn" for c in checks)
    return f"{plural(f, 'failed check')}, {plural(w, 'warning')}"


def _editions(lineup: Sequence[LineupEntry]) -> str:
    eds = {"5.1" if "AMD1" in r.reference else "5.0"
           for e in lineup for s in e.states for r in s.result.rules}
    return " and ".join(sorted(eds)) or "-"


def lineup_summary(a: Assessment, lineup: Sequence[LineupEntry]) -> str:
    """The lineup's verdict line: at rated supply and full output, in the standard's scope."""
    counted = [e for e in lineup if e.verdict != "info"]
    if not counted:
        v = a.installation.supply.voltage_ln_v
        return (f"Fixture lineup, IEC 61000-3-2: information only, not part of the verdict - "
                f"the standard sets no limits below 220 V line-to-neutral (this supply: "
                f"{v:g} V; clause 1).")
    bad = [e.title for e in counted if e.verdict == "fail"]
    n = len(counted)
    return (f"Fixture lineup, IEC 61000-3-2 (edition {_editions(lineup)}), at rated supply and "
            f"full output: {len(counted) - len(bad)} of {plural(n, 'fixture type')} "
            f"{'passes' if n == 1 and not bad else 'pass'}"
            + (f"; failing: {', '.join(bad)}." if bad else "."))


def _dimmed_summary(lineup: Sequence[LineupEntry]) -> str:
    dimmed = [s for e in lineup for s in e.states[1:]]
    if not dimmed or all(e.verdict == "info" for e in lineup):
        return ""
    info = [s for s in dimmed if s.role == "informative"]
    strict = [s for s in dimmed if s.role == "strict"]
    parts = []
    if info:
        over = sum(s.result.verdict == "fail" for s in info)
        parts.append(f"{plural(len(info), 'dimmed state')} behind independent phase-cut "
                     f"dimmers {'is' if len(info) == 1 else 'are'} an informative emission "
                     f"assessment against the full-output limits in amperes, not part of the "
                     f"verdict ({over} above those limits)")
    if strict:
        bad = sum(s.result.failed for s in strict)
        parts.append(f"{plural(len(strict), 'dimmed state')} held to pass/fail at the owner's "
                     f"request (strict mode; {bad} failing)")
    builtin = [s for s in dimmed if s.role == "verdict"]
    if builtin:
        parts.append(f"{plural(len(builtin), 'dimmed state')} of fixtures with built-in "
                     "dimming, part of their verdict")
    return "; ".join(parts) + "."


def summary(a: Assessment, lineup: Sequence[LineupEntry], notes: Sequence[str]
            ) -> list[Flowable]:
    out = heading(SECTION_TITLES[0], 1, new_page=True)
    every = [c for s in a.scenarios for c in s.all_checks()]
    unsettled = [sc.name for sc in a.scenarios if sc.basis_note]
    out.append(para(f"<b>Installation checks: {a.verdict.upper()}</b> - {_counts(every)} over "
                    f"{plural(len(a.scenarios), 'scenario')}. Design scenario (highest panel "
                    f"currents): {_x(a.design.name)}." + (
                        f" {_x(', '.join(unsettled))}: judged on the ideal-supply figures, "
                        "the supply interaction did not settle there (see its warning)."
                        if unsettled else ""), markup=True))
    if lineup:
        out.append(para(lineup_summary(a, lineup), "bold"))
        extra = _dimmed_summary(lineup)
        if extra:
            out.append(para(extra, "note"))
    else:
        out.append(para("Fixture lineup: not evaluated (no lineup results were available)."))
    rows: list[tuple[Any, ...]] = []
    for sc in a.scenarios:
        bad = [c for c in sc.all_checks() if c.status in ("fail", "warn")]
        bad.sort(key=lambda c: _ORDER[c.status])
        worst = f"{bad[0].status.upper()} {bad[0].name}" if bad else "no findings"
        rows.append((sc.name + (" (design)" if sc is a.design else ""),
                     sc.verdict.upper() + (" (ideal supply)" if sc.basis_note else ""),
                     sum(c.status == "fail" for c in sc.all_checks()),
                     sum(c.status == "warn" for c in sc.all_checks()), worst,
                     ", ".join(sc.unsolved) or "-"))
    out += heading("Verdict per scenario", 3)
    out.append(table([Col("scenario", 1.3), Col("verdict", 0.8), Col("failed", 0.55, "right"),
                      Col("warnings", 0.7, "right"), Col("worst finding", 2.1),
                      Col("circuits without a solution", 1.4)], rows, status_col=1))
    sc = a.design
    rows = []
    for p in _nodes(sc):
        n = p.neutral
        worst = min((c.status for c in p.checks), key=lambda s: _ORDER[s], default="-")
        rows.append((p.id, p.kind, _num(p.max_line_a), _num(n.i_rms_a) if n else "-",
                     _num(n.ratio_to_max_line) if n else "-",
                     _pct(n.triplen_share, ".0f") if n else "-",
                     _pct(max(r.thd_v for r in p.lines.values()), ".2f"),
                     _num(p.k_factor, ".1f"), worst.upper()))
    out += heading(f"Currents in the design scenario ({sc.name})", 3)
    out.append(table([Col("node", 1.2), Col("kind", 0.8), Col("highest line [A]", 0.75, "right"),
                      Col("neutral [A]", 0.7, "right"), Col("N / line [-]", 0.65, "right"),
                      Col("triplen share of N [%]", 0.8, "right"),
                      Col("THDv [%]", 0.6, "right"), Col("K-factor [-]", 0.6, "right"),
                      Col("worst check", 0.65)], rows, status_col=8))
    f = findings(a)
    out += heading(f"Failed checks and warnings ({len(f)})", 3)
    out.append(table([Col("status", 0.55), Col("where", 1.2), Col("check", 1.1),
                      Col("finding [scenarios]", 4.0)],
                     [(s.upper(), w, c, m) for s, w, c, m in f], status_col=0))
    out += [para(x, "note") for x in notes]
    return out


def _x(s: str) -> str:
    from xml.sax.saxutils import escape

    return escape(str(s))


# ----------------------------------------------------------------------------- lineup
def _state_margin(s: LineupState) -> float:
    dec = s.result.deciding
    c = dec.closest_check if dec is not None else None
    return c.relative_margin if c is not None else math.inf


def deciding_state(e: LineupEntry) -> LineupState:
    """The state that decides a fixture type's verdict: among the states that count, the
    failing one furthest over its limit, else the one with the least margin."""
    counted = [s for s in e.states if s.result.counts] or list(e.states)
    return min(counted, key=lambda s: (s.result.verdict != "fail", _state_margin(s)))


def worst_informative(e: LineupEntry) -> LineupState | None:
    """The informative state furthest over (or closest to) its limits, when one is above
    them; None otherwise."""
    info = [s for s in e.states if s.result.informative and s.result.verdict == "fail"]
    return min(info, key=_state_margin) if info else None


def _state_label(s: LineupState) -> str:
    role = {"informative": " (informative)", "strict": " (strict)"}.get(s.role, "")
    return s.state + role


def spectrum_fig(entry: LineupEntry, st: LineupState | None = None) -> Any:
    """The spectrum of a state (default: the deciding one) against its limits; hatched
    bars are the orders the compliance table fails (the same disregard rule)."""
    from ..plots import LimitMarks, limit_marks, spectrum_figure

    st = st or deciding_state(entry)
    dec = st.result.deciding
    pct = dec is not None and all(c.unit == "fraction of I1" for c in dec.order_checks())
    unit: Literal["A", "pct"] = "pct" if pct else "A"
    i1 = float(st.spectrum.i1_a)
    marks = limit_marks(st.result, i1, unit) if i1 > 0 else LimitMarks({}, unit, "")
    label = f"IEC 61000-3-2 {st.result.rule}" + (
        " (information only)" if st.result.informative else "")
    return spectrum_figure(st.magnitudes_a, limits=marks.limits or None, unit=unit,
                           max_order=40, title=f"{entry.fixture}: {st.state}",
                           limits_label=label, disregarded=marks.disregarded,
                           failed=marks.failed)


def _closest(s: LineupState) -> str:
    """``I5: -42``: the check closest to its limit and its margin [% of limit]."""
    dec = s.result.deciding
    c = dec.closest_check if dec is not None else None
    if c is None:
        return "-"
    return f"{c.name}: {100 * c.relative_margin:+.0f}"


def _closest_words(s: LineupState) -> str:
    c = _closest(s)
    if c == "-":
        return "no limit counted (every harmonic disregarded, or no rule applies)"
    return f"closest limit {c} % of limit"


def lineup_section(lineup: Sequence[LineupEntry], notes: Sequence[str],
                   figs: FigureBook) -> list[Flowable]:
    out = heading(SECTION_TITLES[1], 1, new_page=True)
    if not lineup:
        out.append(para("No fixture-lineup results were available for this installation."))
        out += [para(n, "note") for n in notes]
        return out
    out.append(para(
        "The verdict of a fixture type is its state at the rated supply and full output "
        "(IEC 61000-3-2 type-tests the lamp). Dimmed states behind an independent phase-cut "
        "dimmer, marked (informative), are an emission assessment against the full-output "
        "limits in amperes and never the reason the verdict fails (status INFO); marked "
        "(strict), they are held to pass/fail at the owner's request; fixtures with built-in "
        "dimming are judged in every state. The rule is the one that decided (for 5 W to "
        "25 W lighting: the first of options a, b, c that passed, else the closest). "
        "Closest limit: the check with the least margin, named by its order (I3 = third "
        "harmonic) or figure; margin [% of limit] = (limit - value) / limit, negative over "
        "the limit, disregarded harmonics left out. Every order of every state is in "
        f"{APPENDIX_TITLE.split(':')[0]}.", "note"))
    rows: list[tuple[Any, ...]] = []
    for e in lineup:
        dec = deciding_state(e)
        for s in e.states:
            r = s.result
            rows.append((e.title, _state_label(s) + (" *" if s is dec else ""),
                         _num(r.p_w, ".1f"), _num(r.pf, ".3f"), r.rule, _closest(s),
                         r.status.upper()))
    out += heading("Compliance table", 3)
    out.append(table([Col("fixture type", 1.6), Col("state", 1.2), Col("P [W]", 0.5, "right"),
                      Col("\u03bb [-]", 0.5, "right"), Col("rule", 1.4),
                      Col("closest limit: margin [% of limit]", 1.1), Col("status", 0.55)],
                     rows, status_col=6))
    out.append(para("* the deciding state of the fixture type (shown in its figure below).",
                    "note"))
    out += light_table(lineup)
    out += [para(n, "note") for n in notes]
    for e in lineup:
        dec = deciding_state(e)
        head = heading(e.title, 2)
        out += head[:-1]
        block = head[-1:]  # the heading, the deciding state and its figure on one page
        if e.description:
            block.append(para(e.description, "note"))
        why = ("fails" if dec.result.verdict == "fail" else "passes") + " with the least margin" \
            if dec.result.verdict != "fail" else "is the state furthest over its limit"
        block.append(para(f"<b>Deciding state: {_x(dec.state)}</b> ({_x(dec.result.label)}; "
                          f"{_x(_closest_words(dec))}; it {why}). Source: "
                          f"{_x(e.source)}; {plural(len(e.states), 'state')} evaluated.",
                          markup=True))
        key = ("lineup", e.fixture, e.dimmer, dec.state)
        block.append(figs.place(key, partial(spectrum_fig, e, dec), 0.66))
        block.append(para("Bars: harmonic current of the deciding state; marks: the limit of "
                          "its rule per order; hatched bars: the orders its compliance table "
                          "fails (harmonics below 0.6 % of the input current or 5 mA are "
                          "disregarded in both).", "caption"))
        out.append(keep(block))
        wi = worst_informative(e)
        if wi is not None and wi is not dec:
            out.append(para(f"Informative: {_x(wi.state)} is above the full-output limits "
                            f"({_x(_closest_words(wi))}); not part of the verdict. Its orders "
                            f"are in {APPENDIX_TITLE.split(':')[0]}.", markup=True))
        own = [n for n in e.notes if n not in notes and n != CAUTION]
        out += [para(n, "small") for n in own]
    return out


def light_table(lineup: Sequence[LineupEntry]) -> list[Flowable]:
    """Temporal light artefacts per fixture type: SVM (IEC TR 63158), Pst_LM (IEC TR
    61547-1) and the displacement factor at full output with the EU ecodesign verdict where
    the project applies it; the worst dimmed state's Pst_LM beside them (informative)."""
    rows: list[tuple[Any, ...]] = []
    day = None
    for e in lineup:
        full = next((s for s in e.states if s.light is not None and s.light.full_load), None)
        if full is None or full.light is None:
            continue
        li = full.light
        dimmed = [s.light.pst_lm for s in e.states
                  if s.light is not None and not s.light.full_load and s.light.pst_lm is not None]
        eu = "-" if li.ecodesign is None else li.ecodesign.verdict.upper()
        if li.ecodesign is not None:
            day = li.ecodesign.on_date
        rows.append((e.title, _num(li.svm, ".2f"), _num(li.pst_lm, ".2f"),
                     _num(li.displacement_factor, ".2f"),
                     _num(max(dimmed), ".2f") if dimmed else "-", eu))
    if not rows:
        return []
    out = heading("Temporal light artefacts at full output", 3)
    out.append(table([Col("fixture type", 2.2), Col("SVM [-]", 0.7, "right"),
                      Col("Pst_LM [-]", 0.8, "right"), Col("displacement factor [-]", 1.1,
                                                            "right"),
                      Col("worst dimmed Pst_LM [-] (informative)", 1.3, "right"),
                      Col("EU ecodesign", 0.8)], rows, status_col=5))
    out.append(para(
        "SVM: stroboscopic visibility measure (IEC TR 63158, threshold of Perz et al. 2018); "
        "Pst_LM: flicker severity of the light (IEC TR 61547-1; 1 is the visibility threshold). "
        "EU ecodesign: Regulation (EU) 2019/2020 as amended by 2021/341 at full load (SVM <= "
        "0.4 from 1 September 2024, Pst_LM <= 1.0, displacement factor by power)"
        + (f", as on {day.isoformat()}" if day is not None else "")
        + "; '-' where the project does not apply them or the lamp is not an LED source. "
        "Computed from the circuit models' light output.", "note"))
    return out


# ----------------------------------------------------------------------------- panels
_NODE_COLS = [Col("scenario", 1.2), Col("cond.", 0.45), Col("I rms [A]", 0.65, "right"),
              Col("I1 [A]", 0.6, "right"), Col("THDi [%]", 0.6, "right"),
              Col("PF [-]", 0.5, "right"), Col("V [V]", 0.55, "right"),
              Col("THDv [%]", 0.6, "right"), Col("neutral", 1.6)]


def _node_rows(a: Assessment, node_id: str) -> list[tuple]:
    rows: list[tuple[Any, ...]] = []
    for sc in a.scenarios:
        p = next(x for x in _nodes(sc) if x.id == node_id)
        for ln, r in p.lines.items():
            rows.append((sc.name, ln, _num(r.i_rms_a), _num(r.i1_a), _pct(r.thd_i),
                         _num(r.pf), _num(r.v_rms_v, ".1f"), _pct(r.thd_v, ".2f"), ""))
        if p.neutral is not None:
            n = p.neutral
            rows.append((sc.name, "N", _num(n.i_rms_a), _num(float(n.magnitudes_a[1])),
                         "-", "-", "-", "-", f"N / highest line {n.ratio_to_max_line:.2f}; "
                         f"triplen share {100 * n.triplen_share:.0f} %"))
        if p.left_out:
            rows.append((sc.name, "-", "", "", "", "", "", "", "totals incomplete: without "
                         + ", ".join(p.left_out)))
    return rows


_CHECK_COLS = [Col("status", 0.5), Col("scenario", 1.0), Col("where", 0.8),
               Col("check", 1.1), Col("message", 3.6)]


def _checks_rows(a: Assessment, pick: Callable[[ScenarioResult], list]) -> list[tuple]:
    rows: list[tuple[Any, ...]] = []
    for sc in a.scenarios:
        for where, checks in pick(sc):
            for c in checks:
                rows.append((c.status.upper(), sc.name, where, c.name, c.message))
    rows.sort(key=lambda r: _ORDER.get(r[0].lower(), 9))
    return rows


#: Panels whose neutral spectrum is also drawn (the heaviest neutrals); a figure costs about
#: as much as typesetting ten pages of tables.
NEUTRAL_FIGURES = 6

#: Orders of the neutral-spectrum table: the fundamental (imbalance), the triplens and the
#: larger others.
_N_ORDERS = (1, 3, 5, 7, 9, 11, 13, 15, 17, 19, 21, 27, 33, 39)


def _neutral_table(p: NodeResult) -> Flowable:
    n = p.neutral
    assert n is not None
    m = np.asarray(n.magnitudes_a, dtype=float)
    cols = [Col("order", 0.9)] + [Col(f"{h}" + (" *" if h % 3 == 0 else ""), 0.5, "right")
                                  for h in _N_ORDERS]
    row = ["I_N [A]"] + [_num(m[h]) if h < len(m) else "-" for h in _N_ORDERS]
    return table(cols, [row], size=7)


def _panel_checks(pid: str, sc: ScenarioResult) -> list[tuple[str, Any]]:
    return [("panel", next(x for x in sc.panels if x.id == pid).checks)]


def _neutral_fig(n: Any, title: str) -> Any:
    from ..plots import neutral_spectrum_figure

    return neutral_spectrum_figure(n.magnitudes_a, title=title)


def panels_section(a: Assessment, figs: FigureBook) -> list[Flowable]:
    out = heading(SECTION_TITLES[2], 1, new_page=True)
    out.append(para("Line and neutral currents are rms over orders 0..50; THD over orders "
                    "2..40; THDv is the line-to-neutral voltage distortion at the panel from "
                    "the drops over the source and feeder impedances (listed with the other "
                    "assumptions). In the neutral-spectrum tables * marks the triplen orders "
                    "(3, 9, 15 ...), which add in the neutral.", "note"))
    inst = a.installation
    by_panel: dict[str, list[tuple]] = {p.id: [] for p in inst.panels}
    for sc in a.scenarios:
        for c in sc.circuits:
            st = "-" if c.setting_deg is None else f"{c.setting_deg:.0f} deg"
            if c.knob is not None:
                st = f"knob {c.knob:.2f}"
            bad = [x for x in c.checks if x.status in ("fail", "warn")]
            flags = "; ".join(list(c.flags) + [f"{x.status.upper()} {x.name}" for x in bad]) \
                or "ok"
            by_panel[c.panel].append((c.id, c.line, sc.name, st, _num(c.i_rms_a),
                                      _pct(c.thd_i), _num(c.pf), _num(c.p_w, ".0f"), flags))
    # figures of the neutral spectrum for the panels whose neutral is heaviest against its
    # lines (every panel's spectrum is tabulated)
    ranked = sorted((p for p in a.design.panels if p.neutral is not None),
                    key=lambda p: -p.neutral.ratio_to_max_line if p.neutral else 0.0)
    drawn = {p.id for p in ranked[:NEUTRAL_FIGURES]}
    if len(ranked) > NEUTRAL_FIGURES:
        out.append(para(f"The neutral spectrum of every panel is tabulated; it is drawn for "
                        f"the {NEUTRAL_FIGURES} panels whose neutral current is highest "
                        "against their line currents.", "note"))
    for k, pan in enumerate(inst.panels):
        fdr = f", fed by feeder {pan.feeder}" if pan.feeder else ""
        out += heading(f"Panel {pan.id}{fdr}", 2, new_page=k > 0)
        out += heading("Line and neutral currents, every scenario", 3)
        out.append(table(_NODE_COLS, _node_rows(a, pan.id)))
        p = next(x for x in a.design.panels if x.id == pan.id)
        if p.neutral is not None:
            out += heading(f"Neutral current spectrum, design scenario ({a.design.name})", 3)
            out.append(_neutral_table(p))
            if pan.id in drawn:
                key = ("neutral", tuple(np.round(p.neutral.magnitudes_a[:41], 4)))
                out.append(figs.place(key, partial(
                    _neutral_fig, p.neutral,
                    f"Neutral current spectrum, design scenario ({a.design.name})"), 0.66))
                out.append(para(f"Panel {pan.id}: neutral {p.neutral.i_rms_a:.2f} A rms; "
                                "triplen orders (hatched) add in the neutral.", "caption"))
        out += heading("Circuits", 3)
        out.append(table([Col("circuit", 0.8), Col("line", 0.4), Col("scenario", 1.1),
                          Col("setting", 0.7), Col("I rms [A]", 0.6, "right"),
                          Col("THDi [%]", 0.6, "right"), Col("PF [-]", 0.45, "right"),
                          Col("P [W]", 0.5, "right"), Col("flags and checks", 1.7)],
                         by_panel[pan.id]))
        out += heading("Panel checks", 3)
        out.append(table(_CHECK_COLS, _checks_rows(a, partial(_panel_checks, pan.id)),
                         status_col=0))
    out += heading("Feeders and the service", 2, new_page=True)
    for f in inst.feeders:
        out += heading(f"Feeder {f}", 3)
        out.append(table(_NODE_COLS, _node_rows(a, f)))
    out += heading("Service (transformer secondary)", 3)
    out.append(table(_NODE_COLS, _node_rows(a, a.design.transformer.id)))
    out += heading("Service and installation checks", 3)
    out.append(table(_CHECK_COLS, _checks_rows(a, lambda sc: [
        ("service", sc.transformer.checks)] + [(f.id, f.checks) for f in sc.feeders] + [
        ("installation", sc.checks)]), status_col=0))
    return out


# -------------------------------------------------------------------------- diversity
def diversity_section(a: Assessment) -> list[Flowable]:
    d = a.installation.diversity
    div = a.diversity
    out = heading(SECTION_TITLES[3], 1, new_page=div is not None)
    if div is None:
        out.append(para(f"Not evaluated (diversity mode '{d.mode}' in the installation file). "
                        "The scenarios fix every dimmer's setting; with [diversity] mode = "
                        "\"summation\" or \"monte-carlo\" the panels are also estimated for "
                        "occupants dimming each room at will."))
        return out
    dd = div.to_dict()
    if "p95_a" in str(dd):
        out.append(para(
            f"Monte Carlo: {plural(d.draws, 'draw')}, each dimmed circuit's conduction angle "
            f"drawn uniformly from {d.low_deg:g} to {d.high_deg:g} deg in steps of "
            f"{d.step_deg:g} deg (seed {d.seed}); each draw's panel currents summed with phase "
            "alignment; percentiles of the rms currents over the draws [A]."))
        rows: list[tuple[Any, ...]] = []
        for p in div.panels:
            for ln, v in list(p.lines.items()) + ([("N", p.neutral)] if p.neutral else []):
                rows.append((p.id, ln, _num(v.p50_a), _num(v.p95_a), _num(v.p99_a),
                             _num(v.max_a)))
        out.append(table([Col("panel", 1.4), Col("conductor", 0.7), Col("p50 [A]", 0.8, "right"),
                          Col("p95 [A]", 0.8, "right"), Col("p99 [A]", 0.8, "right"),
                          Col("max [A]", 0.8, "right")], rows))
    else:
        out.append(para(
            "Summation law of IEC TR 61000-3-6 (exponent 1 below order 5, 1.4 for orders 5 to "
            "10, 2 above): the circuits of a line combined per order at their largest "
            "magnitude over the scenarios, as if their phase angles were unrelated; the "
            "neutral from the sequence of each order (triplens add, balanced others cancel)."))
        rows = []
        for p in div.panels:
            for ln, (irms, i3) in p.lines.items():
                rows.append((p.id, ln, _num(irms), _num(i3), "-"))
            if p.neutral is not None:
                rows.append((p.id, "N", _num(p.neutral[0]), "-", _pct(p.neutral[1], ".0f")))
        out.append(table([Col("panel", 1.4), Col("conductor", 0.7),
                          Col("I rms [A]", 0.8, "right"), Col("I3 [A]", 0.8, "right"),
                          Col("triplen share [%]", 0.9, "right")], rows))
    for n in getattr(div, "left_out", ()):
        out.append(para(n, "note"))
    return out


# ------------------------------------------------------------------------ assumptions
def assumptions_section(a: Assessment, version: str) -> list[Flowable]:
    inst = a.installation
    s = inst.supply
    out = heading(SECTION_TITLES[4], 1, new_page=True)
    out.append(para("Every value the calculation used, with where it came from: file (the "
                    "installation file), model default (the model's typical value), derived "
                    "(computed from other figures: a component sized by the model's rule for "
                    "the rated power and supply, an impedance from a transformer rating or a "
                    "cable's length and size).", "note"))
    an = inst.analysis
    rows: list[tuple[Any, ...]] = [
        ("system", s.system), ("line-to-neutral voltage", f"{s.voltage_ln_v:g} V"),
        ("frequency", f"{s.frequency_hz:g} Hz"), ("rule set", s.rules),
            ("prospective short-circuit current", f"{_num(s.short_circuit_a, '.0f')} A")]
    if s.transformer_kva is not None:
        rows.append(("transformer", f"{s.transformer_kva:g} kVA, eddy-loss factor "
                                    f"{s.eddy_loss_pu:g} pu, rated {s.rated_current_a:.0f} A"))
    passes = "; ".join(f"{sc.name}: " + (
        plural(sc.interaction_iterations, "iteration") if sc.basis == "interacting supply"
        else "did not settle (ideal-supply figures)") for sc in a.scenarios)
    rows += [("supply interaction", ("each circuit solved behind its own loop impedance under "
                                     "its panel's distorted voltage; Newton's method on the "
                                     "node voltages with the circuits' harmonic transfers, "
                                     f"tolerance {100 * an.tolerance:g} % of V1, at most "
                                     f"{plural(an.max_iterations, 'iteration')} ({passes})")
              if an.supply_interaction and inst.has_source_impedance else
              "off (stiff supply)" if not an.supply_interaction else
              "on, but no source impedance is given: stiff supply"),
             ("harmonic orders", "0..50 per circuit and node; THD over 2..40"),
             ("diversity", a.diversity.method if a.diversity is not None else inst.diversity.mode),
             ("distinct circuit solves", str(a.solves)), ("pqcalc", version)]
    pcc = inst.pcc.to_dict() if hasattr(inst.pcc, "to_dict") else {}
    if pcc:
        rows.append(("point of common coupling", ", ".join(f"{k} = {v}" for k, v in
                                                           sorted(pcc.items()))))
    out += heading("Supply and analysis", 2)
    out.append(fields_table(rows, (0.3, 0.7), size=8))
    out += heading("Impedances", 2)
    out.append(table([Col("where", 1.8), Col("line: R + L", 1.2), Col("neutral: R + L", 1.2),
                      Col("origin", 1.8)], impedance_rows(inst)))
    # each type's (and each dimmer's) heading, lead line and table on one page; the
    # sub-section's heading goes with its first table
    h2 = heading("Fixture types", 2)
    out.append(h2[0])
    lead = h2[1:]
    for fid, ft in inst.fixtures.items():
        h3 = heading(f"{fid}", 3)
        out.append(h3[0])
        block, lead = lead + h3[1:], []
        if ft.measured:
            out.append(keep(block + [para(f"Measured: capture {ft.capture}, used as recorded "
                                          f"(declared power {ft.power_w:g} W, file). "
                                          f"{ft.description}", "body")]))
            continue
        block.append(para(f"Model {ft.model}, rated {ft.power_w:g} W (file); dimming range "
                          f"{ft.min_conduction_deg:g} to {ft.max_conduction_deg:g} deg. "
                          f"{ft.description}", "body"))
        try:
            prs = fixture_params(ft, s.voltage_ln_v, s.frequency_hz)  # type: ignore[arg-type]
        except ValueError as e:
            out.append(keep(block + [para(f"(component values could not be listed: {e})",
                                          "note")]))
            continue
        out.append(keep(block + [table(
            [Col("component", 1.3), Col("value", 0.8, "right"), Col("origin", 0.8),
             Col("meaning", 3.0)],
            [(r.name, si(r.value, r.unit), r.origin, r.meaning) for r in prs])]))
    out += lead
    h2 = heading("Dimmers", 2)
    out.append(h2[0])
    lead = h2[1:]
    sets = dimmer_param_sets(inst)
    if not sets:
        out += lead + [para("No circuit has a dimmer.")]
        lead = []
    for title, ids, prs in sets:
        h3 = heading(f"Dimmer: {title}", 3)
        out.append(h3[0])
        out.append(keep(lead + h3[1:] + [
            para(f"Used by {plural(len(ids), 'circuit')}: {', '.join(ids)}.", "note"),
            table([Col("parameter", 1.3), Col("value", 0.8, "right"), Col("origin", 0.8),
                   Col("meaning", 3.0)],
                  [(r.name, si(r.value, r.unit), r.origin, r.meaning) for r in prs])]))
        lead = []
    out += heading("Circuits", 2)
    rows = []
    for c in inst.circuits:
        sett = ("knob " + "/".join(f"{k:g}" for k in c.knob)) if c.knob else \
            "/".join(f"{x:g}" for x in c.conduction_deg) + " deg"
        if c.dimmer == "none":
            sett = "-"
        dim = c.dimmer if c.dimmer != "leading-edge" else f"leading-edge {c.dimmer_switch}"
        rows.append((c.id, c.panel, c.line, f"{c.breaker_a:g} A {c.breaker_curve}".strip(),
                     dim, sett, _num(c.dimmer_rating_w, "g"),
                     ", ".join(f"{g.count} x {g.fixture}" for g in c.groups)))
    out.append(table([Col("circuit", 0.8), Col("panel", 0.7), Col("line", 0.35),
                      Col("breaker", 0.6), Col("dimmer", 1.0), Col("settings per scenario", 1.0),
                      Col("rating [W]", 0.55, "right"), Col("fixtures", 1.5)], rows))
    notes = list(dict.fromkeys(n for sc in a.scenarios for c in sc.circuits for n in c.notes))
    if notes:
        out += heading("Notes from the calculation", 3)
        out += [para("- " + n, "small") for n in notes]
    return out


# -------------------------------------------------------------------------- standards
def standards_section(a: Assessment, lineup: Sequence[LineupEntry]) -> list[Flowable]:
    out = heading(SECTION_TITLES[5], 1, new_page=True)
    out.append(para("Every rule source the checks and the lineup cite, as cited (standard, "
                    "edition, table or clause).", "note"))
    out.append(table([Col("standard, edition, table or clause", 4.2), Col("used for", 2.6)],
                     standards_applied(a, lineup)))
    from ..standards import load_limits

    rows: list[tuple[Any, ...]] = []
    keys = ["iec61000-3-2:class-c", "iec61000-3-2:class-c:5-25w", "iec61000-3-2:class-d"]
    if any(c.name == "IEEE 519 at the PCC" and c.details for sc in a.scenarios
           for c in sc.checks):
        e = a.installation.pcc.ieee519_edition
        keys += [f"ieee519:{e}:current", f"ieee519:{e}:voltage"]
    for k in keys:
        try:
            src = load_limits(k).source
        except Exception:  # a table that is not shipped is simply not listed
            continue
        rows.append((src.standard, src.edition, src.table, src.certainty))
    out += heading("Limit tables shipped with pqcalc and used here", 3)
    out.append(table([Col("standard", 1.3), Col("edition", 2.0), Col("table or clause", 2.6),
                      Col("certainty", 0.9)], rows))
    out.append(para("Certainty is that of the table as a whole (seen: read in a public copy; "
                    "memory: recalled, not verified against the text); single rows or rules "
                    "may differ and are marked in the table files (standards_limits/) and in "
                    "the notes of the results, e.g. the 2022 even-order treatment of IEEE 519 "
                    "and the dimmed-state rule of IEC 61000-3-2 rest on memory. Confirm "
                    "against the purchased standards.", "note"))
    return out


def caution_section(a: Assessment, lineup: Sequence[LineupEntry]) -> list[Flowable]:
    from ..standards import DIMMED_RULE_NOTE

    out = heading(SECTION_TITLES[6], 1, new_page=True)
    out.append(para(a.caution, "bold"))
    out.append(para("The currents are computed from circuit models with the component values "
                    "listed in this report, or from captures used at their recorded "
                    "conditions; measure the installed fixtures before relying on a small "
                    "margin. Neutral and transformer figures assume line-to-neutral loads on "
                    "the panels as modelled; loads not in the installation file are not "
                    "included."))
    if not math.isfinite(a.installation.supply.short_circuit_a):
        out.append(para("No source impedance was given: the supply was taken as stiff."))
    lnotes = list(dict.fromkeys(n for e in lineup for s in e.states for n in s.result.notes))
    if lineup and DIMMED_RULE_NOTE not in lnotes and any(len(e.states) > 1 for e in lineup):
        lnotes.append(DIMMED_RULE_NOTE)
    if lnotes:
        out += heading("Notes on the compliance rules", 3)
        out += [para("- " + n, "note") for n in lnotes]
    return out


# --------------------------------------------------------------------------- appendix
def _display(c: Any) -> tuple[str, str, str]:
    """(value, limit, unit) of a check as printed."""
    unit = c.unit
    k = 1.0
    if unit.startswith("fraction of "):
        unit, k = "% of " + unit.removeprefix("fraction of "), 100.0
    elif unit == "A":
        unit, k = "mA", 1e3
    return _fixed(c.value * k), _fixed(c.limit * k), unit


def _fixed(x: float) -> str:
    """Three significant figures without an exponent (small values as 0.000)."""
    if not math.isfinite(x):
        return "-"
    a = abs(x)
    return f"{x:.0f}" if a >= 100 else f"{x:.1f}" if a >= 10 else f"{x:.2f}" if a >= 1 \
        else f"{x:.3f}"


def appendix(lineup: Sequence[LineupEntry]) -> list[Flowable]:
    out = heading(APPENDIX_TITLE, 1, new_page=True)
    out.append(para("For each state: every check of the rule that decided it. Margin "
                    "[% of limit] = (limit - value) / limit x 100 (for a lower bound, "
                    "(value - limit) / limit x 100); negative: over the limit. A harmonic "
                    "below 0.6 % of the input current or 5 mA is disregarded (status PASS, "
                    "marked 'disregarded').", "note"))
    for e in lineup:
        out += heading(e.title, 2)
        for s in e.states:
            r = s.result
            dec = r.deciding
            out += heading(f"{e.fixture}: {_state_label(s)} - {r.label}", 3)
            if dec is None:
                out.append(para(f"No rule applied ({r.rule}).", "note"))
                continue
            out.append(para(f"{dec.rule}; {dec.reference}. P = {_num(r.p_w, '.2f')} W, "
                            f"\u03bb = {_num(r.pf, '.3f')}.", "small"))
            rows: list[tuple[Any, ...]] = []
            for c in dec.checks:
                v, lim, unit = _display(c)
                m = c.relative_margin
                rows.append((c.name, v, lim, unit,
                             _num(100 * m, "+.1f") if math.isfinite(m) else "-",
                             c.status.upper() + (" (disregarded)" if c.disregarded else "")))
            out.append(table([Col("check", 0.9), Col("value", 0.8, "right"),
                              Col("limit", 0.8, "right"), Col("unit", 0.8),
                              Col("margin [% of limit]", 0.9, "right"), Col("status", 1.1)],
                             rows, status_col=5, size=7))
    return out


# -------------------------------------------------------------------------- the story
def build_story(a: Assessment, lineup: Sequence[LineupEntry], notes: Sequence[str],
                version: str, generated: str, figs: FigureBook | None = None
                ) -> list[Flowable]:
    """Every flowable of the submittal, in order."""
    from .pdf import toc

    figs = figs or FigureBook()
    story = title_page(a, version, generated)
    story += heading("Contents", 1, new_page=True, toc=False)
    story.append(toc())
    story += summary(a, lineup, notes)
    story += lineup_section(lineup, notes, figs)
    story += panels_section(a, figs)
    story += diversity_section(a)
    story += assumptions_section(a, version)
    story += standards_section(a, lineup)
    story += caution_section(a, lineup)
    if lineup:
        story += appendix(lineup)
    return story
