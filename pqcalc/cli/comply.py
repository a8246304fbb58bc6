"""``pqcalc comply``: IEC 61000-3-2 verdicts for a fixture lineup, from measured captures."""

from __future__ import annotations

import math
from pathlib import Path

import click
import numpy as np

from ..errors import InputError
from ..io.capture import record_to_waveform
from ..standards import (
    CAUTION,
    DEFAULT_EDITION,
    EQUIPMENT_CLASSES,
    check_edition,
    evaluate_dimmable,
    evaluate_fixture,
)
from ..standards.iec61000_3_2 import SCOPE_MIN_VOLTAGE_V
from ..standards.results import FixtureResult
from ._common import STDIO, deprecated_alias, echo_json, fmt, main, user_errors
from .analyze import capture_options, check_option, csv_options_from, read_capture

#: Nominal line-to-neutral voltages a record is matched to when none is given [V]
#: (common nominal values, IEC 60038 and North American practice; common practice).
NOMINAL_VOLTAGES_V = (100.0, 110.0, 115.0, 120.0, 127.0, 200.0, 208.0, 220.0, 230.0, 240.0,
                      277.0)


def guess_nominal_voltage(waveforms) -> float | None:
    """Nearest common nominal voltage to the highest ``v_peak / sqrt(2)`` of the records.

    The peak rather than the RMS, because a phase-cut voltage keeps the supply's peak while
    its RMS drops; the 98th percentile of |v| rather than the maximum, because the
    resampling overshoots at the steps of a phase-cut voltage (within 0.2 % of the crest of a
    sine). None when no record has a voltage channel.
    """
    peaks = [float(np.percentile(np.abs(w.voltage_v), 98)) / math.sqrt(2) for w in waveforms
             if w.has_voltage]
    if not peaks:
        return None
    v = max(peaks)
    return min(NOMINAL_VOLTAGES_V, key=lambda n: abs(n - v))


def _fmt_value(d: dict) -> tuple[str, str, str]:
    """Value, limit (in the limit's unit) and the margin [% of limit] of one check."""
    spec = ".4g" if d["unit"] == "A" else ".3f" if d["unit"] == "deg" else ".2f"
    m = d.get("margin_pct")
    return (format(d["value"], spec), format(d["limit"], spec),
            "-" if m is None else format(m, "+.1f"))


def _head(r: FixtureResult) -> str:
    return f"{r.fixture}" + (f" @ {r.state}" if r.state else "")


def print_result(r: FixtureResult) -> None:
    out = click.echo
    d = r.to_dict()
    out(f"{_head(r)}: {r.p_w:.4g} W, lambda {r.pf:.3f}: {r.label}  (rule: {r.rule})")
    if r.role != "verdict" and r.basis:
        out(f"  {'informative' if r.informative else 'strict'}: {r.basis}")
    if r.rules and len(r.rules) > 1:
        out("  " + ", ".join(f"{x.rule}: {x.verdict if x.evaluated else 'not evaluated'}"
                             for x in r.rules))
    dec = r.deciding
    if dec is not None:
        out(f"  {dec.reference}")
        out(f"  {'quantity':<22} {'value':>10} {'limit':>10} {'unit':<10} "
            f"{'margin [% of limit]':>19}  status")
        for c in dec.checks:
            cd = c.to_dict()
            v, lim, m = _fmt_value(cd)
            bound = ">=" if c.bound == "min" else "<="
            flag = " (disregarded)" if c.disregarded else ""
            status = "info" if r.informative else c.status
            out(f"  {c.name:<22} {v:>10} {bound}{lim:>8} {cd['unit']:<10} {m:>19}  "
                f"{status}{flag}")
        for n in dec.notes:
            out(f"  note: {n}")
    for n in d["notes"]:
        out(f"  note: {n}")
    out("")


