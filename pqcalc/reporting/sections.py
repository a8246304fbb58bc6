"""The sections of the PDF submittal, each drawn onto a :class:`~.layout.Doc`."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Literal

import numpy as np

from .layout import A4_IN, Col, Doc, fmt_num, fmt_pct
from .sources import standards_applied

if TYPE_CHECKING:  # pragma: no cover
    from ..installation import Assessment, LineupEntry, LineupState, ScenarioResult
    from ..installation import NodeResult as PanelResult

__all__ = ["SECTION_TITLES", "cover", "summary", "lineup_section", "panels_section",
           "assumptions", "standards_section", "cautions"]

#: Section headings, in order (the tests look for them in the extracted text).
SECTION_TITLES = ("Summary of findings", "Fixture lineup: IEC 61000-3-2 harmonic emission",
                  "Panel results", "Assumptions and model parameters",
                  "Standards and editions applied", "Cautions")

_GREY = "#555555"
_ORDER = {"fail": 0, "warn": 1, "info": 2, "pass": 3}


def _nodes(s: ScenarioResult) -> tuple[PanelResult, ...]:
    return tuple(s.panels) + tuple(s.feeders) + (s.transformer,)


# ------------------------------------------------------------------------------ cover
def cover(doc: Doc, a: Assessment, version: str, generated: str, n_lineup: int) -> None:
    inst = a.installation
    pj = inst.project
    doc.new_page()
    doc.y = A4_IN[1] - 2.2
    doc.text(0.75, doc.y, "Power-quality assessment of a dimmed LED lighting installation",
             size=11, color=_GREY)
    doc.y -= 0.4
    doc.para(pj.name or inst.path, size=22, weight="bold", gap_in=0.2)
    rows = [("Project", pj.name or "-"), ("Site", pj.site or "-"),
            ("Engineer", pj.engineer or "-"), ("Date", pj.date or "-"),
            ("Installation file", inst.path or "-"),
            ("Tool", f"pqcalc {version}"), ("Generated", generated)]
    doc.y -= 0.3
    for k, v in rows:
        doc.text(0.75, doc.y, k, size=10, color=_GREY)
        for j, line in enumerate(_wrap_cell(v, 70)):
            doc.text(2.4, doc.y - j * 0.19, line, size=10)
        doc.y -= 0.19 * len(_wrap_cell(v, 70)) + 0.08
    s = inst.supply
    doc.y -= 0.3
    doc.para(f"Supply: {s.system}, {s.voltage_ln_v:g} V line-to-neutral, {s.frequency_hz:g} Hz; "
             f"{inst.n_lamps} lamps in {len(inst.circuits)} circuits on {len(inst.panels)} "
             f"panels; {len(a.scenarios)} scenarios "
             f"({', '.join(sc.name for sc in a.scenarios)}).", size=10)
    if pj.notes:
        doc.para(pj.notes, size=10, color=_GREY)
    doc.y -= 0.4
    doc.text(0.75, doc.y, "Contents", size=12, weight="bold")
    doc.y -= 0.3
    for n, t in enumerate(SECTION_TITLES, 1):
        doc.text(0.95, doc.y, f"{n}.  {t}", size=10)
        doc.y -= 0.22
    doc.y -= 0.4
    doc.para("The figures in this report support, and never replace, the local electrical "
             "code and the design of a licensed professional (see section 6, Cautions).",
             size=9, color=_GREY)


def _wrap_cell(s: str, n: int) -> list[str]:
    from .layout import _wrap

    return _wrap(s, n)


# ---------------------------------------------------------------------------- summary
def _findings(a: Assessment) -> list[tuple[str, str, str, str]]:
    """(status, where, check, message + scenarios) of failed and warned checks, deduplicated
    over scenarios, worst first."""
    seen: dict[tuple, list[str]] = {}
    msg: dict[tuple, str] = {}
    for sc in a.scenarios:
        items = [(f"circuit {c.id}", c.checks) for c in sc.circuits]
        items += [(f"{p.kind} {p.id}", p.checks) for p in _nodes(sc)]
        items.append(("installation", sc.checks))
        for where, checks in items:
            for c in checks:
                if c.status not in ("fail", "warn"):
                    continue
                key = (c.status, where, c.name)
                seen.setdefault(key, []).append(sc.name)
                msg.setdefault(key, c.message)
    out: list[tuple[str, str, str, str]] = []
    for key, scen in seen.items():
        which = "all scenarios" if len(scen) == len(a.scenarios) and len(scen) > 1 else \
            ", ".join(scen)
        out.append((key[0], key[1], key[2], f"{msg[key]} [{which}]"))
    out.sort(key=lambda r: (_ORDER[r[0]], r[1], r[2]))
    return out


def summary(doc: Doc, a: Assessment, lineup: Sequence[LineupEntry],
            lineup_notes: Sequence[str]) -> None:
    doc.heading(SECTION_TITLES[0], new_page=True)
    n_fail = sum(c.status == "fail" for s in a.scenarios for c in s.all_checks())
    n_warn = sum(c.status == "warn" for s in a.scenarios for c in s.all_checks())
    verdict = "FAIL" if a.failed else "PASS"
    doc.para(f"Installation checks: {verdict} - {n_fail} failed and {n_warn} warned checks over "
             f"{len(a.scenarios)} scenarios. Design scenario (highest panel currents): "
             f"{a.design.name}.", size=10, weight="bold")
    if lineup:
        doc.para(_lineup_summary(a, lineup), size=10, weight="bold")
        extra = _dimmed_summary(lineup)
        if extra:
            doc.para(extra, size=9)
    else:
        doc.para("Fixture lineup: not evaluated (no lineup results were available).", size=10)
    sc = a.design
    rows = []
    for p in _nodes(sc):
        hi = max(r.i_rms_a for r in p.lines.values())
        n = p.neutral
        thdv = max(r.thd_v for r in p.lines.values())
        worst = min((c.status for c in p.checks), key=lambda s: _ORDER[s], default="-")
        rows.append((p.id, p.kind, fmt_num(hi), fmt_num(n.i_rms_a) if n else "-",
                     fmt_num(n.ratio_to_max_line) if n else "-",
                     fmt_pct(n.triplen_share, ".0f") if n else "-",
                     fmt_pct(thdv, ".2f") if p.kind == "panel" else "-",
                     fmt_num(p.k_factor, ".1f"), worst))
    doc.table([Col("node", 1.1), Col("kind", 0.9), Col("highest line [A]", 0.8, "right"),
               Col("neutral [A]", 0.75, "right"), Col("N / line [-]", 0.7, "right"),
               Col("triplen share of N [%]", 0.8, "right"),
               Col("THDv [%]", 0.6, "right"), Col("K-factor [-]", 0.65, "right"),
               Col("worst check", 0.7)], rows, status_col=8,
              title=f"Currents in the design scenario ({sc.name})")
    f = _findings(a)
    limit = 16
    doc.table([Col("status", 0.55), Col("where", 1.2, wrap=True), Col("check", 1.2, wrap=True),
               Col("finding [scenarios]", 4.0, wrap=True)],
              [(s.upper(), w, c, m) for s, w, c, m in f[:limit]], status_col=0,
              title="Failed and warned checks")
    if len(f) > limit:
        doc.para(f"... and {len(f) - limit} more: see section 3, Panel results.", size=8,
                 color=_GREY)
    for note in lineup_notes:
        doc.para(note, size=8, color=_GREY)


def _editions(lineup: Sequence[LineupEntry]) -> str:
    """The IEC 61000-3-2 edition(s) the lineup's rules cite."""
    eds = {"5.1" if "AMD1" in r.reference else "5.0"
           for e in lineup for s in e.states for r in s.result.rules}
    return " and ".join(sorted(eds)) or "-"


