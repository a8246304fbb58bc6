"""Measured captures: read a recorder's file into a :class:`RawRecord`, then a Waveform.

A :class:`RawRecord` is what the file holds, uniformly sampled but not yet aligned with the
mains. :func:`record_to_waveform` estimates the fundamental frequency and resamples the
record onto a whole number of cycles, which is what :func:`pqcalc.spectrum.spectrum` needs.

Formats: delimited text (CSV, semicolon, tab; decimal comma) here, COMTRADE in
:mod:`pqcalc.io.comtrade`. :func:`load_capture` chooses by the file ending.
"""

from __future__ import annotations

import csv
import functools
import os
import re
import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ClippingWarning, InputError
from ..waveform import Waveform, estimate_frequency, resample_whole_cycles
from .comtrade import open_comtrade, read_comtrade
from .installation_file import Bounds
from .record import SAMPLE_LIMITS, SAMPLE_RATE_HZ, RawRecord, check_floor, check_samples
from .text import printable, quote_cell

__all__ = [
    "RawRecord",
    "CsvOptions",
    "CsvStream",
    "ComtradeStream",
    "open_capture",
    "read_csv",
    "load_capture",
    "record_to_waveform",
    "UNIT_SCALE",
    "SAMPLE_RATE_HZ",
    "SAMPLE_LIMITS",
    "SCALE",
]

#: Multipliers from a current unit to amperes.
UNIT_SCALE = {"A": 1.0, "mA": 1e-3, "kA": 1e3, "uA": 1e-6}

#: A scale factor's magnitude (probe ratio, shunt conversion, unit): 1e-9 to 1e9.
SCALE = Bounds(1e-9, 1e9, "a probe, transformer or unit ratio")

#: The largest time stamp read [s]: seconds since 1970 fit, and differences of stamps this
#: large still resolve 1 us in double precision.
MAX_TIME_S = 1e11

#: The longest CSV cell read [characters]: a number or a column name, never a page.
MAX_CELL_CHARS = 4096

_COLUMN_NAME = re.compile(r"[\w .()\[\]%/+\-]{1,40}")


def _column_names(header: list[str]) -> str:
    """The header's names for a message (names only when they look like column names)."""
    names = [h.strip() for h in header]
    if all(_COLUMN_NAME.fullmatch(n) for n in names):
        return ", ".join(names)
    return f"{len(names)} columns (give an index 0..{len(names) - 1})"


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


def _looks_binary(head: bytes, not_utf8: bool) -> bool:
    """NUL bytes, more than 1 % control characters, or (not UTF-8) more than 30 % bytes
    above 127: no recorder writes text like that."""
    if not head:
        return False
    if b"\x00" in head[:4096]:
        return True
    arr = np.frombuffer(head, dtype=np.uint8)
    control = np.count_nonzero((arr < 32) & ~np.isin(arr, (9, 10, 13)))
    if control > 0.01 * arr.size:
        return True
    return bool(not_utf8 and np.count_nonzero(arr > 127) > 0.3 * arr.size)


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
        raise InputError(f"{path}: {what} column {printable(repr(col), 60)} given by name but "
                         "the file has no header")
    names = [h.strip() for h in header]
    if col in names:
        return names.index(col)
    low = [n.lower() for n in names]
    if col.lower() in low:
        return low.index(col.lower())
    raise InputError(
        f"{path}: no column named {printable(repr(col), 60)} for the {what}; available: "
        f"{_column_names(header)}"
    )


