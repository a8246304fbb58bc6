"""COMTRADE reader against files written per IEEE Std C37.111 (1999 and 2013 revisions).

The writer in :mod:`pqcalc.io.comtrade` follows the file layout of C37.111-1999 clauses 5-6
and C37.111-2013 clauses 7-8 (from memory of the standard); the binary records are also
assembled here by hand with :mod:`struct` from that layout, independently of the writer, so
the reader is checked against the standard's layout and not only against its own writer.
"""

from __future__ import annotations

import struct

import numpy as np
import pytest

from pqcalc.errors import InputError
from pqcalc.io.capture import record_to_waveform
from pqcalc.io.comtrade import open_comtrade, parse_config, read_comtrade, write_comtrade

FS = 6400.0  # 128 samples per 50 Hz cycle, a common recorder rate


def _signals(n=1280):
    t = np.arange(n) / FS
    i = 5.0 * np.sin(2 * np.pi * 50 * t) + 1.5 * np.sin(2 * np.pi * 150 * t + 0.3)
    v = 325.0 * np.sin(2 * np.pi * 50 * t)
    return i, v


@pytest.mark.parametrize(
    "rev,ft",
    [(1999, "ASCII"), (1999, "BINARY"), (2013, "ASCII"), (2013, "BINARY"),
     (2013, "BINARY32"), (2013, "FLOAT32")],
)
def test_round_trip_exact(tmp_path, rev, ft):
    # Integer formats store round((x - b)/a); the standard's conversion a*x + b must give
    # those quantised values back exactly (C37.111-1999 5.3.3 'a', 'b'). FLOAT32 stores
    # IEEE 754 single precision, so the float32 value comes back exactly.
    i, v = _signals()
    cfg = tmp_path / f"rec_{rev}_{ft}.cfg"
    sc = write_comtrade(cfg, {"IL1": ("A", i), "UL1": ("V", v)}, FS, rev, ft, n_digital=5)
    rec = read_comtrade(cfg)
    assert rec.sample_rate_hz == FS  # the 'samp' field, exactly
    for got, x, name in ((rec.current_a, i, "IL1"), (rec.voltage_v, v, "UL1")):
        a, b = sc[name]
        if ft == "FLOAT32":
            want = x.astype(np.float32).astype(float)
        else:
            want = a * np.round((x - b) / a) + b
        np.testing.assert_array_equal(got, want)
    assert rec.meta["current_channel"] == "IL1" and rec.meta["voltage_channel"] == "UL1"


def test_binary_layout_by_hand(tmp_path):
    # C37.111-1999 6.4: each record is sample number (uint32), time stamp (uint32), analog
    # values as int16, status words as uint16, little-endian. Built here with struct.
    cfg = tmp_path / "hand.cfg"
    cfg.write_text(
        "substation 7,recorder 2,1999\n"
        "3,2A,1D\n"
        "1,IA,A,,kA,0.001,0.5,0,-32767,32767,1,1,P\n"
        "2,VA,A,,V,0.1,0,0,-32767,32767,100,1,S\n"
        "1,breaker,,,0\n"
        "50\n1\n1000,3\n"
        "01/01/2021,00:00:00.000000\n01/01/2021,00:00:00.000000\n"
        "BINARY\n1\n"
    )
    raw = b"".join(struct.pack("<IIhhH", k + 1, 1000 * k, x, y, 1)
                   for k, (x, y) in enumerate([(100, -20), (-300, 40), (32000, 7)]))
    (tmp_path / "hand.dat").write_bytes(raw)
    f = open_comtrade(cfg)
    x = f.read([0, 1])
    # current: (0.001 * x + 0.5) kA -> A, primary (P)
    np.testing.assert_allclose(x[:, 0], [(0.001 * 100 + 0.5) * 1e3, (0.001 * -300 + 0.5) * 1e3,
                                         (0.001 * 32000 + 0.5) * 1e3], rtol=1e-12)
    # voltage: 0.1 * x volts on the secondary side (S), ratio primary/secondary = 100
    np.testing.assert_allclose(x[:, 1], [0.1 * -20 * 100, 0.1 * 40 * 100, 0.1 * 7 * 100],
                               rtol=1e-12)
    assert f.sample_rate_hz == 1000.0


