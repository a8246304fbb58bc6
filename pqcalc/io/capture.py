"""Measured captures: read a recorder's file into a :class:`RawRecord`, then a Waveform.

A :class:`RawRecord` is what the file holds, uniformly sampled but not yet aligned with the
mains. :func:`record_to_waveform` estimates the fundamental frequency and resamples the
record onto a whole number of cycles, which is what :func:`pqcalc.spectrum.spectrum` needs.

Formats: delimited text (CSV, semicolon, tab; decimal comma) here, COMTRADE in
:mod:`pqcalc.io.comtrade`. :func:`load_capture` chooses by the file ending.
"""

from __future__ import annotations

import csv
import io
import os
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ClippingWarning, InputError
from ..waveform import Waveform, estimate_frequency, resample_whole_cycles

__all__ = [
    "RawRecord",
    "CsvOptions",
    "read_csv",
    "load_capture",
    "record_to_waveform",
    "UNIT_SCALE",
]

#: Multipliers from a current unit to amperes.
UNIT_SCALE = {"A": 1.0, "mA": 1e-3, "kA": 1e3, "uA": 1e-6}


@dataclass(frozen=True)
class RawRecord:
    """Uniformly sampled samples as read from a file, before alignment to the mains.

    Attributes
    ----------
    current_a, voltage_v
        Samples after scaling [A], [V] (voltage may be None).
    sample_rate_hz
        Sampling rate [Hz].
    source
        The file it came from (for messages and reports).
    meta
        Anything else the file said (channel names, station, start time ...).
    """

    current_a: np.ndarray
    sample_rate_hz: float
    voltage_v: np.ndarray | None = None
    source: str = ""
    meta: dict = field(default_factory=dict)

    @property
    def duration_s(self) -> float:
        return self.current_a.size / self.sample_rate_hz


@dataclass(frozen=True)
class CsvOptions:
    """How to read a delimited text capture. Column choices are header names or 0-based
    indexes (as strings or ints). ``delimiter=None`` guesses among ``, ; tab``."""

    current_col: str | int | None = None
    voltage_col: str | int | None = None
    time_col: str | int | None = None
    sample_rate_hz: float | None = None
    current_scale: float = 1.0
    voltage_scale: float = 1.0
    delimiter: str | None = None
    decimal: str = "."
    skip_rows: int = 0


_CURRENT_NAMES = ("current", "i", "i_a", "current_a", "ia", "i1", "amps", "i(a)", "current (a)")
_VOLTAGE_NAMES = ("voltage", "v", "v_v", "voltage_v", "va", "u", "u1", "v1", "volts", "v(v)",
                  "voltage (v)")
_TIME_NAMES = ("time", "t", "time_s", "t_s", "seconds", "time (s)", "t(s)")


def _check_path(path: Path) -> None:
    if not path.exists():
        raise InputError(f"{path}: no such file")
    if path.is_dir():
        raise InputError(f"{path}: is a directory; expected a capture file")
    if path.stat().st_size == 0:
        raise InputError(f"{path}: the file is empty; expected a capture with samples")


def _sniff_delimiter(sample: str) -> str:
    lines = [ln for ln in sample.splitlines() if ln.strip()][:20]
    best, best_score = ",", -1
    for d in (";", "\t", ","):
        counts = [ln.count(d) for ln in lines]
        if counts and min(counts) > 0 and len(set(counts[-5:])) == 1:
            score = min(counts)
            if score > best_score:
                best, best_score = d, score
    return best


def _parse_float(cell: str, decimal: str) -> float:
    c = cell.strip()
    if decimal == ",":
        c = c.replace(".", "").replace(",", ".") if c.count(",") == 1 else c
    return float(c)


def _resolve(col, header: list[str] | None, ncols: int, what: str, path: Path,
             defaults: tuple[str, ...]) -> int | None:
    if col is None:
        if header is None:
            return None
        low = [h.strip().lower() for h in header]
        for name in defaults:
            if name in low:
                return low.index(name)
        return None
    if isinstance(col, int) or (isinstance(col, str) and col.strip().lstrip("-").isdigit()):
        idx = int(col)
        if not 0 <= idx < ncols:
            raise InputError(
                f"{path}: {what} column index {idx} is out of range; the file has {ncols} "
                f"columns (0..{ncols - 1})"
            )
        return idx
    if header is None:
        raise InputError(f"{path}: {what} column {col!r} given by name but the file has no header")
    names = [h.strip() for h in header]
    if col in names:
        return names.index(col)
    low = [n.lower() for n in names]
    if col.lower() in low:
        return low.index(col.lower())
    raise InputError(
        f"{path}: no column named {col!r} for the {what}; available: {', '.join(names)}"
    )


