"""Shared pieces of the command line: the group, error handling, output helpers."""

from __future__ import annotations

import functools
import json
import math
import sys
import warnings

import click
import numpy as np

from .. import __version__
from ..errors import ConvergenceError, InputError, PqcalcWarning
from ..io.atomic import write_atomic  # noqa: F401  (re-exported for the commands)

CONTEXT = {"help_option_names": ["-h", "--help"], "max_content_width": 100}


@click.group(context_settings=CONTEXT)
@click.version_option(__version__, "--version", prog_name="pqcalc")
def main() -> None:
    """Power quality of dimmed LED lighting: harmonics, neutral current, compliance.

    Figures that guide conductor, breaker, dimmer or transformer choices support, and never
    replace, the local electrical code and the design of a licensed professional.
    """


def _show_warning(message, category, filename, lineno, file=None, line=None):
    click.echo(f"warning: {message}", err=True)


def user_errors(func):
    """Turn library exceptions into one-line messages and exit codes (2 input, 1 solver)."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        old = warnings.showwarning
        warnings.showwarning = _show_warning
        warnings.simplefilter("always", PqcalcWarning)
        try:
            return func(*args, **kwargs)
        except InputError as e:
            click.echo(f"error: {one_line(e)}", err=True)
            sys.exit(2)
        except ConvergenceError as e:
            click.echo(f"error: {one_line(e)}", err=True)
            sys.exit(1)
        except (FileNotFoundError, IsADirectoryError, PermissionError) as e:
            click.echo(f"error: {e.filename}: {e.strerror}", err=True)
            sys.exit(2)
        finally:
            warnings.showwarning = old

    return wrapper


def one_line(e: BaseException) -> str:
    return " ".join(str(e).split())


def _clean(o):
    """JSON-safe copy: numpy scalars to Python, non-finite floats refused."""
    if isinstance(o, dict):
        return {str(k): _clean(v) for k, v in o.items()}
    if isinstance(o, (list, tuple)):
        return [_clean(v) for v in o]
    if isinstance(o, (np.floating, float)):
        f = float(o)
        if not math.isfinite(f):
            raise InputError("internal: a non-finite number reached the output")
        return f
    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.bool_):
        return bool(o)
    if isinstance(o, np.ndarray):
        return _clean(o.tolist())
    return o


def echo_json(obj) -> None:
    click.echo(json.dumps(_clean(obj), indent=2))


def fmt(x, spec: str = ".4g", none: str = "-") -> str:
    return none if x is None else format(x, spec)
