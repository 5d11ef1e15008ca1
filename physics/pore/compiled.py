"""The wall potential's hot loop compiled with numba, when it is installed: the sum over straight edges.

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

__all__ = ["available", "enable", "sum_over_edges"]

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
