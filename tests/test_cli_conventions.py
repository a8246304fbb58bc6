"""The command line's conventions, the same for every command.

- exit codes: 0 every check passes, 1 findings, 2 bad input, 3 the tool failed (one line
  on stderr naming what failed and the traceback file, never a printed traceback);
- ``python -m pqcalc`` and ``--version`` (the version read from the package metadata,
  declared once in pyproject.toml);
- bare ``pqcalc`` prints its help and exits 0;
- ``-`` is standard output for every writer and standard input for a CSV capture;
- deprecated option spellings still work, with a warning;
- every netCDF output carries ``Conventions`` and ``units`` / ``long_name`` on every
  variable and coordinate (CF-1.10, section 2.6.1 for ``Conventions``, 3.1 for ``units``,
  3.2 for ``long_name``; from memory).

Captures are sums of sines written to CSV (see tests/test_cli_comply.py), so the verdicts
are known in closed form from IEC 61000-3-2, Table 2.
"""

from __future__ import annotations

import importlib.metadata
import io
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import click
import numpy as np
import pytest
import xarray as xr
from click.testing import CliRunner

from pqcalc.cli import main
from pqcalc.cli._common import EXIT_CODES
from pqcalc.errors import ConvergenceError, InputError

from .test_cli_comply import write_capture

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_installations"
ENV = {**os.environ, "MPLBACKEND": "Agg"}


def run(*args, input=None):
    return CliRunner().invoke(main, [str(a) for a in args], input=input)


def one_line(r, code):
    """The single stderr line of a failed run with exit ``code``; nothing else printed."""
    assert r.exit_code == code, (r.exit_code, r.output)
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: "), r.stderr
    assert "Traceback" not in r.output
    return lines[0]


@pytest.fixture
def private_tmp(tmp_path, monkeypatch):
    """The temporary folder where a traceback file goes, private to the test."""
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))
    return tmp_path


# ------------------------------------------------------------------------ exit codes
def test_the_four_exit_codes_are_declared_once():
    assert sorted(EXIT_CODES) == [0, 1, 2, 3]


def test_exit_0_every_check_passes(tmp_path):
    # 30 W at 230 V, h3 20 %: lambda = 1/sqrt(1.04), h3 limit 30 x 0.981 = 29.4 % > 20 %
    # (IEC 61000-3-2:2018, Table 2) -> pass
    cap = write_capture(tmp_path / "pass.csv", 230.0, 30 / 230, {3: 0.20})
    r = run("comply", cap)
    assert r.exit_code == 0, r.output
    assert "1 of 1 pass" in r.stdout and r.stderr == ""


def test_exit_1_findings(tmp_path):
    # h3 32 %: lambda = 1/sqrt(1.1024) = 0.952, limit 28.6 % < 32 % (Table 2) -> a finding
    cap = write_capture(tmp_path / "fail.csv", 230.0, 30 / 230, {3: 0.32})
    r = run("comply", cap)
    assert r.exit_code == 1
    assert "FAIL" in r.stdout and "failing: fail" in r.stdout


def test_exit_2_bad_input(tmp_path):
    line = one_line(run("analyze", tmp_path / "missing.csv"), 2)
    assert "missing.csv" in line
    # a usage mistake is bad input too
    line = one_line(run("analyze", "--max-order", "99", tmp_path / "x.csv"), 2)
    assert "--max-order" in line


def test_exit_3_internal_error_names_the_traceback_file(tmp_path, private_tmp, monkeypatch):
    import pqcalc.cli.analyze as cli_analyze

    def broken(*a, **k):
        raise RuntimeError("boom in the analysis")

    monkeypatch.setattr(cli_analyze, "analyze_waveform", broken)
    cap = write_capture(tmp_path / "c.csv", 230.0, 0.1, {3: 0.1})
    line = one_line(run("analyze", cap), 3)
    path = private_tmp / f"pqcalc-traceback-{os.getpid()}.txt"
    assert line == (f"error: pqcalc analyze: internal error: RuntimeError: boom in the "
                    f"analysis; the full traceback is in {path}")
    text = path.read_text()
    assert "Traceback (most recent call last)" in text and "boom in the analysis" in text
    assert "in broken" in text  # the frame that raised


def test_exit_3_solve_that_could_not_be_done(private_tmp, monkeypatch):
    import pqcalc.cli.lamp as cli_lamp

    def no_steady_state(*a, **k):
        raise ConvergenceError("no periodic steady state after 4 cycle periods")

    monkeypatch.setattr(cli_lamp, "solve_circuit", no_steady_state)
    line = one_line(run("lamp", "--model", "resistive", "--power-w", 60), 3)
    assert line.startswith("error: pqcalc lamp: a solve could not be done: no periodic "
                           "steady state after 4 cycle periods; the full traceback is in ")
    assert (private_tmp / f"pqcalc-traceback-{os.getpid()}.txt").is_file()