def _model_states(model, power_w, dimmer, voltage, frequency, params, equipment_class,
                  outside_scope, edition=DEFAULT_EDITION, strict=False, dimming="independent"):
    """IEC 61000-3-2 results of one simulated fixture at full output and dimmed states."""
    from ..circuits import DIMMER_KINDS, MODELS, Supply
    from ..circuits.drivers import resolve_params
    from ..installation.lineup import fixture_states
    from ..installation.model import ModelledFixture

    if model not in MODELS:
        raise InputError(f"--model: unknown model {model!r}; expected one of {', '.join(MODELS)}")
    if dimmer not in DIMMER_KINDS:
        raise InputError(f"--dimmer: expected one of {', '.join(DIMMER_KINDS)}, got {dimmer!r}")
    if power_w is None:
        raise InputError("--power-w: required with --model (the lamp's rated input power [W])")
    Supply(voltage, frequency)  # validates both
    over = {}
    for item in params:
        name, sep, value = item.partition("=")
        try:
            over[name.strip()] = float(value)
        except ValueError:
            raise InputError(f"--param {item}: expected NAME=NUMBER") from None
        if not sep:
            raise InputError(f"--param {item}: expected NAME=NUMBER")
    full = resolve_params(model, power_w, voltage, frequency, over)
    ft = ModelledFixture(model, power_w, model=model,
                         params=tuple(sorted((k, v) for k, v in full.items() if v is not None)))
    why: list[str] = []  # why dimmed states were left out (a constant-power driver...)
    states = fixture_states(ft, voltage, frequency, dimmer, notes=why)
    recs = [(lab, w, None, None) for lab, _, w in states]
    outside = outside_scope or voltage < SCOPE_MIN_VOLTAGE_V
    label = f"{model} {power_w:g} W"
    if len(recs) == 1:
        r = evaluate_fixture(recs[0][1], None, None, equipment_class, fixture=label,
                             state=recs[0][0], nominal_voltage_v=voltage,
                             outside_scope=outside, edition=edition)
        if dimmer != "none" and not why:
            why = [f"{model}: no dimmed state to evaluate behind the {dimmer} cut"]
        return [r], [f"only full output evaluated: {n}" for n in why] + list(r.notes)
    d = evaluate_dimmable(recs, equipment_class, fixture=label, nominal_voltage_v=voltage,
                          outside_scope=outside, edition=edition, strict=strict,
                          dimming=dimming)
    notes = [f"{label}: evaluated behind a reference {dimmer} cut (an ideal switch at each "
             "setting)"] + why + [n for n in d.notes if n != CAUTION]
    return list(d.results), notes


def _label(path: str) -> str:
    return "stdin" if path == STDIO else Path(path).stem


#: The model's supply when --voltage or --frequency is not given [V], [Hz].
MODEL_VOLTAGE_V, MODEL_FREQUENCY_HZ = 230.0, 50.0


@main.command("comply")
@click.argument("captures", nargs=-1, type=click.Path(dir_okay=True, allow_dash=True))
@capture_options(frequency_help="Mains frequency [Hz]: with --model the supply frequency "
                                f"(default {MODEL_FREQUENCY_HZ:g}); for captures it narrows "
                                "the estimate of the fundamental (default: estimated from "
                                "the record alone).")
@click.option("--installation", "installation", type=click.Path(dir_okay=False),
              help="Evaluate every fixture type of this installation file, at full output "
                   "and at five dimmed states behind a reference phase cut of each dimmer "
                   "kind it is used with.")
@click.option("--class", "equipment_class", type=click.Choice(EQUIPMENT_CLASSES),
              default="C", show_default=True, help="IEC 61000-3-2 equipment class.")
@click.option("--settings-of", "settings_of", metavar="NAME",
              help="The captures are dimmer settings of one dimmable fixture NAME; the "
                   "maximum-power one gives the limits.")
@click.option("--power-w", type=float,
              help="Active input power [W] instead of the record's (needed without voltage).")
@click.option("--pf", type=float,
              help="Circuit power factor [-] instead of the record's (needed without voltage).")
@click.option("--voltage", type=float,
              help="Nominal supply voltage, line to neutral [V]: with --model the supply "
                   f"voltage (default {MODEL_VOLTAGE_V:g}); for captures the voltage that "
                   "decides the scope (default: the common nominal voltage nearest to the "
                   "records' peak).")
@deprecated_alias("--nominal-voltage", "--voltage", "voltage", type=float)
@click.option("--outside-scope", is_flag=True,
              help=f"Evaluate even below {SCOPE_MIN_VOLTAGE_V:g} V, where IEC 61000-3-2 sets "
                   "no limits: information only, never a failure.")
@click.option("--edition", default=DEFAULT_EDITION, show_default=True,
              help="IEC 61000-3-2 edition: 5.0 (2018) or 5.1 (2018 + AMD1:2020; Class C "
                   "h3 27 % instead of 30 x lambda %).")
