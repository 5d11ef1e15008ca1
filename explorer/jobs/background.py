"""One way to run work in the background: a `Job` with progress, cancel, a time limit and one outcome.

Every piece of the dashboard's work that must not run on the server's event loop is a Job: isotherms, maps,
the quantum comparison, figures and reports (`PoolJob`: a task in a pool shared by every session, see
`porefill.explorer.jobs.compute`), a fit (`ProcessJob`: a spawned process of its own, which can be ended at
once), and a sweep (`ThreadJob`: a thread that hands the pores to worker processes or a Dask cluster,
`porefill.explorer.jobs.sweep_runner`).

A job speaks in events, the same for all three: ``("progress", fraction, text)`` any number of times, then
exactly one of ``("done", value)``, ``("cancelled", text)`` or ``("error", text)``. A session either polls
(`Job.poll`, from a periodic callback) or is called (`Job.watch`, from whichever thread the event happens on:
hand it to the session with `Document.add_next_tick_callback`). `Job.cancel` asks the work to stop at its
next check (``should_stop()``); a job past its time limit ends in an error that says so, and is cancelled.

Work that reports progress or can stop is a function ``fn(*args, progress, should_stop)``; raising
`Cancelled` means it stopped when asked. No Panel here.
"""
from __future__ import annotations

import logging
import multiprocessing
import queue as queue_module
import threading
import time
from concurrent.futures import Executor, Future
from typing import Callable

__all__ = ["start_worker", "limit_memory", "Cancelled", "Job", "PoolJob", "ProcessJob", "Standby", "ThreadJob", "time_limit_text", "error_text"]

log = logging.getLogger("porefill.explorer")
FINAL = ("done", "cancelled", "error")


def start_worker(*, nice: int = 5, ignore_interrupt: bool = False, compiled: bool = True) -> None:
    """What every background process does first (pool workers, sweep workers, a fit's process): run below
    the server's priority (the event loop and a browser on the same laptop stay responsive), end itself
    when its parent is gone (a killed server's SIGTERM skips the pool's shutdown; no orphan keeps
    computing), use one BLAS thread (`porefill.explorer.jobs.threads`) and, for a sweep on a terminal,
    leave Ctrl-C to the parent, which stops the sweep and ends its workers. ``compiled=False`` (a worker that
    only reads a file) skips loading the compiled physics kernels."""
    import os
    import signal

    if nice:
        try:
            os.nice(nice)
        except OSError:
            pass
    if ignore_interrupt:
        signal.signal(signal.SIGINT, signal.SIG_IGN)
    threading.Thread(target=_exit_with_parent, args=(os.getppid(),), daemon=True,
                     name="porefill-parent-watch").start()
    from porefill.explorer.jobs.threads import one_blas_thread

    one_blas_thread()
    if compiled:
        from porefill.physics.pore import compiled as kernels

        kernels.enable()       # a worker lives long enough to repay loading the compiled kernels


def limit_memory(extra_bytes: int) -> None:
    """Let this process map at most ``extra_bytes`` more than it has now (RLIMIT_AS, Linux and macOS): past
    it an allocation raises MemoryError in this process instead of squeezing the server's. No-op where the
    platform has no such limit."""
    try:
        import resource
    except ImportError:             # pragma: no cover - Windows
        return
    now = 0
    try:
        with open("/proc/self/status") as status:
            now = next(int(line.split()[1]) * 1024 for line in status if line.startswith("VmSize:"))
    except (OSError, StopIteration, ValueError):
        pass
    _, hard = resource.getrlimit(resource.RLIMIT_AS)
    soft = now + int(extra_bytes)
    if hard != resource.RLIM_INFINITY:
        soft = min(soft, hard)
    resource.setrlimit(resource.RLIMIT_AS, (soft, hard))


