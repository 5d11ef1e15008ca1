"""The wall potential's hot loop compiled with numba, when it is installed: the sum over straight edges.

`porefill.physics.pore.wall_potential._sum_over_edges` spends nearly all of a classical isotherm's geometry
stage in the closed form of one edge (`_edge_integrals`), evaluated for every (point, edge) pair with a dozen
temporary arrays. Here the same formula, in the same order of operations, runs as one loop over points and
edges with no temporaries. Results agree with the numpy path to round-off (tests/test_wall_potential.py
compares them to 1e-12 relative); the numpy path stays the reference and is used when numba is missing or
``POREFILL_NUMBA=0`` is set.
"""
from __future__ import annotations

import os

import numpy as np

__all__ = ["available", "sum_over_edges"]

_kernel = None


def available() -> bool:
    """Whether the compiled kernel can be used here."""
    if os.environ.get("POREFILL_NUMBA", "1") == "0":
        return False
    try:
        import numba  # noqa: F401
    except ImportError:
        return False
    return True


def _build():
    import math

    from numba import njit

    @njit(cache=True, error_model="numpy", fastmath=False)
    def kernel(x, y, start, tangent, normal, length, c9, c3, out):     # pragma: no cover - compiled
        n_edges = length.size
        for i in range(x.size):
            total = 0.0
            for e in range(n_edges):
                ax = start[e, 0] - x[i]
                ay = start[e, 1] - y[i]
                signed_d = ax * normal[e, 0] + ay * normal[e, 1]
                u1 = ax * tangent[e, 0] + ay * tangent[e, 1]
                u2 = u1 + length[e]
                d = abs(signed_d)
                d2 = d * d
                value = 0.0
                for side in range(2):
                    u = u1 if side == 0 else u2
                    r2 = d2 + u * u
                    r = math.sqrt(r2)
                    one_plus = 1.0 + abs(u) / r
                    a = d2 / (r2 * one_plus)
                    r4 = r2 * r2
                    op2 = one_plus * one_plus
                    w3 = (1.0 - a / 3.0) / (r4 * op2)
                    w9 = (16.0 / 5.0 + a * (-16.0 / 3.0 + a * (24.0 / 7.0 + a * (-1.0 + a / 9.0)))) / (
                        r4 * r4 * r2 * op2 * op2 * one_plus)
                    term = math.copysign(d, u) * (c9 * w9 - c3 * w3)
                    value = value + term if side == 0 else value - term
                if u1 < 0.0 and u2 >= 0.0:
                    inv_d3 = 1.0 / (d * d * d)
                    value += 2.0 * (c9 * (128.0 / 315.0) * inv_d3 * inv_d3 * inv_d3 - c3 * (2.0 / 3.0) * inv_d3)
                total += value if signed_d >= 0.0 else -value
            out[i] = total

    return kernel


def sum_over_edges(x, y, start, tangent, normal, length, c9: float, c3: float) -> np.ndarray:
    """Σ_e sgn(D_e) ∫_e G dθ at points (x, y): the compiled twin of `_sum_over_edges`."""
    global _kernel
    if _kernel is None:
        _kernel = _build()
    out = np.empty(np.size(x))
    _kernel(np.ascontiguousarray(x, float).ravel(), np.ascontiguousarray(y, float).ravel(),
            np.ascontiguousarray(start, float), np.ascontiguousarray(tangent, float),
            np.ascontiguousarray(normal, float), np.ascontiguousarray(length, float), float(c9), float(c3), out)
    return out
