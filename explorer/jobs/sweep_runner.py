"""Run a `porefill.physics.sweep.SweepSpec` in parallel: worker processes on this machine, or a Dask cluster.

`SweepRunner.run` computes every pore of the grid that is not in its cache (`ResultCache`, keyed on the
frozen scenario and the number of points, bounded, least recently used out first), reports progress after
each pore, and stops when asked: pending pores are cancelled and the partial result comes back marked
``stopped``. Pores go to the workers largest first, so a slow pore does not start last and keep the rest
waiting; results come back in the spec's order.

Where the work runs:

- ``workers=1``: in the calling process, one pore after the other;
- otherwise a `concurrent.futures.ProcessPoolExecutor` (spawn context: the dashboard's server has
  threads, which fork would copy mid-state) of ``workers`` processes (default: the machine's cores), or an
  executor handed in (the dashboard shares one across sessions);
- ``cluster="tcp://host:8786"``: a `dask.distributed.Client` on that scheduler. Its workers must run the
  same environment (porefill installed: they import `porefill.explorer.jobs.sweep_runner` and `physics`).

This module imports no GUI, so command-line sweeps and Dask workers stay light.
"""
from __future__ import annotations

import multiprocessing
import os
import threading
import time
from concurrent.futures import FIRST_COMPLETED, Executor, ProcessPoolExecutor
from concurrent.futures import wait as wait_futures
from dataclasses import dataclass, field
from typing import Callable

from porefill.physics.caching import BoundedCache
from porefill.physics.limits import estimated_sites
from porefill.physics.scenario import Scenario
from porefill.physics.sweep import SweepSpec

__all__ = ["point_job", "ResultCache", "SweepResult", "SweepRunner", "SWEEP_CACHE", "ClusterError", "estimate_seconds"]

_POLL_S = 0.2                  # how often a waiting sweep looks at its stop flag


class ClusterError(RuntimeError):
    """The Dask scheduler could not be reached or used; the message says which address and why."""


def point_job(scenario: Scenario, n_points: int) -> dict:
    """One pore of a sweep (`porefill.physics.sweep.sweep_point` with the steps of `porefill isotherm --json`).

    A scenario the model cannot compute (its ValueError: e.g. no site can fill) gives a dict with the
    pore's size, wall, temperature and an ``error`` message instead of steps, so one pore does not end
    the sweep.
    """
    from porefill.physics.sweep import sweep_point

    try:
        return sweep_point(scenario, n_points)
    except ValueError as exc:
        return {"size_angstrom": scenario.size_angstrom, "wall_angstrom": scenario.effective_wall_angstrom,
                "temperature_k": scenario.temperature_k, "site_model": scenario.site_model_used,
                "n_points": n_points, "error": str(exc).splitlines()[0] if str(exc) else "ValueError"}


def _key(scenario: Scenario, n_points: int) -> tuple:
    return scenario.model_key(), int(n_points)


class ResultCache:
    """Sweep points by (scenario less its words, n_points); at most ``maxsize``, least recently used out
    first. Safe to share between threads (the dashboard's sessions); under porefill's one cache policy
    (`porefill.physics.caching.BoundedCache`, cleared with every other cache)."""

    def __init__(self, maxsize: int = 256):
        if not (isinstance(maxsize, int) and maxsize >= 1):
            raise ValueError(f"maxsize must be a whole number >= 1; got {maxsize!r}")
        self.maxsize = maxsize
        self._store = BoundedCache(maxsize)

    def get(self, scenario: Scenario, n_points: int) -> dict | None:
        return self._store.get(_key(scenario, n_points))

    def put(self, scenario: Scenario, n_points: int, value: dict) -> None:
        self._store.put(_key(scenario, n_points), value)

    def __len__(self) -> int:
        return len(self._store)

    def clear(self) -> None:
        self._store.clear()


SWEEP_CACHE = ResultCache(256)         # shared by the dashboard's sessions (results depend only on the key)


@dataclass
class SweepResult:
    """The pores of a sweep in the spec's order (None: not computed, the sweep was stopped first)."""

    spec: SweepSpec
    scenarios: tuple
    points: list
    stopped: bool = False
    seconds: float = 0.0
    from_cache: int = 0
    where: str = "here"
    errors: list = field(default_factory=list)

    @property
    def done(self) -> list[dict]:
        """The computed pores, in the spec's order."""
        return [p for p in self.points if p is not None]

    @property
    def complete(self) -> bool:
        return all(p is not None for p in self.points)


