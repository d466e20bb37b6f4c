"""Atomic file output and output-directory safety.

Every file qcthermo writes goes through :func:`atomic_write`: written to a temporary file in the same
directory, flushed, then renamed over the target, so a reader never sees half a file and an
interrupted run leaves the old file intact.
"""

from __future__ import annotations

import contextlib
import os
import secrets
from collections.abc import Iterator
from pathlib import Path
from typing import IO

from .errors import QcthermoError


@contextlib.contextmanager
def atomic_open(path: str | os.PathLike, mode: str = "w", encoding: str | None = "utf-8") -> Iterator[IO]:
    """Open a temporary sibling of ``path`` for writing; rename it onto ``path`` on success."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    binary = "b" in mode
    tmp = path.parent / f".{path.name}.{secrets.token_hex(8)}.tmp"
    # mode 0o666 as a plain open() uses: the kernel applies the umask (mkstemp's files would be 0600)
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    try:
        with os.fdopen(fd, mode, encoding=None if binary else encoding) as handle:
            yield handle
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def atomic_write(path: str | os.PathLike, data: str | bytes) -> Path:
    """Write ``data`` (text or bytes) to ``path`` atomically; return the path."""
    with atomic_open(path, "wb" if isinstance(data, bytes) else "w") as handle:
        handle.write(data)
    return Path(path)


def prepare_output_dir(out: str | os.PathLike, force: bool = False, marker: str = "run.json") -> Path:
    """Make sure ``out`` may be written to and return it.

    An absent or empty directory is fine, and so is one that holds a previous qcthermo run (it has
    ``marker``). Any other non-empty directory is refused unless ``force``: files the user had are
    never overwritten without being asked.
    """
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise QcthermoError(f"{out} exists and is not a directory")
    if out.is_dir() and not force and any(out.iterdir()) and not (out / marker).exists():
        raise QcthermoError(f"{out} already holds other files; use --force to write into it anyway")
    out.mkdir(parents=True, exist_ok=True)
    return out
