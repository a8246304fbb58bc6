"""Hypothesis strategies: hostile and extreme installation files, CSV captures, COMTRADE
records and command-line numbers.

Each strategy starts from a valid input and breaks it in the ways recorders, editors and
people do (a value out of any physical range, a wrong type, a field left out or doubled, a
truncated or corrupted file, an odd encoding), plus the values that break arithmetic (zero,
subnormals, 1e308, integers past the float range, NaN and infinity spelled every way).
"""

from __future__ import annotations

import math
import struct
from dataclasses import dataclass

from hypothesis import strategies as st

# ------------------------------------------------------------------ shared value pools
#: Numbers that break arithmetic or physical sense, as TOML/CSV/command-line text.
EXTREME_NUMBER_TEXT = (
    "0", "-0", "-0.0", "1", "-1", "0.5", "90", "1e-7", "1e-300", "5e-324", "1e-320", "2.2e-308",
    "1e300", "1.79e308", "1.8e308", "1e306", "-1e308", "nan", "-nan", "+nan", "inf", "-inf",
    "+inf", "NaN", "Infinity", "1e999", str(10**18), str(10**40), "9" * 400, "-" + "9" * 40,
    "0x10", "1_000", "4294967296", "65536", "100000", "0.0001", "3.0e-12",
)

#: Free text that must never be interpreted (math, terminal control, spreadsheet formula).
HOSTILE_TEXT = (
    "$x$", "$\\frac{1}{0}$", "a $ b $ c", "$$", "\\$", "=HYPERLINK(\"http://x\",\"y\")",
    "+1+1", "-2+3", "@SUM(A1)", "\x1b[31mred\x1b[0m", "\x1b]0;title\x07", "tab\there",
    "line\nbreak", "\r", "\u202eRTL", "\x00nul", "x" * 100_000, "{}", "[A]", "'\"",
    "\u00e9t\u00e9", "\ud7ff", "\x7f", "\u0085",
)


def number_text() -> st.SearchStrategy[str]:
    """A number as text: the extreme pool, or any float or integer hypothesis likes."""
    return st.one_of(
        st.sampled_from(EXTREME_NUMBER_TEXT),
        st.floats(allow_nan=True, allow_infinity=True).map(repr),
        st.integers(min_value=-(10**30), max_value=10**30).map(str),
        st.floats(min_value=1e-12, max_value=1e12).map(lambda x: f"{x:.6g}"),
    )


def mostly(good: str, k: int = 10) -> st.SearchStrategy[str]:
    """``good`` most of the time (about k in k + 1), else a hostile number: one broken
    field at a time reaches deeper than many at once."""
    return st.sampled_from(range(k + 1)).flatmap(
        lambda i: number_text() if i == k else st.just(good))


def _toml_string(s: str) -> str:
    out = []
    for ch in s:
        o = ord(ch)
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif o < 0x20 or o == 0x7F:
            out.append(f"\\u{o:04x}")
        elif 0xD800 <= o <= 0xDFFF:
            out.append("?")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def toml_value() -> st.SearchStrategy[str]:
    """Any TOML value as text (numbers first: most fields are numbers)."""
    num = number_text().map(lambda s: s if _toml_number_ok(s) else _toml_fix(s))
    scalar = st.one_of(
        num, num, num,
        st.sampled_from(HOSTILE_TEXT).map(_toml_string),
        st.text(max_size=20).map(_toml_string),
        st.sampled_from(["true", "false", "1979-05-27", "[]", "{}", "[1, 2, 3]",
                         "[[1], [2]]", "{a = 1}", '["a", 1]', "[" * 200 + "]" * 200]),
    )
    return scalar


def _toml_number_ok(s: str) -> bool:
    return s not in ("NaN", "Infinity", "-0.0") or s == "-0.0"


def _toml_fix(s: str) -> str:
    return {"NaN": "nan", "Infinity": "inf"}.get(s, s)


