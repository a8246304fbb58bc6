"""``pqcalc sweep``: the file it writes, and every bad input as one line with exit code 2."""

from __future__ import annotations

import math
import os
import socket
import time

import numpy as np
import pytest
import xarray as xr
from click.testing import CliRunner

from pqcalc.cli import main


def _run(*args):
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def _one_line_error(r):
    assert r.exit_code == 2, r.output
    err = r.stderr.strip()
    assert err.startswith("error: ") and "\n" not in err, err
    assert "Traceback" not in r.output
    return err


def test_sweep_writes_a_readable_dataset(tmp_path):
    out = tmp_path / "s.nc"
    r = _run("sweep", "--model", "resistive", "--model", "resistive", "--power-w", "60,100",
             "--ideal", "--settings", "0:180:7", "--voltages", "220,230,240", "--draws", "2",
             "-o", str(out))
    assert r.exit_code == 0, r.output
    assert "licensed professional" in r.stdout
    with xr.open_dataset(out, engine="h5netcdf") as ds:
        assert dict(ds.sizes) == {"setting": 7, "fixture": 2, "voltage": 3, "draw": 3,
                                  "order": 51}
        assert list(ds.fixture.values) == ["resistive-60W", "resistive-100W"]
        # 90 deg leading-edge cut of a resistor: PF = 1/sqrt(2) (closed form, REFERENCES
        # "closed forms"); exact to rounding whatever the voltage and the draw
        np.testing.assert_allclose(ds.pf.sel(setting=90.0).values, 1 / math.sqrt(2),
                                   rtol=1e-12)
        assert ds.setting.attrs["units"] == "deg"
        # 0 deg conduction: the lamp is off; the ratios are NaN and the case says why
        off = ds.sel(setting=0.0)
        assert np.all(off.flags.values == "no-current")
        assert np.all(np.isnan(off.thd_i.values)) and np.all(off.p_w.values == 0)
        on = ds.sel(setting=slice(1.0, None))
        assert np.all(on.flags.values == "") and np.all(np.isfinite(on.thd_i.values))
    assert "7 cases carry solver flags" not in r.stdout and "cases carry solver flags" in r.stdout


def test_knob_settings_and_dimmer_choice(tmp_path):
    out = tmp_path / "k.nc"
    r = _run("sweep", "--model", "resistive", "--power-w", "60", "--ideal", "--setting-axis", "knob",
             "--settings", "0.5", "-o", str(out))
    assert r.exit_code == 2 and "conduction-angle" in r.stderr and not out.exists()
    r = _run("sweep", "--model", "resistive", "--power-w", "60", "--ideal", "--dimmer",
             "none", "--settings", "30:180:6", "-o", str(out))
    assert r.exit_code == 0, r.output
    assert "(1 distinct)" in r.stdout  # no dimmer: one circuit whatever the setting


@pytest.mark.parametrize("args,match", [
    (["--settings", "0:180:0"], "empty"),
    (["--settings", ""], "empty"),
    (["--settings", "10:200:3"], "outside 0..180"),
    (["--voltages", "230,abc"], "not a number"),
    (["--power-w", "60,100"], "one per --model"),
    (["--draws", "-3"], "draws"),
    (["--local-cluster", "0"], "local-cluster"),
    (["--local-cluster", "2", "--scheduler", "tcp://127.0.0.1:1"], "not both"),
])
def test_bad_options_are_one_line_exit_2(tmp_path, args, match):
    out = tmp_path / "s.nc"
    base = ["sweep", "--model", "resistive", "--power-w", "60", "--ideal", "-o", str(out)]
    err = _one_line_error(_run(*base, *args))
    assert match in err
    assert list(tmp_path.iterdir()) == []  # nothing written, no temporary left


def test_unknown_model_is_refused_by_click(tmp_path):
    r = _run("sweep", "--model", "halogen", "--power-w", "50", "-o", str(tmp_path / "s.nc"))
    assert r.exit_code == 2 and "halogen" in r.stderr


def test_missing_model_and_output_folder(tmp_path):
    assert "--model" in _one_line_error(_run("sweep", "-o", str(tmp_path / "s.nc")))
    err = _one_line_error(_run("sweep", "--model", "resistive", "--power-w", "60", "--ideal",
                               "-o", str(tmp_path / "nowhere" / "s.nc")))
    assert "does not exist" in err
    err = _one_line_error(_run("sweep", "--model", "resistive", "--power-w", "60", "--ideal",
                               "-o", str(tmp_path)))
    assert "is a folder" in err


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_read_only_output_folder(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o500)
    try:
        err = _one_line_error(_run("sweep", "--model", "resistive", "--power-w", "60",
                                   "--ideal", "-o", str(ro / "s.nc")))
        assert "not writable" in err
    finally:
        ro.chmod(0o700)


def test_unreachable_scheduler_exit_2_quickly(tmp_path):
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()  # a closed local port: nothing answers
    out = tmp_path / "s.nc"
    t0 = time.perf_counter()
    err = _one_line_error(_run("sweep", "--model", "resistive", "--power-w", "60", "--ideal",
                               "--scheduler", f"tcp://127.0.0.1:{port}", "--timeout", "2",
                               "-o", str(out)))
    assert time.perf_counter() - t0 < 15.0  # the connection timeout, not a hang
    assert f"127.0.0.1:{port}" in err and "could not connect" in err
    assert list(tmp_path.iterdir()) == []


def test_portfolio_bad_file_and_mixing(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[supply]\nsystem = 'four-phase'\n")
    out = tmp_path / "p.nc"
    err = _one_line_error(_run("sweep", "--installation", str(bad), "-o", str(out)))
    assert "bad.toml" in err
    err = _one_line_error(_run("sweep", "--installation", str(bad), "--model", "resistive",
                               "-o", str(out)))
    assert "leave out --model" in err
    assert not out.exists()
    err = _one_line_error(_run("sweep", "--installation", str(tmp_path / "none.toml"),
                               "-o", str(out)))
    assert "none.toml" in err


def test_portfolio_names_a_missing_neutral_and_exits_1_when_a_building_fails(tmp_path):
    # 60 x 100 W filament lamps on a line: 6000 W / 230 V = 26 A on a 16 A breaker (Ohm's
    # law; the default breaker of a circuit): the breaker-load check fails, so the portfolio
    # exits 1 as assess does. The single-phase building's service has no neutral sum
    # (documented in pqcalc.sweep.portfolio): said in words, never "nan".
    from .test_sweep import _building

    a = _building(tmp_path / "north.toml", 60)
    b = _building(tmp_path / "south.toml", 4, "single-phase")
    r = _run("sweep", "--installation", str(a), str(b), "-o", str(tmp_path / "p.nc"))
    assert r.exit_code == 1, r.output
    assert "nan" not in r.output.lower()
    assert "south: 4 lamps" in r.output and "no neutral at the service" in r.output
    assert "north: 180 lamps" in r.output and "FAIL" in r.output
    r = _run("sweep", "--installation", str(b), "-o", str(tmp_path / "q.nc"))
    assert r.exit_code == 0, r.output
