"""Writers of the exports: JSON text, CSV tables (a folder or a zip archive), netCDF.

Generic: they take text, tables and datasets and know nothing of what they hold (the
assessment's tables are built by :mod:`pqcalc.installation.export`). Everything is written
through a temporary file (or folder) and a rename: a failure leaves no partial output. A
missing or read-only folder raises :class:`~pqcalc.errors.InputError`.
"""

from __future__ import annotations

import csv
import ctypes
import errno
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


#: First characters that make a spreadsheet read a cell as a formula (``=HYPERLINK(...)``,
#: ``+cmd``, ``-2+3``, ``@SUM``) or shift it (tab, carriage return): a text cell starting
#: with one gets a leading apostrophe, the usual escape, so it stays text.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def _cell(v):
    if v is None:
        return ""
    if isinstance(v, (float, np.floating)):
        f = float(v)
        if not np.isfinite(f):
            raise InputError("internal: a non-finite number reached the CSV export")
        return repr(f)
    if isinstance(v, str):
        return escape_formula(v)
    return v


def escape_formula(s: str) -> str:
    """``s`` as a CSV text cell a spreadsheet will not execute: a leading ``=``, ``+``,
    ``-``, ``@``, tab or carriage return is escaped with an apostrophe, unless the cell is
    a plain number or a lone dash.

    >>> escape_formula('=HYPERLINK("http://x")'), escape_formula("-2.5"), escape_formula("-")
    ('\'=HYPERLINK("http://x")', '-2.5', '-')
    """
    if not s.startswith(FORMULA_STARTS) or s == "-":
        return s
    try:
        float(s)
        return s
    except ValueError:
        return "'" + s


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
        real, here = p.resolve(), Path.cwd().resolve()
        if real == here or real in here.parents or real.parent == real:
            raise InputError(f"{p}: the current folder (or one above it) cannot be replaced "
                             "by the export; give a new folder name, such as ./tables, or a "
                             ".zip file")
    # the folder is built beside its target and swapped in whole: never half an export
    tmp = Path(tempfile.mkdtemp(dir=p.parent, prefix=f".{p.name}.", suffix=".tmp"))
    old = None
    try:
        os.chmod(tmp, 0o777 & ~_umask())
        for name, text in tables.items():
            (tmp / name).write_text(text)
        if p.exists():
            if _exchange(tmp, p):  # one atomic step: tmp now holds the earlier export
                old = tmp
            else:  # no atomic exchange here: two renames, the earlier export put back on error
                old = p.parent / f"{tmp.name}.old"
                os.replace(p, old)
                os.replace(tmp, p)
        else:
            os.replace(tmp, p)
    except BaseException:
        if old is not tmp:
            shutil.rmtree(tmp, ignore_errors=True)
        if old is not None and old.exists() and not p.exists():
            os.replace(old, p)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    return p


_RENAME_EXCHANGE = 2  # renameat2 flag (Linux 3.15+, glibc 2.28+)
_AT_FDCWD = -100


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths in one atomic step (Linux ``renameat2(RENAME_EXCHANGE)``); False when
    the system or the file system cannot, so the caller falls back to two renames."""
    try:
        fn = ctypes.CDLL(None, use_errno=True).renameat2
    except (OSError, AttributeError):
        return False
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    if fn(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP, errno.EXDEV):
        return False
    raise OSError(err, os.strerror(err), str(b))


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