def test_rate_from_time_stamps(tmp_path):
    # nrates = 0 / samp = 0: the rate comes from the time stamps (C37.111-1999 5.3.5).
    i, v = _signals()
    cfg = tmp_path / "ts.cfg"
    write_comtrade(cfg, {"I": ("A", i)}, FS, 1999, "BINARY")
    text = cfg.read_text().replace(f"{FS!r},{i.size}", f"0,{i.size}")
    cfg.write_text(text)
    rec = read_comtrade(cfg)
    # time stamps are whole microseconds: 1/6400 s = 156.25 us rounds, so the mean step over
    # 1279 intervals is exact to 0.5 us / 0.2 s = 2.5e-6 relative
    assert rec.sample_rate_hz == pytest.approx(FS, rel=5e-6)


def test_combined_file_2013(tmp_path):
    # C37.111-2013 combined file: sections headed '--- file type: CFG ---' and
    # '--- file type: DAT BINARY: <bytes> ---'.
    i, _ = _signals()
    cfg = tmp_path / "part.cfg"
    sc = write_comtrade(cfg, {"I": ("A", i)}, FS, 2013, "BINARY")
    dat = cfg.with_suffix(".dat").read_bytes()
    cff = tmp_path / "whole.cff"
    cff.write_bytes(b"--- file type: CFG ---\r\n" + cfg.read_bytes()
                    + f"--- file type: DAT BINARY: {len(dat)} ---\r\n".encode() + dat)
    rec = read_comtrade(cff)
    a, b = sc["I"]
    np.testing.assert_array_equal(rec.current_a, a * np.round((i - b) / a) + b)


def test_chunks_equal_whole(tmp_path):
    # reading in blocks gives the same samples as reading at once (bounded-memory path)
    i, v = _signals(5000)
    cfg = tmp_path / "c.cfg"
    write_comtrade(cfg, {"I": ("A", i), "V": ("V", v)}, FS, 2013, "ASCII")
    f = open_comtrade(cfg)
    whole = f.read([0, 1])
    parts = np.concatenate(list(f.chunks([0, 1], chunk=777)))
    np.testing.assert_array_equal(whole, parts)


def test_waveform_from_comtrade(tmp_path):
    # 5 A fundamental peak -> 3.5355 A rms; third harmonic 1.5 A peak -> 30 % of I1
    # (closed form of the synthetic signal; 16-bit quantisation ~1e-4 A, hence 1e-3)
    i, v = _signals(6400)
    cfg = tmp_path / "w.cfg"
    write_comtrade(cfg, {"I": ("A", i), "V": ("V", v)}, FS, 1999, "BINARY")
    from pqcalc.spectrum import spectrum

    s = spectrum(record_to_waveform(read_comtrade(cfg)))
    assert s.i1_a == pytest.approx(5 / np.sqrt(2), rel=1e-3)
    assert abs(s.current_a[3]) / s.i1_a == pytest.approx(0.30, abs=1e-3)


# ---------------------------------------------------------------------- bad input
def test_cfg_dat_mismatch_size(tmp_path):
    i, _ = _signals()
    cfg = tmp_path / "m.cfg"
    write_comtrade(cfg, {"I": ("A", i)}, FS, 1999, "BINARY")
    dat = cfg.with_suffix(".dat")
    dat.write_bytes(dat.read_bytes()[:-3])
    with pytest.raises(InputError, match="does not match"):
        open_comtrade(cfg)


