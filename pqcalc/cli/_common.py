"""Shared pieces of the command line: the group, error handling, output helpers.

Exit codes, the same for every command (:data:`EXIT_CODES`): 0 every check passes, 1 a
check fails (findings), 2 bad input (one line on stderr naming what is wrong), 3 the tool
failed (an internal error, or a solve that could not be done: one line on stderr naming what
failed and the file holding the full traceback).
"""

from __future__ import annotations

import functools
import importlib
import json
import os
import sys
import tempfile
import traceback
import warnings
from typing import Any

import click

from .. import __version__
from ..errors import ConvergenceError, InputError, PqcalcWarning
from ..io.atomic import write_atomic  # noqa: F401  (re-exported for the commands)
from ..io.jsonsafe import json_safe

CONTEXT = {"help_option_names": ["-h", "--help"], "max_content_width": 100}

#: Exit codes of every command.
EXIT_OK, EXIT_FINDINGS, EXIT_BAD_INPUT, EXIT_TOOL_FAILED = 0, 1, 2, 3
#: Ctrl-C: the shell's code for a process ended by SIGINT (128 + 2).
EXIT_INTERRUPTED = 130
EXIT_CODES: dict[int, str] = {
    EXIT_OK: "every check passes (or the command has no checks)",
    EXIT_FINDINGS: "a check fails (the findings are printed or written)",
    EXIT_BAD_INPUT: "bad input: one line on stderr naming the file, line or option",
    EXIT_TOOL_FAILED: "the tool failed: an internal error or a solve that could not be done; "
                      "one line on stderr names it and the file holding the traceback",
}
EXIT_CODES_HELP = ("Exit codes: 0 every check passes; 1 a check fails (findings); 2 bad "
                   "input; 3 the tool failed (an internal error or a solve that could not be "
                   "done; the traceback is written to a file in the temporary folder).")

#: ``-`` as an output path means standard output; as a capture, standard input.
STDIO = "-"


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

    def main(self, args: Any = None, prog_name: str | None = None,  # type: ignore[override]
             **kwargs: Any) -> Any:
        """Run the command line; a usage mistake (unknown option, bad choice) is one line
        on stderr with exit code 2, like every other bad input."""
        kwargs.setdefault("standalone_mode", False)
        try:
            rv = super().main(args, prog_name or "pqcalc", **kwargs)
        except click.exceptions.UsageError as e:
            where = f"{e.ctx.command_path}: " if e.ctx is not None else ""
            click.echo(f"error: {where}{one_line(e.format_message())} (see --help)", err=True)
            sys.exit(2)
        except (click.exceptions.Abort, KeyboardInterrupt):
            click.echo("aborted", err=True)
            sys.exit(EXIT_INTERRUPTED)
        except click.exceptions.ClickException as e:
            click.echo(f"error: {one_line(e.format_message())}", err=True)
            sys.exit(e.exit_code)
        except BrokenPipeError:
            _closed_stdout()
        except Exception as e:  # a failure outside a command (importing it, say)
            tool_failed(e, "pqcalc")
        sys.exit(rv if isinstance(rv, int) else 0)


@click.group("pqcalc", cls=_LazyGroup, context_settings=CONTEXT, invoke_without_command=True,
             epilog=EXIT_CODES_HELP)
@click.version_option(__version__, "--version", prog_name="pqcalc")
@click.pass_context
def main(ctx: click.Context) -> None:
    """Power quality of dimmed LED lighting: harmonics, neutral current, compliance.

    An output path of - means standard output; a capture path of - means standard input
    (CSV only). Without a command, this help.

    Figures that guide conductor, breaker, dimmer or transformer choices support, and never
    replace, the local electrical code and the design of a licensed professional.
    """
    if ctx.invoked_subcommand is None:
        click.echo(ctx.get_help())
        ctx.exit(0)


