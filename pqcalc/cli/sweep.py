"""``pqcalc sweep``: settings x fixture types x voltages x draws to netCDF, or a portfolio."""

from __future__ import annotations

import math
import sys
import time

import click

from ..circuits.drivers import MODELS
from ..circuits.spec import DIMMER_KINDS, SWITCH_KINDS
from ..errors import InputError
from ..sweep import (
    CAUTION,
    Fixture,
    SweepSpec,
    circuit_case,
    ideal_resistive_case,
    parse_range,
    portfolio,
    sweep,
    write_netcdf,
)
from ._common import Progress as _Progress
from ._common import main, refuse_binary_terminal, user_errors
from .assess import plural


def _check_output(path: str) -> None:
    """Refuse a missing or read-only output folder, or a name that is not ``.nc``, before
    any work is done. ``-`` is standard output (not a terminal: netCDF is binary)."""
    from ..io.atomic import check_output_path, is_stdout

    if is_stdout(path):
        refuse_binary_terminal(path, "netcdf")
        return
    p = check_output_path(path)
    if p.is_dir():
        raise InputError(f"-o {p}: is a folder; expected a file name such as sweep.nc")
    if p.suffix.lower() not in (".nc", ".nc4"):
        raise InputError(f"-o {p}: expected a netCDF file name ending in .nc")


def _fixtures(models: tuple[str, ...], powers: tuple[str, ...]) -> tuple[Fixture, ...]:
    if not models:
        raise InputError("--model: give at least one fixture model (or --installation for a "
                         f"portfolio); models: {', '.join(MODELS)}")
    watts: list[float] = []
    for p in powers:
        watts.extend(parse_range(p, "--power-w"))
    if not watts:
        raise InputError("--power-w: give the rated power of each model [W]")
    if len(watts) == 1:
        watts = watts * len(models)
    if len(watts) != len(models):
        raise InputError(f"--power-w: expected one power for all models or one per --model "
                         f"({len(models)}), got {len(watts)}")
    out, seen = [], set()
    for m, w in zip(models, watts, strict=True):
        name = f"{m}-{w:g}W"
        if name in seen:
            raise InputError(f"--model {m} --power-w {w:g}: the fixture {name} is listed twice")
        seen.add(name)
        out.append(Fixture(name, m, w))
    return tuple(out)


@main.command("sweep")
@click.option("--model", "models", multiple=True, type=click.Choice(MODELS),
              help="Fixture model on the fixture axis (repeat for several).")
@click.option("--power-w", "powers", multiple=True, metavar="W[,W...]",
              help="Rated input power per lamp [W]: one for all models or one per --model.")
@click.option("--settings", default="30:180:6", show_default=True, metavar="RANGE",
              help="Setting axis: start:stop:count (both ends included) or a,b,c. Conduction "
                   "angle [deg] unless --setting-axis knob.")
@click.option("--setting-axis", "setting_axis", type=click.Choice(("conduction", "knob")),
              default="conduction", show_default=True,
              help="Read --settings as conduction angles [deg] or knob positions 0..1.")
@click.option("--voltages", default="230", show_default=True, metavar="RANGE",
              help="Supply voltage axis, line to neutral [V]: a,b,c or start:stop:count.")
@click.option("--dimmer", type=click.Choice(DIMMER_KINDS), default="leading-edge",
              show_default=True,
              help="Dimmer kind in front of the lamps: leading-edge (phase control, the "
                   "--switch says triac or transistor), trailing-edge, or none (direct mains).")
@click.option("--switch", type=click.Choice(SWITCH_KINDS), default="triac", show_default=True,
              help="Leading-edge switch.")
@click.option("--frequency", "frequency_hz", type=float, default=50.0, show_default=True,
              help="Supply frequency [Hz].")
@click.option("--rated-voltage", "rated_v", type=float, default=230.0, show_default=True,
              help="Voltage the lamps are built for [V]; their components are fixed there.")
@click.option("--count", "lamps", type=int, default=1, show_default=True,
              help="Identical lamps behind the one dimmer.")
@click.option("--draws", type=int, default=0, show_default=True,
              help="Monte Carlo draws of component tolerances besides the nominal draw 0.")
@click.option("--tolerance", type=float, default=0.1, show_default=True,
              help="Relative tolerance of capacitors and resistors in a draw [-].")
@click.option("--seed", type=int, default=0, show_default=True,
              help="Seed of the random component tolerances of the --draws (the same seed "
                   "gives the same draws).")
@click.option("--ideal", is_flag=True,
              help="Closed-form ideal phase cut of resistive lamps instead of the circuit "
                   "solver (a fast reference; resistive model only).")
@click.option("--installation", "installations", multiple=True, metavar="FILE",
              help="Portfolio mode: assess each installation file, one result per building "
                   "(repeat, or list several).")