def test_exit_3_writes_nothing_to_standard_output(private_tmp, monkeypatch):
    # a writer to "-" builds its output whole first: a failure sends nothing
    import pqcalc.cli.lamp as cli_lamp

    def broken(*a, **k):
        raise RuntimeError("drawing failed")

    monkeypatch.setattr(cli_lamp, "save_figure_to", broken)
    r = run("lamp", "--model", "resistive", "--power-w", 60, "--figure", "waveform",
            "-o", "-", "--format", "svg")
    one_line(r, 3)
    assert r.stdout == ""


# ---------------------------------------------------------------- entry points, help
def _pyproject_version() -> str:
    try:
        import tomllib
    except ImportError:  # Python 3.10
        import tomli as tomllib
    with open(ROOT / "pyproject.toml", "rb") as fh:
        return tomllib.load(fh)["project"]["version"]


def test_python_m_pqcalc_version_is_the_package_metadata():
    r = subprocess.run([sys.executable, "-m", "pqcalc", "--version"], capture_output=True,
                       text=True, env=ENV, timeout=120)
    assert r.returncode == 0, r.stderr
    meta = importlib.metadata.version("pqcalc")
    assert r.stdout.strip() == f"pqcalc, version {meta}"
    import pqcalc

    assert pqcalc.__version__ == meta
    # pyproject.toml is the one place the version is written; an editable install reads
    # it when installed, so a mismatch means the install is stale (pip install -e .)
    assert meta == _pyproject_version()


def test_bare_pqcalc_prints_help_and_exits_0():
    r = run()
    assert r.exit_code == 0, r.output
    assert r.stdout.startswith("Usage: pqcalc")
    for cmd in ("assess", "comply", "lamp", "analyze", "plot", "report", "sweep"):
        assert f"\n  {cmd} " in r.stdout
    flat = " ".join(r.stdout.split())
    assert "Exit codes: 0 every check passes; 1 a check fails (findings); 2 bad input; 3 the " \
           "tool failed" in flat
    p = subprocess.run([sys.executable, "-m", "pqcalc"], capture_output=True, text=True,
                       env=ENV, timeout=120)
    assert p.returncode == 0 and p.stdout.startswith("Usage: pqcalc") and p.stderr == ""


def test_help_texts_state_exit_code_3():
    for cmd in ("assess", "comply", "report"):
        r = run(cmd, "--help")
        assert r.exit_code == 0 and "3 when the tool fails" in " ".join(r.stdout.split())


# ------------------------------------------------------------- standard input, output
def test_analyze_reads_csv_from_standard_input(tmp_path):
    cap = write_capture(tmp_path / "c.csv", 230.0, 0.2, {3: 0.3, 5: 0.1})
    from_file = json.loads(run("analyze", cap, "--json").stdout)
    r = run("analyze", "-", "--json", input=Path(cap).read_bytes())
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    assert d["source"] == "<stdin>" and d["label"] == "<stdin>"
    # the same samples give the same numbers, whichever way they came in
    for k in ("i_rms_a", "thd_i_pct", "pf", "frequency_hz"):
        assert d[k] == pytest.approx(from_file[k], rel=1e-12), k
    # closed form: THD = sqrt(0.3^2 + 0.1^2) for a capture of I1, 30 % h3 and 10 % h5
    assert d["thd_i_pct"] == pytest.approx(100 * np.hypot(0.3, 0.1), rel=1e-3)


def test_standard_input_errors_name_stdin_not_a_temporary_file():
    line = one_line(run("analyze", "-", input="a,b\n1,2\n"), 2)
    assert line.startswith("error: <stdin>") and "tmp" not in line
    line = one_line(run("analyze", "-", input=""), 2)
    assert "standard input is empty" in line


def test_analyze_windows_from_standard_input(tmp_path):
    cap = write_capture(tmp_path / "c.csv", 230.0, 0.2, {3: 0.3})
    r = run("analyze", "-", "--windows", "--summary-only", "--json",
            input=Path(cap).read_bytes())
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    assert d["source"] == "<stdin>" and d["summary"]["windows"] == 1  # 10 cycles at 50 Hz


