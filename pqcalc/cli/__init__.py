"""The ``pqcalc`` command line: thin; it parses options, calls the library and prints.

Each command lives in its own module of this package and registers itself on :data:`main`
when imported; :data:`pqcalc.cli._common.COMMANDS` lists them, and the group imports a
command's module only when that command runs. User mistakes
(:class:`~pqcalc.errors.InputError`) print one line on stderr and exit with code 2; a solver
that does not converge exits with code 1; a failed check exits with 1 after printing its
table.
"""

from __future__ import annotations

from ._common import COMMANDS, main

__all__ = ["main", "COMMANDS"]