def _exit_with_parent(parent: int) -> None:
    import os
    from multiprocessing import parent_process

    asked = parent_process()
    if asked is not None and asked.pid != parent:
        # forked by a fork server (`_context`): the process that asked for this one is not its parent, and
        # the fork server lives while its children do, so watch the one that asked (its sentinel closes when
        # it ends or lets this process go)
        asked.join()
        os._exit(0)
    while os.getppid() == parent:
        time.sleep(1.0)
    os._exit(0)


class Cancelled(Exception):
    """The work stopped because it was asked to (`Job.cancel`); the message says how far it got."""


def time_limit_text(seconds: float) -> str:
    return f"this took longer than {seconds:g} s and was given up; try a smaller pore"


def error_text(exc: BaseException) -> str:
    """One line for a person: a ValueError says what is wrong; anything else only that it failed (the log
    keeps the traceback)."""
    if isinstance(exc, ValueError):
        return (str(exc).splitlines()[0] if str(exc) else type(exc).__name__)[:300]
    return f"the calculation failed: {type(exc).__name__}"


class Job:
    """Background work with progress, cancel, a time limit and one outcome (module docstring)."""

    def __init__(self, *, name: str, time_limit_s: float | None = None):
        self.name = name
        self.time_limit_s = time_limit_s
        self.started = time.monotonic()
        self.finished = False              # the final event has been handed out (poll) or sent (watch)
        self.outcome: tuple | None = None
        self._events: list[tuple] = []
        self._watchers: list[Callable[[tuple], None]] = []
        self._lock = threading.Lock()
        self._timer: threading.Timer | None = None
        if time_limit_s is not None:
            self._timer = threading.Timer(time_limit_s, self._time_out)
            self._timer.daemon = True
            self._timer.start()

    # what the work side calls -----------------------------------------------------------------------
    def _emit(self, event: tuple) -> None:
        with self._lock:
            if self.outcome is not None:
                return                     # one outcome only: later events (a result after a time-out) are dropped
            if event[0] in FINAL:
                self.outcome = event
                if self._timer is not None:
                    self._timer.cancel()
            watchers = list(self._watchers)
            if not watchers:
                self._events.append(event)
        for watch in watchers:
            try:
                watch(event)
            except Exception:          # noqa: BLE001 - a watcher's bug must not stop the work
                log.exception("%s: a watcher failed", self.name)
        if event[0] in FINAL and watchers:
            self.finished = True

    def _time_out(self) -> None:
        if self.outcome is None:
            log.error("%s passed the time limit of %g s", self.name, self.time_limit_s)
            self._emit(("error", time_limit_text(self.time_limit_s)))
            self.kill()

    # what the session calls --------------------------------------------------------------------------
    def poll(self) -> list[tuple]:
        """The events since the last poll (progress, then the outcome)."""
        self._collect()
        with self._lock:
            out, self._events = self._events, []
        if any(e[0] in FINAL for e in out):
            self.finished = True
        return out

    def watch(self, callback: Callable[[tuple], None]) -> None:
        """Call ``callback(event)`` for every event from now on (and at once for those not yet polled)."""
        with self._lock:
            pending, self._events = self._events, []
            self._watchers.append(callback)
        for event in pending:
            callback(event)
        if any(e[0] in FINAL for e in pending):
            self.finished = True

    def cancel(self) -> None:
        """Ask the work to stop at its next check."""

    def kill(self) -> None:
        """End the work now where that is possible (a process); else ask it to stop."""
        self.cancel()

    def _collect(self) -> None:
        """Move what the work reported into the event list (for jobs whose work reports through a pipe)."""

    def elapsed_s(self) -> float:
        return time.monotonic() - self.started