def _closed_stdout() -> None:
    """The reader of standard output went away (``pqcalc ... | head``): stop quietly with
    the shell's code for SIGPIPE (128 + 13), and let Python's final flush go nowhere."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass
    sys.exit(141)


def traceback_path() -> str:
    """Where :func:`tool_failed` writes the traceback of this process."""
    return os.path.join(tempfile.gettempdir(), f"pqcalc-traceback-{os.getpid()}.txt")


def tool_failed(e: BaseException, where: str) -> None:
    """Exit with code 3 after one line on stderr naming what failed and the file that holds
    the full traceback (never printed: it is for a bug report, not for the user)."""
    path = traceback_path()
    try:
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(f"pqcalc {__version__}, {where}, python {sys.version.split()[0]}\n")
            fh.writelines(traceback.format_exception(type(e), e, e.__traceback__))
        saved = f"the full traceback is in {path}"
    except OSError as oe:
        saved = f"the traceback could not be written to {path} ({oe.strerror})"
    if isinstance(e, ConvergenceError):
        what = f"a solve could not be done: {one_line(e)}"
    else:
        what = f"internal error: {type(e).__name__}: {one_line(e) or '(no message)'}"
    click.echo(f"error: {where}: {what}; {saved}", err=True)
    sys.exit(EXIT_TOOL_FAILED)


def _show_warning(message, category, filename, lineno, file=None, line=None):
    click.echo(f"warning: {one_line(str(message))}", err=True)


def user_errors(func):
    """Turn exceptions into one-line messages and exit codes: 2 for bad input
    (:class:`~pqcalc.errors.InputError`, a missing or unreadable file), 3 when the tool
    fails (:class:`~pqcalc.errors.ConvergenceError` or any unexpected exception; the
    traceback goes to a file, see :func:`tool_failed`). Also applies the deprecated option
    spellings of :func:`deprecated_alias`."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        old = warnings.showwarning
        warnings.showwarning = _show_warning
        warnings.simplefilter("always", PqcalcWarning)
        ctx = click.get_current_context(silent=True)
        where = ctx.command_path if ctx is not None else "pqcalc"
        try:
            if ctx is not None:
                _apply_aliases(ctx, kwargs)
            return func(*args, **kwargs)
        except InputError as e:
            click.echo(f"error: {one_line(e)}", err=True)
            sys.exit(EXIT_BAD_INPUT)
        except (FileNotFoundError, IsADirectoryError, PermissionError) as e:
            if e.filename is None:  # not a user's file: an internal failure
                tool_failed(e, where)
            click.echo(f"error: {one_line(f'{e.filename}: {e.strerror}')}", err=True)
            sys.exit(EXIT_BAD_INPUT)
        except BrokenPipeError:
            _closed_stdout()
        except (click.exceptions.ClickException, click.exceptions.Exit,
                click.exceptions.Abort, KeyboardInterrupt):
            raise
        except Exception as e:  # ConvergenceError and anything unexpected
            tool_failed(e, where)
        finally:
            warnings.showwarning = old

    return wrapper


_ALIASES = "pqcalc.deprecated_aliases"


def deprecated_alias(old: str, new: str, dest: str, **option_kw):
    """A hidden option ``old`` that still works for the renamed option ``new`` (the command's
    parameter ``dest``), with a warning on stderr. Giving both is a usage mistake."""

    def remember(ctx: click.Context, param: click.Parameter, value):
        if value is not None:
            ctx.meta.setdefault(_ALIASES, {})[dest] = (old, new, value)
        return value

    return click.option(old, hidden=True, expose_value=False, callback=remember, **option_kw)


def _apply_aliases(ctx: click.Context, kwargs: dict) -> None:
    from click.core import ParameterSource

    for dest, (old, new, value) in ctx.meta.get(_ALIASES, {}).items():
        if ctx.get_parameter_source(dest) == ParameterSource.COMMANDLINE:
            raise InputError(f"{old} and {new}: the same option spelled twice; give {new} only")
        click.echo(f"warning: {old} is deprecated; use {new}", err=True)
        kwargs[dest] = value


#: Output formats that are not text: refused on a terminal (``-o -`` without a redirection).
BINARY_FORMATS = ("pdf", "png", "netcdf", "zip")


