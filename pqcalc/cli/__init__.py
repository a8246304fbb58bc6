"""The ``pqcalc`` command line: thin; it parses options, calls the library and prints.

Each command lives in its own module of this package and registers itself on :data:`main`
when imported; :data:`pqcalc.cli._common.COMMANDS` lists them, and the group imports a
command's module only when that command runs.

Exit codes (:data:`pqcalc.cli._common.EXIT_CODES`): 0 every check passes; 1 a check fails,
after its table is printed; 2 bad input (:class:`~pqcalc.errors.InputError`, a missing file,
a usage mistake), one line on stderr; 3 the tool failed (a solve that could not be done,
:class:`~pqcalc.errors.ConvergenceError`, or any unexpected exception), one line on stderr
naming it and the file in the temporary folder that holds the traceback. An output path of
``-`` is standard output; a capture of ``-`` is read from standard input (CSV only).
"""

from __future__ import annotations

from ._common import COMMANDS, main

__all__ = ["main", "COMMANDS"]
