"""``python -m pqcalc``: the same command line as the ``pqcalc`` script."""

from __future__ import annotations

from .cli import main

if __name__ == "__main__":  # pragma: no cover - exercised through a subprocess in the tests
    main(prog_name="pqcalc")
