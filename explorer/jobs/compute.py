"""Work off the event loop: executors shared by every session, and a per-view runner that applies only
the result for the inputs that are still current.

The Bokeh server runs every session's callbacks on one Tornado event loop, so a computation there freezes
every open page. Isotherms (0.2 s to tens of seconds) go to a pool of worker *processes*: the solver is
numpy on small arrays plus Python loops, so it holds the GIL most of the time, and in a thread it slows the
other sessions' map redraws almost as much as on the loop itself (`benchmarks/bench_browser_redraw.py
--contention` measures both). Wall-potential maps (50–150 ms, numpy that releases the GIL for most of
its time) go to a small thread pool of their own, so they never queue behind an isotherm.

``POREFILL_ISOTHERM_WORKERS=thread`` runs the isotherms in threads instead (for that measurement, or
where processes cannot be started).
"""
from __future__ import annotations

import logging
import multiprocessing
import os
import threading
import time
from concurrent.futures import Executor, ProcessPoolExecutor, ThreadPoolExecutor
from functools import partial
from typing import Any, Callable

import panel as pn
from panel.io.state import set_curdoc

from porefill.physics.choices import DEFAULT_POINTS
from porefill.explorer.jobs.background import PoolJob, start_worker, time_limit_text
from porefill.physics.caching import memoize

__all__ = ["TIME_LIMIT_S", "SLIDER_SETTLE_S", "LatestRunner", "on_session", "isotherm_pool", "map_pool", "retire_pools", "temperature_window", "short_error"]

log = logging.getLogger("porefill.explorer")

TIME_LIMIT_S = 60.0          # a request that takes longer ends in a message in its view
ISOTHERM_POINTS = DEFAULT_POINTS
ISOTHERM_WORKERS = 2
# requests closer together than this are one burst (`LatestRunner`): a person pressing a slider's arrow key
# again and again leaves 150–250 ms between presses, a held key ~30 ms
SLIDER_SETTLE_S = 0.3

_pools: dict[str, Executor] = {}
_pools_lock = threading.Lock()


def _pool(kind: str) -> Executor:
    with _pools_lock:
        pool = _pools.get(kind)
        if pool is None:
            if kind == "isotherm" and os.environ.get("POREFILL_ISOTHERM_WORKERS", "process") == "process":
                # spawn, not fork: the server process has threads (Tornado, Bokeh), which fork would copy
                # in whatever state they are in
                pool = ProcessPoolExecutor(ISOTHERM_WORKERS, mp_context=multiprocessing.get_context("spawn"),
                                           initializer=_warm_worker)
            else:
                pool = ThreadPoolExecutor(ISOTHERM_WORKERS, thread_name_prefix=f"porefill-{kind}")
            _pools[kind] = pool
        return pool


def retire_pools() -> None:
    """Shut the isotherm pool down (a later request starts a new one): its worker processes and what they
    cache go with them. Jobs already given to it still run. Used when no session is open."""
    with _pools_lock:
        pool = _pools.pop("isotherm", None)
    if pool is not None:
        pool.shutdown(wait=False, cancel_futures=False)


def isotherm_pool() -> Executor:
    """Executor for isotherms (worker processes by default), created on first use."""
    return _pool("isotherm")


def map_pool() -> Executor:
    """Executor for wall-potential maps, line cuts and readouts (threads), created on first use."""
    return _pool("map")


def _warm_worker() -> None:
    start_worker()             # priority, parent watch, one BLAS thread (explorer/jobs/background.py)
    import porefill.physics.lattice_gas.adsorption  # noqa: F401 - a worker's first isotherm should not pay for the imports


# jobs: top-level functions, so that a process pool can pickle them ------------------------------------
@memoize(maxsize=8)
def isotherm_job(scenario):
    """The dashboard's isotherm for ``scenario`` (title and notes dropped: they do not change it)."""
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    return compute_isotherm(scenario.replace(title="", notes=""), n_points=ISOTHERM_POINTS)


def temperature_window(adsorbate: str) -> tuple[float, float, float]:
    """(lowest K, highest K, typical K) of ``adsorbate``'s vapour-pressure equation.

    The equations' limits are held constants (`porefill.physics.substances.vapour_pressure`), so this never
    waits for CoolProp or a worker: the first page of a busy server used to block the event loop here.
    """
    from porefill.physics.substances.vapour_pressure import temperature_range, typical_temperature

    lo, hi, _ = temperature_range(adsorbate)
    return float(lo), float(hi), float(typical_temperature(adsorbate))


def short_error(exc: BaseException) -> str:
    """One line for the page: a user-facing ValueError says what is wrong; anything else says only that
    it failed (the server log keeps the traceback)."""
    if isinstance(exc, TimeoutError):        # carries the limit that was passed (a view may have its own)
        limit = exc.args[0] if exc.args and isinstance(exc.args[0], (int, float)) else TIME_LIMIT_S
        return time_limit_text(limit)
    if isinstance(exc, ValueError):
        text = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        return text[:300]
    return "the calculation failed (details are in the server log)"


