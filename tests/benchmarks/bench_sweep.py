"""Benchmark: a sweep of 21 settings x 6 fixture types, in-process against a 2-worker cluster.

Run on demand:  python -m pytest tests/benchmarks/bench_sweep.py -q -s

The six driver models at typical powers behind a trailing-edge dimmer, 21 conduction angles
from 30 to 180 deg, the circuit solver of pqcalc.circuits: 126 distinct cases. The same sweep
runs in-process (the reference, measured in this run) and on a dask LocalCluster of two
single-threaded worker processes. Reported: the wall-time ratio cluster / in-process with
the cluster already started (target below 1 on a machine with two cores), and the cluster
start-up time apart. The two results must be identical.

Environment: PQCALC_BENCH_DIMMER (default trailing-edge) picks the dimmer kind; leading-edge
triac cases of the PWM driver take minutes each with the present solver, so they are not
the default here.
"""

from __future__ import annotations

import os
import time

import numpy as np
import xarray as xr

from pqcalc.sweep import Fixture, SweepSpec, circuit_case, sweep

FIXTURES = (  # typical powers of each model (common practice)
    Fixture("filament-60W", "resistive", 60.0),
    Fixture("dropper-5W", "dropper", 5.0),
    Fixture("bulk-cap-9W", "bulk-cap", 9.0),
    Fixture("sine-follow-10W", "sine-follow", 10.0),
    Fixture("pfc-40W", "pfc", 40.0),
    Fixture("pwm-detect-20W", "pwm-detect", 20.0),
)


def _clear_solver_cache() -> None:
    from pqcalc.circuits import solve

    for name in ("_solve_cached",):
        f = getattr(solve, name, None)
        if hasattr(f, "cache_clear"):
            f.cache_clear()


def test_two_worker_cluster_against_in_process():
    from dask.distributed import Client, LocalCluster

    spec = SweepSpec(FIXTURES, settings=tuple(np.linspace(30.0, 180.0, 21)),
                     dimmer=os.environ.get("PQCALC_BENCH_DIMMER", "trailing-edge"))
    _clear_solver_cache()
    t0 = time.perf_counter()
    ref = sweep(spec, circuit_case)
    t_in = time.perf_counter() - t0

    t0 = time.perf_counter()
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                           dashboard_address=None)
    client = Client(cluster)
    client.wait_for_workers(2)
    t_start = time.perf_counter() - t0
    try:
        t0 = time.perf_counter()
        dist = sweep(spec, circuit_case, client=client)
        t_dist = time.perf_counter() - t0
    finally:
        client.close()
        cluster.close()

    xr.testing.assert_identical(dist, ref)
    ratio = t_dist / t_in
    print(f"\nsweep {ref.attrs['distinct_cases']} distinct cases ({spec.dimmer}): "
          f"in-process {t_in:.1f} s, 2-worker cluster {t_dist:.1f} s "
          f"(+ {t_start:.1f} s start-up, apart); ratio cluster/in-process {ratio:.2f}; "
          f"with start-up {(t_dist + t_start) / t_in:.2f}; cores {os.cpu_count()}"
          + ("" if ratio < 1.0 else "; the cluster does not pay at this size (its workers "
             "import the package and load the compiled kernels first)"))
    # a figure, not a timed assertion; PQCALC_BENCH_STRICT=1 makes a slower cluster fail
    if os.environ.get("PQCALC_BENCH_STRICT"):
        assert ratio < 1.0, f"the 2-worker cluster took {ratio:.2f} x the in-process time"
