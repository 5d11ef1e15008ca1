"""The compiled edge sum (numba), imported only when `porefill.physics.pore.compiled` is in use: a module of
its own so that numba's on-disk cache holds it (a function built inside another is compiled afresh in every
process)."""
import math

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