class LatestRunner:
    """Runs one view's computation in an executor and applies only the newest request's result.

    Each request gets a generation number; a result (or error) arriving for an older generation is
    dropped. At most one request per view is in the executor at a time, so one session dragging a slider
    through slow pores occupies one worker, not all of them: while one runs, only the newest of the
    waiting requests is kept and starts when the running one ends (or passes the time limit).

    Requests that come in a burst (each within ``settle_s`` of the one before, as a slider's arrow key
    pressed again and again sends them) are coalesced: the first starts at once, the rest wait until the
    burst has been quiet for ``settle_s`` and only the newest of them runs: six requests compute the first and
    the last, not six (``started`` counts what was handed to the executor). A served page's arrow keys are
    already held back in the browser until the presses stop (`porefill.explorer.views.slider_keys`).

    Outside a served page (tests, notebooks) the computation runs at once, in the caller's thread.
    """

    def __init__(self, kind: str, *, name: str, time_limit_s: float = TIME_LIMIT_S, settle_s: float = 0.0):
        if kind not in ("isotherm", "map"):
            raise ValueError(f"kind must be 'isotherm' or 'map'; got {kind!r}")
        if not 0.0 <= settle_s <= 5.0:
            raise ValueError(f"settle_s must be 0–5 s; got {settle_s!r}")
        self.kind = kind
        self.name = name
        self.time_limit_s = time_limit_s
        self.settle_s = settle_s
        self.generation = 0
        self.started = 0                  # computations handed to the executor (or run at once)
        self._running: PoolJob | None = None
        self._queued: tuple | None = None
        self._last_request = float("-inf")
        self._waiting = False             # a timer will look at the queued request once the burst is quiet

    def submit(self, fn: Callable, args: tuple, on_result: Callable[[Any], None],
               on_error: Callable[[BaseException], None]) -> int:
        """Ask for ``fn(*args)``; ``on_result(value)`` or ``on_error(exc)`` runs on the session's thread
        if this is still the newest request then. Returns the request's generation."""
        self.generation += 1
        gen = self.generation
        doc = pn.state.curdoc
        if doc is None or doc.session_context is None:
            self.started += 1
            try:
                value = fn(*args)
            except Exception as exc:   # noqa: BLE001 - shown in the view, logged here
                log.warning("%s failed for %r", self.name, args, exc_info=True)
                on_error(exc)
            else:
                on_result(value)
            return gen
        job = (gen, fn, args, on_result, on_error, doc)
        now = time.monotonic()
        in_burst = now - self._last_request < self.settle_s
        self._last_request = now
        if self._running is not None and not self._running.future.done() and not self._running.future.cancel():
            self._queued = job           # replaces an older queued request, which is never run
        elif in_burst:
            self._queued = job
            self._wait_for_quiet(doc)
        else:
            self._start(job)
        return gen

    def _quiet_left_s(self) -> float:
        return self._last_request + self.settle_s - time.monotonic()

    def _wait_for_quiet(self, doc) -> None:
        """Start the queued request once no request has come for ``settle_s`` (and nothing runs)."""
        if self._waiting:
            return
        self._waiting = True

        def look():
            self._waiting = False
            if self._queued is None:
                return
            if self._quiet_left_s() > 0:
                self._wait_for_quiet(doc)          # a newer request came meanwhile
            elif self._running is None or self._running.future.done():
                self._start(self._queued)
            # else: the running one starts it when it settles

        try:
            doc.add_timeout_callback(look, max(1, int(1e3 * self._quiet_left_s()) + 1))
        except Exception:          # noqa: BLE001 - the session was closed meanwhile
            self._waiting = False
            log.debug("session closed while a request waited", exc_info=True)

    def _start(self, job) -> None:
        gen, fn, args, on_result, on_error, doc = job
        self._queued = None
        try:
            try:
                work = PoolJob(_pool(self.kind), fn, args, name=self.name, time_limit_s=self.time_limit_s)
            except RuntimeError:          # the pool was retired meanwhile (session_memory): a new one
                with _pools_lock:
                    _pools.pop(self.kind, None)
                work = PoolJob(_pool(self.kind), fn, args, name=self.name, time_limit_s=self.time_limit_s)
        except Exception as exc:          # noqa: BLE001 - e.g. a pool broken by a killed worker
            log.exception("%s: could not start", self.name)
            with _pools_lock:
                _pools.pop(self.kind, None)      # the next request builds a fresh pool
            on_error(exc)
            return
        self._running = work
        self.started += 1
        settled = {"done": False}

        def settle(event):
            # on the session's thread, document locked
            if settled["done"] or event[0] == "progress":
                return
            settled["done"] = True
            if self._running is work:
                self._running = None
            if event[0] == "cancelled":            # replaced by a newer request, which has started already
                return
            if gen == self.generation:
                try:
                    if event[0] == "done":
                        on_result(event[1])
                    else:
                        on_error(event[2] if len(event) > 2 else TimeoutError(self.time_limit_s))
                except Exception:          # noqa: BLE001 - a bug in a view must not kill the session
                    log.exception("%s: applying the result failed", self.name)
            if self._queued is not None:
                if self._quiet_left_s() > 0:
                    self._wait_for_quiet(doc)      # still inside a burst: its newest request runs after it
                else:
                    self._start(self._queued)

        # events arrive on a worker or timer thread: hand each over to the session
        work.watch(lambda event: on_session(doc, partial(settle, event)))


def _with_doc(doc, callback):
    with set_curdoc(doc):
        callback()


def on_session(doc, callback) -> None:
    """Run ``callback`` on the session's event loop with its document as Panel's current one
    (`Document.add_next_tick_callback` is the one document method safe to call from another thread)."""
    try:
        doc.add_next_tick_callback(partial(_with_doc, doc, callback))
    except Exception:          # noqa: BLE001 - the session was closed meanwhile: nothing to show it to
        log.debug("session closed before a result arrived", exc_info=True)