def _is_set(stop) -> bool:
    if stop is None:
        return False
    return bool(stop()) if callable(stop) else bool(stop.is_set())


def _cost(scenario: Scenario) -> float:
    """Rough relative cost of a pore: its number of sites (default spacing ~3.6 Å for the estimate)."""
    spacing = scenario.lattice_spacing_angstrom or 3.6
    return estimated_sites(scenario.shape, scenario.size_angstrom, spacing)


# seconds for a 15 Å helium hexagon (300 points) on this project's 2-core development machine, and how the
# time grows with the number of sites (benchmarks/bench_isotherm.py, bench_quantum.py: classical 15/50/100 Å
# 0.12/0.78/2.45 s with the row blend's two lattices; quantum, new geometry, the cross-section's states shared by
# both lattices and each lattice's inner region solved for itself, 15/21.5/30 Å 1.7/8.9/48 s)
_SECONDS_15A = {"classical": 0.12, "quantum": 1.73}
_GROWTH = {"classical": 0.8, "quantum": 2.35}


def estimate_seconds(spec: SweepSpec, workers: int | None = None, cache: ResultCache | None = None) -> float:
    """A rough wall time (s) for the pores of ``spec`` not in ``cache``, shared among ``workers`` processes:
    each pore's time scaled from a 15 Å helium hexagon by its number of sites and its site model. For the
    page to say before a sweep starts; within a factor of ~2-3 on a laptop like the development machine."""
    reference = estimated_sites("hexagon", 15.0, 3.6)
    total = 0.0
    for sc in spec.scenarios():
        if cache is not None and cache.get(sc, spec.n_points) is not None:
            continue
        model = sc.site_model_used if sc.site_model_used in _SECONDS_15A else "classical"
        ratio = max(_cost(sc) / reference, 0.05)
        total += _SECONDS_15A[model] * ratio ** _GROWTH[model] * spec.n_points / 300.0
    n = max(1, min(workers or os.cpu_count() or 1, len(spec.scenarios())))
    return total / n


def _init_worker() -> None:
    from porefill.explorer.jobs.background import start_worker

    # Ctrl-C in a terminal reaches the whole process group: the parent stops the sweep and ends the workers;
    # a worker whose parent is gone ends itself (no orphans)
    start_worker(ignore_interrupt=True)
    import porefill.physics.lattice_gas.adsorption  # noqa: F401 - a worker's first pore should not pay for the imports


