"""pqcalc: power quality and harmonics of dimmed LED lighting installations.

The short surface::

    from pqcalc import Waveform, spectrum, summarize, read_capture

Every submodule (``pqcalc.metrics``, ``pqcalc.spectrum``, ``pqcalc.io`` ...) is public too.
"""

from __future__ import annotations

from .errors import ConvergenceError, InputError, PqcalcWarning
from .metrics import Summary, summarize
from .spectrum import Spectrum, spectrum
from .waveform import Waveform

__version__ = "0.1.0"

__all__ = [
    "Waveform",
    "Spectrum",
    "spectrum",
    "Summary",
    "summarize",
    "InputError",
    "ConvergenceError",
    "PqcalcWarning",
    "__version__",
]
