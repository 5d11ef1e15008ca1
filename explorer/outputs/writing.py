"""Writing porefill's output files without ever destroying data.

- `check_output` runs before any computation: the folder exists and is writable, the target is not a
  symbolic link or a folder, it is none of the command's inputs, and an existing file is replaced only when
  asked (``--force``, or a yes on a terminal).
- `write_atomic` writes to a temporary file in the target folder, flushes it to disk, and renames it into
  place: a write cut short (disk full, a file-size limit, Ctrl-C) leaves the old file as it was.
"""
from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path
from typing import Iterable

__all__ = ["OutputRefused", "check_output", "write_atomic"]


class OutputRefused(ValueError):
    """An output place that would lose data or cannot be written; the message names it and why."""


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def check_output(name: str, *, option: str, inputs: Iterable[str] = (), force: bool = False,
                 ask=None) -> Path:
    """The path to write ``name`` to, checked (module docstring); OutputRefused says why not.

    ``ask(question) -> bool`` is asked before replacing an existing file without ``force`` (default: a
    yes/no question when standard input is a terminal, else no)."""
    if not name or not name.strip():
        raise OutputRefused(f"{option} needs a file name")
    path = Path(name)
    if path.is_symlink():
        raise OutputRefused(f"{option} {name} is a symbolic link: porefill writes only to a real path "
                            f"(give {path.resolve()} if that is meant)")
    if path.is_dir():
        raise OutputRefused(f"{option} {name} is a folder: give a file name")
    folder = path.resolve().parent
    if not folder.is_dir():
        raise OutputRefused(f"cannot write {name}: no folder {folder}")
    if not os.access(folder, os.W_OK):
        raise OutputRefused(f"cannot write {name}: the folder {folder} is not writable")
    for given in inputs:
        if given and _same_file(path, Path(given)):
            raise OutputRefused(f"{option} {name} is one of the inputs ({given}): porefill never writes over "
                                "its own input; choose another file name")
    if path.exists() and not force:
        if ask is None:
            ask = _ask_on_terminal
        if not ask(f"{name} exists; replace it? [y/N] "):
            raise OutputRefused(f"{name} exists: add --force to replace it, or choose another file name")
    return path


def _ask_on_terminal(question: str) -> bool:
    if not (sys.stdin is not None and sys.stdin.isatty() and sys.stderr.isatty()):
        return False
    sys.stderr.write(question)
    sys.stderr.flush()
    try:
        return sys.stdin.readline().strip().lower() in ("y", "yes")
    except (OSError, KeyboardInterrupt):
        return False


def write_atomic(path: Path, data: str | bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder renamed into place; on any
    failure the temporary file is removed and ``path`` is as it was. Raises OSError."""
    path = Path(path)
    raw = data.encode("utf-8") if isinstance(data, str) else data
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.resolve().parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
