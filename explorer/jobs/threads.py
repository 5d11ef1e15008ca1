"""BLAS threads in porefill's processes: one per process, parallelism from processes.

NumPy's BLAS (OpenBLAS here) starts as many threads as the machine has cores in every process that uses it.
porefill already runs its heavy work in several worker processes (isotherms, sweeps, fits, reports), so each
worker's BLAS threads compete with the other workers' for the same cores: measured on a 2-core machine, a
70 Å mean-field isotherm took 10–45 s with the default threads against under 1 s with one
(`benchmarks/bench_threads.py` prints both). Every worker calls `one_blas_thread` when it starts; the
command line sets the environment before NumPy loads (`one_blas_thread_environment`).
"""
from __future__ import annotations

import os

__all__ = ["one_blas_thread", "one_blas_thread_environment", "BLAS_THREAD_VARIABLES"]

BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def one_blas_thread_environment() -> None:
    """Ask for one BLAS thread through the environment (read when NumPy first loads; a value the user set
    is kept)."""
    for name in BLAS_THREAD_VARIABLES:
        os.environ.setdefault(name, "1")


def one_blas_thread() -> None:
    """Limit this process's already-loaded BLAS to one thread (threadpoolctl), for the rest of its life."""
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1, user_api="blas")