class PoolJob(Job):
    """``fn(*args)`` as one task of a shared executor (no progress; cancel drops it while it waits)."""

    def __init__(self, executor: Executor, fn: Callable, args: tuple = (), *, name: str,
                 time_limit_s: float | None = None):
        self.future: Future = executor.submit(fn, *args)     # raises at once if the executor is shut down
        super().__init__(name=name, time_limit_s=time_limit_s)
        self.future.add_done_callback(self._settle)

    def _settle(self, future: Future) -> None:
        if future.cancelled():
            self._emit(("cancelled", "cancelled before it started"))
            return
        exc = future.exception()
        if exc is not None:
            log.error("%s failed", self.name, exc_info=exc)
            self._emit(("error", error_text(exc), exc))
        else:
            self._emit(("done", future.result()))

    def cancel(self) -> None:
        self.future.cancel()


def _report_to(put: Callable[[tuple], None], fn: Callable, args: tuple, should_stop: Callable[[], bool]) -> None:
    last = [-1.0]

    def progress(fraction: float, text: str = "") -> None:
        if fraction - last[0] >= 0.01 or fraction >= 1.0:        # a few hundred events at most
            last[0] = fraction
            put(("progress", float(fraction), str(text)))

    try:
        value = fn(*args, progress=progress, should_stop=should_stop)
    except Cancelled as exc:
        put(("cancelled", str(exc) or "cancelled"))
    except Exception as exc:                    # noqa: BLE001 - reported, never raised into the server
        log.debug("background work failed", exc_info=True)
        put(("error", error_text(exc) if isinstance(exc, ValueError) else
             f"the calculation failed: {type(exc).__name__}: {str(exc)[:200]}"))
    else:
        put(("done", value))


class ThreadJob(Job):
    """``fn(*args, progress=, should_stop=)`` in a thread of this process (for work that itself hands its
    pieces to worker processes, such as a sweep)."""

    def __init__(self, fn: Callable, args: tuple = (), *, name: str, time_limit_s: float | None = None):
        super().__init__(name=name, time_limit_s=time_limit_s)
        self._stop = threading.Event()
        self.thread = threading.Thread(target=_report_to, args=(self._emit, fn, args, self._stop.is_set),
                                       name=name, daemon=True)
        self.thread.start()

    def cancel(self) -> None:
        self._stop.set()


def _process_main(fn, args, messages, stop, memory_limit_bytes=None, compiled=True) -> None:
    start_worker(compiled=compiled)
    if memory_limit_bytes is not None:
        limit_memory(memory_limit_bytes)
    _report_to(messages.put, fn, args, stop.is_set)


def _standby_main(tasks, messages, stop, memory_limit_bytes, compiled, preload) -> None:
    import importlib

    start_worker(compiled=compiled)
    for module in preload:
        try:
            importlib.import_module(module)
        except ImportError:           # the task imports what it needs itself (and says so if it cannot)
            pass
    task = tasks.get()                # (fn, args), or None: not needed after all
    if task is None:
        return
    if memory_limit_bytes is not None:
        limit_memory(memory_limit_bytes)     # from what it holds now: the modules above are not counted
    _report_to(messages.put, task[0], task[1], stop.is_set)


def _context(preload: tuple = ()):
    """How a job's process starts. Plain jobs: spawn (the server has threads, so it must not fork itself).
    Jobs that name modules to ``preload`` (the file readers, `porefill.explorer.jobs.file_parse`): forked from
    a fork server, a single-threaded process started once (by spawn) that imported those modules first. Each
    job still gets a fresh process holding nothing of an earlier job's, but skips Python's start-up and the
    imports (five files read back to back on a loaded 2-core machine: 0.53 s against 2.05 s spawned,
    benchmarks/bench_parsers.py), which is what a user dropping several files waited for. The fork server imports the first ``preload`` asked for and ends with this process;
    where there is none (Windows), spawn."""
    if not preload or "forkserver" not in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("spawn")
    ctx = multiprocessing.get_context("forkserver")
    ctx.set_forkserver_preload(list(preload))       # no effect once the fork server runs: the first list stays
    return ctx


