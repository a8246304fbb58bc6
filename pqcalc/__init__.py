"""pqcalc: power quality and harmonics of dimmed LED lighting installations.

The short surface::

    from pqcalc import Waveform, spectrum, summarize, read_capture

Every submodule (``pqcalc.metrics``, ``pqcalc.spectrum``, ``pqcalc.io`` ...) is public too.
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError as _NotInstalled
from importlib.metadata import version as _version

from .errors import ConvergenceError, InputError, PqcalcWarning
from .metrics import Summary, summarize
from .spectrum import Spectrum, spectrum
from .waveform import Waveform

try:  # the version is declared once, in pyproject.toml, and read from the installed metadata
    __version__: str = _version("pqcalc")
except _NotInstalled:  # pragma: no cover - running from a source tree that is not installed
    __version__ = "0+unknown"

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
