"""Kernels of model isotherms (`porefill.physics.distribution.kernel`), built in parallel and kept on disk.

`kernel_for(spec)` returns the kernel of a spec from, in order: this process's memory, the disk cache, or a
build. A build runs the spec's sizes in worker processes (spawned, one BLAS thread each, largest pores first:
the sweep's workers, `porefill.explorer.jobs.sweep_runner`) and is then written to the disk cache, so the
dashboard's sessions and later runs of the command line reuse it.

The disk cache is a folder of gzipped JSON files (never pickles: a cache file is data, read with `json`),
one per spec, named by `KernelSpec.key` (a digest of the spec: base scenario, sizes, points, p/p0 range, site
model and the kernel's format version). Its place: ``$POREFILL_CACHE_DIR``, else ``$XDG_CACHE_HOME/porefill``,
else ``~/.cache/porefill``; under it ``kernels/``. A file that cannot be read or was built for another spec is
ignored and rebuilt; a cache folder that cannot be written costs only the reuse.
"""
from __future__ import annotations

import gzip
import json
import logging
import multiprocessing
import os
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor
from concurrent.futures import wait as wait_futures
from pathlib import Path
from typing import Callable

from porefill.physics.caching import BoundedCache
from porefill.physics.distribution.kernel import Kernel, KernelSpec, kernel_column

__all__ = ["cache_dir", "kernel_for", "load_kernel", "store_kernel", "KernelStopped", "MEMORY"]

_log = logging.getLogger(__name__)
MEMORY = BoundedCache(16)          # kernels by spec key, shared by the sessions of one server
_POLL_S = 0.2


class KernelStopped(Exception):
    """The build was stopped before every size was computed."""


def cache_dir() -> Path:
    """The folder kernels are kept in (module docstring)."""
    root = os.environ.get("POREFILL_CACHE_DIR")
    if not root:
        xdg = os.environ.get("XDG_CACHE_HOME")
        root = os.path.join(xdg, "porefill") if xdg else os.path.join(os.path.expanduser("~"), ".cache", "porefill")
    return Path(root) / "kernels"


def _path(spec: KernelSpec) -> Path:
    return cache_dir() / f"{spec.key()}.json.gz"


def load_kernel(spec: KernelSpec) -> Kernel | None:
    """The kernel of ``spec`` from the disk cache, or None (absent, unreadable, or built for another spec)."""
    path = _path(spec)
    try:
        with gzip.open(path, "rt", encoding="utf-8") as fh:
            data = json.load(fh)
        return Kernel.from_json(data, spec)
    except FileNotFoundError:
        return None
    except (OSError, ValueError, KeyError, TypeError, EOFError) as exc:
        _log.info("kernel cache %s not used: %s", path, exc)
        return None


def store_kernel(kernel: Kernel) -> Path | None:
    """Write ``kernel`` to the disk cache (atomically); None when the folder cannot be written."""
    from porefill.explorer.outputs.writing import write_atomic

    path = _path(kernel.spec)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        raw = gzip.compress(json.dumps(kernel.to_json(), separators=(",", ":")).encode("utf-8"), mtime=0)
        write_atomic(path, raw)
        return path
    except OSError as exc:
        _log.info("kernel cache %s not written: %s", path, exc)
        return None


def _column_job(spec: KernelSpec, i: int) -> dict:
    return kernel_column(spec, i)


def kernel_for(spec: KernelSpec, *, workers: int | None = None, progress: Callable[[int, int], None] | None = None,
               stop=None, use_disk: bool = True) -> Kernel:
    """The kernel of ``spec`` (module docstring). ``workers``: processes for a build (default: the
    machine's cores; 1 builds here); ``progress(done, total)`` during a build; ``stop`` a
    `threading.Event` (or callable) that ends a build early with `KernelStopped`."""
    from porefill.physics.pore import compiled

    compiled.enable()
    key = spec.key()
    kernel = MEMORY.get(key)
    if kernel is None and use_disk:
        kernel = load_kernel(spec)
    if kernel is None:
        kernel = _build(spec, workers or os.cpu_count() or 1, progress, stop)
        if use_disk:
            store_kernel(kernel)
    MEMORY.put(key, kernel)
    return kernel


def _stopped(stop) -> bool:
    if stop is None:
        return False
    return bool(stop()) if callable(stop) else bool(stop.is_set())


def _build(spec: KernelSpec, workers: int, progress, stop) -> Kernel:
    from porefill.explorer.jobs.sweep_runner import _cost, _init_worker

    scenarios = spec.scenarios()
    columns: list = [None] * len(scenarios)
    total = len(scenarios)

    def take(i, column):
        columns[i] = column
        if progress is not None:
            progress(sum(c is not None for c in columns), total)

    if workers == 1:
        for i in range(total):
            if _stopped(stop):
                raise KernelStopped(f"stopped after {i} of {total} sizes")
            take(i, kernel_column(spec, i))
        return Kernel(spec, tuple(columns))
    order = sorted(range(total), key=lambda i: -_cost(scenarios[i]))
    with ProcessPoolExecutor(min(workers, total), mp_context=multiprocessing.get_context("spawn"),
                             initializer=_init_worker) as pool:
        futures = {pool.submit(_column_job, spec, i): i for i in order}
        pending = set(futures)
        try:
            while pending:
                if _stopped(stop):
                    raise KernelStopped(f"stopped after {total - len(pending)} of {total} sizes")
                finished, pending = wait_futures(pending, timeout=_POLL_S, return_when=FIRST_COMPLETED)
                for f in finished:
                    take(futures[f], f.result())
        except BaseException:
            for f in pending:
                f.cancel()
            raise
    return Kernel(spec, tuple(columns))
