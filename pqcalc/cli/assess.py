"""``pqcalc assess``: currents, neutral, supply distortion and checks of an installation."""

from __future__ import annotations

import os
import sys
import textwrap

import click

from ..installation import load_installation
from ..installation.assess import workers
from ..installation.results import CAUTION
from ._common import assess_with_progress, echo_json, fmt, main, user_errors, worker_options


@main.command("assess")
@click.argument("installation", type=click.Path(dir_okay=True))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of tables.")
@click.option("--scenario", "which", default="design", show_default=True,
              help="Scenario to tabulate: 'design' (the one with the highest panel currents), "
                   "'all', or a scenario name.")
@click.option("--no-interaction", is_flag=True,
              help="Ideal stiff supply: skip re-solving under the distorted panel voltage.")
@worker_options
@user_errors
def assess_cmd(installation, as_json, which, no_interaction, n_workers, scheduler):
    """Branch, panel, feeder and neutral currents, THDv and checks of an INSTALLATION file.

    Without --scenario, the design scenario (the one with the highest panel currents) is
    shown in full and every other scenario in one line with its verdict and worst finding.

    Exit code 0 when every check passes in every scenario, 1 when one fails, 2 for bad
    input, 3 when the tool fails (the traceback is written to a file in the temporary
    folder) or a circuit could not be solved and nothing else failed (verdict "not
    assessed": the totals are incomplete).
    """
    inst = load_installation(installation)
    if no_interaction:
        from dataclasses import replace

        inst = replace(inst, analysis=replace(inst.analysis, supply_interaction=False))
    with workers(n_workers, scheduler) as ex:
        a = assess_with_progress(inst, ex)
    if as_json:
        echo_json(a.to_dict())
    else:
        if which == "design":
            scen = [a.design]
        elif which == "all":
            scen = list(a.scenarios)
        else:
            scen = [s for s in a.scenarios if s.name == which]
            if not scen:
                from ..errors import InputError

                raise InputError(f"--scenario: no scenario named {which!r}; known: design, all, "
                                 + ", ".join(s.name for s in a.scenarios))
        print_assessment(a, scen, others=which == "design")
    sys.exit({"pass": 0, "fail": 1, "not assessed": 3}[a.verdict])


def _worst_bounds(a, cid: str, fixture: str) -> dict:
    """The smallest fixture counts per breaker over every scenario (dimmed currents can
    exceed full-output ones)."""
    out = {"inrush_bound": None, "steady_bound": None}
    for sc in a.scenarios:
        for c in sc.circuits:
            m = c.max_fixtures.get(fixture) if c.id == cid else None
            if not m:
                continue
            for k in out:
                if m[k] is not None and (out[k] is None or m[k] < out[k]):
                    out[k] = m[k]
    return out


def _groups(a, c):
    return next(x.groups for x in a.installation.circuits if x.id == c.id)


