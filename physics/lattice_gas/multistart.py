"""The equilibrium as the lowest grand potential among all states found, not only the two branches'.

Where the adsorption branch (continued up from an empty pore) and the desorption branch (continued down from
a full one) differ, the pore is multistable, and a third state can lie below both: a pore whose outer rows
are full and inner rows empty, say, while the adsorption branch still holds a thinner film and the
desorption branch the full pore. Taking the lower of the two branches would then miss that layer's step
and move the condensation with the μ grid.

Over every μ interval where the branches differ, each *layered* start — the first r rows from the wall as the
desorption branch holds them (full), the rest as the adsorption branch holds them, for every r with more rows
full than the adsorption branch and fewer than the desorption branch at that point — is descended to a stable
state (`porefill.physics.lattice_gas.meanfield.solve_state`) at up to eight grid points spread over the interval (at most twelve
values of r at a point, spread evenly, in pores with more rows), and a
state apart from both branches is continued up and down the interval for as long as it stays apart (a state
that falls onto a branch is that branch). The adsorption branch's state at a run's first point is also
continued down out of the run, and the desorption branch's at its last point up: where both branches jumped
in one grid interval, passing over a layer, that layer can be the lowest state at the grid points beside the
run, where the two branches agree. The equilibrium at each
grid point is the lowest Ω among the two branches and these paths (the adsorption branch, then the
desorption branch, win ties). Each change of the equilibrium state between neighbouring grid points is a
first-order transition, placed exactly by `porefill.physics.lattice_gas.adsorption.equilibrium_transition`; at
the transition's μ every other state is re-solved, and one that lies lower there splits the transition in
two (a state that is the equilibrium only between two grid points is not lost on a coarse grid).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from porefill.physics.lattice_gas.meanfield import Branch, MeanFieldProblem, solve_state

__all__ = ["EquilibriumStates", "equilibrium_states"]

_SAME_STATE = 1e-3          # states whose orbit occupancies all agree to this are one state
_DIFFER_FRACTION = 1e-6     # as in `porefill.physics.lattice_gas.steps`: branches that differ by more form a loop
_SEEDS = 8                  # grid points of a run where each layered start is descended
_STARTS_PER_POINT = 12      # layered starts at most at one grid point (spread over the rows between the branches)
_DESCENT_ITERATIONS = 30    # a layered start not settled in this many Newton steps is left (large pores: each
                            # step of 700 orbits is a sparse factorisation)


@dataclass(frozen=True, eq=False)
class EquilibriumStates:
    """The lowest-Ω state at every grid point and where it came from.

    Attributes
    ----------
    logits : (M, O) logits of the equilibrium state
    grand_potential : (M,) its Ω (K per slice)
    source : (M,) 0 the adsorption branch, 1 the desorption branch, 2 + j path j of ``paths``
    paths : (P, M, O) logits of the states found from layered starts (NaN where a path does not exist)
    path_omega : (P, M) their Ω (NaN where they do not exist)
    """

    logits: np.ndarray
    grand_potential: np.ndarray
    source: np.ndarray
    paths: np.ndarray
    path_omega: np.ndarray
    _problem: MeanFieldProblem = field(repr=False, default=None)

    @property
    def found_below_both(self) -> int:
        """Grid points where a state of neither branch is the equilibrium."""
        return int(np.count_nonzero(self.source >= 2))

    def state_logits(self, which: int, ads: Branch, des: Branch) -> np.ndarray:
        """(M, O) logits of source ``which`` (0 adsorption, 1 desorption, 2 + j path j)."""
        return ads.logits if which == 0 else des.logits if which == 1 else self.paths[which - 2]

    def transitions(self, i0: int, i1: int, ads: Branch, des: Branch, refine) -> list[tuple[float, float, np.ndarray]] | None:
        """The first-order transitions of the equilibrium over the grid points i0 − 1 … i1 + 1 (one run where
        the branches differ; further out while a state of neither branch is the equilibrium there), each as
        ``refine``'s (μ_eq, sites added, (O,) rise); None where the equilibrium there is only ever the two
        branches (the two-branch rule of `porefill.physics.lattice_gas.steps` applies).

        ``refine(mu_lo, x_lo, mu_hi, x_hi)``: the equilibrium transition between a low state (logits x_lo,
        stable at mu_lo) and a high one (`porefill.physics.lattice_gas.adsorption.equilibrium_transition`).
        """
        lo, hi = max(i0 - 1, 0), min(i1 + 1, self.source.size - 1)
        while lo > 0 and self.source[lo] >= 2:            # a state continued out of the run (`_follow_out`)
            lo -= 1
        while hi < self.source.size - 1 and self.source[hi] >= 2:
            hi += 1
        src = self.source[lo:hi + 1]
        found = bool(self.paths.shape[0]) and bool(np.any(np.isfinite(self.path_omega[:, lo:hi + 1])))
        if not np.any(src >= 2) and not found:
            return None
        # a path found here but lowest at no grid point may still be the equilibrium between two of them
        # (a layer whose range is narrower than the grid's spacing): `_split` looks at every transition
        out = []
        for k in range(lo, hi):
            a, b = int(self.source[k]), int(self.source[k + 1])
            if a == b:
                continue
            out += self._split(k, a, b, ads, des, refine, depth=0)
        return out

    def _split(self, k: int, a: int, b: int, ads: Branch, des: Branch, refine, depth: int):
        mu = ads.mu
        xa, xb = self.state_logits(a, ads, des)[k], self.state_logits(b, ads, des)[k + 1]
        mu_eq, added, rise = refine(mu[k], xa, mu[k + 1], xb)
        if depth > 4:
            return [(mu_eq, added, rise)]
        p = self._problem
        occ, w = p.occupancy, p.weights
        omega_eq = solve_state(xa, mu_eq, p)[3]
        n_a, n_b = float(w @ occ(xa)), float(w @ occ(xb))
        for j in range(self.paths.shape[0]):            # the branches cannot lie below both ends: only paths
            if 2 + j in (a, b):
                continue
            xc = self.paths[j]
            start = xc[k] if np.all(np.isfinite(xc[k])) else xc[k + 1]
            if not np.all(np.isfinite(start)):
                continue
            y, ok, _, om = solve_state(start, mu_eq, p)
            if not ok or om >= omega_eq - 1e-9 * (1.0 + abs(omega_eq)):
                continue
            if not (min(n_a, n_b) < float(w @ occ(y)) < max(n_a, n_b)):
                continue
            # path j lies lower at the transition: the equilibrium passes through it between the grid points
            paths = self.paths.copy()
            for kk in (k, k + 1):
                if not np.all(np.isfinite(paths[j, kk])):
                    paths[j, kk] = y
            sub = EquilibriumStates(self.logits, self.grand_potential, self.source, paths, self.path_omega, p)
            return (sub._split(k, a, 2 + j, ads, des, refine, depth + 1)
                    + sub._split(k, 2 + j, b, ads, des, refine, depth + 1))
        return [(mu_eq, added, rise)]


def _same(p: MeanFieldProblem, x: np.ndarray, y: np.ndarray) -> bool:
    return bool(np.max(np.abs(p.occupancy(x) - p.occupancy(y))) < _SAME_STATE)


def _follow(mu: np.ndarray, run: tuple[int, int], k0: int, x0: np.ndarray, p: MeanFieldProblem, ads: Branch,
            des: Branch, paths: list[np.ndarray], omegas: list[np.ndarray]) -> None:
    """Descend from ``x0`` at grid point ``k0`` and continue the state up and down the run (first, last grid
    point) while it stays apart from both branches and could still become the equilibrium; add it to
    ``paths`` unless it is one found before.

    A state holding more than the adsorption branch and less than the desorption branch gains on the first
    and loses on the second as μ rises (dΩ/dμ = −N): once above the desorption branch going up, or above the
    adsorption branch going down, it stays above, so it is followed one point further (the transition's
    interval needs it on both sides) and no more."""
    logits = np.full((mu.size, x0.size), np.nan)
    omega = np.full(mu.size, np.nan)
    w = p.weights
    for up, ks in ((True, range(k0, run[1] + 1)), (False, range(k0, run[0] - 1, -1))):
        x, solve, prev = x0, None, None
        for k in ks:
            if solve is not None:
                x = x + solve(np.full(x.size, mu[k] - mu[prev]))   # tangent predictor, as on the branches
            x, ok, solve, om = solve_state(x, mu[k], p)
            if not ok or _same(p, x, ads.logits[k]) or _same(p, x, des.logits[k]):
                break
            if any(np.all(np.isfinite(q[k])) and _same(p, x, q[k]) for q in paths):
                return                                              # found before, from another start
            logits[k], omega[k], prev = x, om, k
            n = float(w @ p.occupancy(x))
            between = float(w @ ads.occupancy[k]) <= n <= float(w @ des.occupancy[k])
            past = om > (des.grand_potential[k] if up else ads.grand_potential[k])
            if between and past and k != k0:
                break                                               # it can no longer be the lowest
        if k0 not in range(run[0], run[1] + 1) or not np.isfinite(omega[k0]):
            return                                                  # the start fell onto a branch
        x0 = logits[k0]
    paths.append(logits)
    omegas.append(omega)


def _follow_out(mu: np.ndarray, k_edge: int, x0: np.ndarray, step: int, p: MeanFieldProblem, ads: Branch,
                des: Branch, paths: list[np.ndarray], omegas: list[np.ndarray]) -> None:
    """Continue a state of a run's edge out of the run: the adsorption branch's state at the run's first
    point down (``step`` = −1), the desorption branch's at its last point up (+1). Outside the run both
    branches hold one state, but where both jumped in the same grid interval, passing over a layer (the
    adsorption branch up to a thick film, the desorption branch down past it), the state they passed over
    can still exist beyond the edge and lie lower than theirs. It is followed while it stays apart from the
    branches and, as in `_follow`, one point past where it can no longer be the lowest; kept as a path when
    it exists at one point at least."""
    logits = np.full((mu.size, x0.size), np.nan)
    omega = np.full(mu.size, np.nan)
    x, solve, prev = x0, None, k_edge
    k = k_edge + step
    while 0 <= k < mu.size:
        x = x + (solve(np.full(x.size, mu[k] - mu[prev])) if solve is not None else 0.0)
        x, ok, solve, om = solve_state(x, mu[k], p)
        if not ok or _same(p, x, ads.logits[k]) or _same(p, x, des.logits[k]):
            break
        if any(np.all(np.isfinite(q[k])) and _same(p, x, q[k]) for q in paths):
            return
        logits[k], omega[k], prev = x, om, k
        if om > min(ads.grand_potential[k], des.grand_potential[k]):
            break                        # above the branches' state, and losing further on: it is done
        k += step
    if np.isfinite(omega).any():
        paths.append(logits)
        omegas.append(omega)


def _search_rows(mu, run, k: int, row, low: int, high: int, p: MeanFieldProblem, ads: Branch, des: Branch,
                 paths: list, omegas: list) -> None:
    """Layered starts at grid point k with r rows full, low < r < high (``low``: rows full on the adsorption
    branch, ``high``: on the desorption branch), at most ``_STARTS_PER_POINT`` of them spread evenly over that
    range; each is descended, and a state of neither branch not found before is followed. The outcomes are not
    monotonic in r (a start may fall back, find a state of its own, or fill the pore, in any order), so every
    r of the spread is tried, up to the first that fills the pore."""
    rs = np.arange(low + 1, high)
    if rs.size > _STARTS_PER_POINT:
        rs = np.unique(np.round(np.linspace(low + 1, high - 1, _STARTS_PER_POINT)).astype(int))
    for r in rs:
        # the outer rows as the desorption branch holds them, the inner as the adsorption branch
        x, ok, _, _ = solve_state(np.where(row < r, des.logits[k], ads.logits[k]), mu[k], p,
                                  max_iter=_DESCENT_ITERATIONS)
        if not ok or _same(p, x, ads.logits[k]):
            continue
        if _same(p, x, des.logits[k]):
            break                       # the pore fills from r rows full
        if not any(np.all(np.isfinite(q[k])) and _same(p, x, q[k]) for q in paths):
            _follow(mu, run, k, x, p, ads, des, paths, omegas)


def equilibrium_states(mu: np.ndarray, problem: MeanFieldProblem, ads: Branch, des: Branch,
                       row: np.ndarray) -> EquilibriumStates:
    """The equilibrium (lowest Ω among the branches and the layered starts' states) on the grid ``mu``.

    ``row``: (O,) each orbit's row counted from the wall (0 = the first row).
    """
    p, w = problem, problem.weights
    mu = np.asarray(mu, float)
    gap = des.occupancy @ w - ads.occupancy @ w
    differ = gap > _DIFFER_FRACTION * float(w.sum())
    edges = np.diff(np.concatenate([[0], differ.astype(np.int8), [0]]))
    runs = list(zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1))
    paths: list[np.ndarray] = []
    omegas: list[np.ndarray] = []
    rows = int(np.max(row)) + 1 if row.size else 1
    row_weight = np.bincount(row, weights=w, minlength=rows)

    def rows_full(occupancy: np.ndarray) -> int:
        """Rows from the wall that are more than half full before the first that is not."""
        full = np.bincount(row, weights=w * occupancy, minlength=rows) > 0.5 * row_weight
        return int(np.argmin(full)) if not full.all() else rows

    for i0, i1 in runs:
        seeds = np.unique(np.round(np.linspace(i0, i1, min(_SEEDS, i1 - i0 + 1))).astype(int))
        for k in seeds:
            _search_rows(mu, (i0, i1), int(k), row, rows_full(ads.occupancy[k]), rows_full(des.occupancy[k]),
                         p, ads, des, paths, omegas)
        if i0 > 0:
            _follow_out(mu, int(i0), ads.logits[i0], -1, p, ads, des, paths, omegas)
        if i1 < mu.size - 1:
            _follow_out(mu, int(i1), des.logits[i1], +1, p, ads, des, paths, omegas)
    n_paths = len(paths)
    path_logits = np.array(paths) if n_paths else np.zeros((0, mu.size, w.size))
    path_omega = np.array(omegas) if n_paths else np.zeros((0, mu.size))
    # lowest Ω, ties to the adsorption branch, then the desorption branch, then the paths in order
    omega = np.vstack([ads.grand_potential, des.grand_potential, path_omega])
    omega = np.where(np.isfinite(omega), omega, np.inf)
    best = omega.min(axis=0)
    tie = 1e-9 * (1.0 + np.abs(best))
    source = np.argmax(omega <= (best + tie)[None, :], axis=0)
    logits = np.where((source == 0)[:, None], ads.logits, des.logits)
    for j in range(n_paths):
        logits = np.where((source == 2 + j)[:, None], path_logits[j], logits)
    grand = omega[source, np.arange(mu.size)]
    return EquilibriumStates(logits, grand, source, path_logits, path_omega, p)