def refuse_binary_terminal(output, kind: str) -> None:
    """A binary format sent to standard output while it is a terminal is a usage mistake."""
    from ..io.atomic import is_stdout

    if is_stdout(output) and kind in BINARY_FORMATS and sys.stdout.isatty():
        raise InputError(f"-o -: {kind} is binary and standard output is a terminal; "
                         "redirect it (> file, | program) or give a file name")


def figure_format(output, fmt: str | None) -> str:
    """The figure file type from ``--format`` or the output's suffix (needed for ``-``),
    refused before any work when unknown or contradictory; checks the output's folder."""
    from pathlib import Path

    from ..io.atomic import check_output_path, is_stdout
    from ..plots import FIGURE_FORMATS

    kinds = ", ".join(FIGURE_FORMATS)
    if fmt is not None and fmt not in FIGURE_FORMATS:
        raise InputError(f"--format: expected one of {kinds}, got {fmt!r}")
    if is_stdout(output):
        if fmt is None:
            raise InputError(f"-o -: standard output has no suffix; give --format ({kinds})")
        refuse_binary_terminal(output, fmt)
        return fmt
    suffix = Path(output).suffix.lower().lstrip(".")
    if suffix not in FIGURE_FORMATS:
        raise InputError(f"-o {output}: expected a file ending in "
                         f"{', '.join('.' + f for f in FIGURE_FORMATS)}, or - with --format")
    if fmt is not None and fmt != suffix:
        raise InputError(f"--format {fmt}: the output {output} ends in .{suffix}; give one "
                         "or the other")
    check_output_path(output)
    return suffix


def save_figure_to(fig, output, fmt: str | None = None, dpi: float | None = None) -> None:
    """Write a figure to ``output``; for ``-``, rendered whole as ``fmt`` to standard output."""
    from .. import plots
    from ..io.atomic import is_stdout, write_stdout

    if not is_stdout(output):
        plots.save_figure(fig, output, dpi=dpi)
        return
    with tempfile.TemporaryDirectory(prefix="pqcalc-fig-") as d:
        tmp = os.path.join(d, f"figure.{fmt}")
        plots.save_figure(fig, tmp, dpi=dpi)
        with open(tmp, "rb") as fh:
            data = fh.read()
    write_stdout(data)


#: The longest message printed on stderr [characters]: a message quotes user text, cut to
#: size where it is quoted; this bounds what is left (a long list of known fields, say).
MESSAGE_CHARS = 600


def one_line(e: BaseException | str) -> str:
    """A message on one line: whitespace runs (line breaks) become one space, control
    characters are shown escaped (never acted on by the terminal), cut to
    :data:`MESSAGE_CHARS`."""
    from ..io.text import printable

    return printable(" ".join(str(e).split()), MESSAGE_CHARS)


_clean = json_safe  # one JSON-safe converter, in pqcalc.io


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
        self.bar: Any = None  # a click progress bar once shown
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


def assess_with_progress(inst: Any, executor: Any) -> Any:
    """``pqcalc.installation.assess`` with a progress bar on a terminal when the run is
    long (every circuit of every scenario's passes)."""
    from ..installation import assess
    from ..installation.assess import progress_units

    total = progress_units(inst)
    prog = Progress("solving circuits", min_total=50)
    done = [0]

    def step(n: int) -> None:
        done[0] += n
        prog(min(done[0], total), total)

    try:
        return assess(inst, progress=step, executor=executor)
    finally:
        prog.close()


def worker_options(f: Any) -> Any:
    """``--workers N`` and ``--scheduler ADDRESS``: where the distinct circuit cases are
    solved (pqcalc.installation.assess.workers)."""
    f = click.option("--scheduler", metavar="ADDRESS", default=None,
                     help="Solve on the workers of a dask.distributed scheduler (e.g. "
                          "tcp://10.0.0.5:8786); needs pqcalc[distributed].")(f)
    f = click.option("--workers", "n_workers", type=click.IntRange(min=0), default=0,
                     show_default=True,
                     help="Local worker processes for the distinct circuit cases (0: this "
                          "process). Results equal the in-process run.")(f)
    return f
