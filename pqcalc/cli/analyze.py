"""``pqcalc analyze``: harmonic analysis of a measured capture."""

from __future__ import annotations

import contextlib
import dataclasses
import shutil
import sys
import tempfile
from collections.abc import Iterator
from pathlib import Path

import click

from ..analysis import analyze as analyze_waveform
from ..errors import InputError
from ..io.capture import SAMPLE_RATE_HZ, SCALE, UNIT_SCALE, CsvOptions, load_capture, record_to_waveform
from ..io.installation_file import Bounds
from ..io.windows import analyze_windows
from ._common import STDIO, deprecated_alias, echo_json, fmt, main, user_errors

#: How a capture read from standard input is named in messages and outputs.
STDIN_LABEL = "<stdin>"

_FREQUENCY_HELP = ("Mains frequency [Hz]: narrows the estimate of the capture's fundamental "
                   "frequency (default: estimated from the record alone).")


@contextlib.contextmanager
def capture_path(path: str) -> Iterator[str]:
    """The path to read a capture from; for ``-``, standard input copied whole to a private
    temporary CSV file (removed afterwards), with the temporary name replaced by
    ``<stdin>`` in any error message."""
    if path != STDIO:
        yield path
        return
    with tempfile.TemporaryDirectory(prefix="pqcalc-in-") as folder:
        tmp = Path(folder) / "stdin.csv"
        with open(tmp, "wb") as fh:
            shutil.copyfileobj(getattr(sys.stdin, "buffer", sys.stdin), fh)
        if tmp.stat().st_size == 0:
            raise InputError("-: standard input is empty; expected a delimited-text capture "
                             "(CSV)")
        try:
            yield str(tmp)
        except InputError as e:
            raise InputError(str(e).replace(str(tmp), STDIN_LABEL)) from None


def read_capture(path: str, options: CsvOptions):
    """:func:`pqcalc.io.capture.load_capture`, where ``-`` reads CSV from standard input."""
    with capture_path(path) as p:
        rec = load_capture(p, options)
    return rec if p == path else dataclasses.replace(rec, source=STDIN_LABEL)


def capture_options(f=None, *, frequency_help: str = _FREQUENCY_HELP):
    """Options shared by every command that reads a capture (``@capture_options``, or
    ``@capture_options(frequency_help=...)`` where --frequency means more)."""
    if f is None:
        return lambda g: capture_options(g, frequency_help=frequency_help)
    opts = [
        click.option("--current-col", "-i",
                     help="Current column: header name or 0-based index (COMTRADE: channel "
                          "name or its number in the .cfg)."),
        click.option("--voltage-col", "-u",
                     help="Voltage column: header name or 0-based index (COMTRADE: channel "
                          "name or its number in the .cfg)."),
        click.option("--time-col", "-t", help="Time column [s]: header name or 0-based index."),
        click.option("--sample-rate", type=float,
                     help="Sample rate [Hz] when there is no time column."),
        click.option("--current-unit", type=click.Choice(sorted(UNIT_SCALE)), default="A",
                     show_default=True, help="Unit of the current column."),
        click.option("--current-scale", type=float, default=1.0, show_default=True,
                     help="Multiply the current by this (current-probe ratio)."),
        click.option("--shunt-ohm", type=float,
                     help="The current column is the voltage across a shunt of this "
                          "resistance [ohm]."),
        click.option("--voltage-scale", type=float, default=1.0, show_default=True,
                     help="Multiply the voltage by this (voltage-probe or divider ratio)."),
        click.option("--delimiter", type=click.Choice([",", ";", "tab"]),
                     help="Column delimiter (default: guessed)."),
        click.option("--decimal-comma", is_flag=True, help="Numbers are written 0,5 not 0.5."),
        click.option("--skip-rows", type=click.IntRange(0, 10**9), default=0, show_default=True,
                     help="Lines to skip before the header."),
        click.option("--frequency", "frequency", type=float, help=frequency_help),
        deprecated_alias("--nominal-frequency", "--frequency", "frequency", type=float),
    ]
    for o in reversed(opts):
        f = o(f)
    return f


#: The numeric capture options and their sensible ranges (declared once, with the reason).
OPTION_BOUNDS: dict[str, Bounds] = {
    "--current-scale": SCALE,  # the magnitude; a negative scale turns a reversed probe round
    "--voltage-scale": SCALE,
    "--shunt-ohm": Bounds(1e-6, 1e6, "a current shunt"),
    "--sample-rate": SAMPLE_RATE_HZ,
    "--frequency": Bounds(40.0, 70.0, "mains: the band the frequency estimate searches"),
    "--power-w": Bounds(0.0, 1e5, "one piece of equipment's input power", lo_open=True),
    "--pf": Bounds(0.0, 1.0, "a power factor", lo_open=True),
    "--voltage": Bounds(50.0, 700.0, "a low-voltage supply's line-to-neutral voltage"),
}


def check_option(name: str, value: float | None, magnitude: bool = False) -> float | None:
    """``value`` of option ``name`` held to :data:`OPTION_BOUNDS` (its magnitude when
    ``magnitude``); a one-line error naming the option otherwise."""
    if value is None:
        return None
    b = OPTION_BOUNDS[name]
    v = abs(value) if magnitude else value
    if not (v == v and b.contains(v)):
        what = ("a number whose magnitude is " + b.expected()[len("a number "):]
                if magnitude else b.expected())
        raise InputError(f"{name}: expected {what}, got {value:g}")
    return value


