"""Benchmark: one periodic steady-state solve against ngspice on the reference cases.

Run on demand:  python -m pytest tests/benchmarks/bench_solver.py -q -s
           or:  python tests/benchmarks/bench_solver.py [case-id-substring]

For every reference case of ``tests/ngspice/harness.py`` (resistive, bulk capacitor with a
resistive or a constant-power load, dropper; 230 V 50 Hz and 120 V 60 Hz; leading and
trailing edge; 180..45 deg), measured in the same run and one after the other (no parallel
jobs, so the timings do not compete):

- ngspice, default tolerances, a 20-cycle transient run (``ngspice -b``, process start and
  the data file included: what one pays to get a waveform from it);
- ngspice, default tolerances, the minimal run of the harness (2 to 8 cycles, as many as the
  case needs to settle);
- pqcalc's ``solve_circuit(..., extras=False)``, the very call of
  ``tests/test_circuits_ngspice.py``, with every solver cache cleared before each repetition
  (4096 samples per cycle of output).

Timings are the best of ``REPEATS`` runs each (the least disturbed by other jobs). Reported:
the median over the cases of t_ngspice / t_pqcalc for both ngspice runs (targets: >= 100 for
the 20-cycle run, >= 10 for the minimal one), and the accuracy of pqcalc against the
harness's reference run (reltol 1e-4, 2 us step): the largest harmonic error 1..40 in % of
the fundamental and the Irms error in %, per case and as median and maximum (acceptance:
1 %).

``PQCALC_BENCH_CASES=<substring>`` restricts the cases (e.g. ``bulk-cap``).

The run asserts only that every case solved to a one-cycle periodic state with finite
values; the ratios are reported, not asserted (set ``PQCALC_BENCH_STRICT=1`` to fail when a
median target is missed).
"""

from __future__ import annotations

import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

if __name__ == "__main__":
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import numpy as np  # noqa: E402
import pytest  # noqa: E402

from pqcalc.circuits import solve as _solve_module  # noqa: E402
from pqcalc.spectrum import spectrum  # noqa: E402
from pqcalc.waveform import Waveform  # noqa: E402
from tests.ngspice.harness import Case, all_cases, netlist, run  # noqa: E402
from tests.test_circuits_ngspice import _pqcalc  # noqa: E402  (the test's very solve)

REPEATS = 3
LONG_CYCLES = 20
TARGET_LONG, TARGET_MINIMAL = 100.0, 10.0


def _clear_caches() -> None:
    """Forget every memoised solve, so each repetition solves from scratch."""
    for obj in vars(_solve_module).values():
        clear = getattr(obj, "cache_clear", None)
        if callable(clear):
            clear()


def _timed_netlist(case: Case, cycles: int | None) -> str:
    """The harness's netlist at default tolerances, run for ``cycles`` (None: the harness's
    own minimal number), the output written to a scratch file."""
    text = netlist(case, "out.txt")
    text = re.sub(r"^\.options reltol=1e-4.*\n", "", text, flags=re.M)
    if cycles is not None:
        T = 1.0 / case.f_hz
        step = re.search(r"^tran (\S+) ", text, flags=re.M).group(1)
        text = re.sub(r"^tran .*$", f"tran {step} {cycles * T:.9g} {(cycles - 2) * T:.9g} "
                      f"{step}", text, flags=re.M)
    return text


def _ngspice_s(text: str) -> float:
    with tempfile.TemporaryDirectory() as d:
        cir = os.path.join(d, "case.cir")
        with open(cir, "w") as fh:
            fh.write(text)
        best = np.inf
        for _ in range(REPEATS):
            t0 = time.perf_counter()
            r = subprocess.run(["ngspice", "-b", cir], capture_output=True, text=True,
                               timeout=300, cwd=d)
            dt = time.perf_counter() - t0
            if not os.path.exists(os.path.join(d, "out.txt")) or \
                    "Timestep too small" in r.stdout + r.stderr:
                raise RuntimeError(f"ngspice did not finish the run: {r.stdout[-400:]} "
                                   f"{r.stderr[-400:]}")
            os.unlink(os.path.join(d, "out.txt"))
            best = min(best, dt)
        return best


def _pqcalc_s(case: Case) -> tuple[float, object]:
    best, sol = np.inf, None
    for _ in range(REPEATS):
        _clear_caches()
        t0 = time.perf_counter()
        sol = _pqcalc(case)
        best = min(best, time.perf_counter() - t0)
    return best, sol


