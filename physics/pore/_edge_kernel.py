"""The compiled edge sum (numba), imported only when `porefill.physics.pore.compiled` is in use: a module of
its own so that numba's on-disk cache holds it (a function built inside another is compiled afresh in every
process)."""
import math

import numpy as np
from numba import njit


@njit(cache=True, error_model="numpy", fastmath=False)
def edge_sum(x, y, start, tangent, normal, length, c9, c3, out):     # pragma: no cover - compiled
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


@njit(cache=True, error_model="numpy", fastmath=False)
def even_chebyshev_2d(x, y, x1, y1, coef, out):     # pragma: no cover - compiled
    """out_i = Σ_jk c_jk T_j(2(x_i/x1)² − 1) T_k(2(y_i/y1)² − 1): numpy's chebval2d at these arguments."""
    n, m = coef.shape
    tu = np.empty(n)
    tv = np.empty(m)
    for i in range(x.size):
        u = 2.0 * (x[i] / x1) ** 2 - 1.0
        v = 2.0 * (y[i] / y1) ** 2 - 1.0
        tu[0] = 1.0
        if n > 1:
            tu[1] = u
        for j in range(2, n):
            tu[j] = 2.0 * u * tu[j - 1] - tu[j - 2]
        tv[0] = 1.0
        if m > 1:
            tv[1] = v
        for k in range(2, m):
            tv[k] = 2.0 * v * tv[k - 1] - tv[k - 2]
        total = 0.0
        for j in range(n):
            row = 0.0
            for k in range(m):
                row += coef[j, k] * tv[k]
            total += tu[j] * row
        out[i] = total
