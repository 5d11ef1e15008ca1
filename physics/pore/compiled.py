"""The wall potential's hot loops compiled with numba, when it is installed: the sum over straight edges, and
a hexagon array's fitted far field (a 2-D Chebyshev series).

`porefill.physics.pore.wall_potential._sum_over_edges` spends nearly all of a classical isotherm's geometry
stage in the closed form of one edge (`_edge_integrals`), evaluated for every (point, edge) pair with a dozen
temporary arrays. Here the same formula, in the same order of operations, runs as one loop over points and
edges with no temporaries (`_edge_kernel`). Results agree with the numpy path to round-off
(tests/test_wall_potential.py compares them to 1e-12 relative).

Importing numba and loading a compiled kernel costs about half a second, which a long-lived process repays
many times and a one-shot command does not. So the compiled kernels are used once `enable` was called (every
worker process does at start, and the server, `porefill fit` and every sweep, in workers or not); the numpy
path is the reference, used otherwise and always with ``POREFILL_NUMBA=0``.
"""
from __future__ import annotations

import importlib.util
import os

import numpy as np

__all__ = ["available", "enable", "even_chebyshev_2d", "sum_over_edges"]

_enabled = False


def enable() -> None:
    """Use the compiled kernels in this process from now on (where numba is installed)."""
    global _enabled
    _enabled = True


def available() -> bool:
    """Whether the compiled kernels are in use here (module docstring)."""
    if os.environ.get("POREFILL_NUMBA", "1") == "0":
        return False
    if not _enabled:              # a process's choice, never its import history: results must not depend on it
        return False
    return importlib.util.find_spec("numba") is not None


def sum_over_edges(x, y, start, tangent, normal, length, c9: float, c3: float) -> np.ndarray:
    """Σ_e sgn(D_e) ∫_e G dθ at points (x, y): the compiled twin of `_sum_over_edges`."""
    from porefill.physics.pore._edge_kernel import edge_sum

    out = np.empty(np.size(x))
    edge_sum(np.ascontiguousarray(x, float).ravel(), np.ascontiguousarray(y, float).ravel(),
             np.ascontiguousarray(start, float), np.ascontiguousarray(tangent, float),
             np.ascontiguousarray(normal, float), np.ascontiguousarray(length, float), float(c9), float(c3), out)
    return out


def even_chebyshev_2d(x, y, x1: float, y1: float, coef) -> np.ndarray:
    """Σ_jk c_jk T_j(2(x/x1)² − 1) T_k(2(y/y1)² − 1) at points (x, y): the compiled twin of numpy's
    ``chebval2d`` at those arguments (the far field of a hexagon array, `hexagon_array_potential`)."""
    from porefill.physics.pore._edge_kernel import even_chebyshev_2d as kernel

    x, y = np.broadcast_arrays(np.asarray(x, float), np.asarray(y, float))
    out = np.empty(x.size)
    kernel(np.ascontiguousarray(x).ravel(), np.ascontiguousarray(y).ravel(), float(x1), float(y1),
           np.ascontiguousarray(coef, float), out)
    return out.reshape(x.shape)
