"""Exports: JSON, CSV tables, the xarray Dataset and netCDF.

The assessment is of a capture-only installation (the demo captures, invented data), so the
test needs no circuit solver. Checks are against closed forms (Parseval's theorem; the
phasor sum of a balanced three-phase set), against the standard library's csv/json/zipfile
readers and against xarray's own reader.
"""

from __future__ import annotations

import csv
import json
import os
import shutil
import zipfile
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from pqcalc.errors import InputError
from pqcalc.installation import assess, export, load_installation
from pqcalc.io import export as io_export

DEMO = Path(__file__).resolve().parents[1] / "demo_installations"

#: Three identical circuits of the same capture on L1, L2, L3 (a balanced set), a second
#: panel with one circuit, a feeder and a transformer; two scenarios.
SITE = """\
[project]
name = "Export test building"
site = "Test Street 1"
engineer = "T. Tester"
date = "2026-12-01"

[supply]
system = "three-phase-wye"
voltage_ln_v = 230
frequency_hz = 50
[supply.transformer]
kva = 100
impedance_pct = 4.0
x_over_r = 3.0

[analysis]
scenarios = ["full output", "evening"]
supply_interaction = false

[fixtures.dl-full]
capture = "downlight_full.csv"
power_w = 9
description = "9 W downlight, full output"

[fixtures.dl-dim]
capture = "downlight_dimmed.csv"
power_w = 9

[[feeders]]
id = "F1"
r_ohm = 0.03
l_h = 2e-5

[[panels]]
id = "DB-1"
feeder = "F1"
neutral_ampacity_a = 25

[[panels.circuits]]
id = "c1"
line = "L1"
dimmer = "leading-edge"
conduction_deg = [180, 90]
fixtures = [{type = "dl-full", count = 20}]

[[panels.circuits]]
id = "c2"
line = "L2"
fixtures = [{type = "dl-full", count = 20}]

[[panels.circuits]]
id = "c3"
line = "L3"
fixtures = [{type = "dl-full", count = 20}]

[[panels]]
id = "DB-2"

[[panels.circuits]]
id = "c4"
line = "L1"
fixtures = [{type = "dl-dim", count = 30}]
"""


def make_site(folder: Path) -> Path:
    for f in ("downlight_full.csv", "downlight_dimmed.csv"):
        shutil.copy(DEMO / f, folder)
    p = folder / "site.toml"
    p.write_text(SITE)
    return p


@pytest.fixture(scope="module")
def assessment(tmp_path_factory):
    return assess(load_installation(make_site(tmp_path_factory.mktemp("site"))))


@pytest.fixture(scope="module")
def ds(assessment):
    return export.to_dataset(assessment)


# ---------------------------------------------------------------------------- Dataset
def test_dataset_has_the_named_dimensions_and_units(ds, assessment):
    assert {"scenario", "circuit", "conductor", "order"} <= set(ds.dims)
    assert list(ds["scenario"].values) == ["full output", "evening"]
    assert list(ds["circuit"].values) == ["c1", "c2", "c3", "c4"]
    assert list(ds["conductor"].values) == ["L1", "L2", "L3", "N"]
    assert list(ds["node"].values) == ["DB-1", "DB-2", "F1", "service"]
    assert ds.sizes["order"] == 51
    for name, v in ds.data_vars.items():
        assert "units" in v.attrs, name
    assert ds["i_rms_a"].attrs["units"] == "A"
    assert ds["thd_v"].attrs["units"] == "1"
    assert ds["circuit_i_h_a"].dims == ("scenario", "circuit", "order")
    assert ds["i_h_a"].dims == ("scenario", "node", "conductor", "order")
    assert ds.attrs["caution"] == assessment.caution


def test_dataset_values_are_the_assessment_values(ds, assessment):
    # the export copies, it does not recompute: compare with the named results directly
    for i, s in enumerate(assessment.scenarios):
        for c in s.circuits:
            assert ds["circuit_i_rms_a"].sel(scenario=s.name, circuit=c.id) == c.i_rms_a
            assert ds["circuit_thd_i"].sel(scenario=s.name, circuit=c.id) == c.thd_i
        p = s.panels[0]
        assert ds["i_rms_a"].isel(scenario=i).sel(node=p.id, conductor="N") == p.neutral.i_rms_a
        assert ds["thd_v"].isel(scenario=i).sel(node=p.id, conductor="L2") == p.lines["L2"].thd_v


