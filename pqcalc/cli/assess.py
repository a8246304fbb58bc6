"""``pqcalc assess``: currents, neutral, supply distortion and checks of an installation."""

from __future__ import annotations

import sys

import click

from ..installation import assess, load_installation
from ..installation.assess import workers
from ..installation.results import CAUTION
from ._common import Progress, echo_json, fmt, main, user_errors, worker_options


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
    total = len(inst.circuits) * inst.n_scenarios
    prog = Progress("solving circuits", min_total=50)
    done = [0]

    def step(n: int) -> None:
        done[0] += n
        prog(min(done[0], total), total)

    try:
        with workers(n_workers, scheduler) as ex:
            a = assess(inst, progress=step, executor=ex)
    finally:
        prog.close()
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


def _flags(checks) -> str:
    bad = [c for c in checks if c.status in ("fail", "warn")]
    return ", ".join(f"{c.status.upper()} {c.name}"
                     + (f" ({c.details['flag']})" if "flag" in c.details else "")
                     for c in bad) or "ok"


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


def print_assessment(a, scenarios, others: bool = False) -> None:
    inst = a.installation
    out = click.echo
    pj = inst.project
    out(f"{pj.name or inst.path}" + (f", {pj.site}" if pj.site else ""))
    s = inst.supply
    out(f"supply: {s.system}, {s.voltage_ln_v:g} V line-to-neutral, {s.frequency_hz:g} Hz, "
        f"source {s.impedance.r_ohm * 1e3:.1f} mohm + {s.impedance.l_h * 1e6:.1f} uH "
        f"({s.impedance_basis}); {plural(inst.n_lamps, 'lamp')} in "
        f"{plural(len(inst.circuits), 'circuit')}, rated connected load "
        f"{a.connected_load_w:.0f} W; {plural(a.solves, 'distinct circuit solve')}")
    for sc in scenarios:
        out("")
        out(f"== scenario: {sc.name}" + (
            f" (supply interaction: {plural(sc.interaction_iterations, 'iteration')})"
            if sc.interaction_iterations else ""))
        out("")
        out(f"  {'circuit':<12} {'panel':<8} {'ph':<3} {'set':>5} {'Irms A':>8} {'THDi %':>7} "
            f"{'PF':>5} {'DPF':>5} {'P W':>8}  flags")
        for c in sc.circuits:
            st = "-" if c.setting_deg is None else f"{c.setting_deg:.0f}"
            if c.knob is not None:
                st = f"k{c.knob:.2f}"
            out(f"  {c.id:<12} {c.panel:<8} {c.line:<3} {st:>5} {c.i_rms_a:>8.3f} "
                f"{100 * c.thd_i:>7.1f} {fmt(c.pf, '.2f'):>5} {fmt(c.dpf, '.2f'):>5} "
                f"{c.p_w:>8.1f}  {_flags(c.checks)}")
        findings = [(c.id, k) for c in sc.circuits for k in c.checks
                    if k.status in ("fail", "warn")]
        if findings:
            out("")
            out("  circuit findings:")
            for cid, k in findings:
                out(f"  {cid:<12} {k.status.upper():<5} {k.name}: {k.message}")
        cap = [(c, f, m) for c in sc.circuits for f, m in c.max_fixtures.items()]
        if cap:
            out("")
            out(f"  {'circuit':<12} {'fixture type':<26} {'count':>5} {'max by inrush':>13} "
                f"{'max by load':>11}  (worst scenario; inrush by the breaker's pulse "
                f"withstand, load by the {inst.supply.rules} load rule)")
            for c, f, _m in cap:
                n = next((g.count for g in _groups(a, c) if g.fixture == f), 0)
                worst = _worst_bounds(a, c.id, f)
                out(f"  {c.id:<12} {f:<26} {n:>5} {fmt(worst['inrush_bound'], 'd'):>13} "
                    f"{fmt(worst['steady_bound'], 'd'):>11}")
        out("")
        out(f"  {'node':<12} {'kind':<11} {'line':<4} {'Irms A':>8} {'I1 A':>8} {'THDi %':>7} "
            f"{'PF':>5} {'THDv %':>7}")
        for p in sc.panels + sc.feeders + (sc.transformer,):
            label, kind = p.id, p.kind
            for ln, r in p.lines.items():
                thdv = f"{100 * r.thd_v:.2f}" if inst.has_source_impedance else "-"
                out(f"  {label:<12} {kind:<11} {ln:<4} {r.i_rms_a:>8.2f} {r.i1_a:>8.2f} "
                    f"{100 * r.thd_i:>7.1f} {fmt(r.pf, '.2f'):>5} {thdv:>7}")
                label = kind = ""
            if p.neutral is not None:
                n = p.neutral
                out(f"  {'':<12} {'':<11} {'N':<4} {n.i_rms_a:>8.2f} {'':>8} {'':>7} {'':>5} {'':>7}   "
                    f"N/max line {n.ratio_to_max_line:.2f}, triplen share "
                    f"{100 * n.triplen_share:.0f} %")
            for c in p.checks:
                out(f"  {'':<12} {c.status.upper():<5} {c.name}: {c.message}")
                out(f"  {'':<12}       [{c.source}]")
        for c in sc.checks:
            out(f"  {c.status.upper():<5} {c.name}: {c.message} [{c.source}]")
        out("")
        out(f"  scenario {sc.name}: {sc.verdict.upper()}, {_counts(sc.all_checks())}")
        if sc.unsolved:
            out(f"  not assessed: {plural(len(sc.unsolved), 'circuit')} without a solution "
                f"({', '.join(sc.unsolved)}); the totals above are incomplete")
    shown = {id(sc) for sc in scenarios}
    rest = [sc for sc in a.scenarios if id(sc) not in shown]
    if others and rest:
        out("")
        out("== other scenarios (pqcalc assess --scenario NAME for the details)")
        for sc in rest:
            out(f"  {sc.name}: {sc.verdict.upper()}, {_counts(sc.all_checks())}; "
                f"{_worst_finding(sc)}")
    if a.diversity is not None:
        div = a.diversity.to_dict()
        out("")
        out(f"== diversity: {div['method']}")
        for n in div.get("left_out", []):
            out(f"  note: {n}")
        for p in div["panels"]:
            items = ", ".join(f"{ln} {_div(v)}" for ln, v in p["lines"].items())
            n = f", N {_div(p['neutral'])}" if "neutral" in p else ""
            out(f"  {p['id']}: {items}{n}")
    out("")
    out(f"verdict: {a.verdict.upper()} over {plural(len(a.scenarios), 'scenario')} "
        f"({_counts(c for sc in a.scenarios for c in sc.all_checks())})")
    out(f"caution: {CAUTION}")


def _div(v: dict) -> str:
    if "p95_a" in v:
        return f"{v['p50_a']:.2f}/{v['p95_a']:.2f}/{v['max_a']:.2f} A (p50/p95/max)"
    return f"{v['i_rms_a']:.2f} A"