def _accuracy(case: Case, sol, ref) -> tuple[float, float]:
    n = ref["last"][0].size
    w_ref = Waveform(ref["last"][0], n * case.f_hz, case.f_hz, ref["last"][1], 1)
    s_ref, s = spectrum(w_ref, 40), spectrum(sol.waveform, 40)
    i1 = s_ref.i1_a
    harm = float(np.max(np.abs(s.i_h_a[1:41] - s_ref.i_h_a[1:41])) / i1)
    irms = float(abs(sol.waveform.i_rms_a / w_ref.i_rms_a - 1))
    return harm, irms


def bench(selection: str = "") -> dict:
    cases = [c for c in all_cases() if selection in c.id]
    rows = []
    for case in cases:
        t_long = _ngspice_s(_timed_netlist(case, LONG_CYCLES))
        t_min = _ngspice_s(_timed_netlist(case, None))
        t_pq, sol = _pqcalc_s(case)
        assert sol.converged and sol.period_cycles == 1, case.id
        assert np.all(np.isfinite(sol.waveform.current_a)), case.id
        harm, irms = _accuracy(case, sol, run(case))
        rows.append((case.id, t_long, t_min, t_pq, harm, irms))
        print(f"  {case.id:<38} {1e3 * t_long:>8.1f} {1e3 * t_min:>8.1f} {1e3 * t_pq:>8.2f} "
              f"{t_long / t_pq:>7.0f} {t_min / t_pq:>7.1f} {100 * harm:>6.2f} "
              f"{100 * irms:>6.2f}", flush=True)
    r_long = statistics.median(r[1] / r[3] for r in rows)
    r_min = statistics.median(r[2] / r[3] for r in rows)
    out = {
        "cases": len(rows),
        "median_ngspice_long_s": statistics.median(r[1] for r in rows),
        "median_ngspice_minimal_s": statistics.median(r[2] for r in rows),
        "median_pqcalc_s": statistics.median(r[3] for r in rows),
        "median_ratio_long": r_long,
        "median_ratio_minimal": r_min,
        "median_harmonic_error": statistics.median(r[4] for r in rows),
        "max_harmonic_error": max(r[4] for r in rows),
        "median_irms_error": statistics.median(r[5] for r in rows),
        "max_irms_error": max(r[5] for r in rows),
        "outside_1pct": [r[0] for r in rows if r[4] >= 0.01 or r[5] >= 0.01],
    }
    print(f"median over {out['cases']} cases: ngspice {LONG_CYCLES} cycles "
          f"{1e3 * out['median_ngspice_long_s']:.1f} ms, minimal "
          f"{1e3 * out['median_ngspice_minimal_s']:.1f} ms, pqcalc "
          f"{1e3 * out['median_pqcalc_s']:.2f} ms")
    print(f"median ratio ngspice/pqcalc: {r_long:.0f} x against the {LONG_CYCLES}-cycle run "
          f"(target >= {TARGET_LONG:g}), {r_min:.1f} x against the minimal run "
          f"(target >= {TARGET_MINIMAL:g})")
    print(f"accuracy against the reltol 1e-4 reference: harmonics 1..40 median "
          f"{100 * out['median_harmonic_error']:.3f} %, max {100 * out['max_harmonic_error']:.2f}"
          f" % of I1; Irms median {100 * out['median_irms_error']:.3f} %, max "
          f"{100 * out['max_irms_error']:.2f} %; outside 1 %: "
          f"{', '.join(out['outside_1pct']) or 'none'}")
    return out


def test_solver_against_ngspice_speed_and_accuracy():
    if shutil.which("ngspice") is None:
        pytest.skip("ngspice not installed (apt-get install -y ngspice); the benchmark "
                    "compares against it")
    print(f"\n  {'case':<38} {'ng20 ms':>8} {'ngmin ms':>8} {'pq ms':>8} {'x20':>7} "
          f"{'xmin':>7} {'harm%':>6} {'Irms%':>6}")
    out = bench(os.environ.get("PQCALC_BENCH_CASES", ""))
    assert out["cases"] > 0
    if os.environ.get("PQCALC_BENCH_STRICT") == "1":
        assert out["median_ratio_long"] >= TARGET_LONG
        assert out["median_ratio_minimal"] >= TARGET_MINIMAL


if __name__ == "__main__":
    print(f"  {'case':<38} {'ng20 ms':>8} {'ngmin ms':>8} {'pq ms':>8} {'x20':>7} "
          f"{'xmin':>7} {'harm%':>6} {'Irms%':>6}")
    bench(sys.argv[1] if len(sys.argv) > 1 else "")