class CsvStream:
    """A delimited text capture read in blocks of rows (bounded memory).

    Opening it reads the header and the first block, so the sample rate and the channels
    are known at once; :meth:`chunks` then yields ``(current_a, voltage_v)`` blocks. Every
    row is checked as it is read (numbers, column count, uniform increasing time) and a
    failure names the file and line.
    """

    def __init__(self, path: str | os.PathLike, options: CsvOptions | None = None,
                 first_block: int = 1 << 16):
        o = options or CsvOptions()
        p = Path(path)
        _check_path(p)
        with open(p, "rb") as fh:
            head = fh.read(1 << 16)
        try:
            head.decode("utf-8-sig")
            self._encoding = "utf-8-sig"
        except UnicodeDecodeError as e:
            self._encoding = "utf-8-sig" if e.start > len(head) - 4 else "latin-1"
        if _looks_binary(head, self._encoding != "utf-8-sig"):
            raise InputError(f"{p}: looks like a binary file; expected delimited text")
        self.path, self.options, self.source = p, o, str(p)
        self._fh = open(p, encoding=self._encoding, errors="replace", newline="")
        try:
            self._open(first_block)
        except BaseException:
            self._fh.close()
            raise

    def _open(self, first_block: int) -> None:
        o, p = self.options, self.path
        self._line_no = 0
        self._lines = self._numbered_lines()
        first_rows = []
        for ln, text in self._lines:
            first_rows.append((ln, text))
            if len(first_rows) >= 50:
                break
        if not first_rows:
            raise InputError(f"{p}: no numeric rows; expected samples (and an optional header)")
        delim = o.delimiter or _sniff_delimiter("\n".join(t for _, t in first_rows))
        if o.decimal == "," and delim == ",":
            raise InputError(f"{p}: a decimal comma needs another delimiter (';' or tab)")
        self.delimiter = delim
        cells0 = self._cells(first_rows[0][0], first_rows[0][1])
        header = None
        try:
            [_parse_float(c, o.decimal) for c in cells0 if c.strip()]
        except ValueError:
            header = cells0
            first_rows = first_rows[1:]
        self.header = header
        self._pending_rows = first_rows
        ncols = len(header) if header is not None else (
            len(self._cells(*first_rows[0])) if first_rows else 0)
        if ncols == 0:
            raise InputError(f"{p}: no numeric rows; expected samples after the header")
        self.ncols = ncols
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
                    + _column_names(header)
                )
        self._cols = [c for c in (ti, ii, vi) if c is not None]
        self._ti, self._ii, self._vi = ti, ii, vi
        self.has_voltage = vi is not None
        self._t_last: float | None = None
        self._step: float | None = None
        self._rows_read = 0
        self.meta = {"format": "csv", "delimiter": delim}
        if header is not None:
            self.meta["current_channel"] = printable(header[ii].strip(), 60)
            if vi is not None:
                self.meta["voltage_channel"] = printable(header[vi].strip(), 60)
        # the first block fixes the sample rate
        self._first = self._read_block(first_block)
        if self._first is None:
            raise InputError(f"{p}: no numeric rows; expected samples after the header")
        t0 = self._first_t
        self.t_first_s = None if t0 is None else float(t0[0])
        if ti is not None:
            assert t0 is not None  # _parse keeps the time column whenever there is one
            if t0.size < 2:
                raise InputError(f"{p}: one sample only; expected a record of several cycles")
            fs = (t0.size - 1) / float(t0[-1] - t0[0])
            if not SAMPLE_RATE_HZ.contains(fs):
                raise InputError(f"{p}: the time column gives {fs:.6g} samples per second; "
                                 f"expected {SAMPLE_RATE_HZ.expected()}")
            if o.sample_rate_hz is not None and abs(fs - o.sample_rate_hz) > 1e-3 * fs:
                raise InputError(f"{p}: time column gives {fs:.6g} Hz but --sample-rate says "
                                 f"{o.sample_rate_hz:g} Hz")
        elif o.sample_rate_hz is not None:
            fs = float(o.sample_rate_hz)
        else:
            raise InputError(f"{p}: no time column; give the sample rate (--sample-rate)")
        if not SAMPLE_RATE_HZ.contains(fs):
            raise InputError(f"{p}: sample rate {fs:.6g} Hz; expected {SAMPLE_RATE_HZ.expected()}")
        self.sample_rate_hz = float(fs)

    def _cells(self, line_no: int, text: str) -> list[str]:
        """The cells of one line (quotes handled); a cell past :data:`MAX_CELL_CHARS` or a
        line the CSV reader cannot split is a one-line error naming the line."""
        if len(text) > MAX_CELL_CHARS * max(getattr(self, "ncols", 1), 8):
            raise InputError(f"{self.path}:{line_no}: a line of {len(text)} characters; "
                             "expected a row of numbers (or a header of column names)")
        try:
            cells = next(csv.reader([text], delimiter=self.delimiter))
        except (csv.Error, StopIteration) as e:
            raise InputError(f"{self.path}:{line_no}: cannot split the line into cells "
                             f"({printable(str(e), 80)}); expected delimited text") from None
        if any(len(c) > MAX_CELL_CHARS for c in cells):
            raise InputError(f"{self.path}:{line_no}: a cell of more than {MAX_CELL_CHARS} "
                             "characters; expected numbers (or column names)")
        return cells

    # -- line handling
    def _numbered_lines(self):
        skip = self.options.skip_rows
        for raw in self._fh:
            self._line_no += 1
            if self._line_no <= skip:
                continue
            text = raw.rstrip("\r\n")
            st = text.strip()
            if not st or st.startswith("#"):
                continue
            yield self._line_no, text

    def _read_block(self, size: int):
        rows = self._pending_rows
        self._pending_rows = []
        for item in self._lines:
            rows.append(item)
            if len(rows) >= size:
                break
        if not rows:
            return None
        return self._parse(rows)

    def _parse(self, rows: list[tuple[int, str]]):
        o, d = self.options, self.delimiter
        texts = [t for _, t in rows]
        counts = [t.count(d) for t in texts]
        want = self.ncols - 1
        arr = None
        if min(counts) == want == max(counts):
            body = texts if o.decimal == "." else [t.replace(",", ".") for t in texts]
            try:
                arr = np.loadtxt(body, delimiter=d, usecols=self._cols, ndmin=2, dtype=float,
                                 quotechar='"', comments=None)
            except ValueError:
                arr = None
        if arr is None or not np.all(np.isfinite(arr)):
            arr = self._parse_slow(rows)
        j = 0
        t = None
        if self._ti is not None:
            t = arr[:, 0]
            j = 1
            self._check_time(t, rows)
        current = arr[:, j] * o.current_scale
        voltage = arr[:, j + 1] * o.voltage_scale if self._vi is not None else None
        for name, x in (("current", current), ("voltage", voltage)):
            if x is not None:
                bad = check_samples(x, name)
                if bad is not None:
                    raise InputError(f"{self.path}:{rows[bad[0]][0]}: {name}: {bad[1]}")
        self._first_t = t
        self._rows_read += len(rows)
        return current, voltage, t

    def _parse_slow(self, rows):
        p, o = self.path, self.options
        out = np.empty((len(rows), len(self._cols)))
        for k, (ln, text) in enumerate(rows):
            r = self._cells(ln, text)
            if len(r) != self.ncols and not (len(r) > self.ncols
                                             and not any(c.strip() for c in r[self.ncols:])):
                raise InputError(
                    f"{p}:{ln}: expected {self.ncols} columns, found {len(r)} (columns of "
                    "unequal length)")
            for jj, c in enumerate(self._cols):
                cell = r[c]
                try:
                    val = _parse_float(cell, o.decimal)
                except ValueError:
                    raise InputError(
                        f"{p}:{ln}: column {c + 1}: expected a number, found "
                        f"{quote_cell(cell)}") from None
                if not np.isfinite(val):
                    raise InputError(f"{p}:{ln}: column {c + 1}: expected a finite number, "
                                     f"found {quote_cell(cell)}")
                out[k, jj] = val
        return out

    def _check_time(self, t: np.ndarray, rows) -> None:
        p = self.path
        tt = t if self._t_last is None else np.concatenate([[self._t_last], t])
        off = 0 if self._t_last is None else 1
        if np.any(np.abs(t) > MAX_TIME_S):
            bad = int(np.flatnonzero(np.abs(t) > MAX_TIME_S)[0])
            raise InputError(f"{p}:{rows[bad][0]}: time {t[bad]:.3g} s; expected a time "
                             f"stamp within {MAX_TIME_S:g} s of zero (seconds since 1970 "
                             "included)")
        dt = np.diff(tt)
        if dt.size and np.any(dt <= 0):
            bad = int(np.flatnonzero(dt <= 0)[0])
            kind = "duplicate" if dt[bad] == 0 else "decreasing"
            raise InputError(
                f"{p}:{rows[bad + 1 - off][0]}: {kind} time stamp {tt[bad + 1]:.9g}; expected "
                "time to increase from row to row"
            )
        if dt.size:
            if self._step is None:
                self._step = float(np.median(dt))
            step = self._step
            dev = np.abs(dt - step)
            if np.max(dev) > 0.01 * step:
                bad = int(np.argmax(dev))
                raise InputError(
                    f"{p}:{rows[bad + 1 - off][0]}: time step {dt[bad]:.6g} s differs from the "
                    f"median {step:.6g} s; expected uniform sampling"
                )
        self._t_last = float(t[-1])

    # -- public
    def chunks(self, size: int = 1 << 16) -> Iterator[tuple[np.ndarray, np.ndarray | None]]:
        """Yield ``(current_a, voltage_v or None)`` blocks of up to ``size`` samples."""
        if self._first is not None:
            c, v, _ = self._first
            self._first = None
            yield c, v
        try:
            while True:
                blk = self._read_block(size)
                if blk is None:
                    return
                yield blk[0], blk[1]
        finally:
            self._fh.close()

    def close(self) -> None:
        self._fh.close()