def test_spectra_obey_parseval(ds):
    # Parseval's theorem (closed form): I_rms^2 = sum over all orders of I_h^2. The export
    # keeps orders 0..50, so the sum can only fall short, never exceed (round-off 1e-9).
    # For the full-output capture (c1..c3) the content above h50 is under 1 % of I_rms^2
    # (measured on the demo record: 0.2 %), hence rtol 1 %; the dimmed capture (c4) has
    # steep edges whose energy above h50 is large, so only the bound is checked there.
    ih = ds["circuit_i_h_a"]
    lhs = ds["circuit_i_rms_a"] ** 2
    rhs = (ih**2).sum("order")
    assert np.all(rhs <= lhs * (1 + 1e-9))
    full = ["c1", "c2", "c3"]
    np.testing.assert_allclose(rhs.sel(circuit=full), lhs.sel(circuit=full), rtol=1e-2)


def test_balanced_set_cancels_non_triplens_in_the_neutral(ds):
    # Balanced three-phase set (closed form, phasor sum): in the neutral, orders 3k add to
    # 3 times the line's magnitude; the others sum to zero. The three circuits of DB-1 are
    # one capture on L1, L2, L3, shifted by whole samples (exact to round-off: 1e-9 of I1).
    n = ds["i_h_a"].sel(scenario="evening", node="DB-1", conductor="N")
    line = ds["i_h_a"].sel(scenario="evening", node="DB-1", conductor="L1")
    h = ds["order"].values
    trip = (h % 3 == 0) & (h > 0)
    i1 = float(line.sel(order=1))
    np.testing.assert_allclose(n.values[trip], 3 * line.values[trip], rtol=1e-9, atol=1e-9 * i1)
    np.testing.assert_allclose(n.values[~trip & (h > 0)], 0.0, atol=1e-9 * i1)


def test_quantities_without_meaning_for_the_neutral_are_nan_and_said_so(ds):
    assert np.isnan(ds["pf"].sel(conductor="N")).all()
    assert "NaN" in ds["pf"].attrs["note"]
    assert np.isfinite(ds["i_rms_a"].sel(node="DB-1", conductor="N")).all()


# ----------------------------------------------------------------------------- netCDF
def test_netcdf_round_trips(assessment, ds, tmp_path):
    p = export.to_netcdf(assessment, tmp_path / "site.nc")
    # xarray's own reader (general reference library) gives back the identical Dataset
    with xr.open_dataset(p, engine="h5netcdf") as back:
        xr.testing.assert_identical(back.load(), ds)
    with xr.open_dataset(p) as back:  # the default engine choice reads it too
        assert back["i_rms_a"].attrs["units"] == "A"
    assert [x.name for x in tmp_path.iterdir()] == ["site.nc"]  # no temporary file left


