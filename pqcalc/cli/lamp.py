"""``pqcalc lamp``: one fixture type behind a dimmer, solved to periodic steady state.

Thin: the numbers come from :func:`pqcalc.circuits.solve_circuit`,
:func:`pqcalc.circuits.dimming_curve`, :func:`pqcalc.analysis.analyze`,
:func:`pqcalc.light.light_metrics` (SVM, Pst_LM and the flicker figures),
:func:`pqcalc.light.eu_ecodesign_check` (the EU rules for light sources) and
:func:`pqcalc.light.dimmer_jitter_pst_lm` (firing jitter).
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import io
import math
import sys

import click
import numpy as np

from ..analysis import analyze
from ..circuits import (
    DIMMER_KINDS,
    MODELS,
    DimmerSpec,
    LoadGroup,
    Supply,
    dimmer_params,
    dimming_curve,
    model_params,
    solve_circuit,
)
from ..circuits.curve import SETTING_AXES
from ..circuits.spec import SWITCH_KINDS
from ..errors import InputError
from ..installation.lineup import (
    EU_NOT_LED_NOTE,
    StateLight,
    eu_ecodesign_default,
    eu_ecodesign_in_scope,
    state_light,
)
from ..io.atomic import is_stdout
from ..light import dimmer_jitter_pst_lm, eu_ecodesign_check
from ..plotting.style import FIGURE_FORMATS
from ..standards.results import CAUTION
from ._common import echo_json, figure_format, fmt, main, save_figure_to, user_errors, write_atomic

#: What the lamp figures rest on, printed with the caution.
MODEL_NOTE = ("computed from circuit models with typical component values; confirm dimmer and "
              "lamp compatibility with the makers' data")

#: the supply's own parameters that ``--param`` reaches (names as in :class:`Supply`)
SUPPLY_PARAMS = (
    ("source_r_ohm", "ohm", "series source resistance (line and neutral together)"),
    ("source_l_h", "H", "series source inductance (line and neutral together)"),
    ("source_damping_ohm", "ohm", "resistance across the source inductance (line losses)"),
)
_SCOPES = ("supply", "dimmer", "lamp")


def _supply_rows() -> list[dict]:
    d = Supply()
    return [dict(name=n, unit=u, doc=doc, default=getattr(d, n)) for n, u, doc in SUPPLY_PARAMS]


def _choice(option: str, value: str, allowed) -> str:
    if value not in allowed:
        raise InputError(f"{option}: unknown {value!r}; expected one of {', '.join(allowed)}")
    return value


def _split_params(items, model: str, kind: str, switch: str, supply: Supply) -> dict:
    """``NAME=VALUE`` items routed to supply, dimmer and lamp (``scope.NAME`` to force)."""
    names = {
        "supply": [r["name"] for r in _supply_rows()],
        "dimmer": [r["name"] for r in dimmer_params(kind, switch, supply)],
        "lamp": [r["name"] for r in model_params(model)],
    }
    out: dict[str, dict[str, float]] = {s: {} for s in _SCOPES}
    for item in items:
        if "=" not in item:
            raise InputError(f"--param {item!r}: expected NAME=VALUE, e.g. c_bulk_f=4.7e-6")
        name, _, text = item.partition("=")
        name, text = name.strip(), text.strip()
        scope = None
        if "." in name:
            scope, _, name = name.partition(".")
            if scope not in _SCOPES:
                raise InputError(f"--param {item!r}: unknown scope {scope!r}; expected one of "
                                 f"{', '.join(_SCOPES)}")
        try:
            value = float(text)
        except ValueError:
            raise InputError(f"--param {name}: expected a number, got {text!r}") from None
        if not np.isfinite(value):
            raise InputError(f"--param {name}: expected a finite number, got {text!r}")
        scopes = [scope] if scope else [s for s in _SCOPES if name in names[s]]
        if not scopes or name not in names[scopes[0]]:
            if scope:
                where = f"the {scope}"
            elif kind == "none":
                where = f"{model} or the supply"
            else:
                where = f"{model}, the {kind} dimmer or the supply"
            valid = names[scope] if scope else [n for s in _SCOPES for n in names[s]]
            raise InputError(f"--param {name}: unknown parameter of {where}; expected one of "
                             f"{', '.join(valid)}")
        if len(scopes) > 1:
            raise InputError(f"--param {name}: the name belongs to {' and '.join(scopes)}; "
                             f"write {scopes[0]}.{name}=... or {scopes[1]}.{name}=...")
        out[scopes[0]][name] = value
    return out


def _stresses_dict(st) -> dict:
    return {
        "i_peak_a": st.i_peak_a,
        "inrush_peak_a": st.inrush_peak_a,
        "cap_rms_a": dict(st.cap_rms_a or ()),
        "resistor_w": dict(st.resistor_w or ()),
    }


#: Figures ``pqcalc lamp --figure`` draws.
LAMP_FIGURES = ("waveform", "spectrum", "light", "curve")


@main.command("lamp")
@click.option("--model", "model", help=f"Lamp model: {', '.join(MODELS)}.")
@click.option("--power-w", type=float, help="Rated input power of one lamp, undimmed [W].")
@click.option("--count", type=int, default=1, show_default=True,
              help="Identical lamps in parallel behind the dimmer.")
@click.option("--voltage", type=float, default=230.0, show_default=True,
              help="Supply voltage, line to neutral [V rms], 100 to 277.")
@click.option("--frequency", type=float, default=50.0, show_default=True,
              help="Supply frequency [Hz], 45 to 65 (mains: 50 or 60).")
@click.option("--dimmer", "dimmer", default="none", show_default=True,
              help=f"Dimmer: {', '.join(DIMMER_KINDS)}.")
@click.option("--switch", "switch", default="triac", show_default=True,
              help=f"Leading-edge switch: {', '.join(SWITCH_KINDS)} (transistor: an ideal "
                   "cut at the set angle).")
@click.option("--conduction-deg", type=float,
              help="Setting as conduction angle per half cycle [deg], 0 to 180.")
@click.option("--knob", type=float,
              help="Setting as knob position 0 to 1, through the dimmer's firing network.")
@click.option("--param", "params", multiple=True, metavar="NAME=VALUE",
              help="Component value of the lamp, the dimmer or the supply (repeatable; "
                   "e.g. c_bulk_f=4.7e-6, holding_current_a=0.03, source_l_h=200e-6). "
                   "Write supply.NAME, dimmer.NAME or lamp.NAME where a name is shared.")
@click.option("--list-params", is_flag=True,
              help="List the parameters (names, units, defaults) of the model at --power-w, "
                   "the dimmer and the supply, then stop.")
@click.option("--curve", is_flag=True,
              help="Dimming curve: solve at --steps settings evenly spaced over the dimmer's "
                   "range.")
@click.option("--steps", type=int, default=21, show_default=True,
              help="With --curve: number of settings.")
@click.option("--setting-axis", "curve_axis", default="conduction", show_default=True,
              help=f"With --curve: space the settings by {' or '.join(SETTING_AXES)}.")
@click.option("--waveform-csv", type=click.Path(dir_okay=False, allow_dash=True),
              help="Write one period of time, voltage, current and light to this CSV file "
                   "(-: standard output; the text summary then goes to stderr).")
@click.option("--figure", type=click.Choice(LAMP_FIGURES),
              help="Also draw a figure into -o: waveform (voltage and current, the cut "
                   "shaded), spectrum (against the IEC 61000-3-2 Class C limits), light (with "
                   "its flicker figures); with --curve: curve (light, power, THD, PF).")
@click.option("-o", "--output", type=click.Path(dir_okay=False, allow_dash=True),
              help="With --figure: the file (.png, .svg or .pdf), or - for standard output "
                   "(with --format; the text summary then goes to stderr).")
@click.option("--format", "fig_format", type=click.Choice(FIGURE_FORMATS),
              help="With --figure: the file type (default: from the suffix of -o; needed "
                   "with -o -).")
@click.option("--eu-ecodesign/--no-eu-ecodesign", "eu_ecodesign", default=None,
              help="Judge the lamp at full output (no dimmer) against the EU ecodesign rules "
                   "for light sources, Regulation (EU) 2019/2020 as amended by 2021/341 "
                   "(Pst_LM, SVM, displacement factor); dimmed settings are compared for "
                   "information. Default: on for a 230 V 50 Hz supply.")
@click.option("--on-date", "on_date",
              help="With the EU rules: the date they are taken at, YYYY-MM-DD (default: "
                   "today; the SVM limit went from 0.9 to 0.4 on 2024-09-01).")
@click.option("--jitter-deg", "jitter_deg", type=float,
              help="Random spread of the dimmer's firing angle, standard deviation per half "
                   "cycle [deg]: the Pst_LM it gives (a seeded 10 min record per setting).")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of text.")
@user_errors
def lamp_cmd(model, power_w, count, voltage, frequency, dimmer, switch, conduction_deg, knob,
             params, list_params, curve, steps, curve_axis, waveform_csv, figure, output,
             fig_format, eu_ecodesign, on_date, jitter_deg, as_json):
    """Input current, light, flicker and stresses of one fixture type behind a dimmer.

    The lamp circuit (the chosen model's named components with typical defaults) and the
    dimmer are solved to periodic steady state. With --curve, the same at evenly spaced
    settings, with pop-on, drop-out, dead-travel and non-monotonic flags.
    """
    if model is None:
        raise InputError(f"--model: required; expected one of {', '.join(MODELS)}")
    _choice("--model", model, MODELS)
    _choice("--dimmer", dimmer, DIMMER_KINDS)
    _choice("--switch", switch, SWITCH_KINDS)
    _choice("--setting-axis", curve_axis, SETTING_AXES)
    supply0 = Supply(voltage, frequency)  # validates voltage and frequency
    if power_w is not None and not (np.isfinite(power_w) and power_w > 0):
        raise InputError(f"--power-w: expected a positive power [W], got {power_w:g}")
    if list_params:
        _list_params(model, power_w, dimmer, switch, supply0, as_json)
        return
    if power_w is None:
        raise InputError("--power-w: required; give the lamp's rated input power [W]")
    if count < 1:
        raise InputError(f"--count: expected a whole number >= 1, got {count}")
    if conduction_deg is not None and not (np.isfinite(conduction_deg)
                                           and 0.0 <= conduction_deg <= 180.0):
        raise InputError(f"--conduction-deg: expected 0 to 180 deg, got {conduction_deg:g}")
    if knob is not None and not (np.isfinite(knob) and 0.0 <= knob <= 1.0):
        raise InputError(f"--knob: expected 0 to 1, got {knob:g}")
    if conduction_deg is not None and knob is not None:
        raise InputError("--conduction-deg and --knob: give one setting, not both")
    if dimmer == "none" and (conduction_deg is not None or knob is not None or curve):
        raise InputError("--dimmer none: no setting to give (--conduction-deg, --knob and "
                         "--curve need leading-edge or trailing-edge)")
    if jitter_deg is not None:
        if not (math.isfinite(jitter_deg) and jitter_deg >= 0):
            raise InputError(f"--jitter-deg: expected a standard deviation >= 0 [deg], got "
                             f"{jitter_deg:g}")
        if dimmer == "none":
            raise InputError("--jitter-deg: firing jitter needs a dimmer (--dimmer "
                             "leading-edge or trailing-edge)")
    day = _day(on_date)
    eu_asked = eu_ecodesign_default(voltage, frequency) if eu_ecodesign is None else eu_ecodesign
    eu = eu_asked and eu_ecodesign_in_scope(model)
    if (figure is None) != (output is None):
        raise InputError("--figure and -o go together: name the figure and its file")
    if fig_format is not None and figure is None:
        raise InputError("--format: goes with --figure and -o")
    on_stdout = [o for o, v in (("-o -", output), ("--waveform-csv -", waveform_csv))
                 if is_stdout(v)]
    if len(on_stdout) > 1:
        raise InputError(f"{' and '.join(on_stdout)}: both write standard output; send one "
                         "to a file")
    if on_stdout and as_json:
        raise InputError(f"{on_stdout[0]} and --json: both write standard output; send one "
                         "to a file")
    if figure is not None:
        fig_format = figure_format(output, fig_format)
        if (figure == "curve") != bool(curve):
            raise InputError(f"--figure {figure}: "
                             + ("needs --curve" if figure == "curve" else
                                "draws one setting; leave out --curve or use --figure curve"))
    split = _split_params(params, model, dimmer, switch, supply0)
    supply = Supply(voltage, frequency, **split["supply"])
    group = LoadGroup(model, power_w, count, params=split["lamp"])
    if curve:
        if conduction_deg is not None or knob is not None:
            raise InputError("--curve: the settings come from the dimmer's range; leave out "
                             "--conduction-deg and --knob")
        if waveform_csv:
            raise InputError("--waveform-csv: one setting only; leave out --curve")
        c = dimming_curve(supply, dimmer, [group], steps=steps, switch=switch,
                          dimmer_params=split["dimmer"], axis=curve_axis)
        full = _full_output(supply, group, day) if eu else None
        jit = _curve_jitter(c, supply, group, switch, split["dimmer"], jitter_deg)
        if figure == "curve":
            from .. import plots

            fig = plots.dimming_curve_figure(
                c.settings, c.light[0], c.p_w, c.thd_i, c.pf,
                setting_label=("conduction angle [deg]" if curve_axis == "conduction"
                               else "knob position [-]"),
                title=f"{model} {power_w:g} W x {count}, {dimmer}")
            save_figure_to(fig, output, fig_format)
        if as_json:
            d = c.to_dict()
            eu_rows = _curve_eu(c, group, day) if eu else None
            for k, row in enumerate(d["settings"]):
                if eu_rows is not None:
                    row["eu_limits_met"] = eu_rows[k]
                if jit is not None:
                    row["pst_lm_jitter"] = jit[k]
            d["eu_ecodesign"] = _eu_dict(eu, day, full, None, eu_asked)
            if jitter_deg is not None:
                d["jitter_deg"] = jitter_deg
            d["supply"] = {"v_rms_v": supply.v_rms_v, "frequency_hz": supply.frequency_hz,
                           **split["supply"]}
            d["caution"] = CAUTION
            d["model_note"] = MODEL_NOTE
            echo_json(d)
        else:
            with _text_out(bool(on_stdout)):
                _print_curve(c, group, supply, jit, jitter_deg)
                _print_eu(eu, day, full, None, eu_asked)
                _print_notes()
        return
    if dimmer != "none" and conduction_deg is None and knob is None:
        raise InputError(f"--dimmer {dimmer}: give a setting, --conduction-deg (0..180) or "
                         "--knob (0..1), or --curve")
    spec = DimmerSpec(dimmer, conduction_deg=conduction_deg, knob=knob, switch=switch,
                      params=split["dimmer"])
    sol = solve_circuit(supply, spec, [group], admittance=as_json)
    gr = sol.groups[0]
    period_s = sol.period_cycles / supply.frequency_hz
    a = analyze(sol.waveform, 40)
    jres = None
    if jitter_deg is not None:
        jres = dimmer_jitter_pst_lm(supply, spec, [group], jitter_deg)
    dimmed = spec.kind != "none"
    # SVM, Pst_LM and the displacement factor of this setting (informative when dimmed)
    sl = state_light(gr.light, period_s, a.spectrum, gr.p_w, full_load=not dimmed,
                     eu_ecodesign=eu, on_date=day, jitter=jres)
    fl = sl.metrics.flicker_detail
    full = (_full_output(supply, group, day) if dimmed else sl) if eu else None
    if waveform_csv:
        _write_waveform(waveform_csv, sol.waveform, gr.light)
    if figure is not None:
        setting = ("" if dimmer == "none" else f", {dimmer} " + (
            f"{conduction_deg:g} deg" if conduction_deg is not None else f"knob {knob:g}"))
        _draw(figure, output, fig_format, sol, gr, a, sl,
              f"{model} {power_w:g} W x {count}{setting}")
    if as_json:
        d = a.to_dict()
        d["label"] = f"{model} {power_w:g} W x {count}"
        d["p_w"] = float(sol.p_w)
        d.update(_solution_dict(sol, spec, supply, split, fl))
        d["light"].update({"svm": sl.svm, "pst_lm": sl.pst_lm,
                           "p_inst_max": sl.metrics.p_inst_max})
        d["displacement_factor"] = sl.displacement_factor
        d["eu_ecodesign"] = _eu_dict(eu, day, full, sl if dimmed else None, eu_asked)
        d["jitter"] = None if jres is None else jres.to_dict()
        d["caution"] = CAUTION
        d["model_note"] = MODEL_NOTE
        echo_json(d)
        return
    with _text_out(bool(on_stdout)):
        _print_solution(a, sol, spec, supply, sl, group)
        _print_eu(eu, day, full, sl if dimmed else None, eu_asked)
        _print_notes()


def _day(on_date: str | None) -> _dt.date:
    """``--on-date`` as a date (today when not given)."""
    if on_date is None:
        return _dt.date.today()
    try:
        return _dt.date.fromisoformat(on_date.strip())
    except ValueError:
        raise InputError(f"--on-date: expected a date YYYY-MM-DD, got {on_date!r}") from None


def _full_output(supply, group, day) -> StateLight:
    """The lamp without a dimmer, judged against the EU rules at full load."""
    sol = solve_circuit(supply, DimmerSpec("none"), [group])
    gr = sol.groups[0]
    return state_light(gr.light, sol.period_cycles / supply.frequency_hz,
                       analyze(sol.waveform, 40).spectrum, gr.p_w, full_load=True,
                       eu_ecodesign=True, on_date=day)


def _curve_eu(c, group, day) -> list[dict]:
    """Per setting, whether each figure meets the EU full-load limit (informative)."""
    def num(x):
        return None if x is None or not np.isfinite(x) else float(x)

    out = []
    for k in range(c.n_settings):
        svm = num(c.svm[0, k]) if c.svm is not None else None
        pst = num(c.pst_lm[0, k]) if c.pst_lm is not None else None
        df = num(c.dpf[k]) if c.dpf is not None else None
        p = num(c.p_w[k])
        df = None if df is None else min(max(df, 0.0), 1.0)
        # one lamp's share of the power at the dimmer's terminal selects the DF row
        r = eu_ecodesign_check(svm=svm, pst_lm=pst, power_w=None if p is None else
                               max(p, 0.0) / group.count, displacement_factor=df,
                               on_date=day, full_load=False)
        out.append({v.quantity: (None if v.check is None else v.check.status == "pass")
                    for v in r.verdicts})
    return out


def _curve_jitter(c, supply, group, switch, dparams, jitter_deg) -> list | None:
    """Pst_LM with firing jitter at each setting of a curve (None where dark or unsolved)."""
    if jitter_deg is None:
        return None
    out: list[float | None] = []
    for k in range(c.n_settings):
        if "no-solution" in c.flags[k] or not np.isfinite(c.pst_lm[0, k]):
            out.append(None)
            continue
        kw = ({"conduction_deg": float(c.settings[k])} if c.axis == "conduction"
              else {"knob": float(c.settings[k])})
        spec = DimmerSpec(c.dimmer_kind, switch=switch, params=dparams, **kw)
        try:
            out.append(dimmer_jitter_pst_lm(supply, spec, [group], jitter_deg).pst_lm)
        except InputError:  # the lamp goes dark within the spread
            out.append(None)
    return out


def _eu_dict(eu: bool, day, full: StateLight | None, setting: StateLight | None,
             asked: bool) -> dict:
    if not eu:
        return {"applies": False, "note": EU_NOT_LED_NOTE if asked else
                "not applied (default: on for a 230 V 50 Hz supply; --eu-ecodesign)"}
    return {"applies": True, "on_date": day.isoformat(),
            "full_output": None if full is None else full.to_dict(),
            "setting": None if setting is None else setting.to_dict()}


def _print_eu(eu: bool, day, full: StateLight | None, setting: StateLight | None,
              asked: bool) -> None:
    if asked and not eu:
        click.echo(f"EU ecodesign: {EU_NOT_LED_NOTE}")
    if not eu or full is None or full.ecodesign is None:
        return
    out = click.echo
    r = full.ecodesign
    out(f"EU ecodesign ({r.source}), rules of {day.isoformat()}:")
    blocks = [(f"full output, no dimmer ({full.power_w:.3g} W): {r.verdict.upper()}", r)]
    if setting is not None and setting.ecodesign is not None:
        blocks.append(("this setting: informative (the rules apply at full load)",
                       setting.ecodesign))
    names = {"pst_lm": "Pst_LM", "svm": "SVM", "displacement_factor": "displacement factor"}
    for head, res in blocks:
        out(f"  {head}")
        for v in res.verdicts:
            req = v.requirement
            lim = ("-" if req is None or req.limit is None else
                   ("<= " if req.bound == "max" else ">= ") + format(req.limit, "g"))
            status = v.check.status if v.check is not None else v.verdict
            if v.verdict == "informative" and v.check is not None:
                status = "met" if v.check.status == "pass" else "not met"
            out(f"    {names[v.quantity]:<20} {fmt(v.value, '.3g'):>8} {lim:>7}  {status}")


def _print_notes() -> None:
    click.echo(f"note: {MODEL_NOTE}")
    click.echo(f"caution: {CAUTION}")


def _text_out(to_stderr: bool):
    """Where the text summary goes: stderr when standard output carries a file's bytes."""
    return contextlib.redirect_stdout(sys.stderr) if to_stderr else contextlib.nullcontext()


def _draw(figure, output, fig_format, sol, gr, a, sl, title) -> None:
    """One figure of a solved lamp into ``output`` (written atomically)."""
    from .. import plots

    w = sol.waveform
    if figure == "waveform":
        fig = plots.waveform_figure(w, cycles=w.cycles, title=title)
    elif figure == "spectrum":
        from ..standards import evaluate_fixture

        r = evaluate_fixture(w, None, None, "C", fixture=title,
                             outside_scope=w.v_rms_v is not None and w.v_rms_v < 220)
        marks = plots.limit_marks(r, a.spectrum.i1_a, "pct")
        fig = plots.spectrum_figure(a.spectrum, marks.limits, unit="pct", title=title,
                                    limits_label=marks.label, disregarded=marks.disregarded)
    else:
        fl = sl.metrics
        t = np.arange(gr.light.size) / (gr.light.size / (w.cycles / w.frequency_hz))
        fig = plots.light_figure(t, gr.light, fl.percent_flicker or 0.0,
                                 fl.flicker_index or 0.0, fl.modulation_frequency_hz,
                                 title=title, svm=fl.svm, pst_lm=fl.pst_lm)
    save_figure_to(fig, output, fig_format)
    click.echo(f"wrote {'standard output' if is_stdout(output) else output}", err=True)


def _solution_dict(sol, spec, supply, split, fl) -> dict:
    gr = sol.groups[0]
    return {
        "lamp": {"model": gr.group.model, "power_w": gr.group.power_w,
                 "count": gr.group.count, "params": dict(gr.params),
                 "p_w_per_lamp": gr.p_w, "i_rms_a_per_lamp": float(gr.waveform.i_rms_a)},
        "supply": {"v_rms_v": supply.v_rms_v, "frequency_hz": supply.frequency_hz,
                   "source_r_ohm": supply.source_r_ohm, "source_l_h": supply.source_l_h,
                   "source_damping_ohm": supply.source_damping_ohm},
        "dimmer": {"kind": spec.kind,
                   "switch": spec.switch if spec.kind == "leading-edge" else None,
                   "conduction_deg": spec.conduction_deg, "knob": spec.knob,
                   "params": dict(sol.dimmer_p)},
        "conduction_deg_measured": list(sol.conduction_deg),
        "period_cycles": sol.period_cycles,
        "flags": list(sol.flags),
        "light": {"mean_pct": 100.0 * float(np.mean(gr.light)),
                  "min_pct": 100.0 * float(np.min(gr.light)),
                  "max_pct": 100.0 * float(np.max(gr.light))},
        "flicker": fl.to_dict(),
        "stresses": _stresses_dict(gr.stresses),
        "norton": _norton_dict(sol, supply),
    }


def _norton_dict(sol, supply) -> dict | None:
    """The lamps' harmonic Norton admittance at the dimmer's line terminal, orders 2..50
    (the current's phasors are the Norton source): None without a one-cycle period."""
    from ..circuits.smallsignal import at_terminals

    y = sol.input_admittance_s
    if y is None:
        return None
    yt = at_terminals(y, supply.source_r_ohm, supply.source_l_h, supply.source_damping_ohm,
                      supply.frequency_hz)
    return {"orders": list(range(2, yt.size)),
            "conductance_s": [float(v.real) for v in yt[2:]],
            "susceptance_s": [float(v.imag) for v in yt[2:]],
            "note": "diagonal harmonic admittance of all the lamps behind the dimmer about "
                    "this state, at the dimmer's line terminal (the source impedance taken "
                    "out): how their current at each order answers a small voltage of that "
                    "order; the coupling between orders is left out"}


def _write_waveform(path, w, light) -> None:
    t = np.arange(w.current_a.size) / w.sample_rate_hz
    buf = io.StringIO()
    buf.write("time_s,voltage_v,current_a,light\n")
    np.savetxt(buf, np.column_stack([t, w.voltage_v, w.current_a, light]), delimiter=",",
               fmt="%.9g")
    write_atomic(path, buf.getvalue())


def _list_params(model, power_w, dimmer, switch, supply, as_json) -> None:
    lamp_rows = model_params(model, power_w, supply.v_rms_v, supply.frequency_hz)
    dim_rows = dimmer_params(dimmer, switch, supply)
    sup_rows = _supply_rows()
    if as_json:
        echo_json({"supply": sup_rows, "dimmer": dim_rows, "lamp": lamp_rows,
                   "model": model, "power_w": power_w})
        return
    out = click.echo
    at = f" at {power_w:g} W, {supply.v_rms_v:g} V, {supply.frequency_hz:g} Hz" \
        if power_w is not None else " (defaults need --power-w)"
    sw = f" ({switch})" if dimmer == "leading-edge" else ""
    for title, rows in ((f"lamp {model}{at}", lamp_rows), (f"dimmer {dimmer}{sw}", dim_rows),
                        ("supply", sup_rows)):
        out(title)
        out(f"  {'name':<22} {'unit':<5} {'default':>12}  meaning")
        for r in rows:
            out(f"  {r['name']:<22} {r['unit']:<5} {fmt(r['default'], '.4g'):>12}  {r['doc']}")
        out("")


def _setting_text(spec) -> str:
    if spec.kind == "none":
        return "no dimmer"
    sw = f" {spec.switch}" if spec.kind == "leading-edge" else ""
    s = f"{spec.conduction_deg:g} deg conduction" if spec.conduction_deg is not None else \
        f"knob {spec.knob:g}"
    return f"{spec.kind}{sw} dimmer at {s}"


def _print_solution(a, sol, spec, supply, sl, group) -> None:
    out = click.echo
    fl = sl.metrics.flicker_detail
    s = a.summary
    gr = sol.groups[0]
    st = gr.stresses
    out(f"{group.model} {group.power_w:g} W x {group.count} on {supply.v_rms_v:g} V "
        f"{supply.frequency_hz:g} Hz, {_setting_text(spec)}")
    cond = ", ".join(f"{c:.1f}" for c in sol.conduction_deg)
    rows = [
        ("period", f"{sol.period_cycles}", "cycle(s)"),
        ("measured conduction, each half", cond, "deg"),
        ("flags", ", ".join(sol.flags) or "none", ""),
        ("P", fmt(s.p_w), "W"),
        ("I rms", fmt(s.i_rms_a), "A"),
        ("I peak", fmt(s.i_peak_a), "A"),
        (f"THD i (2..{a.max_order})", fmt(100 * s.thd_i, ".2f"), "% of I1"),
        ("PF (true)", fmt(s.pf, ".4f"), ""),
        ("DPF (cos phi1)", fmt(s.dpf, ".4f"), ""),
        ("light (one lamp, mean)", fmt(100 * float(np.mean(gr.light)), ".3g"),
         "% of full output"),
        ("percent flicker", fmt(None if fl.percent_flicker is None else
                                100 * fl.percent_flicker, ".3g"), "%"),
        ("flicker index", fmt(fl.flicker_index, ".3g"), ""),
        ("modulation frequency", fmt(fl.modulation_frequency_hz, ".5g"), "Hz"),
        ("IEEE 1789-2015 region", fl.ieee1789, ""),
        ("SVM (IEC TR 63158)", fmt(sl.svm, ".3g"), ""),
        ("Pst_LM (IEC TR 61547-1)", fmt(sl.pst_lm, ".3g"), ""),
        ("peak current (one lamp)", fmt(st.i_peak_a), "A"),
        ("inrush peak at the crest", fmt(st.inrush_peak_a), "A"),
    ]
    rows += [(f"{name} rms current", fmt(v), "A") for name, v in st.cap_rms_a or ()]
    rows += [(f"{name} dissipation", fmt(v), "W") for name, v in st.resistor_w or ()]
    if sl.jitter is not None:
        rows.insert(rows.index(("Pst_LM (IEC TR 61547-1)", fmt(sl.pst_lm, ".3g"), "")) + 1,
                    (f"Pst_LM, jitter {sl.jitter.jitter_deg:g} deg", fmt(sl.jitter.pst_lm, ".3g"),
                     f"(seed {sl.jitter.seed})"))
    for name, val, unit in rows:
        out(f"  {name:<28} {val:>14} {unit}")
    out("")
    out(f"  {'order':>5} {'I [A rms]':>12} {'% of I1':>9} {'phase [deg]':>12}")
    for r in a.to_dict()["harmonics"][:15]:
        pct = "-" if r["pct_of_fundamental"] is None else f"{r['pct_of_fundamental']:.2f}"
        out(f"  {r['order']:>5} {r['i_rms_a']:>12.5g} {pct:>9} {r['phase_deg']:>12.1f}")
    out("  (orders 16..40: --json)")


def _print_curve(c, group, supply, jit=None, jitter_deg=None) -> None:
    out = click.echo
    unit = "deg" if c.axis == "conduction" else "knob"
    sw = f" {c.switch}" if c.dimmer_kind == "leading-edge" else ""
    out(f"{group.model} {group.power_w:g} W x {group.count} on {supply.v_rms_v:g} V "
        f"{supply.frequency_hz:g} Hz, {c.dimmer_kind}{sw} dimmer: {c.n_settings} settings")
    out(f"  {'set ' + unit:>8} {'cond':>6} {'light%':>7} {'P [W]':>9} {'I [A]':>9} "
        f"{'THD%':>7} {'PF':>6} {'DPF':>6} {'flk%':>6} {'index':>6} {'f [Hz]':>7} "
        f"{'SVM':>6} {'Pst_LM':>6} " + (f"{'PstLMj':>6} " if jit is not None else "")
        + f"{'IEEE 1789':<20} flags")

    def f_(x, spec):
        return "-" if not np.isfinite(x) else format(x, spec)

    for k in range(c.n_settings):
        out(f"  {f_(c.settings[k], '.4g'):>8} {f_(c.conduction_deg[k], '.1f'):>6} "
            f"{f_(100 * c.light[0, k], '.3g'):>7} {f_(c.p_w[k], '.4g'):>9} "
            f"{f_(c.i_rms_a[k], '.4g'):>9} {f_(100 * c.thd_i[k], '.1f'):>7} "
            f"{f_(c.pf[k], '.3f'):>6} {f_(nan_if(c.dpf, k), '.3f'):>6} "
            f"{f_(100 * c.percent_flicker[0, k], '.3g'):>6} "
            f"{f_(c.flicker_index[0, k], '.3f'):>6} "
            f"{f_(c.modulation_frequency_hz[0, k], '.4g'):>7} "
            f"{f_(nan_if(c.svm, 0, k), '.3g'):>6} {f_(nan_if(c.pst_lm, 0, k), '.3g'):>6} "
            + (f"{f_(np.nan if jit[k] is None else jit[k], '.3g'):>6} "
               if jit is not None else "")
            + f"{c.ieee1789[0][k]:<20} {', '.join(c.flags[k])}")
    out(f"curve flags: {', '.join(c.curve_flags) or 'none'}")
    for n in c.notes:
        out(f"  {n}")
    out("  SVM: IEC TR 63158; Pst_LM: IEC TR 61547-1"
        + (f"; PstLMj: Pst_LM with firing jitter {jitter_deg:g} deg (seed 0)"
           if jit is not None else "") + "; DPF: displacement factor cos phi1")


def nan_if(arr, *index) -> float:
    """``arr[index]``, or NaN when the curve carries no such figure."""
    return float("nan") if arr is None else float(arr[index])
