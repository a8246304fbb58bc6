"""``pqcalc report``: every format, and bad input as one line with exit code 2 and no file.

Capture-only installation (demo captures, invented data); see tests/test_export.py.
"""

from __future__ import annotations

import json
import os

import pytest
import xarray as xr
from click.testing import CliRunner

from pqcalc.cli import main
from pqcalc.installation import export

from .test_export import make_site


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    return make_site(tmp_path_factory.mktemp("site"))


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def one_line_error(r, code=2):
    assert r.exit_code == code, r.output
    lines = [ln for ln in r.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: "), r.output
    assert "Traceback" not in r.output
    return lines[0]


def test_json_and_netcdf_and_csv(site, tmp_path):
    r = run("report", site, "-o", tmp_path / "a.json")
    assert r.exit_code == 0, r.output  # every check passes or warns: exit 0
    d = json.loads((tmp_path / "a.json").read_text())
    assert d["verdict"] == "pass" and "lineup" in d and d["caution"]
    r = run("report", site, "--format", "netcdf", "-o", tmp_path / "a.nc")
    assert r.exit_code == 0, r.output
    with xr.open_dataset(tmp_path / "a.nc") as ds:
        assert {"scenario", "circuit", "conductor", "order"} <= set(ds.dims)
    r = run("report", site, "-o", tmp_path / "tables")
    assert r.exit_code == 0, r.output
    assert sorted(p.name for p in (tmp_path / "tables").iterdir()) == sorted(export.CSV_TABLES)
    r = run("report", site, "--format", "csv", "-o", tmp_path / "tables.zip")
    assert r.exit_code == 0 and (tmp_path / "tables.zip").is_file()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.json", "a.nc", "tables",
                                                          "tables.zip"]


def test_pdf(site, tmp_path):
    r = run("report", site, "-o", tmp_path / "r.pdf")
    assert r.exit_code == 0, r.output
    assert "wrote" in r.output
    assert (tmp_path / "r.pdf").read_bytes()[:5] == b"%PDF-"
    assert [p.name for p in tmp_path.iterdir()] == ["r.pdf"]


@pytest.mark.parametrize("args, expect", [
    (["--format", "docx", "-o", "{d}/r.docx"], "--format: expected one of pdf, json"),
    (["-o", "{d}/r.xlsx"], "cannot tell the format"),
    (["-o", "{d}/missing/r.pdf"], "does not exist"),
    (["--format", "pdf", "-o", "{d}/r.json"], "ending in .pdf"),
    (["--format", "csv", "-o", "{d}/r.json"], "for csv give a folder"),
])
def test_bad_output_is_one_line_exit_2_and_leaves_nothing(site, tmp_path, args, expect):
    r = run("report", site, *[a.format(d=tmp_path) for a in args])
    assert expect in one_line_error(r)
    assert list(tmp_path.iterdir()) == []


def test_read_only_folder_is_one_line_exit_2(site, tmp_path, monkeypatch):
    # simulated with os.access (the suite may run as root, for whom chmod does not bite)
    ro = tmp_path / "ro"
    ro.mkdir()
    real = os.access
    monkeypatch.setattr(export.os, "access",
                        lambda p, mode, **kw: False if str(p) == str(ro) else real(p, mode))
    r = run("report", site, "-o", ro / "r.pdf")
    assert "not writable" in one_line_error(r)
    assert list(ro.iterdir()) == []


def test_bad_installation_is_one_line_exit_2(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text("[supply]\nsystem = 'three-phase-wye'\n")
    r = run("report", p, "-o", tmp_path / "r.json")
    one_line_error(r)
    assert sorted(x.name for x in tmp_path.iterdir()) == ["bad.toml"]
    r = run("report", tmp_path / "none.toml", "-o", tmp_path / "r.json")
    one_line_error(r)


def test_failure_while_writing_leaves_no_file(site, tmp_path, monkeypatch):
    def boom(src, dst):
        raise PermissionError(13, "Permission denied (simulated)", str(dst))

    monkeypatch.setattr(export.os, "replace", boom)
    r = run("report", site, "-o", tmp_path / "a.json")
    assert r.exit_code == 2 and "Permission denied" in r.output
    assert list(tmp_path.iterdir()) == []
