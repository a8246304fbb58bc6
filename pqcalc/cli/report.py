"""``pqcalc report``: the PDF submittal, or the data exports (JSON, CSV tables, netCDF)."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from ..errors import InputError
from ..installation.assess import workers
from ..installation.export import CSV_TABLES
from ..io.atomic import is_stdout, write_stdout
from ..io.export import EXPORT_FORMATS, check_output_path, write_bytes_atomic
from ._common import assess_with_progress, main, refuse_binary_terminal, user_errors, worker_options

#: Output suffix -> format, when --format is not given.
_BY_SUFFIX = {".pdf": "pdf", ".json": "json", ".nc": "netcdf", ".zip": "csv", "": "csv"}

#: The CSV tables by the name --table takes (the file name without .csv).
TABLES: tuple[str, ...] = tuple(t.removesuffix(".csv") for t in CSV_TABLES)


def csv_stream(tables: dict[str, str]) -> str:
    """Every CSV table in one text: each preceded by a line ``# table: NAME`` and followed
    by an empty line (what ``report -o - --format csv`` prints)."""
    return "".join(f"# table: {name.removesuffix('.csv')}\n{text}\n"
                   for name, text in tables.items())


def _format_of(fmt: str | None, out: Path, table: str | None = None) -> str:
    if fmt is None:
        if is_stdout(out):
            raise InputError("-o -: standard output has no suffix to tell the format; give "
                             f"--format ({', '.join(EXPORT_FORMATS)})")
        suffix = out.suffix.lower()
        if suffix == ".csv":
            if table is None:
                raise InputError(f"-o {out}: the CSV export is several tables; give a folder "
                                 "name (no suffix), a .zip file, or --table NAME for one table")
            return "csv"
        if suffix not in _BY_SUFFIX:
            raise InputError(f"-o {out}: cannot tell the format from the suffix {suffix!r}; "
                             f"give --format ({', '.join(EXPORT_FORMATS)})")
        return _BY_SUFFIX[suffix]
    f = fmt.lower()
    if f not in EXPORT_FORMATS:
        raise InputError(f"--format: expected one of {', '.join(EXPORT_FORMATS)}, got {fmt!r}")
    return f


@main.command("report")
@click.argument("installation", type=click.Path(dir_okay=False))
@click.option("-o", "--output", required=True, metavar="PATH",
              help="Output: a .pdf, .json or .nc file; for csv a new folder, or a .zip file "
                   "(with --table: a .csv file). - writes standard output (give --format).")
@click.option("--format", "fmt", metavar="|".join(EXPORT_FORMATS),
              help="pdf (the submittal), json, csv (tables per circuit, node, order and "
                   "check) or netcdf. Default: from the output's suffix (.pdf, .json, .nc; "
                   ".zip or no suffix: csv).")
@click.option("--table", type=click.Choice(TABLES),
              help="csv: write this one table only, as a plain CSV file (-o NAME.csv) or to "
                   "standard output (-o -). Without it, -o - --format csv prints every table, "
                   "each after a line '# table: NAME' and followed by an empty line.")
@click.option("--paper", metavar="A4|Letter",
              help="pdf: the paper size. Default: the installation file's [report] paper, "
                   "else the rule set's (A4 for IEC, Letter for US projects).")
@click.option("--no-interaction", is_flag=True,
              help="Ideal stiff supply: skip re-solving under the distorted panel voltage.")
@worker_options
@user_errors
def report_cmd(installation, output, fmt, table, paper, no_interaction, n_workers, scheduler):
    """Assess an INSTALLATION file and write the submittal or a data export.

    The PDF has a title block and revision table (from the file's [project] table), the
    contents, the summary of findings, the fixture-lineup compliance table with the
    spectrum of each fixture type's deciding state, per-panel line and neutral currents
    with the neutral spectrum, the diversity results, the assumptions in numbers (every
    component value and impedance used, with its origin), the standards and editions
    applied, the caution, and the per-order results of every state in an appendix.
    Every output is written atomically: on any error nothing is left behind.

    With -o - the output goes to standard output, whole once complete (a binary format only
    when standard output is redirected); the line saying what was written goes to stderr.

    Exit code 0 when every check passes, 1 when one fails (the output is still written),
    2 for bad input, 3 when the tool fails (the traceback is written to a file in the
    temporary folder).
    """
    from ..installation import export, load_installation

    out = Path(output)
    to_stdout = is_stdout(out)
    kind = _format_of(fmt, out, table)
    if table is not None and kind != "csv":
        raise InputError(f"--table: goes with the csv format, not {kind}")
    refuse_binary_terminal(out, kind)
    check_output_path(out)
    if table is not None and not to_stdout and out.suffix.lower() != ".csv":
        raise InputError(f"-o {out}: with --table give a file name ending in .csv, or -")
    if (kind == "csv" and table is None and not to_stdout
            and out.suffix.lower() not in ("", ".zip") and not out.is_dir()):
        raise InputError(f"-o {out}: for csv give a folder name (no suffix) or a .zip file")
    if kind == "netcdf":
        try:
            import h5netcdf  # noqa: F401
        except ImportError:
            raise InputError("netCDF output needs the h5netcdf package: pip install "
                             "'pqcalc[netcdf]'") from None
    inst = load_installation(installation)
    if no_interaction:
        from dataclasses import replace

        inst = replace(inst, analysis=replace(inst.analysis, supply_interaction=False))
    if kind == "pdf" and not to_stdout and out.suffix.lower() != ".pdf":
        raise InputError(f"-o {out}: expected a file name ending in .pdf")
    if paper is not None:
        if kind != "pdf":
            raise InputError(f"--paper: goes with the pdf format, not {kind}")
        from ..standards.regions import paper as region_paper
        from ..standards.regions import rule_set

        try:
            region_paper(rule_set(inst.supply.rules), paper)
        except InputError as e:
            raise InputError(f"--{e}") from None
    with workers(n_workers, scheduler) as ex:
        a = assess_with_progress(inst, ex)
    extra = ""
    if kind in ("pdf", "json"):
        from ..installation import evaluate_lineup
        from ..report import report_pdf_bytes

        lineup = evaluate_lineup(inst)
        if kind == "pdf":
            data = report_pdf_bytes(a, lineup, paper=paper)
        else:
            data = export.to_json(a, lineup).encode()
        write_bytes_atomic(out, data)
    elif kind == "csv" and table is not None:
        write_bytes_atomic(out, export.csv_tables(a)[f"{table}.csv"].encode())
        extra = f": {table}"
    elif kind == "csv" and to_stdout:
        write_stdout(csv_stream(export.csv_tables(a)))
        extra = f": {', '.join(TABLES)}"
    elif kind == "csv":
        export.to_csv(a, out)
        if out.suffix.lower() != ".zip":
            extra = f": {', '.join(export.CSV_TABLES)}"
    else:
        export.to_netcdf(a, out)
    verdict = "FAIL" if a.failed else "PASS"
    where = "standard output" if to_stdout else str(out)
    click.echo(f"wrote {where} ({kind}{extra}); installation checks: {verdict}", err=to_stdout)
    sys.exit(1 if a.failed else 0)