def csv_options_from(kw: dict) -> CsvOptions:
    check_option("--current-scale", kw["current_scale"], magnitude=True)
    check_option("--voltage-scale", kw["voltage_scale"], magnitude=True)
    check_option("--frequency", kw.get("frequency"))
    scale = kw["current_scale"] * UNIT_SCALE[kw["current_unit"]]
    if kw.get("shunt_ohm") is not None:
        scale /= check_option("--shunt-ohm", kw["shunt_ohm"])
    check_option("--sample-rate", kw.get("sample_rate"))
    given = kw.get("delimiter")
    delim = "\t" if given == "tab" else given
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
@click.argument("capture", type=click.Path(dir_okay=True, allow_dash=True))
@capture_options
@click.option("--max-order", type=click.IntRange(2, 50), default=40, show_default=True,
              help="Highest order in THD and in the table.")
@click.option("--windows", "per_window", is_flag=True,
              help="Consecutive IEC 61000-4-7 windows (10 cycles at 50 Hz, 12 at 60 Hz): "
                   "one row per window, then mean, max and 95th percentile. Reads the file "
                   "in blocks, so any length works.")
@click.option("--smooth", is_flag=True,
              help="With --windows: pass the harmonic groups through the 1.5 s smoothing filter.")
@click.option("--summary-only", is_flag=True,
              help="With --windows: print the summary without the per-window rows.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of tables.")
@user_errors
def analyze_cmd(capture, max_order, per_window, smooth, summary_only, as_json, **kw):
    """Harmonic spectrum, THD, power factor and more of a measured CAPTURE.

    CAPTURE is a delimited text file (CSV, semicolon or tab) with a time column or a given
    sample rate, or a COMTRADE record (.cfg with its .dat, or a .cff). The record is aligned
    to a whole number of mains cycles at the estimated fundamental frequency before the FFT.
    Phase angles refer to the voltage fundamental when a voltage column is present, else to
    the current fundamental. A CAPTURE of - is read from standard input as delimited text
    (CSV); a COMTRADE record cannot be, as it is a .cfg file with its .dat file.
    """
    if (smooth or summary_only) and not per_window:
        raise InputError("--smooth and --summary-only go with --windows")
    opts = csv_options_from(kw)
    if per_window:
        with capture_path(capture) as path:
            wa = analyze_windows(path, opts, nominal_hz=kw.get("frequency"),
                                 thd_max_order=max_order, smoothing=smooth,
                                 keep_windows=not summary_only)
        if path != capture:
            wa = dataclasses.replace(wa, source=STDIN_LABEL)
        if as_json:
            echo_json(wa.to_dict())
        else:
            print_windows(wa, max_order)
        return
    rec = read_capture(capture, opts)
    w = record_to_waveform(rec, nominal_hz=kw.get("frequency"))
    a = analyze_waveform(w, max_order)
    if as_json:
        d = a.to_dict()
        d["source"] = rec.source
        d["cycles"] = w.cycles
        echo_json(d)
        return
    print_analysis(a, rec.source, w.cycles)


def print_windows(wa, max_order: int) -> None:
    out = click.echo
    summ = wa.summary.to_dict()
    out(f"{wa.source}: {summ['windows']} windows of {wa.cycles} cycles"
        + (" (groups smoothed, 1.5 s)" if wa.windows is not None and wa.windows.smoothed
           else ""))
    w = wa.windows
    has_v = wa.summary.has_voltage
    head = f"  {'window':>6} {'start [s]':>9} {'f [Hz]':>8} {'I [A]':>10} {'I1 [A]':>10} " \
           f"{'THDi [%]':>8}"
    if has_v:
        head += f" {'V [V]':>8} {'THDv [%]':>8} {'P [W]':>10} {'PF':>6} {'DPF':>6}"
    if w is not None:
        out(head)
        for r in w.rows():
            line = (f"  {r['window']:>6} {r['start_s']:>9.3f} {r['frequency_hz']:>8.3f} "
                    f"{r['i_rms_a']:>10.4g} {r['i1_rms_a']:>10.4g} {r['thd_i_pct']:>8.2f}")
            if has_v:
                line += (f" {r['v_rms_v']:>8.2f} {r['thd_v_pct']:>8.2f} {r['p_w']:>10.4g} "
                         f"{r['pf']:>6.3f} {r['dpf']:>6.3f}")
            out(line)
        out("")
    out(f"  {'':<22} {'mean':>11} {'max':>11} {'95th pct':>11}")
    labels = [("frequency_hz", "frequency [Hz]"), ("i_rms_a", "I rms [A]"),
              ("thd_i_pct", f"THD i (2..{max_order}) [%]"), ("v_rms_v", "V rms [V]"),
              ("thd_v_pct", f"THD v (2..{max_order}) [%]"), ("p_w", "P [W]"), ("pf", "PF"),
              ("dpf", "DPF")]
    for key, label in labels:
        if key in summ["mean"]:
            out(f"  {label:<22} {summ['mean'][key]:>11.5g} {summ['max'][key]:>11.5g} "
                f"{summ['p95'][key]:>11.5g}")
    out("")
    out(f"  {'order':>5} {'mean [A]':>11} {'max [A]':>11} {'95th [A]':>11}  (current groups)")
    top = min(max_order, len(summ["mean"]["i_group_a"]) - 1)
    for h in range(1, top + 1):
        out(f"  {h:>5} {summ['mean']['i_group_a'][h]:>11.4g} {summ['max']['i_group_a'][h]:>11.4g} "
            f"{summ['p95']['i_group_a'][h]:>11.4g}")


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
            (f"THD v (2..{a.max_order})",
             fmt(100 * s.thd_v, ".2f") if s.thd_v is not None else "-", "% of V1"),
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