class SweepRunner:
    """Runs sweeps with a cache, locally in processes or on a Dask cluster (module docstring).

    Parameters
    ----------
    workers : int, optional
        Processes on this machine (default: its cores); 1 runs in the calling process.
    cluster : str, optional
        Address of a Dask scheduler (``tcp://host:port``); the sweep runs there instead.
    executor : concurrent.futures.Executor, optional
        A pool to use instead of starting one (it is not shut down by `close`).
    cache : ResultCache, optional
        Default: a new one of 256 pores.
    """

    def __init__(self, *, workers: int | None = None, cluster: str | None = None, executor: Executor | None = None,
                 cache: ResultCache | None = None):
        if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int) or workers < 1):
            raise ValueError(f"workers must be a whole number >= 1; got {workers!r}")
        if cluster is not None and (not isinstance(cluster, str) or not cluster.strip()):
            raise ValueError(f"cluster must be a scheduler address such as tcp://127.0.0.1:8786; got {cluster!r}")
        self.workers = workers or os.cpu_count() or 1
        self.cluster = cluster.strip() if cluster else None
        self.cache = cache if cache is not None else ResultCache()
        self._executor = executor
        self._own_pool: Executor | None = None
        self._client = None
        self._lock = threading.Lock()

    # backends -------------------------------------------------------------------------------------
    def _pool(self) -> Executor:
        if self._executor is not None:
            return self._executor
        with self._lock:               # one runner may serve several dashboard sessions at once
            if self._own_pool is None:
                self._own_pool = ProcessPoolExecutor(self.workers, mp_context=multiprocessing.get_context("spawn"),
                                                     initializer=_init_worker)
            return self._own_pool

    def client(self):
        """The Dask client of ``cluster`` (connected on first use); ClusterError if it cannot be reached."""
        with self._lock:
            return self._connect()

    def _connect(self):
        if self._client is None:
            try:
                from distributed import Client
            except ImportError:
                raise ClusterError("running on a Dask cluster needs the 'distributed' package: "
                                   "pip install 'porefill[cluster]'") from None
            try:
                self._client = Client(self.cluster, timeout=10, set_as_default=False)
            except (OSError, TimeoutError, ValueError) as exc:
                raise ClusterError(f"cannot reach the Dask scheduler at {self.cluster}: "
                                   f"{str(exc).splitlines()[0] if str(exc) else type(exc).__name__}") from None
        return self._client

    def close(self, *, terminate: bool = False) -> None:
        """Shut down the pool this runner started and the Dask client (waiting jobs are cancelled); with
        ``terminate``, also end the pool's processes at once rather than let their running pores finish."""
        if self._own_pool is not None:
            pool, self._own_pool = self._own_pool, None
            processes = list((getattr(pool, "_processes", None) or {}).values()) if terminate else []
            pool.shutdown(wait=False, cancel_futures=True)
            for proc in processes:     # no public way before Python 3.14 (terminate_workers)
                proc.terminate()
        if self._client is not None:
            try:
                self._client.close()
            finally:
                self._client = None

    def __enter__(self) -> "SweepRunner":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # running --------------------------------------------------------------------------------------
    def run(self, spec: SweepSpec, *, progress: Callable[[int, int], None] | None = None, stop=None) -> SweepResult:
        """Every pore of ``spec``; ``progress(done, total)`` after each (and once at the start, with the
        cached ones counted); ``stop`` a `threading.Event` or a callable returning True to stop."""
        start = time.perf_counter()
        from porefill.physics.pore import compiled

        compiled.enable()      # as in the workers: a sweep gives the same numbers wherever its pores run
        scenarios = spec.scenarios()
        n = spec.n_points
        points: list = [self.cache.get(sc, n) for sc in scenarios]
        result = SweepResult(spec, scenarios, points, from_cache=sum(p is not None for p in points),
                             where=self.cluster or ("here" if self.workers == 1 else f"{self.workers} processes"))
        todo = sorted((i for i, p in enumerate(points) if p is None), key=lambda i: -_cost(scenarios[i]))
        total = len(scenarios)

        def report():
            if progress is not None:
                progress(sum(p is not None for p in points), total)

        def take(i, value):
            points[i] = value
            self.cache.put(scenarios[i], n, value)
            report()

        report()
        if todo and not _is_set(stop):
            if self.cluster is not None:
                result.stopped = self._run_dask(scenarios, n, todo, take, stop)
            elif self.workers == 1 and self._executor is None:
                result.stopped = self._run_here(scenarios, n, todo, take, stop)
            else:
                result.stopped = self._run_pool(scenarios, n, todo, take, stop)
        elif todo:
            result.stopped = True
        result.seconds = time.perf_counter() - start
        return result

    @staticmethod
    def _run_here(scenarios, n, todo, take, stop) -> bool:
        for i in todo:
            if _is_set(stop):
                return True
            take(i, point_job(scenarios[i], n))
        return False

    def _run_pool(self, scenarios, n, todo, take, stop) -> bool:
        pool = self._pool()
        futures = {pool.submit(point_job, scenarios[i], n): i for i in todo}
        pending = set(futures)
        try:
            while pending:
                if _is_set(stop):
                    for f in pending:
                        f.cancel()
                    return True
                finished, pending = wait_futures(pending, timeout=_POLL_S, return_when=FIRST_COMPLETED)
                for f in sorted(finished, key=futures.get):
                    take(futures[f], f.result())
        except BaseException:
            for f in pending:
                f.cancel()
            raise
        return False

    def _run_dask(self, scenarios, n, todo, take, stop) -> bool:
        client = self.client()
        # pure=False: each request runs (a cached pore never gets here); priority: largest pores first
        futures = {client.submit(point_job, scenarios[i], n, pure=False, priority=len(todo) - rank): i
                   for rank, i in enumerate(todo)}
        pending = set(futures)
        try:
            while pending:
                if _is_set(stop):
                    client.cancel(list(pending))
                    return True
                # polled: distributed.wait would look for a default client, and this one is not made default
                finished = [f for f in pending if f.done()]
                if not finished:
                    time.sleep(_POLL_S / 4)
                    continue
                pending.difference_update(finished)
                for f in sorted(finished, key=futures.get):
                    if f.status == "error":
                        raise ClusterError(f"a pore failed on the cluster: {f.exception()}")
                    take(futures[f], f.result())
        except BaseException:
            client.cancel(list(pending))
            raise
        return False
