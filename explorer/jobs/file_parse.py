"""A user's file parsed in a worker process of its own, with a time and a memory limit.

The dashboard hands every uploaded file (a measured CSV or workbook, a scenario TOML) to `parse_off_loop`:
the parser runs in a process of its own (`porefill.explorer.jobs.background.ProcessJob`, without the compiled
physics kernels), whose address space may grow by at most ``memory_bytes`` (RLIMIT_AS) and which is ended
after ``time_limit_s``. Meanwhile the server's event loop serves every other session. Whatever goes wrong
comes back as `ParseRefused`, one line that names the file; the caller shows it and changes nothing else.

Each file still gets a fresh process, but one is kept started ahead of need (`keep_ready`, a
`porefill.explorer.jobs.background.Standby` that has imported the readers and pandas): a dropped file is
read sooner (a 10 kB file on a quiet 2-core machine: 105 ms against 390 ms, benchmarks/bench_parsers.py; more
under load), and the next standby starts while it is read. Both are forked from a fork server that imported
the readers once, so a file dropped right after another does not wait for a whole start-up either (five 10 kB
files back to back, loaded 2-core machine: 0.53 s against 2.05 s spawned). No Panel here.
"""
from __future__ import annotations

import asyncio
import threading
import time
from typing import Callable

from porefill.explorer.jobs.background import ProcessJob, Standby

__all__ = ["PARSE_MEMORY_BYTES", "PARSE_TIME_LIMIT_S", "ParseRefused", "keep_ready", "parse_in_worker",
           "parse_off_loop"]

# A 50 MB lab export reads in ~2 s and maps ~450 MB (benchmarks/bench_parsers.py); a file that needs far
# more is refused rather than allowed to stall or squeeze the server.
PARSE_TIME_LIMIT_S = 30.0
PARSE_MEMORY_BYTES = 1024 * 2**20
_POLL_S = 0.05


# what the standby imports before a file arrives: the two readers the dashboard hands files to, and the
# libraries they read with
_PRELOAD = ("porefill.explorer.files.measured", "porefill.explorer.files.scenario_file", "pandas", "openpyxl")
_standby: Standby | None = None
_standby_lock = threading.Lock()


def keep_ready() -> None:
    """Start a reader process ahead of the next file, unless one is waiting already (the dashboard calls
    this when a session opens; every parse with the default memory limit also starts the next one)."""
    global _standby
    with _standby_lock:
        if _standby is None or not _standby.fits(memory_limit_bytes=PARSE_MEMORY_BYTES, compiled=False):
            if _standby is not None:
                _standby.close()
            _standby = Standby(memory_limit_bytes=PARSE_MEMORY_BYTES, compiled=False, preload=_PRELOAD)


def _take_standby(memory_bytes: int) -> Standby | None:
    """The waiting reader process for a parse with this memory limit (and a new one started for the next
    file), or None: a fresh process then."""
    global _standby
    if memory_bytes != PARSE_MEMORY_BYTES:
        return None
    with _standby_lock:
        taken, _standby = _standby, None
    keep_ready()
    return taken


class ParseRefused(Exception):
    """A file that could not be parsed: refused by its parser, or past the time or memory limit. The
    message is one line and names the file."""


def _parse_task(fn: Callable, args: tuple, kwargs: dict, refusals: tuple, *, progress, should_stop):
    """Runs in the worker: the parser's value, or its refusal as text (exceptions do not always pickle)."""
    try:
        return "ok", fn(*args, **kwargs)
    except MemoryError:
        return "memory", ""
    except refusals as exc:
        return "refused", str(exc)


class _Parse:
    def __init__(self, fn, args, kwargs, *, file_name: str, refusals, time_limit_s: float, memory_bytes: int):
        name = file_name
        self.name, self.time_limit_s, self.memory_bytes = name, time_limit_s, memory_bytes
        self.job = ProcessJob(_parse_task, (fn, args, kwargs, tuple(refusals)), name=f"reading {name}",
                              memory_limit_bytes=memory_bytes, compiled=False, standby=_take_standby(memory_bytes),
                              preload=_PRELOAD)
        self.deadline = time.monotonic() + time_limit_s

    def step(self) -> tuple[bool, object]:
        """(finished, value); raises ParseRefused."""
        for event in self.job.poll():
            if event[0] == "done":
                kind, value = event[1]
                if kind == "ok":
                    return True, value
                if kind == "memory":
                    raise ParseRefused(f"{self.name}: reading it needed more than {self.memory_bytes / 2**20:.0f} MB "
                                       "of memory; refused")
                raise ParseRefused(str(value).strip() or f"{self.name}: refused")
            if event[0] == "error":
                raise ParseRefused(f"{self.name}: could not be read ({str(event[1])[:200]})")
            if event[0] == "cancelled":
                raise ParseRefused(f"{self.name}: reading it was stopped")
        if time.monotonic() > self.deadline:
            self.job.kill()
            raise ParseRefused(f"{self.name}: reading it took longer than {self.time_limit_s:g} s; refused")
        return False, None


async def parse_off_loop(fn: Callable, *args, file_name: str, refusals: tuple = (), time_limit_s: float = PARSE_TIME_LIMIT_S,
                         memory_bytes: int = PARSE_MEMORY_BYTES, **kwargs):
    """``fn(*args, **kwargs)`` in a worker process, awaited without blocking the event loop.

    Parameters
    ----------
    fn
        The parser; importable by name (it is sent to a spawned process), as are its arguments and value.
    file_name
        The file's name, for the messages (``fn``'s own keywords, ``name`` included, go to ``fn``).
    refusals
        Exception classes whose message is the parser's own refusal (it names the file already).
    time_limit_s, memory_bytes
        The worker is ended after ``time_limit_s`` seconds; it may map ``memory_bytes`` more bytes once started.

    Raises
    ------
    ParseRefused
        One line naming the file: the parser's refusal, a time or memory overrun, or a failure.
    """
    parse = _Parse(fn, args, kwargs, file_name=file_name, refusals=refusals, time_limit_s=time_limit_s,
                   memory_bytes=memory_bytes)
    try:
        while True:
            finished, value = parse.step()
            if finished:
                return value
            await asyncio.sleep(_POLL_S)
    except asyncio.CancelledError:
        parse.job.kill()
        raise


def parse_in_worker(fn: Callable, *args, file_name: str, refusals: tuple = (), time_limit_s: float = PARSE_TIME_LIMIT_S,
                    memory_bytes: int = PARSE_MEMORY_BYTES, **kwargs):
    """`parse_off_loop` for a caller without an event loop: waits for the worker (same limits, same refusals)."""
    parse = _Parse(fn, args, kwargs, file_name=file_name, refusals=refusals, time_limit_s=time_limit_s,
                   memory_bytes=memory_bytes)
    while True:
        finished, value = parse.step()
        if finished:
            return value
        time.sleep(_POLL_S)
