"""Benchmark: the PDF submittal and the exports build in seconds, as a ratio to ``assess``.

Run on demand:  python -m pytest tests/benchmarks/bench_report.py -q -s

For each demo installation (and a capture-only installation of 60 circuits on 6 panels
built here from the demo captures), times ``assess`` and then, on that assessment, the PDF
(:func:`pqcalc.report.report_pdf_bytes`, lineup included), the JSON, the CSV tables and the
netCDF file, and prints each time and its ratio to the ``assess`` time of the same
installation in the same run. Target: the report of the larger demo in a few seconds.
A demo whose circuit models cannot be solved in this checkout is reported and skipped.
"""

from __future__ import annotations

import shutil
import time
from pathlib import Path

import pytest

from pqcalc.errors import ConvergenceError, InputError
from pqcalc.installation import assess, evaluate_lineup, export, load_installation
from pqcalc.report import report_pdf_bytes

DEMO = Path(__file__).resolve().parents[2] / "demo_installations"


def capture_site(folder: Path, panels: int = 6, per_panel: int = 10) -> Path:
    for f in ("downlight_full.csv", "downlight_dimmed.csv"):
        shutil.copy(DEMO / f, folder)
    lines = ['[project]', 'name = "Benchmark block (invented)"', "[supply]",
             'system = "three-phase-wye"', "voltage_ln_v = 230", "frequency_hz = 50",
             "[supply.transformer]", "kva = 250", "impedance_pct = 4.5", "x_over_r = 4",
             "[fixtures.full]", 'capture = "downlight_full.csv"', "power_w = 9",
             "[fixtures.dim]", 'capture = "downlight_dimmed.csv"', "power_w = 9"]
    for p in range(panels):
        lines += ["[[panels]]", f'id = "DB-{p + 1}"']
        for k in range(per_panel):
            lines += ["[[panels.circuits]]", f'id = "C{p + 1}-{k + 1}"',
                      f'line = "L{k % 3 + 1}"',
                      f'fixtures = [{{type = "{"full" if k % 2 else "dim"}", count = 12}}]']
    path = folder / "block.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


def _t(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def _bench(name: str, path: Path, out: Path) -> None:
    inst = load_installation(path)
    try:
        t_assess, a = _t(lambda: assess(inst))
    except (ConvergenceError, InputError, TypeError, AttributeError) as e:
        print(f"\n{name}: assess failed in this checkout ({type(e).__name__}: {e}); skipped")
        return
    t_lineup, lu = _t(lambda: evaluate_lineup(inst))
    notes: list[str] = []
    t_pdf, pdf = _t(lambda: report_pdf_bytes(a, lu, notes))
    t_json, _ = _t(lambda: export.to_json(a, lu))
    t_csv, _ = _t(lambda: export.to_csv(a, out / f"{name}-tables"))
    t_nc, _ = _t(lambda: export.to_netcdf(a, out / f"{name}.nc"))
    print(f"\n{name}: {len(inst.circuits)} circuits, {inst.n_scenarios} scenarios; "
          f"assess {t_assess:.2f} s")
    for label, t in (("lineup", t_lineup), ("pdf", t_pdf), ("json", t_json), ("csv", t_csv),
                     ("netcdf", t_nc)):
        print(f"  {label:<7} {t:6.2f} s   ratio to assess {t / t_assess:6.2f}")
    print(f"  pdf size {len(pdf) / 1e3:.0f} kB")


@pytest.mark.parametrize("demo", ["harbour_school.toml", "cedar_row_offices.toml"])
def test_demo_report_time(demo, tmp_path):
    _bench(demo.removesuffix(".toml"), DEMO / demo, tmp_path)


def test_capture_block_report_time(tmp_path):
    _bench("capture-block", capture_site(tmp_path), tmp_path)
