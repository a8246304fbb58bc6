"""Outputs are written whole or not at all: a temporary file in the target folder, then a
rename. Used by every writer of the package (figures, reports, exports, sweeps)."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ..errors import InputError

__all__ = ["check_output_path", "atomic_output", "write_atomic"]


def check_output_path(path: str | os.PathLike) -> Path:
    """The output path, after checking that its folder exists and is writable.

    Raises :class:`~pqcalc.errors.InputError` naming the path and the folder otherwise.
    """
    p = Path(path)
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{p}: the folder {folder} does not exist; create it or choose "
                         "another output path")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"{p}: the folder {folder} is not writable; choose another output "
                         "path")
    if p.is_dir() and p.suffix.lower() in (".json", ".nc", ".pdf", ".zip", ".png", ".svg",
                                           ".csv"):
        raise InputError(f"{p}: is a folder; expected a file name")
    return p


def _new_file_mode() -> int:
    um = os.umask(0)
    os.umask(um)
    return 0o666 & ~um


@contextmanager
def atomic_output(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; on success it becomes ``path`` (with the
    ordinary permissions of a new file, not the private ones of a temporary file); on any
    error it is removed and nothing is left behind."""
    p = check_output_path(path)
    try:
        fd, tmp = tempfile.mkstemp(dir=p.parent if str(p.parent) else ".",
                                   prefix=f".{p.name}.", suffix=".tmp")
    except OSError as e:
        raise InputError(f"{p}: cannot write in {p.parent or '.'}: {e.strerror}") from None
    os.close(fd)
    try:
        yield Path(tmp)
        os.chmod(tmp, _new_file_mode())
        os.replace(tmp, p)
    except OSError as e:
        Path(tmp).unlink(missing_ok=True)
        raise InputError(f"{p}: could not be written: {e.strerror or e}") from None
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_atomic(path: str | os.PathLike, data: bytes | str) -> Path:
    """Write ``data`` (bytes, or text as UTF-8) to ``path`` atomically."""
    with atomic_output(path) as tmp:
        tmp.write_bytes(data if isinstance(data, bytes) else data.encode("utf-8"))
    return Path(path)
