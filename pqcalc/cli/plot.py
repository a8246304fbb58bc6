"""``pqcalc plot``: one figure from a source, written as PNG, SVG or PDF."""

from __future__ import annotations

from pathlib import Path
from typing import get_args

import click

from ..errors import InputError
from ..io.atomic import is_stdout
from ..plots import FIGURE_FORMATS, SpectrumUnit
from ..standards import EQUIPMENT_CLASSES
from ._common import STDIO, deprecated_alias, figure_format, main, save_figure_to, user_errors
from .analyze import capture_options, check_option, csv_options_from, read_capture

#: Figure names of ``pqcalc plot``, and which kinds of source each one is made from.
FIGURES: dict[str, tuple[str, ...]] = {
    "spectrum": ("capture", "installation"),
    "waveform": ("capture", "installation"),
    "panel": ("installation",),
    "neutral-spectrum": ("installation",),
}


@main.command("plot")
@click.argument("figure", metavar="FIGURE")
@click.argument("source", type=click.Path(dir_okay=False, allow_dash=True))
@click.option("-o", "--output", required=True,
              help="Output file: .png, .svg or .pdf; - for standard output (with --format).")
@click.option("--format", "fig_format", type=click.Choice(FIGURE_FORMATS),
              help="File type (default: from the suffix of -o; needed with -o -).")
@capture_options
@click.option("--unit", type=click.Choice(get_args(SpectrumUnit)), default="pct",
              show_default=True, help="spectrum: amperes rms (A) or percent of fundamental (pct).")
@click.option("--log", is_flag=True, help="spectrum: logarithmic value axis.")
@click.option("--class", "limits_class", type=click.Choice(EQUIPMENT_CLASSES),
              help="spectrum: mark the IEC 61000-3-2 limits of this equipment class per order "
                   "(C: lighting; for 5 W to 25 W the option that decides the verdict).")
@deprecated_alias("--limits", "--class", "limits_class", type=click.Choice(EQUIPMENT_CLASSES))
@click.option("--power-w", type=float,
              help="spectrum --class: active input power [W] (needed without voltage).")
@click.option("--pf", type=float,
              help="spectrum --class: circuit power factor [-] (needed without voltage).")
@click.option("--max-order", type=click.IntRange(2, 50), default=40, show_default=True,
              help="spectrum: highest order shown and summed in the THD.")
@click.option("--cycles", type=click.IntRange(1, 20), default=1, show_default=True,
              help="waveform: number of cycles shown.")
@click.option("--title", help="Figure title (default from the source).")
@click.option("--dpi", type=click.IntRange(50, 1200), default=200, show_default=True,
              help="Resolution of PNG output.")
@click.option("--panel", "panel_id",
              help="installation: the panel (default: the one whose neutral carries the most "
                   "relative to its phases).")
@click.option("--fixture", "fixture_id",
              help="installation spectrum/waveform: the fixture type (default: the first).")
@click.option("--scenario", "scenario_name",
              help="installation panel figures: scenario name (default: the design one).")
