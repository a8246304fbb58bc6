"""Benchmark: assessing large installations costs per distinct case, not per lamp.

Run on demand:  python -m pytest tests/benchmarks/bench_installation.py -q -s

Builds an installation of 5,000 circuits (100,000 lamps) from 6 distinct circuit cases
(fixture mix x dimmer x setting; no triac dimmers, whose case depends on the lamp count),
assesses it, then the same installation with ten times the lamps per circuit and reports the
time ratio (target <= 1.3) and the absolute time (target well under 10 s). The solver's own
memo is cleared before each run so both runs solve their cases. Supply interaction
is off here: with it every panel line has its own distorted voltage and the distinct cases
multiply by panels x lines x iterations (reported separately on a smaller installation).
"""

from __future__ import annotations

import time
from pathlib import Path

from pqcalc.installation import assess, load_installation

KINDS = [
    ("resistive", 60.0, "trailing-edge", 120), ("bulk-cap", 9.0, "trailing-edge", 150),
    ("pfc", 40.0, "none", 180), ("dropper", 5.0, "none", 180),
    ("sine-follow", 10.0, "trailing-edge", 135), ("pwm-detect", 20.0, "trailing-edge", 90),
]


def build(path: Path, circuits: int, count: int, interaction: bool = False) -> Path:
    lines = ["[supply]", 'system = "three-phase-wye"', "voltage_ln_v = 230", "frequency_hz = 50",
             "[supply.transformer]", "kva = 2500", "impedance_pct = 6", "x_over_r = 6",
             "[analysis]", f"supply_interaction = {'true' if interaction else 'false'}"]
    for i, (m, p, _, _) in enumerate(KINDS):
        lines += [f"[fixtures.f{i}]", f'model = "{m}"', f"power_w = {p}"]
    per_panel = 50
    for k in range(circuits):
        if k % per_panel == 0:
            lines += ["[[panels]]", f'id = "P{k // per_panel}"']
        i = k % len(KINDS)
        m, p, dim, cond = KINDS[i]
        n = count
        lines += ["[[panels.circuits]]", f'id = "C{k}"', f'line = "{"L" + str(k % 3 + 1)}"',
                  "breaker_a = 400", 'breaker_curve = "D"', f'dimmer = "{dim}"']
        if dim != "none":
            lines.append(f"conduction_deg = {cond}")
        lines.append(f'fixtures = [{{type = "f{i}", count = {n}}}]')
    path.write_text("\n".join(lines) + "\n")
    return path


def _clear_solver_caches() -> None:
    """Forget the circuit solver's memoised solutions, so each run solves its cases."""
    import pqcalc.circuits.solve as solve

    for obj in vars(solve).values():
        clear = getattr(obj, "cache_clear", None)
        if callable(clear):
            clear()


def timed(p: Path) -> tuple[float, int, int]:
    inst = load_installation(p)
    _clear_solver_caches()
    t0 = time.perf_counter()
    a = assess(inst)
    return time.perf_counter() - t0, inst.n_lamps, a.solves


def test_cost_grows_with_distinct_cases_not_lamps(tmp_path):
    t1, lamps1, s1 = timed(build(tmp_path / "a.toml", 5000, 20))
    t10, lamps10, s10 = timed(build(tmp_path / "b.toml", 5000, 200))
    print(f"\n5000 circuits, {lamps1} lamps: {t1:.2f} s ({s1} distinct solves)")
    print(f"5000 circuits, {lamps10} lamps: {t10:.2f} s ({s10} distinct solves)")
    print(f"time ratio for {lamps10 / lamps1:.1f}x the lamps: {t10 / t1:.2f} (target <= 1.3)")
    ti, lampsi, si = timed(build(tmp_path / "c.toml", 300, 20, interaction=True))
    print(f"300 circuits with supply interaction: {ti:.2f} s ({si} distinct solves)")
    assert s1 == s10
