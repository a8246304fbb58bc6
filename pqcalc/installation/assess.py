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

from .cases import CaseSolver
from .diversity import diversity
from .model import Installation
from .results import Assessment
from .scenario import Progress, evaluate_scenario

__all__ = ["assess"]


def assess(inst: Installation, progress: Progress | None = None) -> Assessment:
    """Solve, sum and check every scenario of an installation.

    ``progress`` is called with the number of circuits done (for a progress bar). The design
    scenario is the one with the highest panel line-plus-neutral current.
    """
    solver = CaseSolver(inst)
    scen = tuple(evaluate_scenario(inst, solver, k, progress) for k in range(inst.n_scenarios))
    design = max(range(len(scen)), key=lambda k: max(
        (p.neutral.i_rms_a if p.neutral else 0.0) + p.max_line_a for p in scen[k].panels))
    return Assessment(inst, scen, design, diversity(inst, solver), solver.solves)
