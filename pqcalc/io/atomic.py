"""Outputs are written whole or not at all: a temporary file in the target folder, then a
rename. Used by every writer of the package (figures, reports, exports, sweeps).

The path ``-`` (:data:`STDOUT`) means standard output: the output is built whole in a private
temporary folder first and copied to standard output in one write once complete, so a
failure sends nothing.
"""

from __future__ import annotations

import os
import shutil
import sys
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ..errors import InputError

__all__ = ["STDOUT", "is_stdout", "write_stdout", "check_output_path", "atomic_output",
           "write_atomic"]

#: The output path that means standard output.
STDOUT = "-"


def is_stdout(path: str | os.PathLike | None) -> bool:
    """True when ``path`` is ``-``, standard output."""
    return path is not None and os.fspath(path) == STDOUT


def write_stdout(data: bytes | str) -> None:
    """Write ``data`` (bytes, or text as UTF-8) to standard output in one piece."""
    raw = data if isinstance(data, bytes) else data.encode("utf-8")
    out = sys.stdout
    out.flush()
    buf = getattr(out, "buffer", None)
    if buf is None:  # a text-only stream (some embedding consoles)
        out.write(raw.decode("utf-8", errors="replace"))
        out.flush()
        return
    buf.write(raw)
    buf.flush()


def check_output_path(path: str | os.PathLike) -> Path:
    """The output path, after checking that its folder exists and is writable.

    ``-`` (standard output) is returned as is. Raises :class:`~pqcalc.errors.InputError`
    naming the path and the folder otherwise.
    """
    p = Path(path)
    if is_stdout(p):
        return p
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
    error it is removed and nothing is left behind. For ``-`` the temporary file lives in a
    private temporary folder and its bytes go to standard output on success."""
    p = check_output_path(path)
    if is_stdout(p):
        folder = tempfile.mkdtemp(prefix="pqcalc-out-")
        try:
            tmp = Path(folder) / "output"
            yield tmp
            write_stdout(tmp.read_bytes())
        finally:
            shutil.rmtree(folder, ignore_errors=True)
        return
    if p.is_dir():
        raise InputError(f"{p}: is a folder; expected a file name")
    try:
        fd, tmp_name = tempfile.mkstemp(dir=p.parent if str(p.parent) else ".",
                                        prefix=f".{p.name}.", suffix=".tmp")
    except OSError as e:
        raise InputError(f"{p}: cannot write in {p.parent or '.'}: {e.strerror}") from None
    os.close(fd)
    staged = Path(tmp_name)
    try:
        yield staged
        os.chmod(staged, _new_file_mode())
        os.replace(staged, p)
    except OSError as e:
        staged.unlink(missing_ok=True)
        raise InputError(f"{p}: could not be written: {e.strerror or e}") from None
    except BaseException:
        staged.unlink(missing_ok=True)
        raise


def write_atomic(path: str | os.PathLike, data: bytes | str) -> Path:
    """Write ``data`` (bytes, or text as UTF-8) to ``path`` atomically (``-``: standard
    output, in one write)."""
    if is_stdout(path):
        write_stdout(data)
        return Path(path)
    with atomic_output(path) as tmp:
        tmp.write_bytes(data if isinstance(data, bytes) else data.encode("utf-8"))
    return Path(path)