def plural(n: int, word: str, many: str | None = None) -> str:
    """``1 circuit``, ``2 circuits``; ``many`` for an irregular plural."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def _counts(checks) -> str:
    checks = list(checks)
    fails = sum(c.status == "fail" for c in checks)
    warns = sum(c.status == "warn" for c in checks)
    return f"{plural(fails, 'check')} failed, {plural(warns, 'warning')}"


def _worst_finding(sc) -> str:
    rank = {"fail": 0, "warn": 1}
    bad = sorted((c for c in sc.all_checks() if c.status in rank), key=lambda c: rank[c.status])
    if not bad:
        return "no findings"
    c = bad[0]
    where = next((x.id for x in sc.circuits if c in x.checks), None) or next(
        (p.id for p in sc.panels + sc.feeders + (sc.transformer,) if c in p.checks), "")
    return f"worst: {c.status.upper()} {c.name}" + (f" at {where}" if where else "")


def terminal_width() -> int:
    """The width to print to: ``COLUMNS`` when it is a whole number (at least 60), else 100."""
    try:
        w = int(os.environ.get("COLUMNS", ""))
    except ValueError:
        return 100
    return max(60, w)


class _Out:
    """Lines no wider than the terminal: text wrapped at spaces with a hanging indent."""

    def __init__(self, width: int):
        self.width = width

    def __call__(self, text: str = "", indent: int = 0, hang: int | None = None) -> None:
        if not text:
            click.echo("")
            return
        lead = " " * indent
        more = " " * (indent if hang is None else hang)
        click.echo(textwrap.fill(text, self.width, initial_indent=lead, subsequent_indent=more,
                                 break_on_hyphens=False, break_long_words=True))

    def row(self, text: str) -> None:
        """A table row (sized to the width by its caller); on a narrower terminal the rest
        of the row continues on the next line, indented."""
        if len(text) <= self.width:
            click.echo(text)
            return
        click.echo(textwrap.fill(text.strip(), self.width, initial_indent="  ",
                                 subsequent_indent="      ", break_on_hyphens=False))


def _id_width(ids, cap: int) -> int:
    return min(max([len(x) for x in ids] + [7]), cap)


def _cell(text: str, width: int, out: _Out, rest: str) -> None:
    """A row whose first cell may be longer than its column: then on a line of its own."""
    if len(text) > width:
        out.row("  " + text)
        text = ""
    out.row("  " + f"{text:<{width}} " + rest)


def print_assessment(a, scenarios, others: bool = False) -> None:
    inst = a.installation
    out = _Out(terminal_width())
    pj = inst.project
    out(f"{pj.name or inst.path}" + (f", {pj.site}" if pj.site else ""))
    s = inst.supply
    out(f"supply: {s.system}, {s.voltage_ln_v:g} V line-to-neutral, {s.frequency_hz:g} Hz, "
        f"source {s.impedance.r_ohm * 1e3:.1f} mohm + {s.impedance.l_h * 1e6:.1f} uH "
        f"({s.impedance_basis}); {plural(inst.n_lamps, 'lamp')} in "
        f"{plural(len(inst.circuits), 'circuit')}, rated connected load "
        f"{a.connected_load_w:.0f} W; {plural(a.solves, 'distinct circuit solve')}", hang=2)
    wide = out.width >= 100
    cw = _id_width([c.id for c in inst.circuits], 16 if wide else 10)
    for sc in scenarios:
        out()
        out(f"== scenario: {sc.name}" + (
            f" (supply interaction: {plural(sc.interaction_iterations, 'iteration')})"
            if sc.interaction_iterations else ""), hang=3)
        out()
        out.row(f"  {'circuit':<{cw}} {'ph':<3} {'set':>5} {'Irms A':>8} "
                f"{'THDi %':>7} {'PF':>5} {'DPF':>5} {'P W':>8}  status")
        panel = None
        for c in sc.circuits:
            if c.panel != panel:  # the circuits come panel by panel: one line names it
                panel = c.panel
                out(f"panel {panel}", indent=2, hang=4)
            st = "-" if c.setting_deg is None else f"{c.setting_deg:.0f}"
            if c.knob is not None:
                st = f"k{c.knob:.2f}"
            bad = sorted((k for k in c.checks if k.status in ("fail", "warn")),
                         key=lambda k: k.status != "fail")
            status = bad[0].status.upper() if bad else "ok"
            _cell(c.id, cw, out, f"{c.line:<3} {st:>5} {c.i_rms_a:>8.3f} "
                  f"{100 * c.thd_i:>7.1f} {fmt(c.pf, '.2f'):>5} {fmt(c.dpf, '.2f'):>5} "
                  f"{c.p_w:>8.1f}  {status}")
            if c.flags:
                out("flags: " + ", ".join(c.flags), indent=cw + 3, hang=cw + 5)
            for k in bad:
                out(f"{k.status.upper()} {k.name}: {k.message}", indent=cw + 3, hang=cw + 5)
        cap = [(c, f) for c in sc.circuits for f in c.max_fixtures]
        if cap:
            fw = _id_width([f for _, f in cap], 26 if wide else 20)
            out()
            out(f"  Fixtures per breaker (worst scenario): the most by the breaker's pulse "
                f"withstand at switch-on (inrush) and by the {inst.supply.rules} load rule "
                "(load).", hang=2)
            out.row(f"  {'circuit':<{cw}} {'fixture type':<{fw}} {'count':>5} "
                    f"{'by inrush':>9} {'by load':>7}")
            for c, f in cap:
                n = next((g.count for g in _groups(a, c) if g.fixture == f), 0)
                worst = _worst_bounds(a, c.id, f)
                tail = (f"{n:>5} {fmt(worst['inrush_bound'], 'd'):>9} "
                        f"{fmt(worst['steady_bound'], 'd'):>7}")
                if len(f) > fw:
                    _cell(c.id, cw, out, f)
                    _cell("", cw, out, f"{'':<{fw}} {tail}")
                else:
                    _cell(c.id, cw, out, f"{f:<{fw}} {tail}")
        out()
        nw = _id_width([p.id for p in sc.panels + sc.feeders + (sc.transformer,)],
                       16 if wide else 12)
        out.row(f"  {'node':<{nw}} {'kind':<11} {'line':<4} {'Irms A':>8} {'I1 A':>8} "
                f"{'THDi %':>7} {'PF':>5} {'THDv %':>7}")
        for p in sc.panels + sc.feeders + (sc.transformer,):
            label, kind = p.id, p.kind
            for ln, r in p.lines.items():
                thdv = f"{100 * r.thd_v:.2f}" if inst.has_source_impedance else "-"
                _cell(label, nw, out, f"{kind:<11} {ln:<4} {r.i_rms_a:>8.2f} {r.i1_a:>8.2f} "
                      f"{100 * r.thd_i:>7.1f} {fmt(r.pf, '.2f'):>5} {thdv:>7}")
                label = kind = ""
            if p.neutral is not None:
                n = p.neutral
                _cell("", nw, out, f"{'':<11} {'N':<4} {n.i_rms_a:>8.2f}   N/max line "
                      f"{n.ratio_to_max_line:.2f}, triplen share {100 * n.triplen_share:.0f} %")
            if p.left_out:
                out(f"totals incomplete: without {', '.join(p.left_out)}", indent=nw + 3,
                    hang=nw + 5)
            for c in p.checks:
                out(f"{c.status.upper()} {c.name}: {c.message} [{c.source}]", indent=nw + 3,
                    hang=nw + 5)
        for c in sc.checks:
            out(f"{c.status.upper()} {c.name}: {c.message} [{c.source}]", indent=2, hang=4)
        out()
        out(f"scenario {sc.name}: {sc.verdict.upper()}{sc.basis_note}, "
            f"{_counts(sc.all_checks())}", indent=2, hang=4)
        if sc.unsolved:
            out(f"not assessed: {plural(len(sc.unsolved), 'circuit')} without a solution "
                f"({', '.join(sc.unsolved)}); the totals above are incomplete", indent=2, hang=4)
    shown = {id(sc) for sc in scenarios}
    rest = [sc for sc in a.scenarios if id(sc) not in shown]
    if others and rest:
        out()
        out("== other scenarios (pqcalc assess --scenario NAME for the details)", hang=3)
        for sc in rest:
            out(f"{sc.name}: {sc.verdict.upper()}{sc.basis_note}, {_counts(sc.all_checks())}; "
                f"{_worst_finding(sc)}", indent=2, hang=4)
    if a.diversity is not None:
        div = a.diversity.to_dict()
        out()
        out(f"== diversity: {div['method']}", hang=3)
        for n in div.get("left_out", []):
            out(f"note: {n}", indent=2, hang=4)
        for p in div["panels"]:
            vals = list(p["lines"].items()) + ([("N", p["neutral"])] if "neutral" in p else [])
            mc = "p95_a" in vals[0][1] if vals else False
            items = ", ".join(f"{ln} {_div(v)}" for ln, v in vals)
            out(f"{p['id']}" + (" (p50/p95/max A)" if mc else " (A)") + f": {items}",
                indent=2, hang=4)
    out()
    unsettled = [sc.name for sc in a.scenarios if sc.basis_note]
    out(f"verdict: {a.verdict.upper()} over {plural(len(a.scenarios), 'scenario')} "
        f"({_counts(c for sc in a.scenarios for c in sc.all_checks())})" + (
            f"; {', '.join(unsettled)} on the ideal-supply figures: the supply interaction "
            "did not settle there" if unsettled else ""), hang=2)
    out(f"caution: {CAUTION}", hang=2)


def _div(v: dict) -> str:
    if "p95_a" in v:
        return f"{v['p50_a']:.2f}/{v['p95_a']:.2f}/{v['max_a']:.2f}"
    return f"{v['i_rms_a']:.2f}"