def read_csv(path: str | os.PathLike, options: CsvOptions | None = None) -> RawRecord:
    """Read a delimited text capture.

    The first non-skipped line is a header when any of its cells is not a number. Without a
    time column a ``sample_rate_hz`` must be given. Errors name the file and line.
    """
    o = options or CsvOptions()
    p = Path(path)
    _check_path(p)
    raw = p.read_bytes()
    if b"\x00" in raw[:4096]:
        raise InputError(f"{p}: looks like a binary file; expected delimited text")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    lines = text.splitlines()
    first = o.skip_rows
    if first >= len(lines):
        raise InputError(f"{p}: only {len(lines)} lines, fewer than the {o.skip_rows} to skip")
    # lines starting with '#' are comments wherever they stand; keep line numbers right
    numbered = [(first + k + 1, ln) for k, ln in enumerate(lines[first:])
                if not ln.lstrip().startswith("#")]
    body = [ln for _, ln in numbered]
    delim = o.delimiter or _sniff_delimiter("\n".join(body[:50]))
    if o.decimal == "," and delim == ",":
        raise InputError(f"{p}: a decimal comma needs another delimiter (';' or tab)")
    rows = [(ln, next(csv.reader([text_line], delimiter=delim)) if text_line.strip() else [])
            for ln, text_line in numbered]
    rows = [(ln, r) for ln, r in rows if any(c.strip() for c in r)]
    header = None
    if rows:
        try:
            [_parse_float(c, o.decimal) for c in rows[0][1] if c.strip()]
        except ValueError:
            header = rows[0][1]
            rows = rows[1:]
    data_rows = rows
    if not data_rows:
        raise InputError(f"{p}: no numeric rows; expected samples after the header")
    ncols = len(header) if header is not None else len(data_rows[0][1])
    ti = _resolve(o.time_col, header, ncols, "time", p, _TIME_NAMES)
    ii = _resolve(o.current_col, header, ncols, "current", p, _CURRENT_NAMES)
    vi = _resolve(o.voltage_col, header, ncols, "voltage", p, _VOLTAGE_NAMES)
    if ii is None:
        if header is None and ncols >= 2 and ti is None and o.sample_rate_hz is None:
            ti, vi, ii = 0, (1 if ncols >= 3 else None), (2 if ncols >= 3 else 1)
        elif header is None:
            ii = 1 if ncols >= 2 else 0
            if ti is None and o.sample_rate_hz is None and ncols >= 2:
                ti = 0
        else:
            raise InputError(
                f"{p}: no current column found; name one with --current-col; available: "
                + ", ".join(h.strip() for h in header)
            )
    cols = [c for c in (ti, ii, vi) if c is not None]
    out = np.empty((len(data_rows), len(cols)))
    for k, (ln, r) in enumerate(data_rows):
        if len(r) < ncols and max(cols) >= len(r):
            raise InputError(
                f"{p}:{ln}: expected {ncols} columns, found {len(r)} (columns of unequal length)"
            )
        for j, c in enumerate(cols):
            cell = r[c]
            try:
                val = _parse_float(cell, o.decimal)
            except ValueError:
                raise InputError(
                    f"{p}:{ln}: column {c + 1}: expected a number, found {cell.strip()!r}"
                ) from None
            if not np.isfinite(val):
                raise InputError(f"{p}:{ln}: column {c + 1}: expected a finite number, found {cell.strip()!r}")
            out[k, j] = val
    j = 0
    t = None
    if ti is not None:
        t = out[:, 0]
        j = 1
    current = out[:, j] * o.current_scale
    voltage = out[:, j + 1] * o.voltage_scale if vi is not None else None
    if t is not None:
        dt = np.diff(t)
        if np.any(dt <= 0):
            bad = int(np.flatnonzero(dt <= 0)[0])
            kind = "duplicate" if dt[bad] == 0 else "decreasing"
            raise InputError(
                f"{p}:{data_rows[bad + 1][0]}: {kind} time stamp {t[bad + 1]!r}; expected time "
                "to increase from row to row"
            )
        step = float(np.median(dt))
        if np.max(np.abs(dt - step)) > 0.01 * step:
            bad = int(np.argmax(np.abs(dt - step)))
            raise InputError(
                f"{p}:{data_rows[bad + 1][0]}: time step {dt[bad]:.6g} s differs from the "
                f"median {step:.6g} s; expected uniform sampling"
            )
        fs = 1.0 / float((t[-1] - t[0]) / (t.size - 1))
        if o.sample_rate_hz is not None and abs(fs - o.sample_rate_hz) > 1e-3 * fs:
            raise InputError(
                f"{p}: time column gives {fs:.6g} Hz but --sample-rate says {o.sample_rate_hz:g} Hz"
            )
    elif o.sample_rate_hz is not None:
        fs = float(o.sample_rate_hz)
    else:
        raise InputError(f"{p}: no time column; give the sample rate (--sample-rate)")
    if not fs > 0:
        raise InputError(f"{p}: sample rate must be positive, got {fs}")
    meta = {"format": "csv", "delimiter": delim}
    if header is not None:
        meta["current_channel"] = header[ii].strip()
        if vi is not None:
            meta["voltage_channel"] = header[vi].strip()
    return RawRecord(current, fs, voltage, str(p), meta)


