"""A branch as a curve whose jumps stand where they are, not where the μ grid happens to put them.

On a μ grid a branch that passes a spinodal jumps between two grid points, and linear interpolation turns the
jump into a ramp one grid spacing wide whose place moves only when the spinodal crosses a grid point. A fit
needs the model to move continuously with its parameters, so `branch_curve` finds each jump of the
adsorption branch (rising with μ) and of the desorption branch (falling as μ goes down) between its grid
points by bisection: the state before the jump is carried, by `porefill.physics.lattice_gas.meanfield.solve_state`, towards the
next grid point until it can no longer hold (it slides onto the other state). The curve then has a vertical
riser at that μ, with the amounts of both states there.

A grid interval is a jump only if the system is bistable at its near end — the state past the jump, solved at
the grid point before it, stays there; a steep but continuous rise is left as it is.
"""
from __future__ import annotations

import numpy as np

from porefill.physics.lattice_gas.meanfield import solve_state

__all__ = ["branch_curve"]

_BISECTIONS = 10          # a grid interval split 2^10 times: below a measured pressure's precision
_JUMP_FRACTION = 1e-3     # a jump adds at least this fraction of all sites


def _jump_intervals(total: np.ndarray, min_jump: float) -> np.ndarray:
    """Grid intervals k (between k and k+1) whose rise stands far above both neighbours'."""
    d = np.diff(total)
    left = np.concatenate([[0.0], d[:-1]])
    right = np.concatenate([d[1:], [0.0]])
    return np.flatnonzero((d > min_jump) & (d > 3.0 * np.maximum(np.maximum(left, right), 0.0)))


def _refine(problem, mu, logits, k: int, rising: bool, bisections: int):
    """(μ_jump, amount before, amount after) in sites per slice, or None if interval k is no jump."""
    w = problem.weights
    total = lambda x: float(w @ problem.occupancy(x))          # noqa: E731 - sites per slice of a state
    n_lo, n_hi = total(logits[k]), total(logits[k + 1])
    half = 0.5 * (n_hi - n_lo)
    # bistable at the near end: the far state holds there
    near, far = (k, k + 1) if rising else (k + 1, k)
    held = total(solve_state(logits[far], mu[near], problem)[0])
    if abs(held - total(logits[far])) > half:
        return None
    a, b = mu[near], mu[far]                        # the near state holds at a, not at b
    x = logits[near]
    n_near = total(x)
    for _ in range(bisections):
        mid = 0.5 * (a + b)
        y = solve_state(x, mid, problem)[0]
        if abs(total(y) - n_near) < half:
            a, x = mid, y
        else:
            b = mid
    other = total(solve_state(logits[far], a, problem)[0])
    before, after = (total(x), other) if rising else (other, total(x))
    return a, before, after


def _equilibrium_curve(iso, mu: np.ndarray, per: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The equilibrium on the grid, each first-order transition a riser at its exact μ: below it the
    adsorption branch's amount, above it the desorption branch's (where the equilibrium passes through a
    state of neither branch, its amounts at the grid points either side)."""
    ads, des = iso.per_angstrom("adsorption"), iso.per_angstrom("desorption")
    source = iso.equilibrium.source
    xs, ys, last = [], [], 0
    for mu_star in sorted(s.mu_k for s in iso.steps if s.kind == "first-order" and mu[0] < s.mu_k < mu[-1]):
        k = int(np.searchsorted(mu, mu_star))          # mu[k-1] < mu* <= mu[k]
        if k <= last:
            continue
        if source[k - 1] == 0 and source[k] == 1:
            riser = [np.interp(mu_star, mu, ads), np.interp(mu_star, mu, des)]
        else:
            riser = [per[k - 1], per[k]]
        xs += [mu[last:k], np.array([mu_star, mu_star])]
        ys += [per[last:k], np.array(riser)]
        last = k
    xs.append(mu[last:])
    ys.append(per[last:])
    return np.concatenate(xs), np.concatenate(ys)


def _limits(x: np.ndarray, y: np.ndarray, at: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Values from the left and from the right at ``at`` of a curve of vertices (``x`` ascending, a riser two
    vertices at one x), linear between vertices and flat beyond its ends."""
    first = np.searchsorted(x, at, side="left")
    last = np.searchsorted(x, at, side="right") - 1
    on = (first < x.size) & (first <= last)
    between = np.interp(at, x, y)          # away from risers x is strictly increasing around ``at``
    left = np.where(on, y[np.minimum(first, x.size - 1)], between)
    right = np.where(on, y[np.maximum(last, 0)], between)
    return left, right


def _weighted_sum(curves, weights) -> tuple[np.ndarray, np.ndarray]:
    """Σ w·curve of curves given as vertices (`branch_curve`), as vertices: one at every μ of any of them, two
    where the sum has a riser."""
    at = np.unique(np.concatenate([c[0] for c in curves]))
    left = np.zeros(at.size)
    right = np.zeros(at.size)
    for (x, y), w in zip(curves, weights):
        lo, hi = _limits(np.asarray(x, float), np.asarray(y, float), at)
        left += w * lo
        right += w * hi
    riser = right != left
    xs = np.repeat(at, np.where(riser, 2, 1))
    ys = np.empty(xs.size)
    k = np.cumsum(np.where(riser, 2, 1)) - np.where(riser, 2, 1)
    ys[k] = left
    ys[k[riser] + 1] = right[riser]
    return xs, ys


def branch_curve(iso, branch: str, *, bisections: int = _BISECTIONS) -> tuple[np.ndarray, np.ndarray]:
    """(μ, atoms per Å) vertices of ``branch`` of an `Isotherm`, ascending in μ, with a vertical riser (two
    vertices at one μ) at each jump, placed to 2^-bisections of its grid interval. 'equilibrium' is returned
    with a riser at each first-order step's equilibrium μ (found by root-finding, `porefill.physics.lattice_gas.adsorption`).
    A pore between two row counts (`porefill.physics.lattice_gas.row_blend`) gives its lattices' curves summed
    with their weights."""
    parts = getattr(iso, "parts", ())
    if parts:
        return _weighted_sum([branch_curve(part, branch, bisections=bisections) for _, part in parts],
                             [w for w, _ in parts])
    mu = iso.mu
    per = iso.per_angstrom(branch)
    if mu.size < 3:
        return mu, per
    if branch == "equilibrium":
        return _equilibrium_curve(iso, mu, per)
    problem = iso.stage.problem
    b = getattr(iso, branch)
    total = b.occupancy @ problem.weights
    factor = per[-1] / total[-1] if total[-1] > 0 else 0.0
    rising = branch == "adsorption"
    xs, ys = [mu[:1]], [per[:1]]
    last = 0
    for k in _jump_intervals(total, _JUMP_FRACTION * problem.weights.sum()):
        found = _refine(problem, mu, b.logits, int(k), rising, bisections)
        if found is None:
            continue
        mu_j, before, after = found
        xs += [mu[last + 1:k + 1], np.array([mu_j, mu_j])]
        ys += [per[last + 1:k + 1], np.array([before, after]) * factor]
        last = k
    xs.append(mu[last + 1:])
    ys.append(per[last + 1:])
    return np.concatenate(xs), np.concatenate(ys)