def test_comply_capture_from_standard_input(tmp_path):
    cap = write_capture(tmp_path / "c.csv", 230.0, 30 / 230, {3: 0.32})
    r = run("comply", "-", "--json", input=Path(cap).read_bytes())
    assert r.exit_code == 1  # the Table 2 finding of test_exit_1_findings
    assert json.loads(r.stdout)["results"][0]["fixture"] == "stdin"
    assert "give - once" in one_line(run("comply", "-", "-", input="x"), 2)


def test_plot_png_to_standard_output(tmp_path):
    cap = write_capture(tmp_path / "c.csv", 230.0, 0.2, {3: 0.3})
    r = run("plot", "spectrum", cap, "-o", "-", "--format", "png")
    assert r.exit_code == 0, r.output
    assert r.stdout_bytes.startswith(b"\x89PNG\r\n\x1a\n")  # PNG signature (PNG spec, 5.2)
    assert r.stderr.strip() == "wrote standard output"
    assert "--format" in one_line(run("plot", "spectrum", cap, "-o", "-"), 2)
    assert "ends in .png" in one_line(
        run("plot", "spectrum", cap, "-o", tmp_path / "a.png", "--format", "svg"), 2)


def test_lamp_figure_and_waveform_to_standard_output():
    base = ("lamp", "--model", "resistive", "--power-w", 60)
    r = run(*base, "--figure", "waveform", "-o", "-", "--format", "svg")
    assert r.exit_code == 0, r.output
    assert r.stdout.lstrip().startswith("<?xml") and "</svg>" in r.stdout
    assert "resistive 60 W" in r.stderr  # the text summary moved to stderr
    r = run(*base, "--waveform-csv", "-")
    assert r.exit_code == 0, r.output
    rows = r.stdout.splitlines()
    assert rows[0] == "time_s,voltage_v,current_a,light"
    data = np.loadtxt(io.StringIO(r.stdout), delimiter=",", skiprows=1)
    # a 60 W resistive lamp at 230 V: I rms = 60 / 230 A (Ohm's law)
    assert np.sqrt(np.mean(data[:, 2] ** 2)) == pytest.approx(60 / 230, rel=1e-3)
    assert "both write standard output" in one_line(run(*base, "--waveform-csv", "-",
                                                        "--json"), 2)


def test_binary_output_is_refused_on_a_terminal(monkeypatch):
    from pqcalc.cli._common import refuse_binary_terminal

    class Tty(io.StringIO):
        def isatty(self):
            return True

    monkeypatch.setattr(sys, "stdout", Tty())
    with pytest.raises(InputError, match="terminal"):
        refuse_binary_terminal("-", "png")
    refuse_binary_terminal("-", "json")  # text is fine
    refuse_binary_terminal("out.png", "png")  # a file is fine


# -------------------------------------------------------------- report to stdout
@pytest.fixture(scope="module")
def site(tmp_path_factory):
    from .test_export import make_site

    return make_site(tmp_path_factory.mktemp("site"))