class ComtradeStream:
    """A COMTRADE record read in blocks, with the same interface as :class:`CsvStream`."""

    def __init__(self, path: str | os.PathLike, options: CsvOptions | None = None):
        o = options or CsvOptions()
        f = open_comtrade(path)
        self.file = f
        self.source = str(f.cfg_path)
        ii = f.channel_index(o.current_col, "A")
        if ii is None:
            names = ", ".join(f"{ch.index}:{ch.name} [{ch.unit}]" for ch in f.config.analog)
            raise InputError(f"{f.cfg_path}: no current channel (unit A); name one with "
                             f"--current-col; available: {names}")
        vi = f.channel_index(o.voltage_col, "V")
        self._cols = [ii] if vi is None else [ii, vi]
        self._scale = (o.current_scale, o.voltage_scale)
        self.has_voltage = vi is not None
        self.sample_rate_hz = f.sample_rate_hz
        self.meta = {"format": f"comtrade {f.config.rev_year} {f.config.data_format}",
                     "station": f.config.station, "device": f.config.device,
                     "current_channel": f.config.analog[ii].name,
                     "line_frequency_hz": f.config.line_frequency_hz,
                     "start": f.config.start}
        if vi is not None:
            self.meta["voltage_channel"] = f.config.analog[vi].name

    def chunks(self, size: int = 1 << 16) -> Iterator[tuple[np.ndarray, np.ndarray | None]]:
        """Yield ``(current_a, voltage_v or None)`` blocks of up to ``size`` samples."""
        for x in self.file.chunks(self._cols, size, list(self._scale[: len(self._cols)])):
            yield x[:, 0], (x[:, 1] if self.has_voltage else None)

    def close(self) -> None:
        pass


