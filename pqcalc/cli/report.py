"""``pqcalc report``: the PDF submittal, or the data exports (JSON, CSV tables, netCDF)."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from ..errors import InputError
from ..io.export import EXPORT_FORMATS, check_output_path
from ._common import main, user_errors

#: Output suffix -> format, when --format is not given.
_BY_SUFFIX = {".pdf": "pdf", ".json": "json", ".nc": "netcdf", ".zip": "csv", "": "csv"}


def _format_of(fmt: str | None, out: Path) -> str:
    if fmt is None:
        suffix = out.suffix.lower()
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
              help="Output: a .pdf, .json or .nc file; for csv a new folder, or a .zip file.")
@click.option("--format", "fmt", metavar="|".join(EXPORT_FORMATS),
              help="pdf (the submittal), json, csv (tables per circuit, node, order and "
                   "check) or netcdf. Default: from the output's suffix (.pdf, .json, .nc; "
                   ".zip or no suffix: csv).")
@click.option("--no-interaction", is_flag=True,
              help="Ideal stiff supply: skip re-solving under the distorted panel voltage.")
@user_errors
def report_cmd(installation, output, fmt, no_interaction):
    """Assess an INSTALLATION file and write the submittal or a data export.

    The PDF has a cover, a one-page summary of findings, the fixture-lineup compliance
    table with a spectrum against the limits per fixture type, per-panel results, the
    assumptions and model parameters, the standards and editions applied, and the cautions.
    Every output is written atomically: on any error nothing is left behind.

    Exit code 0 when every check passes, 1 when one fails (the output is still written),
    2 for bad input.
    """
    from ..assess import assess
    from ..installation import load_installation
    from ..io import export

    out = Path(output)
    kind = _format_of(fmt, out)
    check_output_path(out)
    if kind == "csv" and out.suffix.lower() not in ("", ".zip") and not out.is_dir():
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
    if kind == "pdf" and out.suffix.lower() != ".pdf":
        raise InputError(f"-o {out}: expected a file name ending in .pdf")
    a = assess(inst)
    extra = ""
    if kind in ("pdf", "json"):
        from ..report import default_lineup, report_pdf_bytes

        lineup, notes = default_lineup(inst)
        if kind == "pdf":
            data = report_pdf_bytes(a, lineup, notes)
        else:
            data = export.to_json(a, lineup).encode()
        export.write_bytes_atomic(out, data)
    elif kind == "csv":
        export.to_csv(a, out)
        if out.suffix.lower() != ".zip":
            extra = f": {', '.join(export.CSV_TABLES)}"
    else:
        export.to_netcdf(a, out)
    verdict = "FAIL" if a.failed else "PASS"
    click.echo(f"wrote {out} ({kind}{extra}); installation checks: {verdict}")
    sys.exit(1 if a.failed else 0)