# ------------------------------------------------------------------ installation files
#: The numeric fields of the base file, as (TOML line prefix, field) pairs to rewrite.
INSTALLATION_BASE = """\
[project]
name = "Fuzz hall"
notes = "invented"

[supply]
system = "three-phase-wye"
voltage_ln_v = 230
frequency_hz = 50
source_r_ohm = 0.02
source_l_h = 5e-5

[analysis]
supply_interaction = true

[fixtures.dl]
capture = "cap.csv"
power_w = 9
min_conduction_deg = 30

[fixtures.lamp]
model = "resistive"
power_w = 40

[[feeders]]
id = "F1"
r_ohm = 0.01
l_h = 1e-5

[[panels]]
id = "P1"
feeder = "F1"
neutral_ampacity_a = 40

[[panels.circuits]]
id = "c1"
line = "L1"
breaker_a = 16
conductor_ampacity_a = 20
fixtures = [{type = "dl", count = 20}]

[[panels.circuits]]
id = "c2"
line = "L2"
dimmer_rating_w = 600
fixtures = [
  {type = "dl", count = 10},
]
cable = {length_m = 20, size_mm2 = 1.5}

[diversity]
mode = "none"
seed = 1
draws = 5

[pcc]
demand_current_a = 100
"""

#: Keys of the base file whose values the mutator rewrites.
INSTALLATION_KEYS = (
    "name", "notes", "system", "voltage_ln_v", "frequency_hz", "source_r_ohm", "source_l_h",
    "supply_interaction", "capture", "power_w", "min_conduction_deg", "model", "id", "r_ohm",
    "l_h", "feeder", "neutral_ampacity_a", "line", "breaker_a", "conductor_ampacity_a",
    "fixtures", "dimmer_rating_w", "cable", "mode", "seed", "draws", "demand_current_a",
    "count", "length_m", "size_mm2",
)

#: Lines a mutation may add inside a table (new fields, some valid, some not).
EXTRA_LINES = (
    '"breaker_a[A]" = 16', "'odd key' = 1", 'a.b.c = 1', "conduction_deg = [180, 90]",
    "conduction_deg = " + repr([180.0] * 150), "knob = 0.5", 'dimmer = "leading-edge"',
    'dimmer = "trailing-edge"', "led_derating = 0.25", "eddy_loss_pu = 1e300",
    "neutral_r_ohm = 0.01", "x_over_r = 3", "short_circuit_a = 5000", "seed = -1",
    'mode = "monte-carlo"', 'mode = "summation"', "draws = 100000", "tolerance = 0",
    "max_iterations = 0", "circuits = []", 'scenarios = ["a", "b"]', "strict_dimmed = true",
    'rules = "US"', "builtin_dimming = 1", "sample_rate_hz = 0", "current_scale = 1e306",
    'breaker_curve = "Z"', "breaker_pickup_x_in = 1e308", "dimmer_min_load_w = -1",
    "params = {r_on_ohm = 5e-324}", "dimmer_params = {r_on_ohm = 5e-324}",
    "count = " + str(10**40), "x = " + "[" * 1000 + "]" * 1000,
)

#: Whole blocks a mutation may append (valid TOML, questionable content).
EXTRA_BLOCKS = (
    '\n[[feeders]]\nid = "F-unused"\nr_ohm = 0.02\n',
    '\n[[panels]]\nid = "P-empty"\ncircuits = []\n',
    '\n[[panels]]\nid = "P2"\n[[panels.circuits]]\nid = "c9"\nline = "L3"\n'
    'fixtures = [{type = "dl", count = 1}]\n',
    '\n[supply.transformer]\nkva = 250\nimpedance_pct = 4.5\neddy_loss_pu = 1e300\n',
    '\n[fixtures.outside]\ncapture = "/etc/passwd"\npower_w = 9\n',
    '\n[fixtures.up]\ncapture = "../cap.csv"\npower_w = 9\n',
    '\n[fixtures."$x$"]\nmodel = "resistive"\npower_w = 40\n',
    '\n[compliance]\nstrict_dimmed = true\n',
)