@user_errors
def plot_cmd(figure, source, output, fig_format, unit, log, limits_class, power_w, pf, max_order, cycles,
             title, dpi, panel_id, fixture_id, scenario_name, **kw):
    """Draw FIGURE from SOURCE into the file given by -o.

    FIGURE is one of: spectrum (harmonic currents per order; with --class the
    IEC 61000-3-2 limit of each order is marked and the orders over it are hatched),
    waveform (voltage and current over whole cycles from the voltage zero crossing, the
    dimmer cut shaded). SOURCE is a capture (delimited text or COMTRADE .cfg, read as by
    ``pqcalc analyze``) or an installation file (.toml): then spectrum and waveform show a
    fixture type at full output with its IEC 61000-3-2 limits (--fixture), and panel
    (phase and neutral rms with the triplen share) and neutral-spectrum show a panel
    (--panel, --scenario). For a lamp model use ``pqcalc lamp ... --figure NAME -o FILE``
    (waveform, spectrum, light, curve). The file type follows the suffix of the output:
    .png, .svg or .pdf, or --format; it is written only once the figure is complete. A
    SOURCE of - is a capture read from standard input as delimited text (CSV; a COMTRADE
    record cannot be, as it is a .cfg file with its .dat file); an output of - is
    standard output, and the line saying what was written then goes to stderr.
    """
    from .. import plots
    from ..io.capture import record_to_waveform
    from ..spectrum import spectrum
    from ..standards import evaluate_fixture

    if figure not in FIGURES:
        raise InputError(f"FIGURE: unknown figure {figure!r}; expected one of "
                         f"{', '.join(FIGURES)}")
    check_option("--power-w", power_w)
    check_option("--pf", pf)
    fig_format = figure_format(output, fig_format)
    out = output
    said = "standard output" if is_stdout(output) else output
    kind = ("installation" if source != STDIO and Path(source).suffix.lower() == ".toml"
            else "capture")
    if kind not in FIGURES[figure]:
        raise InputError(f"FIGURE: {figure} is drawn from " + " or ".join(FIGURES[figure])
                         + f" sources, not from {Path(source).name}")
    if kind == "installation":
        fig = _installation_figure(figure, source, unit, log, max_order, cycles, title,
                                   panel_id, fixture_id, scenario_name)
        save_figure_to(fig, out, fig_format, dpi=dpi)
        click.echo(f"wrote {said}", err=is_stdout(out))
        return
    rec = read_capture(source, csv_options_from(kw))
    w = record_to_waveform(rec, nominal_hz=kw.get("frequency"))
    if figure == "spectrum":
        s = spectrum(w)
        marks = plots.LimitMarks({}, unit, "")
        if limits_class is not None:
            result = evaluate_fixture(w, power_w, pf, limits_class, fixture=w.label)
            marks = plots.limit_marks(result, s.i1_a, unit)
            if not marks.limits:
                click.echo(f"warning: {result.rule}; no limits drawn", err=True)
        fig = plots.spectrum_figure(s, marks.limits, unit=unit, log=log, max_order=max_order,
                                    title=title, limits_label=marks.label,
                                    disregarded=marks.disregarded)
    else:
        if cycles > w.cycles:
            raise InputError(f"--cycles: the capture holds {w.cycles} whole cycles, asked {cycles}")
        fig = plots.waveform_figure(w, cycles=cycles, title=title)
    save_figure_to(fig, out, fig_format, dpi=dpi)
    click.echo(f"wrote {said}", err=is_stdout(out))


def _installation_figure(figure, source, unit, log, max_order, cycles, title, panel_id,
                         fixture_id, scenario_name):
    """Figures of an installation: a fixture type of its lineup, or a panel's currents."""
    from .. import plots
    from ..installation import load_installation

    inst = load_installation(source)
    if figure in ("spectrum", "waveform"):
        from ..installation import evaluate_lineup

        known = list(inst.fixtures)
        if fixture_id is not None and fixture_id not in known:
            raise InputError(f"--fixture: no fixture type {fixture_id!r}; known: "
                             f"{', '.join(known)}")
        entries = evaluate_lineup(inst)
        ids = [e.fixture for e in entries]
        pick = fixture_id or ids[0]
        e = entries[ids.index(pick)]
        st = e.states[0]
        if figure == "waveform":
            return plots.waveform_figure(st.waveform, cycles=min(cycles, st.waveform.cycles),
                                         title=title or f"{pick} at {st.state}")
        marks = plots.limit_marks(st.result, st.spectrum.i1_a, unit)
        return plots.spectrum_figure(st.spectrum, marks.limits, unit=unit, log=log,
                                     max_order=max_order,
                                     title=title or f"{pick} at {st.state}",
                                     limits_label=marks.label, disregarded=marks.disregarded)
    from ..installation import assess

    a = assess(inst)
    sc = a.design
    if scenario_name is not None:
        names = [s.name for s in a.scenarios]
        if scenario_name not in names:
            raise InputError(f"--scenario: no scenario {scenario_name!r}; known: "
                             + ", ".join(names))
        sc = a.scenarios[names.index(scenario_name)]
    panels = {p.id: p for p in sc.panels}
    if panel_id is None:
        with_n = [p for p in sc.panels if p.neutral is not None]
        if not with_n:
            raise InputError(f"{source}: a single-phase supply has no separate neutral figure")
        panel_id = max(with_n, key=lambda p: p.neutral.ratio_to_max_line if p.neutral else 0.0).id
    if panel_id not in panels:
        raise InputError(f"--panel: no panel {panel_id!r}; known: {', '.join(panels)}")
    p = panels[panel_id]
    if p.neutral is None:
        raise InputError(f"--panel {panel_id}: a single-phase panel has no separate neutral")
    t = title or f"{panel_id} ({sc.name})"
    if figure == "panel":
        rms = {ln: r.i_rms_a for ln, r in p.lines.items()}
        rms["N"] = p.neutral.i_rms_a
        return plots.panel_figure(rms, p.neutral.triplen_share, title=t)
    return plots.neutral_spectrum_figure(p.neutral.magnitudes_a, max_order=max_order, log=log,
                                         title=f"neutral of {t}")
