"""The mean-field Newton descent of `porefill.physics.lattice_gas.meanfield.solve_state`, compiled with numba
for the dense (small) problems, where numpy's per-call overhead is most of the time (`_descent_kernel`).

The algorithm and its order of operations are those of the Python version line for line (damped Newton,
Armijo on Ω, the same acceptance and damping rules); `expit` and `logaddexp(0, x)` are written as SciPy and
NumPy compute them; sites with a spread of free energies (`SiteSpread`) are summed over their sub-sites in
the same order. tests/test_meanfield.py and tests/test_wall_spread.py compare both paths. The Python path is the reference, used for
large (sparse) problems, where a sparse LU dominates, and whenever the compiled kernels are not in use
(`porefill.physics.pore.compiled.available`).
"""
from __future__ import annotations

import numpy as np

from porefill.physics.pore.compiled import available, enable

__all__ = ["available", "enable", "solve_state_dense"]


def solve_state_dense(x0, mu, problem, a_dense, *, max_iter: int, tol: float):
    """`solve_state` for a dense neighbour matrix: (x, converged, solve, omega) as the Python version."""
    from porefill.physics.lattice_gas._descent_kernel import solve

    spread = problem.spread
    if spread is None:
        shifts, fractions = np.zeros((problem.site_free_energy.size, 0)), np.zeros(0)
        marked = np.zeros(problem.site_free_energy.size, np.bool_)
    else:
        shifts = np.ascontiguousarray(spread.shift_k, float)
        fractions = np.ascontiguousarray(spread.fraction, float)
        marked = np.ascontiguousarray(spread.orbits, np.bool_)
    x, converged, inv, have, omega = solve(
        np.ascontiguousarray(x0, float), float(mu), np.ascontiguousarray(a_dense, float),
        np.ascontiguousarray(problem.site_free_energy, float), float(problem.bond_k),
        float(problem.temperature_k), np.ascontiguousarray(problem.weights, float),
        shifts, fractions, marked, int(max_iter), float(tol))
    return x, bool(converged), (inv.__matmul__ if have else None), float(omega)