@st.composite
def installation_text(draw) -> str:
    """An installation file: the base with one to four mutations."""
    lines = INSTALLATION_BASE.splitlines()
    for _ in range(draw(st.integers(1, 4))):
        kind = draw(st.sampled_from(["value", "value", "value", "delete", "extra", "block",
                                     "bytes", "dup"]))
        if kind in ("value", "delete"):
            key = draw(st.sampled_from(INSTALLATION_KEYS))
            idx = [k for k, ln in enumerate(lines) if ln.split("=")[0].strip() == key]
            if not idx:
                continue
            k = draw(st.sampled_from(idx))
            if kind == "delete":
                del lines[k]
            else:
                lines[k] = f"{key} = {draw(toml_value())}"
        elif kind == "extra":
            heads = [k for k, ln in enumerate(lines) if ln.startswith("[")]
            k = draw(st.sampled_from(heads))
            lines.insert(k + 1, draw(st.one_of(st.sampled_from(EXTRA_LINES),
                                               toml_value().map(lambda v: f"extra = {v}"))))
        elif kind == "block":
            lines += draw(st.sampled_from(EXTRA_BLOCKS)).splitlines()
        elif kind == "dup":
            # many circuits (scenario and size bounds)
            n = draw(st.integers(2, 40))
            block = ['[[panels.circuits]]', 'id = "c{k}"', 'line = "L3"',
                     'fixtures = [{{type = "dl", count = {k}}}]']
            for j in range(n):
                lines += [b.format(k=100 + j) for b in block]
        else:
            text = "\n".join(lines)
            pos = draw(st.integers(0, len(text)))
            junk = draw(st.sampled_from(["\x00", "\ufeff", "[", "]", "=", "\"", "\n[[", "#",
                                         "\r\n", "\x1b", "\\u0000", "'''"]))
            lines = (text[:pos] + junk + text[pos:]).splitlines()
    text = "\n".join(lines) + "\n"
    if draw(st.booleans()) and draw(st.integers(0, 9)) == 0:
        text = "\ufeff" + text
    if draw(st.integers(0, 9)) == 0:
        text = text.replace("\n", "\r\n")
    return text


# ------------------------------------------------------------------ CSV captures
@dataclass(frozen=True)
class CsvCase:
    data: bytes
    args: tuple[str, ...]


def _signal(kind: str, n: int, fs: float, f: float, amp: float) -> list[float]:
    out = []
    for k in range(n):
        ph = 2 * math.pi * f * k / fs
        if kind == "sine":
            out.append(amp * math.sin(ph))
        elif kind == "pulse":
            s = math.sin(ph)
            out.append(amp * s if abs(s) > 0.9 else 0.0)
        elif kind == "zero":
            out.append(0.0)
        elif kind == "const":
            out.append(amp)
        elif kind == "square":
            out.append(amp if math.sin(ph) >= 0 else -amp)
        else:  # noise-like but deterministic
            out.append(amp * math.sin(ph * 7.3 + k * 0.7) * math.cos(k * 0.13))
    return out