def test_report_json_to_standard_output(site, tmp_path):
    r = run("report", site, "-o", "-", "--format", "json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    r2 = run("report", site, "-o", tmp_path / "a.json")
    assert d == json.loads((tmp_path / "a.json").read_text())
    assert r.stderr.startswith("wrote standard output (json)")
    assert "--format" in one_line(run("report", site, "-o", "-"), 2)
    assert r2.exit_code == 0


def test_report_csv_to_standard_output(site, tmp_path):
    from pqcalc.cli.report import TABLES

    r = run("report", site, "-o", "-", "--format", "csv")
    assert r.exit_code == 0, r.output
    run("report", site, "-o", tmp_path / "tables")
    # every table in order, each after '# table: NAME' and followed by an empty line
    parts = r.stdout.split("# table: ")[1:]
    assert [p.split("\n", 1)[0] for p in parts] == list(TABLES)
    for p in parts:
        name, text = p.split("\n", 1)
        assert text == (tmp_path / "tables" / f"{name}.csv").read_text() + "\n"
    # one table: plain CSV, to stdout or to a .csv file
    r = run("report", site, "-o", "-", "--format", "csv", "--table", "circuits")
    assert r.stdout == (tmp_path / "tables" / "circuits.csv").read_text()
    r = run("report", site, "-o", tmp_path / "c.csv", "--table", "circuits")
    assert r.exit_code == 0, r.output
    assert (tmp_path / "c.csv").read_text() == (tmp_path / "tables" / "circuits.csv").read_text()
    assert "several tables" in one_line(run("report", site, "-o", tmp_path / "x.csv"), 2)
    assert not (tmp_path / "x.csv").exists()


# ------------------------------------------------------------------ netCDF metadata
def assert_cf_attributes(ds: xr.Dataset, where: str) -> None:
    assert ds.attrs.get("Conventions") == "CF-1.10", where
    names = list(ds.data_vars) + list(ds.coords)
    assert names, where
    for name in names:
        attrs = ds[name].attrs
        assert attrs.get("units"), f"{where}: {name} has no units"
        assert attrs.get("long_name"), f"{where}: {name} has no long_name"


def _open(data: bytes | Path) -> xr.Dataset:
    src = io.BytesIO(data) if isinstance(data, bytes) else data
    with xr.open_dataset(src, engine="h5netcdf") as ds:
        return ds.load()


def test_sweep_netcdf_carries_cf_attributes(tmp_path):
    out = tmp_path / "s.nc"
    r = run("sweep", "--model", "resistive", "--power-w", 60, "--ideal", "--settings",
            "90,180", "--draws", 1, "-o", out)
    assert r.exit_code == 0, r.output
    ds = _open(out)
    assert_cf_attributes(ds, "sweep")
    # standard output gives the same file, the summary going to stderr
    r = run("sweep", "--model", "resistive", "--power-w", 60, "--ideal", "--settings",
            "90,180", "--draws", 1, "-o", "-")
    assert r.exit_code == 0 and r.stderr.startswith("wrote standard output")
    back = _open(r.stdout_bytes)
    assert_cf_attributes(back, "sweep to stdout")
    # ideal resistive phase cut at 90 deg: PF = sqrt(1/2) (closed form, DEVELOPERS.md doctest)
    assert float(back.pf.sel(setting=90.0)[0, 0, 0]) == pytest.approx(np.sqrt(0.5), rel=1e-4)


def test_portfolio_netcdf_carries_cf_attributes(site, tmp_path):
    out = tmp_path / "p.nc"
    r = run("sweep", "--installation", site, "-o", out)
    assert r.exit_code == 0, r.output
    assert_cf_attributes(_open(out), "portfolio")


def test_report_netcdf_carries_cf_attributes(site, tmp_path):
    out = tmp_path / "a.nc"
    r = run("report", site, "-o", out)
    assert r.exit_code == 0, r.output
    assert_cf_attributes(_open(out), "report")
    r = run("report", site, "-o", "-", "--format", "netcdf")
    assert r.exit_code == 0, r.output
    ds = _open(r.stdout_bytes)
    assert_cf_attributes(ds, "report to stdout")
    assert ds.identical(_open(out))


# ---------------------------------------------------------- one name per idea
def test_renamed_options_keep_their_old_spelling_with_a_warning(tmp_path):
    cap = write_capture(tmp_path / "c.csv", 230.0, 0.2, {3: 0.3})
    new = json.loads(run("analyze", cap, "--frequency", 50, "--json").stdout)
    r = run("analyze", cap, "--nominal-frequency", 50, "--json")
    assert r.exit_code == 0 and json.loads(r.stdout) == new
    assert r.stderr.strip() == "warning: --nominal-frequency is deprecated; use --frequency"
    line = one_line(run("analyze", cap, "--nominal-frequency", 50, "--frequency", 50), 2)
    assert "--nominal-frequency and --frequency" in line
    r = run("comply", cap, "--nominal-voltage", 230, "--json")
    assert "use --voltage" in r.stderr
    assert json.loads(r.stdout) == json.loads(run("comply", cap, "--voltage", 230,
                                                  "--json").stdout)
    r = run("plot", "spectrum", cap, "-o", tmp_path / "a.svg", "--limits", "C")
    assert r.exit_code == 0 and "use --class" in r.stderr
    for cmd in ("analyze", "comply", "plot"):
        h = run(cmd, "--help").stdout
        assert "--nominal-" not in h and "--limits" not in h  # hidden


def test_no_idea_has_two_option_names():
    """Across every command, an option name has one meaning, and the ideas that were spelled
    two ways (nominal voltage, mains frequency, equipment class) have one name."""
    from pqcalc.cli._common import COMMANDS

    names: dict[str, set[str]] = {}
    for cmd in COMMANDS:
        c = main.get_command(None, cmd)
        for p in c.params:
            if not isinstance(p, click.Option) or p.hidden:
                continue
            for o in p.opts:
                names.setdefault(o, set()).add(cmd)
    assert "--nominal-voltage" not in names and "--nominal-frequency" not in names
    assert "--limits" not in names
    assert {"comply", "plot"} <= names["--class"]
    assert {"analyze", "comply", "plot", "lamp", "sweep"} <= names["--frequency"]
    assert {"comply", "lamp"} <= names["--voltage"]