@click.option("--strict-dimmed", is_flag=True,
              help="Hold dimmed states behind an independent dimmer to pass/fail (an owner's "
                   "requirement beyond the standard); without it they are informative.")
@click.option("--builtin-dimming", is_flag=True,
              help="With --settings-of or --model: the fixture dims itself (built-in "
                   "dimming), so every dimmed state is part of its verdict.")
@click.option("--keep-small", is_flag=True,
              help="Do not disregard harmonics below 0.6 % of the current or 5 mA.")
@click.option("--model", "model",
              help="A simulated fixture: the circuit model (as in pqcalc lamp) at --power-w, "
                   "evaluated at full output and five dimmed states behind --dimmer.")
@click.option("--dimmer", "dimmer", default="none", show_default=True,
              help="With --model: the reference phase cut (leading-edge, trailing-edge, none).")
@click.option("--param", "params", multiple=True, metavar="NAME=VALUE",
              help="With --model: a component value of the lamp (repeatable).")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of tables.")
@user_errors
def comply_cmd(captures, installation, equipment_class, settings_of, power_w, pf, voltage,
               outside_scope, edition, strict_dimmed, builtin_dimming, keep_small, model,
               dimmer, params, as_json, frequency, **kw):
    """IEC 61000-3-2 harmonic-emission verdicts, fixture by fixture and setting by setting.

    Each CAPTURE is one fixture (power and power factor from the record's voltage and
    current), or, with --settings-of, one dimmer setting of the same fixture. Lighting
    (Class C) is judged by power: below 5 W no limits; 5 W to 25 W any of options a, b, c;
    above 25 W Table 2 with 30 x lambda % for the third order. Option b's waveform test
    needs the voltage channel. A CAPTURE of - is read from standard input as delimited
    text (CSV); a COMTRADE record cannot be, as it is a .cfg file with its .dat file.

    The verdict of a fixture is at its rated supply and full output. Dimmed states behind
    an independent phase-cut dimmer (--settings-of, --model with --dimmer, an installation)
    are informative, shown against the full-output limits in amperes, unless
    --strict-dimmed; with --builtin-dimming they are part of the verdict. Below 220 V
    line-to-neutral every line is information only. Class D covers up to 600 W.

    Exit code 0 when every fixture passes, 1 when any fails (IEC 61000-3-2, or the EU
    ecodesign rules at full output where the installation applies them), 2 for
    bad input, including a verdict that hinges on option b without a voltage channel, 3
    when the tool fails (the traceback is written to a file in the temporary folder).
    """
    if power_w is not None and not (math.isfinite(power_w) and power_w > 0):
        raise InputError(f"--power-w: expected a positive power [W], got {power_w:g}")
    if pf is not None and not (math.isfinite(pf) and 0 < pf <= 1):
        raise InputError(f"--pf: expected a power factor in (0, 1], got {pf:g}")
    if voltage is not None and not (math.isfinite(voltage) and voltage > 0):
        raise InputError(f"--voltage: expected a positive voltage [V], got {voltage:g}")
    check_option("--power-w", power_w)
    check_option("--voltage", voltage)
    if captures.count(STDIO) > 1:
        raise InputError("CAPTURE -: standard input can be read once; give - once")
    check_edition(edition, "--edition")
    dimming = "builtin" if builtin_dimming else "independent"
    jobs = []  # (fixture, [(setting, waveform)])
    lineup_results: list[FixtureResult] = []
    lineup_notes: list[str] = []
    ecodesign: list[dict] = []  # EU light-source rules per lineup entry (--installation)
    if model is not None:
        lineup_results, lineup_notes = _model_states(
            model, power_w, dimmer, MODEL_VOLTAGE_V if voltage is None else voltage,
            MODEL_FREQUENCY_HZ if frequency is None else frequency, params, equipment_class,
            outside_scope, edition, strict_dimmed, dimming)
        power_w = None  # it was the model's rating, not a capture's power
    if installation:
        from ..installation import evaluate_lineup, load_installation

        inst = load_installation(installation)
        for e in evaluate_lineup(inst, equipment_class,
                                 strict_dimmed=True if strict_dimmed else None,
                                 edition=edition):
            res = e.result.results if hasattr(e.result, "results") else (e.result,)
            lineup_results.extend(res)
            lineup_notes.extend(f"{e.fixture} ({e.source}, {e.dimmer}): {n}" for n in e.notes
                                if n != CAUTION)
            if e.eu_ecodesign:
                ecodesign.append({"fixture": e.fixture, "dimmer": e.dimmer,
                                  "verdict": e.ecodesign,
                                  "states": [{"state": s.state, **s.light.to_dict()}
                                             for s in e.states if s.light is not None]})
    opts = csv_options_from(kw)
    if captures:  # with --model the frequency is the supply's, checked by the model
        check_option("--frequency", frequency)
    waves = []
    for c in captures:
        rec = read_capture(c, opts)
        waves.append((_label(c), record_to_waveform(rec, nominal_hz=frequency)))
    if settings_of:
        if len(waves) < 1:
            raise InputError("--settings-of: expected at least one CAPTURE")
        if power_w is not None and len(waves) > 1:
            raise InputError("--power-w: one power cannot describe several dimmer settings; "
                             "give captures with a voltage channel")
        jobs.append((settings_of, waves))
    else:
        jobs.extend((label, [(label, w)]) for label, w in waves)
    if not jobs and not lineup_results:
        raise InputError("expected at least one CAPTURE or --installation FILE")

    results: list[FixtureResult] = list(lineup_results)
    notes: list[str] = list(dict.fromkeys(lineup_notes))
    for fixture, states in jobs:
        nominal = voltage
        if nominal is None:
            nominal = guess_nominal_voltage([w for _, w in states])
            if nominal is None:
                notes.append(f"{fixture}: no voltage channel, the nominal supply voltage is "
                             "unknown; give --voltage to check the scope")
            else:
                notes.append(f"{fixture}: nominal supply voltage taken as {nominal:g} V "
                             "from the record's voltage peak")
        common = dict(nominal_voltage_v=nominal, outside_scope=outside_scope,
                      disregard_small=not keep_small, edition=edition)
        if len(states) > 1:
            d = evaluate_dimmable([(s, w, power_w, pf) for s, w in states], equipment_class,
                                  fixture=fixture, strict=strict_dimmed,
                                  dimming="builtin" if dimming == "builtin" else "independent",
                                  **common)
            results.extend(d.results)
            notes.extend(n for n in d.notes if n != CAUTION and n not in notes)
        else:
            s, w = states[0]
            results.append(evaluate_fixture(w, power_w, pf, equipment_class, fixture=fixture,
                                            state=s if settings_of else "", **common))

    failed = [r for r in results if r.failed]
    info = [r for r in results if r.informative]
    if as_json:
        echo_json({
            "standard": "IEC 61000-3-2",
            "edition": edition,
            "strict_dimmed": bool(strict_dimmed),
            "verdict": "fail" if failed else "info" if len(info) == len(results) else "pass",
            "results": [r.to_dict() for r in results],
            **({"ecodesign": ecodesign} if installation else {}),
            "notes": notes,
            "caution": CAUTION,
        })
    else:
        for r in results:
            print_result(r)
        for n in notes:
            click.echo(f"note: {n}")
        for x in ecodesign:  # the full-output verdict; dimmed states are informative
            full = next((s for s in x["states"] if s["full_load"]), None)
            if x["verdict"] is not None and full is not None:
                click.echo(f"EU ecodesign (Regulation (EU) 2019/2020) {x['fixture']} at full "
                           f"output: {x['verdict']} (SVM {fmt(full['svm'], '.3g')}, Pst_LM "
                           f"{fmt(full['pst_lm'], '.3g')}, displacement factor "
                           f"{fmt(full['displacement_factor'], '.3g')})")
        bad = ", ".join(_head(r) for r in failed)
        counted = len(results) - len(info)
        click.echo(f"IEC 61000-3-2 edition {edition}: {counted - len(failed)} of {counted} "
                   "pass" + (f"; failing: {bad}" if failed else "")
                   + (f"; {len(info)} informative (not part of the verdict)" if info else ""))
        eu_bad = [x["fixture"] for x in ecodesign if x["verdict"] == "fail"]
        if eu_bad:
            click.echo(f"EU ecodesign at full output: {len(eu_bad)} of {len(ecodesign)} "
                       f"fixture types fail: {', '.join(eu_bad)}")
        click.echo(f"caution: {CAUTION}")
    hinge = [r for r in results if r.undetermined]
    if hinge:
        r = hinge[0]
        raise InputError(f"{r.fixture}: {r.undetermined}; options a and c were evaluated "
                         "(see the table); give a capture with a voltage channel")
    if failed or any(x["verdict"] == "fail" for x in ecodesign):
        raise SystemExit(1)
