"""Reading a user's file or pipe with a size limit: never more than the limit (plus one byte) is read.

`Path.stat` says nothing about a pipe, ``/dev/zero`` or ``/dev/stdin`` (size 0), so the limit is kept by the
read itself. Standard library only: the command line and the server's gate use it before Panel is imported.
"""
from __future__ import annotations

import os
from pathlib import Path

__all__ = ["FileTooLarge", "read_bounded", "size_text"]


class FileTooLarge(OSError):
    """More bytes than the limit; the message names the file and the limit."""


def size_text(n: float) -> str:
    """A byte count for people: "12 bytes", "48 kB", "64 MB"."""
    return f"{n / 2**20:.0f} MB" if n >= 2**20 else f"{n / 1024:.0f} kB" if n >= 10 * 1024 else f"{n:.0f} bytes"


def read_bounded(path: str | os.PathLike, max_bytes: int) -> bytes:
    """The bytes of ``path`` (a file, a pipe or a device), reading at most ``max_bytes + 1``.

    Raises
    ------
    FileTooLarge
        When there is more than ``max_bytes``: the message names the file and the limit.
    IsADirectoryError, FileNotFoundError, PermissionError, OSError
        As `open` raises them.
    """
    if max_bytes < 0:
        raise ValueError(f"max_bytes must be >= 0; got {max_bytes!r}")
    path = Path(path)
    if path.is_dir():
        raise IsADirectoryError(21, "is a directory, not a file", str(path))
    with open(path, "rb") as f:
        data = f.read(max_bytes + 1)
    if len(data) > max_bytes:
        raise FileTooLarge(f"{path}: more than the {size_text(max_bytes)} porefill reads from such a file")
    return data
