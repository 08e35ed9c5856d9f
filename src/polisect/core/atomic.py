"""Atomic file writing: a reader never sees a half-written output file."""

from __future__ import annotations

import os
import tempfile
from typing import Callable


def atomic_write(path: str | os.PathLike, write: Callable[[str], None]) -> None:
    """Call ``write(tmp_path)`` on a temporary path beside *path*, then rename it over *path*.

    An interrupted or failed write leaves any older *path* untouched and no temporary file.
    """
    path = os.fspath(path)
    directory = os.path.dirname(os.path.abspath(path))
    os.makedirs(directory, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=directory, prefix=".tmp-", suffix="-" + os.path.basename(path))
    os.close(fd)
    try:
        write(tmp)
        with open(tmp, "rb+") as f:
            os.fsync(f.fileno())
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def atomic_write_text(path: str | os.PathLike, text: str) -> None:
    """Write *text* (UTF-8) to *path* atomically."""
    def write(tmp):
        with open(tmp, "w", encoding="utf-8") as f:
            f.write(text)
    atomic_write(path, write)


def atomic_write_bytes(path: str | os.PathLike, data: bytes) -> None:
    """Write *data* to *path* atomically."""
    def write(tmp):
        with open(tmp, "wb") as f:
            f.write(data)
    atomic_write(path, write)
