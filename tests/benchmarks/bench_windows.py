"""Benchmark: a long two-channel record through IEC 61000-4-7 windows, read in blocks.

Run on demand:  python -m pytest tests/benchmarks/bench_windows.py -q -s
           or:  python tests/benchmarks/bench_windows.py

A 10-minute record of voltage and current at 20 kS/s (12 million samples per channel) is
written block by block to a COMTRADE file (2013, BINARY32: 16 bytes per sample record, 192 MB)
and analysed with ``analyze_windows(..., keep_windows=False)``: 10-cycle windows tracked to
the measured frequency, groups and subgroups of both channels, THD, power, summaries.

Reported, both measured in the same run:
- throughput ratio = time of raw ``numpy.fft.rfft`` over the same samples cut into the same
  windows (both channels, data already in memory) / time of the whole pqcalc pipeline
  (reading the file included); the aim is >= 0.3;
- peak traced memory (``tracemalloc``) of the pipeline on a 1-minute and on the 10-minute
  record: it must not grow with the record length (ratio reported, asserted <= 1.5: the
  buffers are sized by the read block, not by the record).

The opening frequency estimate is a small least-squares fit; on a loaded two-core machine a
multi-threaded BLAS can make it slow and the ratio noisy, so run with
``OPENBLAS_NUM_THREADS=1`` (set here when the file is run as a script). Measured on the
development machine (2 cores, shared with other jobs): 0.44-0.7 s for the 10 minutes,
ratio 0.26-0.36; peak memory 28 MB at 1 and at 10 minutes.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

if __name__ == "__main__":
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402

from pqcalc.io.comtrade import write_comtrade  # noqa: E402
from pqcalc.io.windows import analyze_windows  # noqa: E402

FS = 20_000.0
F = 49.97  # not synchronous with the sampling
BLOCK = 1 << 17


def blocks(duration_s: float, which: str):
    """Blocks of a lamp-like current (odd harmonics) or the supply voltage, generated on the
    fly so the writer never holds the record."""
    n_total = int(duration_s * FS)
    for k0 in range(0, n_total, BLOCK):
        t = np.arange(k0, min(k0 + BLOCK, n_total)) / FS
        wt = 2 * np.pi * F * t
        if which == "v":
            yield 325.0 * np.sin(wt) - 6.0 * np.sin(5 * wt)
        else:
            yield (0.6 * np.sin(wt - 0.2) + 0.4 * np.sin(3 * wt + 0.5) + 0.25 * np.sin(5 * wt)
                   + 0.1 * np.sin(7 * wt + 1.0) + 0.05 * np.sin(11 * wt))


def write_record(path: Path, duration_s: float) -> Path:
    chans = {"I": ("A", blocks(duration_s, "i")), "V": ("V", blocks(duration_s, "v"))}
    write_comtrade(path, chans, FS, 2013, "BINARY32", scale={"I": (1e-6, 0.0), "V": (1e-4, 0.0)})
    return path


def reference_rfft_s(duration_s: float) -> float:
    """Raw rfft of the same number of 10-cycle windows of both channels (in memory)."""
    n = int(round(10 * FS / F))
    windows = int(duration_s * FS / (10 * FS / F))
    rng = np.random.default_rng(0)
    blk = rng.normal(size=(32, n))
    t0 = time.perf_counter()
    done = 0
    while done < windows:
        k = min(32, windows - done)
        np.fft.rfft(blk[:k], axis=1)  # current
        np.fft.rfft(blk[:k], axis=1)  # voltage
        done += k
    return time.perf_counter() - t0


def run(path: Path) -> tuple[float, int, int]:
    tracemalloc.start()
    t0 = time.perf_counter()
    wa = analyze_windows(path, keep_windows=False)
    dt = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return dt, peak, wa.summary.count


def run_time(path: Path) -> float:
    t0 = time.perf_counter()
    analyze_windows(path, keep_windows=False)
    return time.perf_counter() - t0


def test_long_record_throughput_and_memory(tmp_path=None):
    folder = Path(tmp_path or tempfile.mkdtemp())
    short = write_record(folder / "one_minute.cfg", 60.0)
    long_ = write_record(folder / "ten_minutes.cfg", 600.0)
    _, peak_1, n1 = run(short)
    _, peak_10, n10 = run(long_)
    t_ours = min(run_time(long_) for _ in range(2))  # timed without tracemalloc overhead
    t_ref = min(reference_rfft_s(600.0) for _ in range(3))
    ratio = t_ref / t_ours
    print(f"\n10 min, 2 channels, 20 kS/s: {n10} windows in {t_ours:.2f} s "
          f"({2 * 600 * FS / t_ours / 1e6:.1f} M samples/s)")
    print(f"raw numpy rfft over the same windows: {t_ref:.3f} s; throughput ratio {ratio:.2f} "
          "(aim >= 0.3)")
    print(f"peak traced memory: 1 min {peak_1 / 1e6:.1f} MB ({n1} windows), "
          f"10 min {peak_10 / 1e6:.1f} MB; ratio {peak_10 / peak_1:.2f}")
    assert n10 >= 2990 and n1 >= 295  # 200 ms windows
    assert peak_10 <= 1.5 * peak_1, "peak memory grows with the record length"


if __name__ == "__main__":
    test_long_record_throughput_and_memory(sys.argv[1] if len(sys.argv) > 1 else None)
