"""The study of one installation, a module per stage in the order data flows.

=================  ===========================================================================
``model``          the installation's dataclasses and option lists
``file``           :func:`load_installation`: TOML, validation with file, line and field
``cases``          distinct circuit cases, solved once and shared
``sums``           one summing path: circuits, panel lines, feeders, the service, the neutral
``interaction``    source impedance and the supply interaction (Newton, harmonic domain)
``checks``         every check: breakers, dimmers, conductors, transformer, IEEE 519 at the PCC
``diversity``      summation law and Monte Carlo
``results``        the result types and their JSON form
``scenario``       one scenario through the stages above
``assess``         :func:`assess`: every scenario, the design scenario, diversity
``lineup``         :func:`evaluate_lineup`: IEC 61000-3-2 per fixture type
=================  ===========================================================================

>>> from pqcalc.installation import load_installation, assess     # doctest: +SKIP
>>> a = assess(load_installation("demo_installations/harbour_school.toml"))  # doctest: +SKIP
"""

from .assess import assess
from .file import load_installation
from .lineup import LineupEntry, LineupState, evaluate_lineup
from .model import (
    Circuit,
    Feeder,
    FixtureGroup,
    FixtureType,
    Installation,
    MeasuredFixture,
    ModelledFixture,
    Panel,
    Project,
    SupplySpec,
)
from .results import Assessment, Check, CircuitResult, NodeResult, ScenarioResult

__all__ = ["load_installation", "assess", "evaluate_lineup", "Installation", "Project",
           "SupplySpec", "ModelledFixture", "MeasuredFixture", "FixtureType", "FixtureGroup",
           "Circuit", "Panel", "Feeder", "Assessment", "ScenarioResult", "NodeResult",
           "CircuitResult", "Check", "LineupEntry", "LineupState"]
