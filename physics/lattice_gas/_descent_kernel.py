"""The compiled mean-field descent (numba), imported only when `porefill.physics.lattice_gas.compiled` is in
use: module-level functions, so that numba's on-disk cache holds them."""
import math

import numpy as np
from numba import njit


@njit(cache=True, error_model="numpy")
def _logaddexp0(x):                                      # pragma: no cover - compiled
    """numpy's logaddexp(0, x)."""
    if x == 0.0:
        return math.log(2.0)
    if x > 0.0:
        return x + math.log1p(math.exp(-x))
    return math.log1p(math.exp(x))


@njit(cache=True, error_model="numpy")
def evaluate(x, mu, a, f, bond, kt, w, shifts, fractions, marked):   # pragma: no cover - compiled
    """Ω, its rounding scale, the residual, the mean occupancies n̄ and their slopes dn̄/dx.

    Sites with ``marked[i]`` carry the spread of free energies (shifts δ_ik, K, with fractions p_k) of
    `porefill.physics.lattice_gas.meanfield.SiteSpread`; the others are plain sites."""
    m = x.size
    n = np.empty(m)
    d = np.empty(m)
    ideal = np.empty(m)
    ideal_scale = np.empty(m)
    for i in range(m):
        xi = x[i]
        if marked[i]:
            nbar = 0.0
            slope = 0.0
            mixed = 0.0
            scale = 0.0
            for k in range(fractions.size):
                xk = xi - shifts[i, k] / kt
                nk = 1.0 / (1.0 + math.exp(-xk))
                entropy = nk * xk - _logaddexp0(xk)
                nbar += fractions[k] * nk
                slope += fractions[k] * (nk * (1.0 - nk))
                mixed += fractions[k] * (kt * entropy + shifts[i, k] * nk)
                scale += fractions[k] * (kt * abs(entropy) + abs(shifts[i, k]) * nk)
            n[i] = nbar
            d[i] = slope
            ideal[i] = mixed
            ideal_scale[i] = scale
        else:
            ni = 1.0 / (1.0 + math.exp(-xi))             # scipy.special.expit
            n[i] = ni
            d[i] = ni * (1.0 - ni)
            ideal[i] = kt * (ni * xi - _logaddexp0(xi))
            ideal_scale[i] = abs(ideal[i])
    an = a @ n
    terms = np.empty(m)
    scales = np.empty(m)
    residual = np.empty(m)
    for i in range(m):
        bonds = 0.5 * bond * an[i] * n[i]
        shifted = (f[i] - mu) * n[i]
        terms[i] = ideal[i] + shifted - bonds
        scales[i] = ideal_scale[i] + abs(shifted) + bonds
        residual[i] = kt * x[i] + f[i] - mu - bond * an[i]
    omega = w @ terms
    scale = (w @ scales) + 1.0
    return omega, 1e-13 * scale, residual, n, d


@njit(cache=True, error_model="numpy")
def factor(a, bond, d, diag):                            # pragma: no cover - compiled
    m = d.size
    j = np.empty((m, m))
    for r in range(m):
        for c in range(m):
            j[r, c] = a[r, c] * (-bond * d[c])
        j[r, r] += diag
    return np.linalg.inv(j)


@njit(cache=True, error_model="numpy")
def solve(x0, mu, a, f, bond, kt, w, shifts, fractions, marked, max_iter, tol):   # pragma: no cover - compiled
    x = x0.copy()
    m = x.size
    damping = 0.0
    omega, flat, g, n, d = evaluate(x, mu, a, f, bond, kt, w, shifts, fractions, marked)
    inv = np.zeros((m, m))
    have = False
    for _ in range(max_iter):
        gmax = np.max(np.abs(g)) if m else 0.0
        if gmax < tol:
            if not have or damping > 0:
                inv = factor(a, bond, d, kt * (1.0 + 0.0))
                have = True
            return x, True, inv, have, omega
        accepted = False
        while not accepted:
            ok = True
            try:
                trial_inv = factor(a, bond, d, kt * (1.0 + damping))
            except Exception:                            # singular at this damping
                ok = False
            if ok:
                inv = trial_inv
                have = True
                step = -(inv @ g)
                if np.all(np.isfinite(step)):
                    slope = (w * g * d) @ step
                    t = 1.0
                    tries = 3 if damping < 1e6 else 40
                    for _ in range(tries):
                        trial = x + t * step
                        om, fl, res, nn, dd = evaluate(trial, mu, a, f, bond, kt, w, shifts, fractions, marked)
                        accepted = (slope < 0 and om <= omega + 1e-4 * t * slope) or (
                            om <= omega + flat and np.max(np.abs(res)) < gmax)
                        if accepted:
                            x = trial
                            omega, flat, g, n, d = om, fl, res, nn, dd
                            break
                        t *= 0.5
            if not accepted:
                damping = max(1.0, 10.0 * damping) * (1.0 + 1e-3)
                if damping > 1e12:
                    return x, False, inv, have, omega
        damping = 0.0 if damping < 1e-6 else damping * 0.1
    converged = (np.max(np.abs(g)) < tol) if m else True
    return x, converged, inv, have, omega
