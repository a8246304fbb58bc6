"""The ``pqcalc`` command line: thin; it parses options, calls the library and prints.

Each command lives in its own module of this package and registers itself on :data:`main`
when imported. User mistakes (:class:`~pqcalc.errors.InputError`) print one line on stderr
and exit with code 2; a solver that does not converge exits with code 1; a failed
compliance check exits with 1 after printing its table.
"""

from __future__ import annotations

import importlib
import importlib.util

from ._common import main

#: Command modules, in the order of ``pqcalc --help``. A module is imported when it exists;
#: errors inside an existing module are not hidden.
_COMMANDS = ("analyze", "lamp", "assess", "comply", "plot", "report", "sweep")

for _name in _COMMANDS:
    if importlib.util.find_spec(f"{__name__}.{_name}") is not None:
        importlib.import_module(f"{__name__}.{_name}")

__all__ = ["main"]