class Standby:
    """A process started before it is needed (spawned, or forked from the fork server, `_context`): it has
    done `start_worker` and imported ``preload`` and waits for one task, so a `ProcessJob` given it skips
    Python's start-up and those imports (a file reader that imports pandas: about 0.3 s on a quiet machine,
    `porefill.explorer.jobs.file_parse`). Used once, like any job's process: a task cannot see what an
    earlier one left. `close` ends an unused one."""

    def __init__(self, *, memory_limit_bytes: int | None = None, compiled: bool = True, preload: tuple = ()):
        ctx = _context(preload)
        self.memory_limit_bytes, self.compiled = memory_limit_bytes, bool(compiled)
        self.messages, self.stop, self._tasks = ctx.Queue(), ctx.Event(), ctx.Queue()
        self.process = ctx.Process(target=_standby_main,
                                   args=(self._tasks, self.messages, self.stop, memory_limit_bytes, compiled,
                                         tuple(preload)), daemon=True, name="porefill-standby")
        self.process.start()
        self.used = False

    def fits(self, *, memory_limit_bytes: int | None, compiled: bool) -> bool:
        """Whether this standby can take a job with these settings (unused, alive, set up the same way)."""
        return (not self.used and self.process.is_alive() and memory_limit_bytes == self.memory_limit_bytes
                and bool(compiled) == self.compiled)

    def take(self, fn: Callable, args: tuple) -> None:
        self.used = True
        self._tasks.put((fn, args))

    def close(self) -> None:
        if not self.used:
            self.used = True
            self._tasks.put(None)
            self.process.join(timeout=0.1)
            if self.process.is_alive():
                self.process.terminate()


class ProcessJob(Job):
    """``fn(*args, progress=, should_stop=)`` in a process of its own (spawned, or forked from a fork server:
    never forked from the server, which has threads), talking through a queue; `kill` ends it at once.
    ``fn`` must be importable by name.
    ``memory_limit_bytes``: how much more address space the process may map once started (`limit_memory`);
    ``compiled``: whether it loads the compiled physics kernels (`start_worker`); ``standby``: a `Standby`
    started earlier with the same settings, which runs the job instead of a new process (ignored if it is
    used, ended or set up otherwise); ``preload``: modules a fresh process is forked with (`_context`)."""

    def __init__(self, fn: Callable, args: tuple = (), *, name: str, time_limit_s: float | None = None,
                 memory_limit_bytes: int | None = None, compiled: bool = True, standby: Standby | None = None,
                 preload: tuple = ()):
        if standby is not None and standby.fits(memory_limit_bytes=memory_limit_bytes, compiled=compiled):
            self._messages, self._stop, self.process = standby.messages, standby.stop, standby.process
            # held while the job lives: a standby still starting unpickles its queues and event after it is
            # taken, and the parent's dropping them would remove their semaphores before it can
            self._standby = standby
            self.process.name = name          # what it does now (the name is the parent's label for it)
            super().__init__(name=name, time_limit_s=time_limit_s)
            standby.take(fn, args)
            return
        ctx = _context(preload)
        self._messages = ctx.Queue()
        self._stop = ctx.Event()
        self.process = ctx.Process(target=_process_main,
                                   args=(fn, args, self._messages, self._stop, memory_limit_bytes, compiled),
                                   daemon=True, name=name)
        super().__init__(name=name, time_limit_s=time_limit_s)
        self.process.start()

    def _collect(self) -> None:
        while True:
            try:
                message = self._messages.get_nowait()
            except queue_module.Empty:
                break
            self._emit(message)
            if message[0] in FINAL:
                self.process.join(timeout=5)
        if self.outcome is None and not self.process.is_alive() and self._messages.empty():
            self._emit(("error", f"the process ended without a result (exit code {self.process.exitcode})"))

    def cancel(self) -> None:
        self._stop.set()

    def kill(self) -> None:
        if self.process.is_alive():
            self.process.terminate()
            self.process.join(timeout=5)
        self._collect()
        if self.outcome is None:
            self._emit(("cancelled", "ended"))