def _is_comtrade(p: Path) -> bool:
    return p.suffix.lower() in (".cfg", ".dat", ".cff")


def open_capture(path: str | os.PathLike[str], options: CsvOptions | None = None
                 ) -> CsvStream | ComtradeStream:
    """Open a capture for reading in blocks: a :class:`CsvStream` or :class:`ComtradeStream`
    by file ending. Both have ``source``, ``sample_rate_hz``, ``has_voltage``, ``meta`` and
    ``chunks(size)``."""
    p = Path(path)
    if p.is_dir():
        raise InputError(f"{p}: is a directory; expected a capture file")
    if _is_comtrade(p):
        return ComtradeStream(p, options)
    return CsvStream(p, options)


def read_csv(path: str | os.PathLike, options: CsvOptions | None = None) -> RawRecord:
    """Read a delimited text capture whole.

    The first non-skipped, non-comment line is a header when any of its cells is not a
    number. Without a time column a ``sample_rate_hz`` must be given. Errors name the file
    and line.
    """
    st = CsvStream(path, options)
    cur, vol = [], []
    t_first = st.t_first_s
    for c, v in st.chunks(1 << 18):
        cur.append(c)
        if v is not None:
            vol.append(v)
    current = np.concatenate(cur)
    fs = st.sample_rate_hz
    if (st._ti is not None and current.size > 1 and st._t_last is not None
            and t_first is not None):
        fs = (current.size - 1) / (st._t_last - t_first)  # over the whole record
    return RawRecord(current, float(fs), np.concatenate(vol) if vol else None, st.source,
                     dict(st.meta))


