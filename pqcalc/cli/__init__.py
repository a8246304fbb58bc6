"""The ``pqcalc`` command line: thin; it parses options, calls the library and prints.

Each command lives in its own module and registers itself on :data:`main`. User mistakes
(:class:`~pqcalc.errors.InputError`) print one line on stderr and exit with code 2; a
solver that does not converge exits with code 1; failed compliance checks exit with 1.
"""

from __future__ import annotations

from ._common import main

# Command modules register themselves on `main` when imported.
from . import analyze  # noqa: E402,F401

__all__ = ["main"]
