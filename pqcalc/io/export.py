"""Writers of the exports: JSON text, CSV tables (a folder or a zip archive), netCDF.

Generic: they take text, tables and datasets and know nothing of what they hold (the
assessment's tables are built by :mod:`pqcalc.installation.export`). Everything is written
through a temporary file (or folder) and a rename: a failure leaves no partial output. A
missing or read-only folder raises :class:`~pqcalc.errors.InputError`.
"""

from __future__ import annotations

import csv
import io
import os
import shutil
import tempfile
import zipfile
from collections.abc import Mapping, Sequence
from contextlib import AbstractContextManager, nullcontext
from pathlib import Path
from typing import Any, Literal, get_args

import numpy as np

from ..errors import InputError
from .atomic import atomic_output, check_output_path, write_atomic

__all__ = ["ExportFormat", "EXPORT_FORMATS", "CF_CONVENTIONS", "check_output_path",
           "write_bytes_atomic", "csv_text", "write_csv_tables", "write_netcdf"]

ExportFormat = Literal["pdf", "json", "csv", "netcdf"]
#: Output formats of ``pqcalc report``, declared once for the library and the CLI.
EXPORT_FORMATS: tuple[str, ...] = get_args(ExportFormat)

#: The metadata convention every netCDF output of pqcalc follows (global ``Conventions``):
#: CF 1.10, with ``units`` (UDUNITS spelling, ``1`` for fractions and labels) and
#: ``long_name`` on every variable and coordinate.
CF_CONVENTIONS = "CF-1.10"


def _umask() -> int:
    um = os.umask(0)
    os.umask(um)
    return um


def write_bytes_atomic(path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` through a temporary file in the target folder, then rename
    (:func:`pqcalc.io.atomic.write_atomic`)."""
    return write_atomic(path, data)


def csv_text(rows: Sequence[Mapping[str, Any]], header: Sequence[str] | None = None) -> str:
    """Rows as CSV text with a header; None is an empty cell, floats in full precision,
    a non-finite float refused."""
    buf = io.StringIO()
    fields = list(header if header is not None else (rows[0].keys() if rows else ["empty"]))
    w = csv.DictWriter(buf, fieldnames=fields, lineterminator="\n")
    w.writeheader()
    for r in rows:
        w.writerow({k: _cell(v) for k, v in r.items()})
    return buf.getvalue()


def _cell(v):
    if v is None:
        return ""
    if isinstance(v, (float, np.floating)):
        f = float(v)
        if not np.isfinite(f):
            raise InputError("internal: a non-finite number reached the CSV export")
        return repr(f)
    return v


def write_csv_tables(tables: Mapping[str, str], folder: str | os.PathLike) -> Path:
    """Write ``{file name: CSV text}`` into ``folder``, or into a zip archive when it ends in
    ``.zip``.

    The folder is built next to its target under a temporary name and renamed into place;
    an existing target is replaced only when it holds nothing but these tables (an earlier
    export), never a folder with other files. Returns the path written.
    """
    p = check_output_path(folder)
    if p.suffix.lower() == ".zip":
        buf = io.BytesIO()
        with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
            for name, text in tables.items():
                z.writestr(name, text)
        return write_bytes_atomic(p, buf.getvalue())
    if p.exists():
        if not p.is_dir():
            raise InputError(f"{p}: exists and is not a folder; give a new folder name, or a "
                             "name ending in .zip for an archive")
        extra = sorted(x.name for x in p.iterdir() if x.name not in tables)
        if extra:
            raise InputError(f"{p}: the folder holds other files ({', '.join(extra[:3])}); "
                             "give a new or empty folder for the CSV tables")
    tmp = Path(tempfile.mkdtemp(dir=p.parent, prefix=f".{p.name}.", suffix=".tmp"))
    old = None
    try:
        os.chmod(tmp, 0o777 & ~_umask())
        for name, text in tables.items():
            (tmp / name).write_text(text)
        if p.exists():
            old = p.parent / f"{tmp.name}.old"
            os.replace(p, old)
        os.replace(tmp, p)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if old is not None and old.exists() and not p.exists():
            os.replace(old, p)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    return p


def write_netcdf(ds: Any, path: str | os.PathLike) -> Path:
    """Write an xarray Dataset as netCDF-4 (engine h5netcdf) atomically: never a half file.

    The dataset is in memory, so the write runs on dask's synchronous scheduler even when a
    dask client is active (xarray would otherwise take a cluster-wide lock for a local file).
    """
    p = check_output_path(path)
    try:
        import h5netcdf  # noqa: F401
        import h5py  # noqa: F401
    except ImportError as e:
        raise InputError(f"{p}: netCDF output needs h5netcdf and h5py ({e}); pip install "
                         "'pqcalc[netcdf]'") from None
    ctx: AbstractContextManager[Any]
    try:
        import dask

        ctx = dask.config.set(scheduler="synchronous")
    except ImportError:  # pragma: no cover - dask is optional
        ctx = nullcontext()
    with atomic_output(p) as tmp, ctx:
        ds.to_netcdf(tmp, engine="h5netcdf")
    return p
