"""COMTRADE records (IEEE Std C37.111-1999 and -2013 / IEC 60255-24): read, stream, write.

A COMTRADE record is a configuration file (``.cfg``, text) describing the channels and a data
file (``.dat``) holding the samples in one of four formats: ``ASCII`` (comma-separated
integers), ``BINARY`` (16-bit integers), ``BINARY32`` (32-bit integers) and ``FLOAT32``
(IEEE 754 single precision; the last two since the 2013 revision). The 2013 revision also
allows one combined file (``.cff``) holding the configuration and data sections.

Each data record is: sample number, time stamp, one value per analog channel, then the
status (digital) channels. An analog value ``x`` in the file means ``a * x + b`` in the
channel's unit ``uu``, on the primary or secondary side of the instrument transformer as
flagged by the ``PS`` field; pqcalc returns primary values in SI units (kV -> V, kA -> A,
mA -> A).

This module reads the configuration eagerly and the samples lazily: :meth:`ComtradeFile.chunks`
yields blocks of samples, so a long record is analysed with bounded memory
(:mod:`pqcalc.io.windows`). :func:`write_comtrade` writes a record per the standard; the tests
use it to check the reader.

The maintained reader on the package index reads a whole record into memory, which does not
suit recorders' long files; this small reader streams them and reports file and line on every
inconsistency.

References
----------
IEEE Std C37.111-1999, clauses 5 (configuration file) and 6 (data file);
IEEE Std C37.111-2013 / IEC 60255-24:2013, clauses 7 and 8 (BINARY32, FLOAT32, time code
lines, combined file format). Field layouts are as recalled from these clauses (from memory).
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError
from .installation_file import Bounds
from .record import SAMPLE_RATE_HZ, RawRecord, check_samples
from .text import printable, quote_cell

__all__ = [
    "AnalogChannel",
    "ComtradeConfig",
    "ComtradeFile",
    "open_comtrade",
    "read_comtrade",
    "write_comtrade",
    "DATA_FORMATS",
]

#: Data file formats of the standard (``ft`` line of the configuration file).
DATA_FORMATS = ("ASCII", "BINARY", "BINARY32", "FLOAT32")

_VALUE_DTYPE = {"BINARY": "<i2", "BINARY32": "<i4", "FLOAT32": "<f4"}
# "missing data" markers of the binary formats (C37.111-1999 6.4.1; -2013 8.4)
_MISSING = {"BINARY": -32768, "BINARY32": -(2**31)}
_TS_MISSING = 0xFFFFFFFF

#: An instrument transformer's ratio term (``primary``, ``secondary``): a current
#: transformer's 1 A to 100 kA, a voltage transformer's 100 V to 1 MV, with a margin.
RATIO_TERM = Bounds(1e-3, 1e7, "an instrument transformer's primary or secondary rating")

#: Multipliers from the unit written in a channel's ``uu`` field to SI.
_UNIT_TO_SI = {
    "a": ("A", 1.0), "ka": ("A", 1e3), "ma": ("A", 1e-3), "ua": ("A", 1e-6),
    "v": ("V", 1.0), "kv": ("V", 1e3), "mv": ("V", 1e-3),
}


@dataclass(frozen=True)
class AnalogChannel:
    """One analog channel line of a configuration file.

    ``a`` and ``b`` convert a stored value ``x`` to ``a*x + b`` in ``unit``; ``primary`` and
    ``secondary`` are the instrument-transformer ratio terms and ``ps`` says on which side
    ``a*x + b`` lands (``"P"`` or ``"S"``).
    """

    index: int
    name: str
    phase: str = ""
    circuit: str = ""
    unit: str = ""
    a: float = 1.0
    b: float = 0.0
    skew_s: float = 0.0
    min_value: float = -32767
    max_value: float = 32767
    primary: float = 1.0
    secondary: float = 1.0
    ps: str = "P"

    @property
    def si_unit(self) -> str | None:
        """``"A"``, ``"V"`` or None when the unit is neither a current nor a voltage."""
        u = _UNIT_TO_SI.get(self.unit.strip().lower())
        return None if u is None else u[0]

    @property
    def to_primary_si(self) -> float:
        """Factor from ``a*x + b`` to primary-side SI units [-]."""
        u = _UNIT_TO_SI.get(self.unit.strip().lower(), (None, 1.0))[1]
        ratio = 1.0
        if self.ps.upper() == "S" and self.secondary != 0:
            ratio = self.primary / self.secondary
        return u * ratio


@dataclass(frozen=True)
class ComtradeConfig:
    """What a configuration file says (the parts pqcalc uses, and the rest in ``extra``)."""

    station: str
    device: str
    rev_year: int
    analog: tuple[AnalogChannel, ...]
    n_digital: int
    line_frequency_hz: float
    rates: tuple[tuple[float, int], ...]  # (samples per second, last sample number)
    data_format: str
    time_multiplier: float = 1.0
    start: str = ""
    trigger: str = ""
    timestamp_unit_s: float = 1e-6
    extra: dict = field(default_factory=dict)

    @property
    def n_samples(self) -> int:
        return int(self.rates[-1][1]) if self.rates else 0

    @property
    def record_bytes(self) -> int:
        """Bytes per sample record of a binary data file."""
        if self.data_format == "ASCII":
            raise ValueError("ASCII data has no fixed record length")
        width = np.dtype(_VALUE_DTYPE[self.data_format]).itemsize
        return 8 + width * len(self.analog) + 2 * ((self.n_digital + 15) // 16)


# ---------------------------------------------------------------------------- parsing
def _fields(line: str) -> list[str]:
    return [f.strip() for f in line.rstrip("\r\n").split(",")]


def _num(s: str, where: str, what: str, default: float | None = None) -> float:
    if s.strip() == "" and default is not None:
        return default
    try:
        v = float(s)
    except ValueError:
        raise InputError(f"{where}: {what}: expected a number, found {quote_cell(s)}") from None
    if not np.isfinite(v):
        raise InputError(f"{where}: {what}: expected a finite number, found {quote_cell(s)}")
    return v


def _ratio_term(s: str, where: str, what: str) -> float:
    v = _num(s, where, what, 1.0)
    if not RATIO_TERM.contains(v):
        raise InputError(f"{where}: {what}: expected {RATIO_TERM.expected()}, found "
                         f"{quote_cell(s)}")
    return v


def parse_config(text: str, source: str = "<cfg>") -> ComtradeConfig:
    """Parse the text of a configuration file (or the CFG section of a ``.cff``)."""
    lines = [ln for ln in text.splitlines()]
    pos = 0

    def nxt(what: str) -> tuple[int, list[str]]:
        nonlocal pos
        while pos < len(lines) and lines[pos].strip() == "":
            pos += 1
        if pos >= len(lines):
            raise InputError(f"{source}: ended before the {what} line; expected a complete "
                             "COMTRADE configuration")
        pos += 1
        return pos, _fields(lines[pos - 1])

    ln, f = nxt("station")
    if len(f) < 2 or any(ch < " " and ch not in "\t" for ch in lines[ln - 1]):
        raise InputError(f"{source}:{ln}: expected 'station_name,rec_dev_id,rev_year' "
                         "(a COMTRADE configuration file)")
    rev = 1991
    if len(f) >= 3 and f[2]:
        rev = int(_num(f[2], f"{source}:{ln}", "rev_year"))
        if rev not in (1991, 1999, 2013):
            raise InputError(f"{source}:{ln}: rev_year: expected 1991, 1999 or 2013, got {rev}")
    station, device = printable(f[0], 64), printable(f[1], 64)

    ln, f = nxt("channel count")
    m = [re.fullmatch(r"(\d+)([AaDd])", x) for x in f[1:3]]
    if len(f) < 3 or not all(m):
        raise InputError(f"{source}:{ln}: expected 'TT,##A,##D' (channel counts), found "
                         f"{quote_cell(lines[ln - 1])}")
    total = int(_num(f[0], f"{source}:{ln}", "TT"))
    counts = {mm.group(2).upper(): int(mm.group(1)) for mm in m if mm is not None}
    na, nd = counts.get("A", 0), counts.get("D", 0)
    if na + nd != total:
        raise InputError(f"{source}:{ln}: TT = {total} but {na} analog + {nd} status channels")

    analog = []
    for k in range(na):
        ln, f = nxt(f"analog channel {k + 1}")
        need = 10 if rev == 1991 else 13
        if len(f) < need:
            raise InputError(f"{source}:{ln}: analog channel line: expected {need} fields "
                             f"(An,ch_id,ph,ccbm,uu,a,b,skew,min,max"
                             f"{'' if rev == 1991 else ',primary,secondary,PS'}), found {len(f)}")
        w = f"{source}:{ln}"
        analog.append(AnalogChannel(
            index=int(_num(f[0], w, "An")), name=printable(f[1], 64), phase=printable(f[2], 16),
            circuit=printable(f[3], 64), unit=printable(f[4], 16),
            a=_num(f[5], w, "a"), b=_num(f[6], w, "b", 0.0),
            skew_s=_num(f[7], w, "skew", 0.0) * 1e-6,
            min_value=_num(f[8], w, "min", -32767), max_value=_num(f[9], w, "max", 32767),
            primary=_ratio_term(f[10], w, "primary") if need == 13 else 1.0,
            secondary=_ratio_term(f[11], w, "secondary") if need == 13 else 1.0,
            ps=(f[12] or "P") if need == 13 else "P",
        ))
    for k in range(nd):
        nxt(f"status channel {k + 1}")
    ln, f = nxt("line frequency")
    lf = _num(f[0], f"{source}:{ln}", "lf")
    ln, f = nxt("number of sampling rates")
    nrates = int(_num(f[0], f"{source}:{ln}", "nrates"))
    rates = []
    for _ in range(max(nrates, 1)):
        ln, f = nxt("sampling rate")
        if len(f) < 2:
            raise InputError(f"{source}:{ln}: expected 'samp,endsamp'")
        rates.append((_num(f[0], f"{source}:{ln}", "samp"),
                      int(_num(f[1], f"{source}:{ln}", "endsamp"))))
    _, f_start = nxt("start time")
    _, f_trig = nxt("trigger time")
    start, trig = ",".join(f_start), ",".join(f_trig)
    ln, f = nxt("data file type")
    ft = f[0].upper()
    if ft not in DATA_FORMATS:
        raise InputError(f"{source}:{ln}: data file type: expected one of "
                         f"{', '.join(DATA_FORMATS)}, found {quote_cell(f[0])}")
    if rev < 2013 and ft in ("BINARY32", "FLOAT32"):
        pass  # accepted: some 1999 writers use the 2013 formats
    tmult = 1.0
    extra: dict = {}
    if rev >= 1999 and pos < len(lines):
        while pos < len(lines) and lines[pos].strip() == "":
            pos += 1
        if pos < len(lines):
            ln, f = nxt("time multiplier")
            tmult = _num(f[0], f"{source}:{ln}", "timemult", 1.0)
    if rev >= 2013:
        for key in ("time_code", "tmq_code"):
            while pos < len(lines) and lines[pos].strip() == "":
                pos += 1
            if pos < len(lines):
                _, f = nxt(key)
                extra[key] = f
    # time stamps count microseconds, or nanoseconds when the dates carry 9 decimals (2013)
    frac = re.search(r"\.(\d+)", start)
    ts_unit = 1e-9 if frac and len(frac.group(1)) > 6 else 1e-6
    return ComtradeConfig(station, device, rev, tuple(analog), nd, lf, tuple(rates), ft,
                          tmult, start, trig, ts_unit, extra)


# ---------------------------------------------------------------------------- the file
class ComtradeFile:
    """An opened record: configuration parsed, data file checked against it, samples lazy.

    Use :func:`open_comtrade`. ``chunks`` yields ``{channel index: samples}`` blocks in
    primary SI units; ``sample_rate_hz`` is the (single) sampling rate of the record.
    """

    def __init__(self, cfg_path: Path, config: ComtradeConfig, dat_path: Path,
                 dat_offset: int = 0, dat_bytes: int | None = None):
        self.cfg_path = cfg_path
        self.config = config
        self.dat_path = dat_path
        self.dat_offset = dat_offset
        self._ascii_rows: int | None = None
        size = dat_path.stat().st_size - dat_offset if dat_bytes is None else dat_bytes
        self.dat_bytes = size
        self._validate()

    # -- checks made before any sample is used
    def _validate(self) -> None:
        c, dat = self.config, self.dat_path
        if len(c.rates) > 1 and len({r for r, _ in c.rates}) > 1:
            raise InputError(
                f"{self.cfg_path}: {len(c.rates)} different sampling rates; expected one "
                "uniform rate (split the record at the rate changes)")
        if self.dat_bytes == 0:
            raise InputError(f"{dat}: the data file is empty; expected {c.n_samples} samples")
        if c.data_format == "ASCII":
            self._ascii_rows = self._count_ascii_rows()
            n = self._ascii_rows
        else:
            rb = c.record_bytes
            if self.dat_bytes % rb:
                raise InputError(
                    f"{dat}: {self.dat_bytes} bytes is not a whole number of {rb}-byte records "
                    f"({len(c.analog)} analog, {c.n_digital} status channels, {c.data_format} "
                    f"per {self.cfg_path.name}); the .cfg does not match the .dat")
            n = self.dat_bytes // rb
        if c.n_samples and n != c.n_samples:
            raise InputError(
                f"{dat}: holds {n} samples but {self.cfg_path.name} says endsamp = "
                f"{c.n_samples}; the .cfg does not match the .dat")
        if n < 2:
            raise InputError(f"{dat}: {n} sample(s); expected a record of several cycles")
        self.n_samples = int(n)
        head = self._first_records(min(n, 4096))
        samp = c.rates[0][0] if c.rates else 0.0
        if samp > 0:
            self.sample_rate_hz = float(samp)
        else:
            # rate from the time stamps (nrates = 0 or samp = 0)
            t = head["t"]
            if np.any(t == _TS_MISSING):
                raise InputError(f"{dat}: no sampling rate in {self.cfg_path.name} and time "
                                 "stamps missing; expected one or the other")
            t = t.astype(float) * c.time_multiplier * c.timestamp_unit_s
            dt = np.diff(t)
            if t.size < 2 or np.any(dt <= 0):
                raise InputError(f"{dat}: time stamps do not increase; expected uniform sampling")
            self.sample_rate_hz = float((t.size - 1) / (t[-1] - t[0]))
        if not SAMPLE_RATE_HZ.contains(self.sample_rate_hz):
            raise InputError(f"{self.cfg_path}: sample rate {self.sample_rate_hz:.6g} Hz; "
                             f"expected {SAMPLE_RATE_HZ.expected()}")
        seq = head["n"].astype(np.int64)
        if seq.size > 1 and np.any(np.diff(seq) != 1):
            bad = int(np.flatnonzero(np.diff(seq) != 1)[0]) + 1
            raise InputError(f"{dat}: record {bad + 1}: sample number {seq[bad]} after "
                             f"{seq[bad - 1]}; expected consecutive sample numbers")

    def _count_ascii_rows(self) -> int:
        with open(self.dat_path, "rb") as fh:
            fh.seek(self.dat_offset)
            head = fh.read(min(4096, self.dat_bytes))
            if b"\x00" in head:
                raise InputError(f"{self.dat_path}: binary bytes in an ASCII data file; "
                                 f"expected text rows (or fix 'ft' in {self.cfg_path.name})")
            fh.seek(self.dat_offset)
            n, left = 0, self.dat_bytes
            for raw in fh:
                if left <= 0:
                    break
                left -= len(raw)
                n += bool(raw.strip())
        return n

    def _first_records(self, n: int):
        for blk in self._raw_chunks(n):
            return blk
        raise InputError(f"{self.dat_path}: no samples")

    # -- raw blocks: dict with 'n', 't', 'a' (values as stored, 2-D: samples x channels)
    def _raw_chunks(self, chunk: int) -> Iterator[dict]:
        c = self.config
        na = len(c.analog)
        if c.data_format == "ASCII":
            yield from self._ascii_chunks(chunk)
            return
        nw = (c.n_digital + 15) // 16
        dt = np.dtype([("n", "<u4"), ("t", "<u4"), ("a", _VALUE_DTYPE[c.data_format], (na,)),
                       ("d", "<u2", (nw,))])
        total = self.dat_bytes // dt.itemsize
        with open(self.dat_path, "rb") as fh:
            fh.seek(self.dat_offset)
            done = 0
            while done < total:
                k = min(chunk, total - done)
                rec = np.fromfile(fh, dtype=dt, count=k)
                if rec.size != k:
                    raise InputError(f"{self.dat_path}: ended after {done + rec.size} records; "
                                     f"expected {total}")
                yield {"n": rec["n"], "t": rec["t"], "a": rec["a"].reshape(k, na),
                       "first": done}
                done += k

    def _ascii_chunks(self, chunk: int) -> Iterator[dict]:
        c = self.config
        na = len(c.analog)
        ncols = 2 + na + c.n_digital
        line_no = 0
        with open(self.dat_path, "rb") as fh:
            fh.seek(self.dat_offset)
            left = self.dat_bytes
            buf: list[bytes] = []
            for raw in fh:
                if left <= 0:
                    break
                left -= len(raw)
                if raw.strip() == b"":
                    continue
                buf.append(raw)
                if len(buf) >= chunk:
                    yield self._parse_ascii(buf, line_no, ncols, na)
                    line_no += len(buf)
                    buf = []
            if buf:
                yield self._parse_ascii(buf, line_no, ncols, na)

    def _parse_ascii(self, rows: list[bytes], first: int, ncols: int, na: int) -> dict:
        text = b"".join(rows).decode("latin-1")
        try:
            arr = np.loadtxt(text.splitlines(), delimiter=",", usecols=range(2 + na), ndmin=2,
                             dtype=float)
            if arr.shape[0] != len(rows):
                raise ValueError
            fields_ok = all(r.count(b",") == ncols - 1 for r in rows)
            if not fields_ok:
                raise ValueError
        except ValueError:
            # slow path: find the first bad line and say what is wrong with it
            for k, r in enumerate(rows):
                f = _fields(r.decode("latin-1"))
                where = f"{self.dat_path}:{first + k + 1}"
                if len(f) != ncols:
                    raise InputError(
                        f"{where}: expected {ncols} fields (sample number, time stamp, {na} "
                        f"analog, {self.config.n_digital} status) per {self.cfg_path.name}, "
                        f"found {len(f)}; the .cfg does not match the .dat") from None
                for j, cell in enumerate(f[: 2 + na]):
                    if j == 1 and cell == "":
                        continue  # time stamps are optional when a rate is given
                    if cell == "":
                        raise InputError(f"{where}: field {j + 1}: missing value; expected a "
                                         "sample of every analog channel") from None
                    _num(cell, where, f"field {j + 1}")
            # only empty time stamps remain: parse them as missing
            arr = np.array([[(float(x) if x else float(_TS_MISSING)) for x in
                             _fields(r.decode("latin-1"))[: 2 + na]] for r in rows])
        return {"n": arr[:, 0], "t": arr[:, 1], "a": arr[:, 2:], "first": first}

    # -- public
    def channel_index(self, choice: str | int | None, unit: str) -> int | None:
        """Position (0-based among the analog channels) of the chosen channel.

        ``choice``: the channel's name (``ch_id``), or its number ``An`` as written in the
        configuration file; None picks the first channel whose unit is a current (``A``) or a
        voltage (``V``), as ``unit`` says.
        """
        chans = self.config.analog
        if choice is None:
            for k, ch in enumerate(chans):
                if ch.si_unit == unit:
                    return k
            return None
        s = str(choice).strip()
        for k, ch in enumerate(chans):
            if ch.name == s:
                return k
        for k, ch in enumerate(chans):
            if ch.name.lower() == s.lower():
                return k
        if s.isdigit():
            for k, ch in enumerate(chans):
                if ch.index == int(s):
                    return k
        names = ", ".join(f"{ch.index}:{ch.name}" for ch in chans)
        raise InputError(f"{self.cfg_path}: no analog channel {printable(repr(s), 60)}; "
                         f"available: {printable(names, 200)}")

    def chunks(self, channels: list[int], chunk: int = 1 << 16,
               scale: list[float] | None = None) -> Iterator[np.ndarray]:
        """Blocks of primary SI samples of the given channels, shape (samples, channels),
        each channel multiplied by ``scale`` (default 1)."""
        chans = [self.config.analog[k] for k in channels]
        extra = [1.0] * len(chans) if scale is None else list(scale)
        gain = [ch.a * ch.to_primary_si * e for ch, e in zip(chans, extra, strict=True)]
        off = [ch.b * ch.to_primary_si * e for ch, e in zip(chans, extra, strict=True)]
        missing = _MISSING.get(self.config.data_format)
        for blk in self._raw_chunks(chunk):
            raw = blk["a"]
            out = np.empty((len(chans), raw.shape[0]))  # one contiguous row per channel
            for j, k in enumerate(channels):
                x = raw[:, k]
                bad = (x == missing) if missing is not None else (
                    ~np.isfinite(x) if x.dtype.kind == "f" else None)
                if bad is not None and bad.any():
                    r = int(np.flatnonzero(bad)[0])
                    raise InputError(
                        f"{self.dat_path}: sample {blk['first'] + r + 1}, channel "
                        f"{chans[j].name!r}: missing or invalid value; expected a sample")
                with np.errstate(over="ignore", invalid="ignore"):
                    np.multiply(x, gain[j], out=out[j])
                    if off[j]:
                        out[j] += off[j]
                role = "voltage" if chans[j].si_unit == "V" else "current"
                wrong = check_samples(out[j], role)
                if wrong is not None:
                    raise InputError(f"{self.dat_path}: sample {blk['first'] + wrong[0] + 1}, "
                                     f"channel {chans[j].name!r}: {wrong[1]}")
            yield out.T

    def read(self, channels: list[int], scale: list[float] | None = None) -> np.ndarray:
        """All samples of the given channels [primary SI] (times ``scale``), shape
        (samples, channels)."""
        return np.concatenate(list(self.chunks(channels, scale=scale)), axis=0)


def _split_cff(path: Path) -> tuple[str, int, int]:
    """CFG text, data offset and data length of a 2013 combined file."""
    raw = path.read_bytes()
    marks = list(re.finditer(rb"^-+\s*file type:\s*([A-Za-z]+)\s*([A-Za-z0-9]*)\s*:?\s*(\d*)"
                             rb"\s*-*\s*\r?\n", raw, flags=re.M | re.I))
    cfg = dat = None
    for k, m in enumerate(marks):
        kind = m.group(1).upper()
        end = marks[k + 1].start() if k + 1 < len(marks) else len(raw)
        if kind == b"CFG":
            cfg = raw[m.end():end].decode("latin-1")
        elif kind == b"DAT":
            length = int(m.group(3)) if m.group(3) else end - m.end()
            dat = (m.end(), length)
    if cfg is None or dat is None:
        raise InputError(f"{path}: expected a COMTRADE combined file with CFG and DAT sections")
    return cfg, dat[0], dat[1]


def open_comtrade(path: str | os.PathLike) -> ComtradeFile:
    """Open a record from its ``.cfg`` (data in the ``.dat`` beside it), its ``.dat``, or a
    ``.cff`` combined file. Raises :class:`~pqcalc.errors.InputError` naming the file and
    line when the two files disagree."""
    p = Path(path)
    if p.is_dir():
        raise InputError(f"{p}: is a directory; expected a COMTRADE .cfg file")
    if p.suffix.lower() == ".cff":
        if not p.exists():
            raise InputError(f"{p}: no such file")
        text, off, length = _split_cff(p)
        return ComtradeFile(p, parse_config(text, str(p)), p, off, length)
    cfg = p.with_suffix(".cfg") if p.suffix.lower() == ".dat" else p
    if not cfg.exists():
        alt = [q for q in (p.with_suffix(".CFG"), p.with_suffix(".cfg")) if q.exists()]
        if not alt:
            raise InputError(f"{cfg}: no such file; expected the COMTRADE configuration file")
        cfg = alt[0]
    if cfg.stat().st_size == 0:
        raise InputError(f"{cfg}: the file is empty; expected a COMTRADE configuration")
    raw = cfg.read_bytes()
    if b"\x00" in raw:
        raise InputError(f"{cfg}: binary bytes in a configuration file; expected text")
    text = raw.decode("utf-8-sig", errors="replace")
    conf = parse_config(text, str(cfg))
    dat = next((q for q in (cfg.with_suffix(".dat"), cfg.with_suffix(".DAT")) if q.exists()),
               None)
    if dat is None:
        raise InputError(f"{cfg.with_suffix('.dat')}: no such file; expected the data file "
                         f"beside {cfg.name}")
    return ComtradeFile(cfg, conf, dat)


def read_comtrade(path: str | os.PathLike[str], current_channel: str | int | None = None,
                  voltage_channel: str | int | None = None, current_scale: float = 1.0,
                  voltage_scale: float = 1.0) -> RawRecord:
    """Read a COMTRADE record into a :class:`~pqcalc.io.record.RawRecord`.

    Channels are chosen by name or number (see :meth:`ComtradeFile.channel_index`); by
    default the first current and the first voltage channel. Values are primary [A], [V],
    then multiplied by the scale factors.
    """
    f = open_comtrade(path)
    ii = f.channel_index(current_channel, "A")
    if ii is None:
        names = ", ".join(f"{ch.index}:{ch.name} [{ch.unit}]" for ch in f.config.analog)
        raise InputError(f"{f.cfg_path}: no current channel (unit A); name one with "
                         f"--current-col; available: {names}")
    vi = f.channel_index(voltage_channel, "V")
    cols = [ii] if vi is None else [ii, vi]
    x = f.read(cols, [current_scale] if vi is None else [current_scale, voltage_scale])
    meta = {"format": f"comtrade {f.config.rev_year} {f.config.data_format}",
            "station": f.config.station, "device": f.config.device,
            "current_channel": f.config.analog[ii].name,
            "line_frequency_hz": f.config.line_frequency_hz, "start": f.config.start}
    if vi is not None:
        meta["voltage_channel"] = f.config.analog[vi].name
    return RawRecord(x[:, 0], f.sample_rate_hz, None if vi is None else x[:, 1],
                     str(f.cfg_path), meta)


# ---------------------------------------------------------------------------- writing
def write_comtrade(
    cfg_path: str | os.PathLike,
    channels: dict[str, tuple[str, np.ndarray]],
    sample_rate_hz: float,
    rev_year: int = 1999,
    data_format: str = "BINARY",
    line_frequency_hz: float = 50.0,
    station: str = "pqcalc",
    device: str = "synthetic",
    scale: dict[str, tuple[float, float]] | None = None,
    n_digital: int = 0,
    timestamps: bool = True,
    chunk: int = 1 << 16,
) -> dict[str, tuple[float, float]]:
    """Write a ``.cfg``/``.dat`` pair per C37.111 (``rev_year`` 1999 or 2013).

    Parameters
    ----------
    channels
        ``{name: (unit, samples)}``; the unit is written to ``uu`` (``"A"``, ``"V"``, ...).
        Samples may be any iterable of arrays (blocks) to write long records in chunks.
    scale
        ``{name: (a, b)}`` conversion factors; by default chosen so that the integers use
        most of their range (``b = 0``). FLOAT32 stores values directly with ``a = 1``.
    timestamps
        Write time stamps (microseconds) or leave them missing (the rate says it all).

    Returns
    -------
    dict
        The ``(a, b)`` used per channel: integer formats store ``round((x - b) / a)``, so a
        reader returns exactly ``a * round((x - b) / a) + b``.
    """
    ft = data_format.upper()
    if ft not in DATA_FORMATS:
        raise InputError(f"data_format: expected one of {', '.join(DATA_FORMATS)}, got {ft!r}")
    if ft in ("BINARY32", "FLOAT32") and rev_year < 2013:
        raise InputError(f"data_format {ft} needs rev_year 2013")
    cfg = Path(cfg_path)
    dat = cfg.with_suffix(".dat")
    names = list(channels)
    blocks = {n: channels[n][1] for n in names}
    single = all(isinstance(b, np.ndarray) for b in blocks.values())
    if not single and scale is None and ft != "FLOAT32":
        raise InputError("scale: give (a, b) per channel when writing samples in blocks")
    full = 32767 if ft in ("BINARY", "ASCII") else 2**31 - 1
    sc: dict[str, tuple[float, float]] = {}
    for n in names:
        if scale and n in scale:
            sc[n] = scale[n]
        elif ft == "FLOAT32":
            sc[n] = (1.0, 0.0)
        else:
            peak = float(np.max(np.abs(blocks[n]))) or 1.0
            sc[n] = (peak / (full - 1), 0.0)
    nw = (n_digital + 15) // 16
    count = 0
    if single:
        it = iter([np.column_stack([np.asarray(blocks[n], float) for n in names])])
    else:
        it = (np.column_stack([np.asarray(x, float) for x in xs])
              for xs in zip(*[blocks[n] for n in names], strict=True))
    a = np.array([sc[n][0] for n in names])
    b = np.array([sc[n][1] for n in names])
    vmin = np.full(len(names), np.inf)
    vmax = np.full(len(names), -np.inf)
    with open(dat, "wb") as fh:
        for x in it:
            k = x.shape[0]
            seq = np.arange(count + 1, count + k + 1, dtype=np.uint32)
            if timestamps:
                us = np.round(np.arange(count, count + k) / sample_rate_hz * 1e6)
                if us[-1] >= _TS_MISSING:
                    raise InputError("the record outlasts 32-bit microsecond time stamps "
                                     "(71 minutes); write it with timestamps=False")
                ts = us.astype(np.uint32)
            else:
                ts = np.full(k, _TS_MISSING, dtype=np.uint32)
            if ft == "FLOAT32":
                vals = ((x - b) / a).astype("<f4")
            else:
                vals = np.round((x - b) / a)
                if np.any(np.abs(vals) > full):
                    raise InputError("a sample exceeds the integer range with the given scale")
                vals = vals.astype(np.int64)
            vmin = np.minimum(vmin, vals.min(axis=0))
            vmax = np.maximum(vmax, vals.max(axis=0))
            if ft == "ASCII":
                rows = []
                for j in range(k):
                    t = str(int(ts[j])) if timestamps else ""
                    cells = [str(int(seq[j])), t] + [str(int(v)) for v in vals[j]]
                    cells += ["0"] * n_digital
                    rows.append(",".join(cells))
                fh.write(("\r\n".join(rows) + "\r\n").encode("ascii"))
            else:
                dt = np.dtype([("n", "<u4"), ("t", "<u4"),
                               ("a", _VALUE_DTYPE[ft], (len(names),)), ("d", "<u2", (nw,))])
                rec = np.zeros(k, dtype=dt)
                rec["n"], rec["t"], rec["a"] = seq, ts, vals
                rec.tofile(fh)
            count += k
    lines = [f"{station},{device},{rev_year}",
             f"{len(names) + n_digital},{len(names)}A,{n_digital}D"]
    for k, n in enumerate(names):
        unit = channels[n][0]
        lo, hi = (int(vmin[k]), int(vmax[k])) if ft != "FLOAT32" else (vmin[k], vmax[k])
        lines.append(f"{k + 1},{n},,,{unit},{sc[n][0]!r},{sc[n][1]!r},0,{lo},{hi},1,1,P")
    for k in range(n_digital):
        lines.append(f"{k + 1},status{k + 1},,,0")
    lines += [f"{line_frequency_hz:g}", "1", f"{sample_rate_hz!r},{count}",
              "01/01/2020,00:00:00.000000", "01/01/2020,00:00:00.000000", ft, "1"]
    if rev_year >= 2013:
        lines += ["0,0", "0,0"]
    cfg.write_text("\r\n".join(lines) + "\r\n", encoding="ascii")
    return sc
