"""Give memory back when the last browser session closes.

While people use the page the server keeps what makes moving back fast: cached geometry stages, potential
maps, isotherms for downloads, sweep points, and worker processes with caches of their own. When the last
session closes none of that is needed, so `session_closed` clears the caches, retires the worker pools (the
next request starts new ones), collects garbage and asks the C allocator to hand freed pages back to the
system (glibc's ``malloc_trim``; a no-op where that does not exist). Sessions are counted by the server's
page function (`porefill.explorer.server.server`), so a notebook is never affected.
"""
from __future__ import annotations

import ctypes
import ctypes.util
import gc
import logging
import threading

__all__ = ["session_opened", "session_closed", "open_sessions", "release_memory"]

_log = logging.getLogger("porefill.explorer")
_lock = threading.Lock()
_open = 0


def open_sessions() -> int:
    return _open


def session_opened() -> None:
    global _open
    with _lock:
        _open += 1


def session_closed(session_context) -> None:
    """Count a session out and let go of its page; with none left, release what the sessions kept
    (`release_memory`)."""
    global _open
    _let_go(session_context)
    with _lock:
        _open = max(0, _open - 1)
        last = _open == 0
    if last:
        release_memory()


def _let_go(session_context) -> None:
    """Drop a closed session's pending callbacks (each holds the views it would update) and its roots, so its
    page can be collected even where something still refers to the document (measured: without this every
    closed session's whole page stayed in memory, about 6 MB each)."""
    doc = getattr(session_context, "_document", None)
    if doc is None:
        return
    try:
        for callback in list(doc.session_callbacks):
            doc.callbacks.remove_session_callback(callback)
        doc.clear()
    except Exception:          # noqa: BLE001 - letting go must never take the server down
        _log.debug("could not let go of a closed session's document", exc_info=True)


def release_memory() -> None:
    """Clear the dashboard's caches, retire its worker pools, collect garbage and trim the C heap."""
    from porefill.explorer.jobs.compute import retire_pools
    from porefill.physics.caching import clear_caches
    from porefill.explorer.views.sizing import close_runners

    try:
        clear_caches()                     # porefill.physics.caching: every cache, physics' and the dashboard's
        with _lock:
            idle = _open == 0              # a session may have opened meanwhile: then keep the workers
        if idle:
            retire_pools()
            close_runners()
    except Exception:          # noqa: BLE001 - releasing memory must never take the server down
        _log.exception("releasing memory after the last session failed")
    gc.collect()
    _trim_heap()


def _trim_heap() -> None:
    name = ctypes.util.find_library("c")
    try:
        libc = ctypes.CDLL(name) if name else None
        if libc is not None and hasattr(libc, "malloc_trim"):
            libc.malloc_trim(0)
    except OSError:
        pass