def _lineup_summary(a: Assessment, lineup: Sequence[LineupEntry]) -> str:
    """The lineup's verdict line: at rated supply and full output, in the standard's scope."""
    counted = [e for e in lineup if e.verdict != "info"]
    if not counted:
        v = a.installation.supply.voltage_ln_v
        return (f"Fixture lineup, IEC 61000-3-2: information only, not part of the verdict - "
                f"the standard sets no limits below 220 V line-to-neutral (this supply: "
                f"{v:g} V; clause 1).")
    bad = [e.title for e in counted if e.verdict == "fail"]
    return (f"Fixture lineup, IEC 61000-3-2 (edition {_editions(lineup)}), at rated supply and "
            f"full output: {len(counted) - len(bad)} of {len(counted)} fixture types pass"
            + (f"; failing: {', '.join(bad)}." if bad else "."))


def _dimmed_summary(lineup: Sequence[LineupEntry]) -> str:
    """How the dimmed states count, and how many lie above the full-output limits."""
    dimmed = [s for e in lineup for s in e.states[1:]]
    if not dimmed or all(e.verdict == "info" for e in lineup):
        return ""
    info = [s for s in dimmed if s.role == "informative"]
    strict = [s for s in dimmed if s.role == "strict"]
    parts = []
    if info:
        over = sum(s.result.verdict == "fail" for s in info)
        parts.append(f"{len(info)} dimmed states behind independent phase-cut dimmers are an "
                     f"informative emission assessment against the full-output limits in "
                     f"amperes, not part of the verdict ({over} above those limits)")
    if strict:
        bad = sum(s.result.failed for s in strict)
        parts.append(f"{len(strict)} dimmed states are held to pass/fail at the owner's "
                     f"request (strict mode; {bad} fail)")
    builtin = [s for s in dimmed if s.role == "verdict"]
    if builtin:
        parts.append(f"{len(builtin)} dimmed states of fixtures with built-in dimming are "
                     "part of their verdict")
    return "; ".join(parts) + "."