def test_netcdf_into_a_missing_folder_is_one_clear_error(assessment, tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        export.to_netcdf(assessment, tmp_path / "nope" / "site.nc")


# ------------------------------------------------------------------------------- JSON
def test_json_is_strict_and_carries_version_spectra_and_caution(assessment):
    def no_nan(x):
        raise AssertionError(f"non-finite number {x} in the JSON")

    d = json.loads(export.to_json(assessment), parse_constant=no_nan)
    assert d["pqcalc_version"]
    assert d["caution"] == assessment.caution
    assert [s["scenario"] for s in d["spectra_i_h_a"]] == ["full output", "evening"]
    c1 = d["spectra_i_h_a"][0]["circuits"]["c1"]
    assert len(c1) == 51
    assert c1[1] == pytest.approx(assessment.scenarios[0].circuits[0].i1_a, rel=1e-12)
    assert set(d["spectra_i_h_a"][0]["nodes"]["DB-1"]) == {"L1", "L2", "L3", "N"}


# -------------------------------------------------------------------------------- CSV
def _read(path: Path) -> list[dict]:
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def test_csv_folder_tables(assessment, ds, tmp_path):
    out = export.to_csv(assessment, tmp_path / "tables")
    assert sorted(x.name for x in out.iterdir()) == sorted(export.CSV_TABLES)
    circ = _read(out / "circuits.csv")
    assert len(circ) == 2 * 4  # scenarios x circuits
    r = next(x for x in circ if x["scenario"] == "evening" and x["circuit"] == "c1")
    assert float(r["i_rms_a"]) == float(ds["circuit_i_rms_a"].sel(scenario="evening",
                                                                  circuit="c1"))
    assert float(r["conduction_deg"]) == 90.0
    # percent at the edge: thd_i_pct = 100 x the fraction
    assert float(r["thd_i_pct"]) == pytest.approx(
        100 * float(ds["circuit_thd_i"].sel(scenario="evening", circuit="c1")), rel=1e-12)
    nodes = _read(out / "nodes.csv")
    n = next(x for x in nodes if x["node"] == "DB-1" and x["conductor"] == "N"
             and x["scenario"] == "full output")
    assert n["pf"] == ""  # not defined for the neutral: an empty cell, never "nan"
    for t in export.CSV_TABLES:  # no non-finite number is ever written
        for row in _read(out / t):
            assert not {"nan", "inf", "-inf"} & {v.lower() for v in row.values()}, t


def test_csv_order_rows_count(assessment):
    # 2 scenarios; nodes DB-1, DB-2, F1, service, each with 3 lines + N; 51 orders each
    assert len(export.order_rows(assessment)) == 2 * 4 * 4 * 51


def test_csv_zip_holds_the_same_tables(assessment, tmp_path):
    folder = export.to_csv(assessment, tmp_path / "tables")
    z = export.to_csv(assessment, tmp_path / "tables.zip")
    with zipfile.ZipFile(z) as zf:
        assert sorted(zf.namelist()) == sorted(export.CSV_TABLES)
        for name in export.CSV_TABLES:
            assert zf.read(name).decode() == (folder / name).read_text()


def test_csv_replaces_an_earlier_export_but_not_a_foreign_folder(assessment, tmp_path):
    out = tmp_path / "tables"
    export.to_csv(assessment, out)
    export.to_csv(assessment, out)  # again: replaced in place
    assert sorted(x.name for x in tmp_path.iterdir()) == ["tables"]
    (out / "mine.txt").write_text("keep me")
    with pytest.raises(InputError, match="other files"):
        export.to_csv(assessment, out)
    assert (out / "mine.txt").read_text() == "keep me"


def test_csv_failure_leaves_nothing_behind(assessment, tmp_path, monkeypatch):
    calls = []

    def boom(src, dst):
        calls.append((src, dst))
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(export.os, "replace", boom)
    # a failed write is an OSError or, through the atomic writer, one named InputError
    with pytest.raises((OSError, InputError), match="disk full"):
        export.to_csv(assessment, tmp_path / "tables")
    with pytest.raises((OSError, InputError), match="disk full"):
        export.to_netcdf(assessment, tmp_path / "site.nc")
    with pytest.raises((OSError, InputError), match="disk full"):
        io_export.write_bytes_atomic(tmp_path / "x.json", b"{}")
    assert calls and list(tmp_path.iterdir()) == []


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="a read-only folder needs POSIX permissions and a non-root user")
def test_read_only_folder_is_refused(assessment, tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o500)
    try:
        with pytest.raises(InputError, match="not writable"):
            export.to_csv(assessment, ro / "tables")
        assert list(ro.iterdir()) == []
    finally:
        ro.chmod(0o700)


def test_output_files_get_ordinary_permissions(assessment, tmp_path):
    # a temporary file is private (0600); the renamed output is 0666 less the umask
    um = os.umask(0o022)
    try:
        p = io_export.write_bytes_atomic(tmp_path / "a.json", b"{}")
        assert p.stat().st_mode & 0o777 == 0o644
    finally:
        os.umask(um)
