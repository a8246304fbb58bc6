"""Shared pieces of the command line: the group, error handling, output helpers."""

from __future__ import annotations

import functools
import importlib
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


#: The commands, the module of each and its one-line help, in the order of ``--help``. A
#: command's module (and what it needs: the circuit solver, xarray, matplotlib) is imported
#: only when the command runs, so ``pqcalc analyze`` does not pay for ``pqcalc sweep``.
COMMANDS: dict[str, tuple[str, str]] = {
    "assess": ("assess", "Currents, neutral, THDv and checks of an installation file."),
    "comply": ("comply", "IEC 61000-3-2 verdicts of captures, a model or an installation's "
                         "fixture types."),
    "lamp": ("lamp", "One fixture type behind a dimmer from circuit physics; --curve."),
    "analyze": ("analyze", "Spectrum, THD, PF and more of a measured capture."),
    "plot": ("plot", "A figure (PNG, SVG, PDF) from a capture or an installation."),
    "report": ("report", "The PDF submittal, or JSON, CSV, netCDF exports."),
    "sweep": ("sweep", "Sweeps over settings, fixtures, voltages, draws; dask scale-out."),
}


class _LazyGroup(click.Group):
    """A click group that imports a command's module when the command is asked for."""

    def list_commands(self, ctx):
        return list(COMMANDS)

    def get_command(self, ctx, name):
        if name not in self.commands and name in COMMANDS:
            importlib.import_module(f"{__package__}.{COMMANDS[name][0]}")
        return super().get_command(ctx, name)

    def format_commands(self, ctx, formatter):
        with formatter.section("Commands"):
            formatter.write_dl([(n, h) for n, (_, h) in COMMANDS.items()])

    def main(self, args=None, prog_name=None, **kwargs):
        """Run the command line; a usage mistake (unknown option, bad choice) is one line
        on stderr with exit code 2, like every other bad input."""
        kwargs.setdefault("standalone_mode", False)
        try:
            rv = super().main(args, prog_name or "pqcalc", **kwargs)
        except click.exceptions.UsageError as e:
            where = f"{e.ctx.command_path}: " if e.ctx is not None else ""
            click.echo(f"error: {where}{one_line(e.format_message())} (see --help)", err=True)
            sys.exit(2)
        except click.exceptions.Abort:
            click.echo("aborted", err=True)
            sys.exit(1)
        except click.exceptions.ClickException as e:
            click.echo(f"error: {one_line(e.format_message())}", err=True)
            sys.exit(e.exit_code)
        sys.exit(rv if isinstance(rv, int) else 0)


@click.group(cls=_LazyGroup, context_settings=CONTEXT)
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


class Progress:
    """A progress bar on stderr, only when stderr is a terminal and the run is long;
    called with ``(done, total)``."""

    def __init__(self, label: str, min_total: int = 20):
        self.label = label
        self.min_total = min_total
        self.bar = None
        self.shown = 0

    def __call__(self, done: int, total: int) -> None:
        if self.bar is None:
            if not (sys.stderr.isatty() and total >= self.min_total):
                return
            self.bar = click.progressbar(length=total, label=self.label, file=sys.stderr)
            self.bar.__enter__()
        self.bar.update(done - self.shown)
        self.shown = done

    def close(self) -> None:
        if self.bar is not None:
            self.bar.__exit__(None, None, None)