def test_cfg_dat_mismatch_count(tmp_path):
    i, _ = _signals()
    cfg = tmp_path / "m.cfg"
    write_comtrade(cfg, {"I": ("A", i)}, FS, 1999, "BINARY")
    cfg.write_text(cfg.read_text().replace(f",{i.size}\n", f",{i.size + 10}\n"))
    with pytest.raises(InputError, match="endsamp"):
        open_comtrade(cfg)


def test_ascii_wrong_field_count(tmp_path):
    i, _ = _signals()
    cfg = tmp_path / "a.cfg"
    write_comtrade(cfg, {"I": ("A", i)}, FS, 1999, "ASCII")
    dat = cfg.with_suffix(".dat")
    lines = dat.read_text().splitlines()
    lines[7] += ",5"
    dat.write_text("\n".join(lines) + "\n")
    with pytest.raises(InputError, match=r"a\.dat:8: expected 3 fields"):
        open_comtrade(cfg).read([0])


def test_garbage_cfg(tmp_path):
    cfg = tmp_path / "g.cfg"
    cfg.write_bytes(bytes(range(256)) * 4)
    with pytest.raises(InputError, match="g.cfg"):
        open_comtrade(cfg)


def test_unknown_channel_lists_available(tmp_path):
    i, v = _signals()
    cfg = tmp_path / "u.cfg"
    write_comtrade(cfg, {"IL1": ("A", i), "UL1": ("V", v)}, FS)
    with pytest.raises(InputError, match="available: 1:IL1, 2:UL1"):
        read_comtrade(cfg, current_channel="IL9")


def test_missing_value_marker(tmp_path):
    # 0x8000 marks a missing 16-bit value (C37.111-1999 6.4.1): refused, never a NaN
    i, _ = _signals()
    cfg = tmp_path / "x.cfg"
    write_comtrade(cfg, {"I": ("A", i)}, FS, 1999, "BINARY")
    dat = cfg.with_suffix(".dat")
    raw = bytearray(dat.read_bytes())
    raw[10 * 10 + 8 : 10 * 10 + 10] = struct.pack("<h", -32768)
    dat.write_bytes(bytes(raw))
    with pytest.raises(InputError, match="sample 11"):
        read_comtrade(cfg)


def test_config_1991_without_revision():
    # C37.111-1991: no revision year, analog lines of 10 fields, no time multiplier
    c = parse_config("st,dev\n1,1A,0D\n1,I,,,A,1,0,0,-32767,32767\n60\n1\n3840,100\n"
                     "01/01/1995,00:00:00.000000\n01/01/1995,00:00:00.000000\nASCII\n")
    assert c.rev_year == 1991 and c.analog[0].name == "I" and c.rates == ((3840.0, 100),)


@pytest.mark.parametrize(
    "rev,ft", [(1999, "ASCII"), (1999, "BINARY"), (2013, "BINARY32"), (2013, "FLOAT32")]
)
def test_agrees_with_an_independent_reader(tmp_path, rev, ft):
    # The 'comtrade' package of the Python package index (an independent implementation of
    # C37.111) reads the same files to the same values. It converts in single precision,
    # hence 1e-7 of full scale (float32 has a 6e-8 relative step).
    ext = pytest.importorskip("comtrade")
    i, v = _signals()
    cfg = tmp_path / f"x_{rev}_{ft}.cfg"
    write_comtrade(cfg, {"IL1": ("A", i), "UL1": ("V", v)}, FS, rev, ft, n_digital=2)
    ours = read_comtrade(cfg)
    theirs = ext.load(str(cfg), str(cfg.with_suffix(".dat")))
    assert theirs.cfg.sample_rates[0][0] == ours.sample_rate_hz
    np.testing.assert_allclose(np.asarray(theirs.analog[0]), ours.current_a, rtol=0,
                               atol=1e-7 * np.max(np.abs(i)))
    np.testing.assert_allclose(np.asarray(theirs.analog[1]), ours.voltage_v, rtol=0,
                               atol=1e-7 * np.max(np.abs(v)))
