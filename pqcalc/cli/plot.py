"""``pqcalc plot``: one figure from a source, written as PNG, SVG or PDF."""

from __future__ import annotations

from pathlib import Path
from typing import get_args

import click

from ..errors import InputError
from ..plots import FIGURE_FORMATS, SpectrumUnit
from ..standards import EQUIPMENT_CLASSES
from ._common import main, user_errors
from .analyze import capture_options, csv_options_from

#: Figure names of ``pqcalc plot``, and which kinds of source each one is made from.
FIGURES: dict[str, tuple[str, ...]] = {
    "spectrum": ("capture",),
    "waveform": ("capture",),
}


def _check_output(output: str) -> Path:
    p = Path(output)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in FIGURE_FORMATS:
        raise InputError(f"-o {output}: expected a file ending in "
                         f"{', '.join('.' + f for f in FIGURE_FORMATS)}")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"-o {output}: the folder {folder} does not exist")
    return p


@main.command("plot")
@click.argument("figure", metavar="FIGURE")
@click.argument("source", type=click.Path(dir_okay=False))
@click.option("-o", "--output", required=True, help="Output file: .png, .svg or .pdf.")
@capture_options
@click.option("--unit", type=click.Choice(get_args(SpectrumUnit)), default="pct",
              show_default=True, help="spectrum: amperes rms (A) or percent of fundamental (pct).")
@click.option("--log", is_flag=True, help="spectrum: logarithmic value axis.")
@click.option("--limits", "limits_class", type=click.Choice(EQUIPMENT_CLASSES),
              help="spectrum: mark the IEC 61000-3-2 limits of this equipment class per order "
                   "(C: lighting; for 5 W to 25 W the option that decides the verdict).")
@click.option("--power-w", type=float,
              help="spectrum --limits: active input power [W] (needed without voltage).")
@click.option("--pf", type=float,
              help="spectrum --limits: circuit power factor [-] (needed without voltage).")
@click.option("--max-order", type=click.IntRange(2, 50), default=40, show_default=True,
              help="spectrum: highest order shown and summed in the THD.")
@click.option("--cycles", type=click.IntRange(1, 20), default=1, show_default=True,
              help="waveform: number of cycles shown.")
@click.option("--title", help="Figure title (default from the source).")
@click.option("--dpi", type=click.IntRange(50, 1200), default=200, show_default=True,
              help="Resolution of PNG output.")
@user_errors
def plot_cmd(figure, source, output, unit, log, limits_class, power_w, pf, max_order, cycles,
             title, dpi, **kw):
    """Draw FIGURE from SOURCE into the file given by -o.

    FIGURE is one of: spectrum (harmonic currents per order; with --limits the
    IEC 61000-3-2 limit of each order is marked and the orders over it are hatched),
    waveform (voltage and current over whole cycles from the voltage zero crossing, the
    dimmer cut shaded). SOURCE is a capture (delimited text or COMTRADE .cfg, read as by
    ``pqcalc analyze``). The file type follows the suffix of the output: .png, .svg or
    .pdf; it is written only once the figure
    is complete.
    """
    from .. import plots
    from ..io.capture import load_capture, record_to_waveform
    from ..spectrum import spectrum
    from ..standards import evaluate_fixture

    if figure not in FIGURES:
        raise InputError(f"FIGURE: unknown figure {figure!r}; expected one of "
                         f"{', '.join(FIGURES)}")
    out = _check_output(output)
    rec = load_capture(source, csv_options_from(kw))
    w = record_to_waveform(rec, nominal_hz=kw.get("nominal_frequency"))
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
    plots.save_figure(fig, out, dpi=dpi)
    click.echo(f"wrote {out}")
