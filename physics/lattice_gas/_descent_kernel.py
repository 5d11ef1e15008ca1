"""The compiled mean-field descent (numba), imported only when `porefill.physics.lattice_gas.compiled` is in
use: module-level functions, so that numba's on-disk cache holds them."""
import math

import numpy as np
from numba import njit


@njit(cache=True, error_model="numpy")
def evaluate(x, mu, a, f, bond, kt, w):                 # pragma: no cover - compiled
    m = x.size
    n = np.empty(m)
    for i in range(m):
        n[i] = 1.0 / (1.0 + math.exp(-x[i]))             # scipy.special.expit
    an = a @ n
    terms = np.empty(m)
    scales = np.empty(m)
    residual = np.empty(m)
    for i in range(m):
        xi = x[i]
        # numpy's logaddexp(0, x)
        if xi == 0.0:
            lae = math.log(2.0)
        elif xi > 0.0:
            lae = xi + math.log1p(math.exp(-xi))
        else:
            lae = math.log1p(math.exp(xi))
        entropy = n[i] * xi - lae
        bonds = 0.5 * bond * an[i] * n[i]
        shifted = (f[i] - mu) * n[i]
        terms[i] = kt * entropy + shifted - bonds
        scales[i] = kt * abs(entropy) + abs(shifted) + bonds
        residual[i] = kt * xi + f[i] - mu - bond * an[i]
    omega = w @ terms
    scale = (w @ scales) + 1.0
    return omega, 1e-13 * scale, residual, n


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
def solve(x0, mu, a, f, bond, kt, w, max_iter, tol):   # pragma: no cover - compiled
    x = x0.copy()
    m = x.size
    damping = 0.0
    omega, flat, g, n = evaluate(x, mu, a, f, bond, kt, w)
    inv = np.zeros((m, m))
    have = False
    for _ in range(max_iter):
        gmax = np.max(np.abs(g)) if m else 0.0
        if gmax < tol:
            if not have or damping > 0:
                inv = factor(a, bond, n * (1.0 - n), kt * (1.0 + 0.0))
                have = True
            return x, True, inv, have, omega
        d = n * (1.0 - n)
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
                        om, fl, res, nn = evaluate(trial, mu, a, f, bond, kt, w)
                        accepted = (slope < 0 and om <= omega + 1e-4 * t * slope) or (
                            om <= omega + flat and np.max(np.abs(res)) < gmax)
                        if accepted:
                            x = trial
                            omega, flat, g, n = om, fl, res, nn
                            break
                        t *= 0.5
            if not accepted:
                damping = max(1.0, 10.0 * damping) * (1.0 + 1e-3)
                if damping > 1e12:
                    return x, False, inv, have, omega
        damping = 0.0 if damping < 1e-6 else damping * 0.1
    converged = (np.max(np.abs(g)) < tol) if m else True
    return x, converged, inv, have, omega
