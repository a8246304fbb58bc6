"""``pqcalc analyze``: harmonic analysis of a measured capture."""

from __future__ import annotations

import click

from ..analysis import analyze as analyze_waveform
from ..io.capture import UNIT_SCALE, CsvOptions, load_capture, record_to_waveform
from ._common import echo_json, fmt, main, user_errors


def capture_options(f):
    """Options shared by every command that reads a capture."""
    opts = [
        click.option("--current-col", "-i", help="Current column: header name or 0-based index."),
        click.option("--voltage-col", "-u", help="Voltage column: header name or 0-based index."),
        click.option("--time-col", "-t", help="Time column [s]: header name or 0-based index."),
        click.option("--sample-rate", type=float, help="Sample rate [Hz] when there is no time column."),
        click.option("--current-unit", type=click.Choice(sorted(UNIT_SCALE)), default="A",
                     show_default=True, help="Unit of the current column."),
        click.option("--current-scale", type=float, default=1.0, show_default=True,
                     help="Multiply the current by this (current-probe ratio)."),
        click.option("--shunt-ohm", type=float,
                     help="The current column is the voltage across a shunt of this resistance [ohm]."),
        click.option("--voltage-scale", type=float, default=1.0, show_default=True,
                     help="Multiply the voltage by this (voltage-probe or divider ratio)."),
        click.option("--delimiter", type=click.Choice([",", ";", "tab"]),
                     help="Column delimiter (default: guessed)."),
        click.option("--decimal-comma", is_flag=True, help="Numbers are written 0,5 not 0.5."),
        click.option("--skip-rows", type=int, default=0, show_default=True,
                     help="Lines to skip before the header."),
        click.option("--nominal-frequency", type=float,
                     help="Expected mains frequency [Hz] to narrow the estimate."),
    ]
    for o in reversed(opts):
        f = o(f)
    return f


def csv_options_from(kw: dict) -> CsvOptions:
    from ..errors import InputError

    scale = kw["current_scale"] * UNIT_SCALE[kw["current_unit"]]
    if kw.get("shunt_ohm") is not None:
        if not kw["shunt_ohm"] > 0:
            raise InputError(f"--shunt-ohm: expected a positive resistance, got {kw['shunt_ohm']}")
        scale /= kw["shunt_ohm"]
    if kw.get("sample_rate") is not None and not kw["sample_rate"] > 0:
        raise InputError(f"--sample-rate: expected a positive rate, got {kw['sample_rate']}")
    delim = {"tab": "\t"}.get(kw.get("delimiter"), kw.get("delimiter"))
    return CsvOptions(
        current_col=kw.get("current_col"),
        voltage_col=kw.get("voltage_col"),
        time_col=kw.get("time_col"),
        sample_rate_hz=kw.get("sample_rate"),
        current_scale=scale,
        voltage_scale=kw["voltage_scale"],
        delimiter=delim,
        decimal="," if kw.get("decimal_comma") else ".",
        skip_rows=kw.get("skip_rows", 0),
    )


@main.command("analyze")
@click.argument("capture", type=click.Path(dir_okay=True))
@capture_options
@click.option("--max-order", type=click.IntRange(2, 50), default=40, show_default=True,
              help="Highest order in THD and in the table.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of tables.")
@user_errors
def analyze_cmd(capture, max_order, as_json, **kw):
    """Harmonic spectrum, THD, power factor and more of a measured CAPTURE.

    CAPTURE is a delimited text file (CSV, semicolon or tab) with a time column or a given
    sample rate, or a COMTRADE .cfg file. The record is aligned to a whole number of mains
    cycles at the estimated fundamental frequency before the FFT. Phase angles refer to the
    voltage fundamental when a voltage column is present, else to the current fundamental.
    """
    rec = load_capture(capture, csv_options_from(kw))
    w = record_to_waveform(rec, nominal_hz=kw.get("nominal_frequency"))
    a = analyze_waveform(w, max_order)
    if as_json:
        d = a.to_dict()
        d["source"] = rec.source
        d["cycles"] = w.cycles
        echo_json(d)
        return
    print_analysis(a, rec.source, w.cycles)


def print_analysis(a, source: str, cycles: int) -> None:
    s = a.summary
    out = click.echo
    out(f"{source}: {cycles} cycles analysed")
    rows = [
        ("frequency", fmt(s.frequency_hz, ".4f"), "Hz"),
        ("I rms", fmt(s.i_rms_a), "A"),
        ("I1 (fundamental)", fmt(s.i1_rms_a), "A"),
        ("I peak", fmt(s.i_peak_a), "A"),
        (f"THD i (2..{a.max_order})", fmt(100 * s.thd_i, ".2f"), "% of I1"),
        ("PF (true)", fmt(s.pf, ".4f"), ""),
        ("DPF (cos phi1)", fmt(s.dpf, ".4f"), ""),
        ("crest factor", fmt(s.crest_factor, ".3f"), ""),
        ("distortion factor I1/I", fmt(s.distortion_factor, ".4f"), ""),
        ("K-factor", fmt(s.k_factor, ".3f"), ""),
    ]
    if a.spectrum.has_voltage:
        rows += [
            ("V rms", fmt(s.v_rms_v), "V"),
            (f"THD v (2..{a.max_order})", fmt(100 * s.thd_v, ".2f") if s.thd_v is not None else "-", "% of V1"),
            ("P", fmt(s.p_w), "W"),
            ("S", fmt(s.s_va), "VA"),
            ("Q1", fmt(s.q1_var), "var"),
        ]
    for name, val, unit in rows:
        out(f"  {name:<24} {val:>12} {unit}")
    for n in a.notes:
        out(f"  note: {n}")
    out("")
    out(f"  {'order':>5} {'f [Hz]':>9} {'I [A rms]':>12} {'% of I1':>9} {'phase [deg]':>12}")
    for r in a.to_dict()["harmonics"]:
        out(
            f"  {r['order']:>5} {r['frequency_hz']:>9.1f} {r['i_rms_a']:>12.5g} "
            f"{r['pct_of_fundamental']:>9.2f} {r['phase_deg']:>12.1f}"
        )
