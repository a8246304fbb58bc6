"""Lamp and dimmer physics solved to periodic steady state.

The surface::

    from pqcalc.circuits import Supply, DimmerSpec, LoadGroup, solve_circuit, MODELS, model_params

    sol = solve_circuit(Supply(230.0, 50.0), DimmerSpec("leading-edge", conduction_deg=120.0),
                        [LoadGroup("bulk-cap", 9.0, count=12)])
    sol.waveform          # total input current and the line voltage at the dimmer
    sol.groups[0].light   # relative light output of one lamp over the period

Modules: :mod:`.network` (piecewise-linear circuits, state equations per mode),
:mod:`.pwl` (exact segment integration, events, shooting), :mod:`.dimmers`,
:mod:`.drivers` (the lamp models), :mod:`.solve`, :mod:`.curve` (dimming curve).

Results that guide dimmer, conductor or breaker choices support, and never replace, the
local electrical code and the judgement of a licensed professional.
"""

from __future__ import annotations

from .dimmers import dimmer_params
from .drivers import MODELS, ModelId, model_params
from .solve import FLAGS, Flag, GroupResult, Solution, Stresses, solve_circuit
from .spec import DIMMER_KINDS, DimmerKind, DimmerSpec, LoadGroup, Supply

__all__ = [
    "Supply",
    "DimmerSpec",
    "LoadGroup",
    "solve_circuit",
    "Solution",
    "GroupResult",
    "Stresses",
    "MODELS",
    "ModelId",
    "model_params",
    "dimmer_params",
    "DIMMER_KINDS",
    "DimmerKind",
    "FLAGS",
    "Flag",
]

from .curve import DimmingCurve, dimming_curve  # noqa: E402  (builds on the flicker metrics)

__all__ += ["DimmingCurve", "dimming_curve"]