def load_capture(path: str | os.PathLike, options: CsvOptions | None = None) -> RawRecord:
    """Read a capture, choosing the reader by file ending (``.cfg``/``.dat``: COMTRADE,
    anything else: delimited text)."""
    p = Path(path)
    if p.suffix.lower() in (".cfg", ".dat", ".cff"):
        from .comtrade import read_comtrade

        o = options or CsvOptions()
        return read_comtrade(
            p,
            current_channel=o.current_col,
            voltage_channel=o.voltage_col,
            current_scale=o.current_scale,
            voltage_scale=o.voltage_scale,
        )
    return read_csv(p, options)


def _clipped(x: np.ndarray) -> bool:
    """Flat tops: many samples sit exactly at the extreme value of the record."""
    if x.size < 100:
        return False
    top, bottom = np.max(x), np.min(x)
    if top == bottom:
        return False
    share = max(np.mean(x == top), np.mean(x == bottom))
    return bool(share > 0.005 and np.sum(x == top) > 3)


def record_to_waveform(
    record: RawRecord,
    nominal_hz: float | None = None,
    samples_per_cycle: int = 1024,
    cycles: int | None = None,
    frequency_hz: float | None = None,
) -> Waveform:
    """Estimate the fundamental frequency and resample the record onto whole cycles.

    The frequency comes from the voltage channel when there is one (it is the cleaner
    signal), else from the current. A clipped channel raises a :class:`ClippingWarning`.
    The estimated frequency is kept in ``waveform.frequency_hz``.
    """
    for name, x in (("current", record.current_a), ("voltage", record.voltage_v)):
        if x is not None and _clipped(x):
            warnings.warn(
                f"{record.source}: the {name} channel has flat tops at its extremes "
                "(the recorder probably clipped); harmonics are understated",
                ClippingWarning,
                stacklevel=2,
            )
    if np.all(record.current_a == record.current_a[0]) and record.voltage_v is None:
        raise InputError(f"{record.source}: the current is constant; nothing to analyse")
    f = frequency_hz
    if f is None:
        ref = record.voltage_v if record.voltage_v is not None else record.current_a
        try:
            f = estimate_frequency(ref, record.sample_rate_hz, nominal_hz)
        except InputError as e:
            raise InputError(f"{record.source}: {e}") from None
    try:
        w = resample_whole_cycles(
            record.current_a, record.sample_rate_hz, f, record.voltage_v,
            samples_per_cycle, cycles,
        )
    except InputError as e:
        raise InputError(f"{record.source}: {e}") from None
    return Waveform(w.current_a, w.sample_rate_hz, w.frequency_hz, w.voltage_v, w.cycles,
                    label=Path(record.source).name, meta=dict(record.meta))