@click.option("-o", "--output", required=True, metavar="FILE.nc",
              help="netCDF file to write; - for standard output (the summary then goes to "
                   "stderr).")
@click.option("--scheduler", metavar="ADDRESS",
              help="dask.distributed scheduler, e.g. tcp://host:8786.")
@click.option("--local-cluster", type=int, metavar="N",
              help="Start N single-threaded worker processes on this machine.")
@click.option("--timeout", "timeout_s", type=float, default=10.0, show_default=True,
              help="Seconds to wait for the scheduler to answer.")
@click.option("--chunk-size", type=int, help="Cases per task (default: a few tasks per worker).")
@click.argument("more_installations", nargs=-1, metavar="[FILE]...")
@user_errors
def sweep_cmd(models, powers, settings, setting_axis, voltages, dimmer, switch, frequency_hz, rated_v,
              lamps, draws, tolerance, seed, ideal, installations, output, scheduler,
              local_cluster, timeout_s, chunk_size, more_installations):
    """Sweep dimmer settings, fixture types, supply voltages and Monte Carlo draws, and write
    the results as a labelled netCDF dataset (read it with xarray.open_dataset).

    Option names follow ``pqcalc lamp`` (--model, --power-w, --dimmer, --switch,
    --frequency, --count).

    With --installation, assess each installation file instead (a portfolio: one result per
    building). Runs in-process unless --scheduler or --local-cluster is given.
    """
    _check_output(output)
    from ..io.atomic import is_stdout

    to_err = is_stdout(output)
    said = "standard output" if to_err else output

    def say(text: str) -> None:
        click.echo(text, err=to_err)

    if more_installations and not installations:
        raise InputError("extra arguments " + " ".join(more_installations) + ": installation "
                         "files need --installation FILE first")
    files = tuple(installations) + tuple(more_installations)
    if scheduler is not None and local_cluster is not None:
        raise InputError("--scheduler and --local-cluster: give one, not both")
    if local_cluster is not None and local_cluster < 1:
        raise InputError(f"--local-cluster: expected a number of workers >= 1, got "
                         f"{local_cluster}")
    if chunk_size is not None and chunk_size < 1:
        raise InputError(f"--chunk-size: expected a whole number >= 1, got {chunk_size}")
    if not (timeout_s > 0):
        raise InputError(f"--timeout: expected a positive number of seconds, got {timeout_s}")
    run = dict(scheduler=scheduler, local_cluster=local_cluster, timeout_s=timeout_s)
    t0 = time.perf_counter()
    if files:
        if models or powers:
            raise InputError("--installation: a portfolio takes its fixtures from the files; "
                             "leave out --model and --power-w")
        prog = _Progress("assessing buildings", min_total=2)
        try:
            ds = portfolio(files, progress=prog, **run)
        finally:
            prog.close()
        write_netcdf(ds, output)
        n_fail = int((ds.verdict == "fail").sum())
        n_open = int((ds.verdict == "not assessed").sum())
        say(f"wrote {said}: {plural(ds.sizes['building'], 'building')}, {n_fail} with a "
            f"failed check" + (f", {n_open} not assessed" if n_open else "")
            + f", in {time.perf_counter() - t0:.1f} s")
        for b in ds.building.values:
            r = ds.sel(building=b)
            i_n = float(r.i_neutral_a)
            neutral = f"neutral {i_n:.1f} A" if math.isfinite(i_n) else "no neutral at the service"
            say(f"  {b}: {int(r.lamps)} lamps, line max {float(r.i_line_max_a):.1f} A, "
                f"{neutral}, {str(r.verdict.values).upper()}")
        say(CAUTION)
        # exit codes as for assess: 1 a building fails a check, 3 one could not be assessed
        sys.exit(1 if n_fail else 3 if n_open else 0)
    spec = SweepSpec(
        fixtures=_fixtures(models, powers),
        settings=parse_range(settings, "--settings"),
        setting_kind=setting_axis,
        voltages_v=parse_range(voltages, "--voltages"), dimmer=dimmer, switch=switch,
        frequency_hz=frequency_hz, rated_v_v=rated_v, lamps=lamps, draws=draws,
        tolerance=tolerance, seed=seed)
    prog = _Progress("solving cases")
    try:
        ds = sweep(spec, ideal_resistive_case if ideal else circuit_case, chunk_size=chunk_size,
                   progress=prog, **run)
    finally:
        prog.close()
    write_netcdf(ds, output)
    dims = " x ".join(f"{ds.sizes[d]} {d}" for d in ("setting", "fixture", "voltage", "draw"))
    say(f"wrote {said}: {dims} = {ds.attrs['cases']} cases "
        f"({ds.attrs['distinct_cases']} distinct) in {time.perf_counter() - t0:.1f} s")
    flagged = int((ds.flags != "").sum())
    if flagged:
        say(f"  {flagged} cases carry solver flags (variable 'flags')")
    say(CAUTION)
