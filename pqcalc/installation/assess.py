"""Assess an installation: the stages of a study in the order data flows.

1. :mod:`~pqcalc.installation.cases`: each distinct circuit case solved once;
2. :mod:`~pqcalc.installation.sums`: circuits summed into panels, feeders, the service and
   the neutral;
3. :mod:`~pqcalc.installation.interaction`: the supply's source impedance and the fixed
   point of the panel voltages;
4. :mod:`~pqcalc.installation.checks`: breakers, dimmers, conductors, transformer, IEEE 519;
5. :mod:`~pqcalc.installation.diversity`: independent dimming by the summation law or by
   Monte Carlo;

gathered per scenario by :mod:`~pqcalc.installation.scenario` into the result types of
:mod:`~pqcalc.installation.results`.
"""

from __future__ import annotations

from collections.abc import Iterator
from concurrent.futures import Executor, ProcessPoolExecutor
from contextlib import contextmanager

from ..errors import InputError
from .cases import CaseSolver
from .diversity import diversity
from .model import Installation
from .results import Assessment
from .scenario import Progress, evaluate_scenario

__all__ = ["assess", "progress_units", "workers"]


def progress_units(inst: Installation) -> int:
    """The units ``assess`` reports to its ``progress`` callback in all: one per circuit
    solved in each scenario's ideal pass and, with supply interaction, in each of its
    passes up to ``analysis.max_iterations`` (a scenario that settles sooner reports the
    passes it did not need at once)."""
    passes = 1 + (inst.analysis.max_iterations if inst.analysis.supply_interaction
                  and inst.has_source_impedance else 0)
    return len(inst.circuits) * inst.n_scenarios * passes


def assess(inst: Installation, progress: Progress | None = None,
           executor: Executor | None = None) -> Assessment:
    """Solve, sum and check every scenario of an installation.

    ``progress`` is called with the units of work done since its last call (circuits
    solved; :func:`progress_units` gives the total, for a progress bar). The design
    scenario is the one with the highest panel line-plus-neutral current. ``executor``
    solves the distinct circuit cases of each pass in parallel (see :func:`workers`); the
    results equal the in-process ones.
    """
    solver = CaseSolver(inst, executor, transfer=inst.analysis.supply_interaction
                        and inst.has_source_impedance)
    scen = tuple(evaluate_scenario(inst, solver, k, progress) for k in range(inst.n_scenarios))
    design = max(range(len(scen)), key=lambda k: max(
        (p.neutral.i_rms_a if p.neutral else 0.0) + p.max_line_a for p in scen[k].panels))
    return Assessment(inst, scen, design, diversity(inst, solver), solver.solves)


@contextmanager
def workers(n: int = 0, scheduler: str | None = None) -> Iterator[Executor | None]:
    """Where :func:`assess` solves distinct cases: ``n`` local worker processes, or the
    workers of a dask.distributed scheduler at ``scheduler`` (an address such as
    ``tcp://10.0.0.5:8786``; needs ``pip install 'pqcalc[distributed]'``); ``n = 0`` and no
    scheduler: in this process (None).

    >>> with workers(0) as ex:
    ...     ex is None
    True
    """
    if scheduler:
        try:
            from distributed import Client
        except ImportError:
            raise InputError("--scheduler needs dask.distributed: pip install "
                             "'pqcalc[distributed]'") from None
        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError) as e:
            raise InputError(f"--scheduler {scheduler}: no dask scheduler answered ({e})") from None
        try:
            yield client.get_executor()
        finally:
            client.close()
        return
    if n < 0:
        raise InputError(f"--workers: expected a number of processes >= 0, got {n}")
    if n == 0:
        yield None
        return
    import multiprocessing

    with ProcessPoolExecutor(max_workers=n,
                             mp_context=multiprocessing.get_context("spawn")) as ex:
        yield ex