@st.composite
def csv_case(draw) -> CsvCase:
    """A CSV capture with its command-line options."""
    fs = draw(st.sampled_from([200.0, 1000.0, 2000.0, 5000.0, 10000.0, 25600.0]))
    f = draw(st.sampled_from([50.0, 60.0, 49.9, 50.0, 0.1, 400.0]))
    cycles = draw(st.sampled_from([0.3, 1.5, 3, 5, 12, 25]))
    n = max(1, min(6000, int(cycles * fs / f)))
    amp_i = draw(st.sampled_from([1.0, 0.05, 1e-300, 1e-20, 1e6, 1e300, 1e308]))
    amp_v = draw(st.sampled_from([325.0, 1e308, 0.0, 1e-300]))
    kind = draw(st.sampled_from(["sine", "pulse", "pulse", "zero", "const", "square", "odd"]))
    cur = _signal(kind, n, fs, f, amp_i)
    vol = _signal("sine", n, fs, f, amp_v)
    with_time = draw(st.sampled_from([True, True, False]))
    with_v = draw(st.booleans())
    delim = draw(st.sampled_from([",", ";", "\t"]))
    header = []
    if with_time:
        header.append(draw(st.sampled_from(["time_s", "t", "Time (s)", "x" * 140_000])))
    if with_v:
        header.append(draw(st.sampled_from(["voltage_v", "V", "\x1b[2J", "$v$"])))
    header.append(draw(st.sampled_from(["current_a", "I", "=cmd|' /C calc'!A0", "current"])))
    rows = []
    if draw(st.sampled_from([True, True, True, False])):
        rows.append(delim.join(header))
    for k in range(n):
        cells = []
        if with_time:
            cells.append(repr(k / fs))
        if with_v:
            cells.append(repr(vol[k]))
        cells.append(repr(cur[k]))
        rows.append(delim.join(cells))
    # row-level mutations
    for _ in range(draw(st.sampled_from([0, 0, 0, 1, 1, 2, 3]))):
        if not rows:
            break
        k = draw(st.integers(0, len(rows) - 1))
        m = draw(st.sampled_from(["cell", "drop", "dup", "extra", "empty", "truncate"]))
        cells = rows[k].split(delim)
        if m == "cell":
            j = draw(st.integers(0, len(cells) - 1))
            cells[j] = draw(st.one_of(number_text(), st.sampled_from(HOSTILE_TEXT[:12])))
            rows[k] = delim.join(cells)
        elif m == "drop":
            del rows[k]
        elif m == "dup":
            rows.insert(k, rows[k])
        elif m == "extra":
            rows[k] = rows[k] + delim + "1"
        elif m == "empty":
            rows[k] = delim.join("" for _ in cells)
        else:
            rows[k] = rows[k][: len(rows[k]) // 2]
    text = "\n".join(rows) + ("\n" if draw(st.booleans()) else "")
    data = text.encode("utf-8")
    if draw(st.sampled_from(range(8))) == 7:
        data = b"\xef\xbb\xbf" + data
    if draw(st.sampled_from(range(10))) == 9:
        pos = draw(st.integers(0, len(data)))
        data = data[:pos] + draw(st.sampled_from([b"\x00", b"\xff\xfe", b"\x1b", b"\r"])) + data[pos:]
    if draw(st.sampled_from(range(16))) == 15:
        data = data[: draw(st.integers(0, len(data)))]
    args: list[str] = []
    if not with_time or draw(st.integers(0, 4)) == 0:
        args += ["--sample-rate", draw(mostly(repr(fs)))]
    if delim == "\t" and draw(st.booleans()):
        args += ["--delimiter", "tab"]
    if draw(st.booleans()):
        args += ["--windows"]
        if draw(st.booleans()):
            args += ["--summary-only"]
    if draw(st.integers(0, 5)) == 5:
        args += cli_number_args(draw)
    return CsvCase(data, tuple(args))


# ------------------------------------------------------------------ COMTRADE records
@dataclass(frozen=True)
class ComtradeCase:
    cfg: bytes
    dat: bytes
    args: tuple[str, ...]


@st.composite
def comtrade_case(draw) -> ComtradeCase:
    """A COMTRADE record (.cfg text, .dat bytes) with its options, then corrupted."""
    rev = draw(st.sampled_from(["1991", "1999", "2013"]))
    ft = draw(st.sampled_from(["ASCII", "BINARY", "BINARY32", "FLOAT32"]))
    fs = draw(st.sampled_from([200.0, 1000.0, 3200.0, 6400.0]))
    f = 50.0
    n = int(draw(st.sampled_from([0.5, 3, 12, 25])) * fs / f)
    n = max(n, 1)
    kind = draw(st.sampled_from(["sine", "pulse", "zero", "square"]))
    cur = _signal(kind, n, fs, f, 1000.0)
    vol = _signal("sine", n, fs, f, 30000.0)
    a_i = draw(mostly("0.001"))
    a_v = draw(mostly("0.01"))
    b_i = draw(mostly("0"))
    prim = draw(mostly("100"))
    sec = draw(mostly("1"))
    ps = draw(st.sampled_from(["P", "P", "S", "S", "s", "X", ""]))
    uu_i = draw(st.sampled_from(["A", "A", "A", "kA", "mA", "V", "xyz"]))
    samp = draw(mostly(repr(fs)))
    endsamp = draw(mostly(str(n)))
    lf = draw(mostly("50"))
    timemult = draw(mostly("1"))
    name_i = draw(st.sampled_from(["IA", "IA", "IA", "$I_a$", "\x1b[31mIA", "=1+1", "I" * 300]))
    extra13 = f",{prim},{sec},{ps}" if rev != "1991" else ""
    cfg_lines = [
        f"station,dev,{rev}" if rev != "1991" else "station,dev",
        "2,2A,0D",
        f"1,{name_i},a,,{uu_i},{a_i},{b_i},0,-32767,32767{extra13}",
        f"2,VA,a,,V,{a_v},0,0,-32767,32767{extra13}",
        lf, "1", f"{samp},{endsamp}", "01/01/2020,00:00:00.000000",
        "01/01/2020,00:00:00.000000", ft,
    ]
    if rev != "1991":
        cfg_lines.append(timemult)
    if rev == "2013":
        cfg_lines += ["0,0", "0,0"]
    # one line rewritten by a random mutation now and then
    if draw(st.integers(0, 7)) == 0:
        k = draw(st.integers(0, len(cfg_lines) - 1))
        cfg_lines[k] = draw(st.one_of(number_text(), st.sampled_from(HOSTILE_TEXT[:10]),
                                      st.just(cfg_lines[k] + ",1")))
    cfg = ("\r\n".join(cfg_lines) + "\r\n").encode("latin-1", errors="replace")

    def ints(x: float, scale: float, full: int) -> int:
        return max(-full, min(full, int(round(x / scale))))

    rows = []
    dat = bytearray()
    for k in range(n):
        if ft == "ASCII":
            rows.append(f"{k + 1},{int(k * 1e6 / fs)},{ints(cur[k], 0.1, 32767)},"
                        f"{ints(vol[k], 1.0, 32767)}")
        elif ft == "BINARY":
            dat += struct.pack("<IIhh", k + 1, int(k * 1e6 / fs) & 0xFFFFFFFF,
                               ints(cur[k], 0.1, 32767), ints(vol[k], 1.0, 32767))
        elif ft == "BINARY32":
            dat += struct.pack("<IIii", k + 1, int(k * 1e6 / fs) & 0xFFFFFFFF,
                               ints(cur[k], 0.1, 2**31 - 1), ints(vol[k], 1.0, 2**31 - 1))
        else:
            dat += struct.pack("<IIff", k + 1, int(k * 1e6 / fs) & 0xFFFFFFFF, cur[k], vol[k])
    if ft == "ASCII":
        if rows and draw(st.integers(0, 3)) == 0:
            k = draw(st.integers(0, len(rows) - 1))
            cells = rows[k].split(",")
            j = draw(st.integers(0, len(cells) - 1))
            cells[j] = draw(st.one_of(number_text(), st.just("")))
            rows[k] = ",".join(cells)
        dat = bytearray(("\r\n".join(rows) + "\r\n").encode())
    m = draw(st.integers(0, 11))
    if m == 0 and dat:
        dat = dat[: draw(st.integers(0, len(dat)))]
    elif m == 1 and dat:
        pos = draw(st.integers(0, len(dat) - 1))
        dat[pos] = draw(st.integers(0, 255))
    elif m == 2 and ft == "FLOAT32" and len(dat) >= 12:
        k = draw(st.integers(0, len(dat) // 16 - 1)) if len(dat) >= 16 else 0
        dat[k * 16 + 8 : k * 16 + 12] = struct.pack("<f", draw(st.sampled_from(
            [float("nan"), float("inf"), 3.4e38, -3.4e38, 1e-45])))
    args: list[str] = []
    if draw(st.booleans()):
        args += ["--windows"]
    if draw(st.integers(0, 5)) == 5:
        args += cli_number_args(draw)
    return ComtradeCase(cfg, bytes(dat), tuple(args))


# ------------------------------------------------------------------ command-line numbers
#: Numeric options every capture command takes.
NUMBER_OPTIONS = ("--voltage-scale", "--current-scale", "--shunt-ohm", "--frequency",
                  "--nominal-frequency", "--sample-rate", "--skip-rows", "--max-order")
#: Numeric options of comply with captures.
COMPLY_OPTIONS = ("--power-w", "--pf", "--voltage")


def cli_number_args(draw) -> list[str]:
    """One or two numeric options with hostile values."""
    out: list[str] = []
    for _ in range(draw(st.integers(1, 2))):
        out += [draw(st.sampled_from(NUMBER_OPTIONS)), draw(number_text())]
    return out


@st.composite
def cli_numbers(draw) -> tuple[str, ...]:
    """A command with hostile numeric options on a good capture (path filled in later)."""
    cmd = draw(st.sampled_from(["analyze", "analyze", "analyze-windows", "comply"]))
    args = cli_number_args(draw)
    if cmd == "analyze-windows":
        return ("analyze", "{capture}", "--windows", *args)
    if cmd == "comply":
        more = [draw(st.sampled_from(COMPLY_OPTIONS)), draw(number_text())]
        return ("comply", "{capture}", "--json", *args, *more)
    return ("analyze", "{capture}", *(["--json"] if draw(st.booleans()) else []), *args)