# ----------------------------------------------------------------------------- lineup
def _spectrum_fig(entry: LineupEntry):
    """The full-output state's spectrum; its hatched bars are the orders the compliance
    table fails (the same disregard rule and comparison, by construction)."""
    from ..plots import LimitMarks, limit_marks, spectrum_figure

    st = entry.states[0]
    dec = st.result.deciding
    pct = dec is not None and all(c.unit == "fraction of I1" for c in dec.order_checks())
    unit: Literal["A", "pct"] = "pct" if pct else "A"
    i1 = float(st.spectrum.i1_a)
    marks = limit_marks(st.result, i1, unit) if i1 > 0 else LimitMarks({}, unit, "")
    label = f"IEC 61000-3-2 Class C, {st.result.rule}" + (
        " (information only)" if st.result.informative else "")
    return spectrum_figure(st.magnitudes_a, limits=marks.limits or None, unit=unit,
                           max_order=40, title=f"{entry.fixture}: {st.state}",
                           limits_label=label, disregarded=marks.disregarded,
                           failed=marks.failed)


def _state_label(s: LineupState) -> str:
    role = {"informative": " (informative)", "strict": " (strict)"}.get(s.role, "")
    return s.state + role


def lineup_section(doc: Doc, lineup: Sequence[LineupEntry], notes: Sequence[str]) -> None:
    doc.heading(SECTION_TITLES[1], new_page=True)
    if not lineup:
        doc.para("No fixture-lineup results were available for this installation.")
        for n in notes:
            doc.para(n, size=8, color=_GREY)
        return
    doc.para("The verdict of a fixture type is its state at the rated supply and full output "
             "(IEC 61000-3-2 type-tests the lamp). Dimmed states behind an independent "
             "phase-cut dimmer, marked (informative), are an emission assessment against the "
             "full-output limits in amperes and never the reason the verdict fails (verdict "
             "INFO); marked (strict), they are held to pass/fail at the owner's request; "
             "fixtures with built-in dimming are judged in every state. The rule is the one "
             "that decided (for 5 W to 25 W lighting: the first of options a, b, c that "
             "passed, else the closest). Margin [% of limit]: (limit - value) / limit for the "
             "closest limit, disregarded harmonics left out; negative: over the limit.",
             size=8.5, color=_GREY)
    rows = []
    for e in lineup:
        for s in e.states:
            r = s.result
            dec = r.deciding
            worst = "-"
            c = dec.closest_check if dec is not None else None
            if c is not None:
                worst = f"{c.name} {100 * c.relative_margin:+.0f}"
            rows.append((e.title, _state_label(s), fmt_num(r.p_w, ".1f"), fmt_num(r.pf, ".3f"),
                         r.rule, worst, r.status.upper()))
    doc.table([Col("fixture type", 1.5, wrap=True), Col("state", 1.0, wrap=True),
               Col("P [W]", 0.55, "right"),
               Col("lambda [-]", 0.6, "right"), Col("rule", 1.6, wrap=True),
               Col("closest limit, margin [% of limit]", 1.1, wrap=True),
               Col("verdict", 0.6)], rows,
              status_col=6,
              title="Compliance table")
    for n in notes:
        doc.para(n, size=8, color=_GREY)
    for e in lineup:
        own = [n for n in e.notes if n not in notes]
        # keep the fixture's notes on the figure's page: about 110 characters a line of
        # 7.5 pt text, 0.14 in a line, plus the paragraph gaps
        notes_h = sum(0.14 * (len(n) // 110 + 1) + 0.06 for n in own)
        doc.image(_spectrum_fig(e), width_in=5.0,
                  heading=f"{e.title}" + (f": {e.description}" if e.description else ""),
                  caption="Bars: harmonic current of the state shown (the maximum-power "
                          "state); black marks: the limit of the deciding rule per order; "
                          "hatched bars: the orders the compliance table fails (harmonics "
                          "below 0.6 % of the input current or 5 mA are disregarded in "
                          "both).", keep_with_in=min(notes_h, 3.0))
        for n in own:
            doc.para(n, size=7.5, color=_GREY)


# ----------------------------------------------------------------------------- panels
def _node_rows(a: Assessment, node_id: str) -> list[tuple]:
    rows = []
    for sc in a.scenarios:
        p = next(x for x in _nodes(sc) if x.id == node_id)
        for ln, r in p.lines.items():
            rows.append((sc.name, ln, fmt_num(r.i_rms_a), fmt_num(r.i1_a),
                         fmt_pct(r.thd_i), fmt_num(r.pf), fmt_num(r.v_rms_v, ".1f"),
                         fmt_pct(r.thd_v, ".2f"), ""))
        if p.neutral is not None:
            n = p.neutral
            rows.append((sc.name, "N", fmt_num(n.i_rms_a), fmt_num(float(n.magnitudes_a[1])),
                         "-", "-", "-", "-",
                         f"N/line {n.ratio_to_max_line:.2f}; triplen "
                         f"{100 * n.triplen_share:.0f} %"))
    return rows


_NODE_COLS = [Col("scenario", 1.15, wrap=True), Col("cond.", 0.45), Col("I rms [A]", 0.65, "right"),
              Col("I1 [A]", 0.6, "right"), Col("THDi [%]", 0.6, "right"),
              Col("PF [-]", 0.5, "right"), Col("V [V]", 0.55, "right"),
              Col("THDv [%]", 0.6, "right"), Col("neutral", 1.6)]


def _checks_rows(a: Assessment, pick) -> list[tuple]:
    rows = []
    for sc in a.scenarios:
        for where, checks in pick(sc):
            for c in checks:
                rows.append((c.status.upper(), sc.name, where, c.name, c.message))
    rows.sort(key=lambda r: _ORDER[r[0].lower()])
    return rows


_CHECK_COLS = [Col("status", 0.5), Col("scenario", 1.0, wrap=True), Col("where", 0.8, wrap=True),
               Col("check", 1.1, wrap=True), Col("message", 3.6, wrap=True)]


def panels_section(doc: Doc, a: Assessment) -> None:
    from ..plots import panel_figure

    doc.heading(SECTION_TITLES[2], new_page=True)
    doc.para("Phase (line) and neutral currents are rms over orders 0..50; THD over orders "
             "2..40; THDv is the line-to-neutral voltage distortion at the panel, from the "
             "drops over the source and feeder impedances.", size=8.5, color=_GREY)
    inst = a.installation
    for k, pan in enumerate(inst.panels):
        if k:
            doc.new_page()
        fdr = f", fed by {pan.feeder}" if pan.feeder else ""
        doc.heading(f"Panel {pan.id}{fdr}", level=2)
        doc.table(_NODE_COLS, _node_rows(a, pan.id), title="Phase and neutral currents")
        p = next(x for x in a.design.panels if x.id == pan.id)
        if p.neutral is not None:
            cur = {ln: r.i_rms_a for ln, r in p.lines.items()}
            cur["N"] = p.neutral.i_rms_a
            doc.image(panel_figure(cur, p.neutral.triplen_share,
                                   title=f"Panel {pan.id}: {a.design.name}"), width_in=4.6)
        crow = []
        for sc in a.scenarios:
            for c in sc.circuits:
                if c.panel != pan.id:
                    continue
                st = "-" if c.setting_deg is None else f"{c.setting_deg:.0f} deg"
                if c.knob is not None:
                    st = f"knob {c.knob:.2f}"
                bad = [x for x in c.checks if x.status in ("fail", "warn")]
                flags = ", ".join(list(c.flags) + [f"{x.status} {x.name}" for x in bad]) or "ok"
                crow.append((c.id, c.line, sc.name, st, fmt_num(c.i_rms_a),
                             fmt_pct(c.thd_i), fmt_num(c.pf), fmt_num(c.p_w, ".0f"), flags))
        doc.table([Col("circuit", 0.75), Col("line", 0.4), Col("scenario", 1.1, wrap=True),
                   Col("setting", 0.7), Col("I rms [A]", 0.6, "right"),
                   Col("THDi [%]", 0.6, "right"), Col("PF [-]", 0.45, "right"),
                   Col("P [W]", 0.5, "right"), Col("flags and checks", 1.7, wrap=True)],
                  crow, title="Circuits")
        doc.table(_CHECK_COLS, _checks_rows(a, lambda sc, pid=pan.id: [
            ("panel", next(x for x in sc.panels if x.id == pid).checks)]), status_col=0,
                  title="Panel checks")
    doc.new_page()
    doc.heading("Feeders and the service", level=2)
    for f in inst.feeders:
        doc.table(_NODE_COLS, _node_rows(a, f), title=f"Feeder {f}")
    doc.table(_NODE_COLS, _node_rows(a, a.design.transformer.id),
              title="Service (transformer secondary)")
    doc.table(_CHECK_COLS, _checks_rows(a, lambda sc: [
        ("service", sc.transformer.checks)] + [(f.id, f.checks) for f in sc.feeders] + [
        ("installation", sc.checks)]), status_col=0, title="Service and installation checks")


# ------------------------------------------------------------------------ assumptions
def assumptions(doc: Doc, a: Assessment, version: str) -> None:
    inst = a.installation
    s = inst.supply
    z = s.impedance
    doc.heading(SECTION_TITLES[3], new_page=True)
    rows = [("system", s.system), ("line-to-neutral voltage", f"{s.voltage_ln_v:g} V"),
            ("frequency", f"{s.frequency_hz:g} Hz"),
            ("source impedance per line",
             f"{z.r_ohm * 1e3:.2f} m\u03a9 + {z.l_h * 1e6:.1f} \u00b5H "
             f"(from: {s.impedance_basis})"),
            ("neutral impedance", f"{z.neutral_r_ohm * 1e3:.2f} m\u03a9 + "
                                  f"{z.neutral_l_h * 1e6:.1f} \u00b5H"),
            ("prospective short-circuit current", f"{fmt_num(s.short_circuit_a, '.0f')} A")]
    if s.transformer_kva is not None:
        rows.append(("transformer", f"{s.transformer_kva:g} kVA, eddy-loss factor "
                                    f"{s.eddy_loss_pu:g} pu, rated {s.rated_current_a:.0f} A"))
    for fid, f in inst.feeders.items():
        fi = f.impedance
        rows.append((f"feeder {fid}",
                     f"{fi.r_ohm * 1e3:.1f} m\u03a9 + {fi.l_h * 1e6:.1f} \u00b5H per line; "
                     f"neutral {fi.neutral_r_ohm * 1e3:.1f} m\u03a9"))
    an = inst.analysis
    rows += [("supply interaction", ("re-solved under the distorted panel voltage, tolerance "
                                     f"{100 * an.tolerance:g} %, at most {an.max_iterations} "
                                     "iterations") if an.supply_interaction else "off (stiff)"),
             ("harmonic orders", "0..50 per circuit and node; THD over 2..40"),
             ("diversity", a.diversity.method if a.diversity is not None else inst.diversity.mode),
             ("distinct circuit solves", str(a.solves)), ("pqcalc", version)]
    pcc = inst.pcc.to_dict()
    if pcc:
        rows.append(("point of common coupling", ", ".join(f"{k} = {v}" for k, v in
                                                           sorted(pcc.items()))))
    doc.table([Col("item", 2.0, wrap=True), Col("value", 4.8, wrap=True)], rows,
              title="Supply and analysis")
    frows = []
    for fid, ft in inst.fixtures.items():
        if ft.measured:
            kind = f"measured: {ft.capture}"
        else:
            kind = f"model {ft.model}"
        params = ", ".join(f"{k} = {v:g}" for k, v in ft.params) or "model defaults"
        if ft.measured:
            params = "as recorded"
        frows.append((fid, kind, fmt_num(ft.power_w, "g"),
                      f"{ft.min_conduction_deg:g}..{ft.max_conduction_deg:g}", params,
                      ft.description))
    doc.table([Col("fixture type", 1.3, wrap=True), Col("source", 1.6, wrap=True), Col("P [W]", 0.5, "right"),
               Col("conduction [deg]", 0.8), Col("parameters (SI)", 1.5, wrap=True),
               Col("description", 1.4, wrap=True)], frows, title="Fixture types")
    drows = []
    for c in inst.circuits:
        sett = ("knob " + "/".join(f"{k:g}" for k in c.knob)) if c.knob else \
            "/".join(f"{x:g}" for x in c.conduction_deg) + " deg"
        if c.dimmer == "none":
            sett = "-"
        dp = ", ".join(f"{k} = {v:g}" for k, v in c.dimmer_params)
        drows.append((c.id, c.panel, c.line, f"{c.breaker_a:g} A {c.breaker_curve}",
                      c.dimmer, sett, fmt_num(c.dimmer_rating_w, "g"), dp or "-",
                      ", ".join(f"{g.count} x {g.fixture}" for g in c.groups)))
    doc.table([Col("circuit", 0.7), Col("panel", 0.7), Col("line", 0.35), Col("breaker", 0.6),
               Col("dimmer", 0.9, wrap=True), Col("settings", 1.0, wrap=True),
               Col("rating [W]", 0.55, "right"), Col("dimmer parameters", 0.9, wrap=True),
               Col("fixtures", 1.3, wrap=True)], drows, title="Circuits and dimmers")
    notes = list(dict.fromkeys(n for sc in a.scenarios for c in sc.circuits for n in c.notes))
    if notes:
        doc.heading("Notes from the calculation", level=3)
        doc.bullets(notes, size=8)


# -------------------------------------------------------------------------- standards
def standards_section(doc: Doc, a: Assessment, lineup: Sequence[LineupEntry]) -> None:
    doc.heading(SECTION_TITLES[4], new_page=True)
    doc.para("Every rule source the checks and the lineup cite, as cited (standard, edition, "
             "table or clause). Where a rule rests on memory rather than a text seen, the "
             "cautions say so.", size=8.5, color=_GREY)
    doc.table([Col("standard, edition, table or clause", 4.2, wrap=True),
               Col("used for", 2.6, wrap=True)], standards_applied(a, lineup),
              title="Sources applied")
    from ..standards import load_limits

    rows = []
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
    doc.table([Col("standard", 1.3), Col("edition", 2.0, wrap=True),
               Col("table or clause", 2.6, wrap=True), Col("values", 0.9)], rows,
              title="Limit tables shipped with pqcalc and used here")
    doc.para("'values' is the certainty of the table as a whole (seen: read in a public copy; "
             "memory: recalled, unverified); single rows or rules may differ and are marked in "
             "the table files (standards_limits/) and in the results' notes, e.g. the 2022 "
             "even-order treatment of IEEE 519 and the dimmed-state rule of IEC 61000-3-2 rest "
             "on memory. Confirm against the purchased standards.", size=8, color=_GREY)


def cautions(doc: Doc, a: Assessment, lineup: Sequence[LineupEntry]) -> None:
    from ..standards import DIMMED_RULE_NOTE

    doc.heading(SECTION_TITLES[5], new_page=doc.y < 4.0)
    items = [a.caution,
             "The currents are computed from circuit models with typical component values, "
             "or from captures used at their recorded conditions; measure the installed "
             "fixtures before relying on a margin that is small.",
             "Neutral and transformer figures assume line-to-neutral loads on the panel as "
             "modelled; loads not in the installation file are not included."]
    lnotes = list(dict.fromkeys(n for e in lineup for s in e.states for n in s.result.notes))
    if lineup and DIMMED_RULE_NOTE not in lnotes and any(len(e.states) > 1 for e in lineup):
        lnotes.append(DIMMED_RULE_NOTE)
    doc.bullets(items, size=9)
    if lnotes:
        doc.heading("Notes on the compliance rules", level=3)
        doc.bullets(lnotes, size=8.5)
    if np.isfinite(a.installation.supply.short_circuit_a):
        return
    doc.para("No source impedance was given: the supply was taken as stiff.", size=8.5)