def load_capture(path: str | os.PathLike, options: CsvOptions | None = None) -> RawRecord:
    """Read a capture, choosing the reader by file ending (``.cfg``/``.dat``: COMTRADE,
    anything else: delimited text).

    The last few records read are kept, keyed by the file's path, size and modification
    time and the options: an installation's capture is read once although the file check,
    the circuits and the fixture lineup each ask for it. Their samples are read-only."""
    p = Path(path)
    if p.is_dir():
        raise InputError(f"{p}: is a directory; expected a capture file")
    try:
        st = p.stat()
    except OSError:
        return _load_capture(p, options)  # the reader says what is wrong, as ever
    return _load_capture_memo(str(p), str(p.resolve()), st.st_size, st.st_mtime_ns, options)


@functools.lru_cache(maxsize=8)
def _load_capture_memo(path: str, real: str, size: int, mtime_ns: int,
                       options: CsvOptions | None) -> RawRecord:
    del real, size, mtime_ns  # in the key only: a changed file is read again
    rec = _load_capture(Path(path), options)  # as given: messages name the path as written
    for x in (rec.current_a, rec.voltage_v):
        if x is not None:
            x.setflags(write=False)
    return rec


def _load_capture(p: Path, options: CsvOptions | None) -> RawRecord:
    if _is_comtrade(p):
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
    """Flat tops: runs of 3 or more consecutive samples exactly at the record's maximum (or
    minimum), making up more than 1 % of the record.

    A sampled sine meets its extreme once per cycle and, quantised to 12 bits or more, stays
    within one step of it over less than 1 % of the cycle, so it is not taken for clipping;
    a converter at its limit holds the same code for many samples on every peak.
    """
    if x.size < 100:
        return False
    top, bottom = np.max(x), np.min(x)
    if top == bottom:
        return False
    for level in (top, bottom):
        at = x == level
        # samples at the extreme whose neighbours on both sides are there too
        run = at[1:-1] & at[:-2] & at[2:]
        if np.count_nonzero(run) > 0.01 * x.size:
            return True
    return False


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
    The estimated frequency is kept in ``waveform.frequency_hz``; the peaks and RMS of the
    recorded samples over the cycles kept in ``waveform.recorded`` (the crest factor is
    taken from them, not from the interpolated record).
    """
    for name, x in (("current", record.current_a), ("voltage", record.voltage_v)):
        if x is not None and _clipped(x):
            warnings.warn(
                f"{record.source}: the {name} channel has flat tops at its extremes "
                "(the recorder probably clipped); harmonics are understated",
                ClippingWarning,
                stacklevel=2,
            )
    check_floor(float(np.max(np.abs(record.current_a))), "current", record.source)
    if record.voltage_v is not None:
        check_floor(float(np.max(np.abs(record.voltage_v))), "voltage", record.source)
    if np.all(record.current_a == record.current_a[0]):
        raise InputError(f"{record.source}: the current is constant "
                         f"({record.current_a[0]:g} A) throughout; nothing to analyse "
                         "(expected an alternating current)")
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
                    label=Path(record.source).name, meta=dict(record.meta),
                    recorded=w.recorded)
