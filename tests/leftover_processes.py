"""Find processes a test run left behind: every process the run starts inherits a marker in its
environment (``POREFILL_TEST_RUN``), so one found still alive at the end was started by the run, whoever its
parent is now (an orphan is re-parented to init and is no longer a descendant). Linux only (/proc)."""
from __future__ import annotations

import os
import time
from pathlib import Path

VARIABLE = "POREFILL_TEST_RUN"


def mark_run() -> str:
    """Put this run's marker in the environment (inherited by every process started from now on)."""
    value = f"{os.getpid()}-{time.time_ns()}"
    os.environ[VARIABLE] = value
    return value


def carrying(marker: str) -> list[tuple[int, str]]:
    """(pid, command line) of every live process but this one whose environment holds ``marker``, less this
    process's own multiprocessing helpers (its resource tracker and pool workers end when it does)."""
    if not Path("/proc").is_dir():
        return []
    want, me, found = f"{VARIABLE}={marker}".encode(), os.getpid(), []
    for name in os.listdir("/proc"):
        if not name.isdigit() or int(name) == me:
            continue
        try:
            if want not in Path(f"/proc/{name}/environ").read_bytes().split(b"\0"):
                continue
            state = next((line.split()[1] for line in Path(f"/proc/{name}/status").read_text().splitlines()
                          if line.startswith("State:")), "?")
            cmd = Path(f"/proc/{name}/cmdline").read_bytes().replace(b"\0", b" ").decode(errors="replace")
        except (OSError, StopIteration):
            continue                        # ended meanwhile, or not ours to read
        if state == "Z":                    # a zombie has ended; only its parent's reaping is pending
            continue
        if _own_helper(name, cmd, me):
            continue                        # this process's own tracker, pool workers and fork server (and
                                            # what the fork server forked): they watch this process and end
                                            # with it (explorer/jobs/background.py: start_worker, _context)
        found.append((int(name), cmd.strip()[:160]))
    return found


def _own_helper(pid: str, cmd: str, me: int) -> bool:
    helpers = ("multiprocessing.resource_tracker", "multiprocessing.spawn", "multiprocessing.forkserver")
    parent = _parent(pid)
    if parent == me and any(h in cmd for h in helpers):
        return True
    # forked by this process's fork server: its command line is the server's
    return "multiprocessing.forkserver" in cmd and _parent(str(parent)) == me


def _parent(pid: str) -> int:
    try:
        return int(Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[1])
    except (OSError, IndexError, ValueError):
        return -1


def left_behind(marker: str, grace_s: float = 15.0) -> list[tuple[int, str]]:
    """Processes still carrying ``marker`` after ``grace_s`` seconds for them to end on their own."""
    deadline = time.monotonic() + grace_s
    while True:
        alive = carrying(marker)
        if not alive or time.monotonic() > deadline:
            return alive
        time.sleep(0.5)
