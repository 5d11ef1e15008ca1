"""Mean-field lattice gas (lattice density functional theory) on a set of sites.

Grand potential (Kierlik, Monson, Rosinberg & Tarjus, PCCP 3, 1201 (2001); Monson, Microporous
Mesoporous Mater. 160, 47 (2012)), energies in K:

    Ω = kT Σ_i [n_i ln n_i + (1−n_i) ln(1−n_i)] + Σ_i (f_i − μ) n_i − (ε_b/2) Σ_ij A_ij n_i n_j

with f_i the site free energy, ε_b the nearest-neighbour bond and A the neighbour matrix. Its stationary
points satisfy n_i = 1 / (1 + exp[(f_i − ε_b (A n)_i − μ)/kT]).

We solve in the logits x_i = ln(n_i/(1−n_i)), where the equations read G(x) = kT x + f − μ − ε_b A σ(x) = 0
(G is also ∂Ω/∂n). Each μ is solved by a damped Newton method (Levenberg–Marquardt): the step solves
(kT(1+λ) I − ε_b A D) δ = −G with D = diag(n(1−n)), accepted only if Ω decreases (Armijo). For λ → ∞ it
is the plain damped iteration, for λ = 0 Newton, so it always descends to a local minimum of Ω — a stable
state — and converges quadratically there. Along a branch the previous solution and the tangent
dx/dμ = J⁻¹·1 seed the next μ (continuation); at a spinodal the descent carries the state to the next branch.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
from scipy import sparse
from scipy.linalg import lapack as _lapack
from scipy.sparse.linalg import splu
from scipy.special import expit

from porefill.physics.lattice_gas import compiled

__all__ = ["grand_potential", "solve_state", "solve_branch", "Branch", "MeanFieldProblem", "SiteSpread"]

_DENSE_MAX_SITES = 160
_TOLERANCE_K = 1e-10


@dataclass(frozen=True, eq=False)
class MeanFieldProblem:
    """Site free energies f (K), neighbour matrix A, bond ε_b (K), temperature kT (K), site weights w.

    The sites may be symmetry orbits: then ``weights`` are the orbit sizes and A_oo' counts the
    neighbours a member of orbit o has in orbit o' (W·A is symmetric). Ω sums w_o times the per-site terms.
    """

    site_free_energy: np.ndarray
    neighbours: sparse.csr_matrix | np.ndarray
    bond_k: float
    temperature_k: float
    weights: np.ndarray | None = None
    spread: "SiteSpread | None" = None

    def __post_init__(self) -> None:
        if self.weights is None:
            object.__setattr__(self, "weights", np.ones(self.site_free_energy.size))
        if self.spread is not None and self.spread.orbits.shape != self.site_free_energy.shape:
            raise ValueError(f"site spread marks {self.spread.orbits.size} sites; the problem has "
                             f"{self.site_free_energy.size}")
        f = self.site_free_energy
        if not np.all(np.isfinite(f)):
            raise ValueError("site free energies must be finite (drop sites that cannot fill)")
        if self.neighbours.shape != (f.size, f.size):
            raise ValueError(f"neighbour matrix shape {self.neighbours.shape} does not match {f.size} sites")
        if not (self.temperature_k > 0):
            raise ValueError(f"temperature must be positive, got {self.temperature_k!r} K")
        if not (self.bond_k >= 0):
            raise ValueError(f"bond energy must be >= 0 K, got {self.bond_k!r}")


    def occupancy(self, x) -> np.ndarray:
        """Mean occupancy n̄ of each site (…, N) from its logits x: expit(x), or on sites with a spread of
        free energies Σ_k p_k expit(x − δ_k/kT)."""
        return expit(x) if self.spread is None else self.spread.occupancy(x, self.temperature_k)

    def occupancy_slope(self, x) -> np.ndarray:
        """dn̄/dx of each site: n(1−n), or Σ_k p_k n_k(1−n_k) on sites with a spread."""
        if self.spread is None:
            n = expit(x)
            return n * (1.0 - n)
        return self.spread.slope(x, self.temperature_k)


@dataclass(frozen=True, eq=False)
class SiteSpread:
    """A spread of free energies on some sites (the energetic heterogeneity of a real wall): each marked site
    stands for a mixture of sub-sites, a fraction p_k of them with free energy f_i + δ_k (K), all feeling
    the same mean field (random mixing, Bragg–Williams). A marked site's logit x is that of a sub-site with
    δ = 0; sub-site k then has logit x − δ_k/kT and the site's mean occupancy is n̄ = Σ_k p_k expit(x − δ_k/kT).

    The stationary condition keeps its form, kT x + f − μ − ε_b (A n̄) = 0, because every sub-site obeys
    kT x_k + f + δ_k − μ − ε_b (A n̄) = 0; a marked site's share of Ω is Σ_k p_k [kT s(n_k) + δ_k n_k] +
    (f − μ) n̄ with s the mixing entropy, and the Jacobian's diagonal factor is dn̄/dx = Σ_k p_k n_k(1 − n_k).
    """

    shift_k: np.ndarray          # (N, K) δ_k of each site, K (rows of unmarked sites unused)
    fraction: np.ndarray         # (K,) p_k, summing to 1
    orbits: np.ndarray           # (N,) bool, the sites that carry the spread

    def _logits(self, x, kt: float) -> np.ndarray:
        return np.asarray(x, float)[..., None] - self.shift_k / kt          # (…, N, K)

    def occupancy(self, x, kt: float) -> np.ndarray:
        n = expit(np.asarray(x, float))
        mixed = expit(self._logits(x, kt)) @ self.fraction
        return np.where(self.orbits, mixed, n)

    def slope(self, x, kt: float) -> np.ndarray:
        n = expit(np.asarray(x, float))
        nk = expit(self._logits(x, kt))
        return np.where(self.orbits, (nk * (1.0 - nk)) @ self.fraction, n * (1.0 - n))

    def ideal_terms(self, x, kt: float) -> tuple[np.ndarray, np.ndarray]:
        """Per site kT s(n) (+ Σ p_k δ_k n_k on marked sites) and a scale for its rounding."""
        x = np.asarray(x, float)
        n = expit(x)
        plain = kt * (n * x - np.logaddexp(0.0, x))
        xk = self._logits(x, kt)
        nk = expit(xk)
        mixed = (kt * (nk * xk - np.logaddexp(0.0, xk)) + self.shift_k * nk) @ self.fraction
        scale = (kt * np.abs(nk * xk - np.logaddexp(0.0, xk)) + np.abs(self.shift_k) * nk) @ self.fraction
        return np.where(self.orbits, mixed, plain), np.where(self.orbits, scale, np.abs(plain))

    def energy(self, x, kt: float) -> np.ndarray:
        """Σ_k p_k δ_k n_k per site (K; 0 on unmarked sites): the spread's share of the site energy."""
        nk = expit(self._logits(x, kt))
        return np.where(self.orbits, (nk * self.shift_k) @ self.fraction, 0.0)


def grand_potential(x: np.ndarray, mu: float, problem: MeanFieldProblem) -> float:
    """Ω (K) of the state with logits x at chemical potential μ (K)."""
    return _evaluate(x, mu, problem)[0]


def _evaluate(x, mu, p: MeanFieldProblem):
    """Ω, the size of its rounding error, the residual G = ∂Ω/∂n (per site) and n, in one pass."""
    a = _dense_neighbours(p)
    if p.spread is None:
        n = expit(x)
        ideal = p.temperature_k * (n * x - np.logaddexp(0.0, x))   # kT[n ln n + (1−n) ln(1−n)], never forming 1 − n
        ideal_scale = np.abs(ideal)
    else:
        n = p.spread.occupancy(x, p.temperature_k)
        ideal, ideal_scale = p.spread.ideal_terms(x, p.temperature_k)
    an = (a if a is not None else p.neighbours) @ n
    bonds = 0.5 * p.bond_k * an * n
    shifted = (p.site_free_energy - mu) * n
    omega = float(p.weights @ (ideal + shifted - bonds))
    scale = float(p.weights @ (ideal_scale + np.abs(shifted) + bonds)) + 1.0
    residual = p.temperature_k * x + p.site_free_energy - mu - p.bond_k * an
    return omega, 1e-13 * scale, residual, n


def _factor(p: MeanFieldProblem, a_dense, d: np.ndarray, damping: float):
    """Solver for (kT(1+λ) I − ε_b A D) δ = r.

    Dense (small problems): the inverse. Large ones: the pattern in reverse Cuthill–McKee order is a band
    (half-width 7/14/27 for hexagons of 50/100/200 Å), factored by LAPACK's banded LU with partial pivoting
    (dgbtrf) — 3–5× quicker than a general sparse LU of the same matrix, which spends its time ordering and
    allocating; patterns that do not make a narrow band keep the sparse LU."""
    diag = p.temperature_k * (1.0 + damping)
    if a_dense is not None:
        j = a_dense * (-p.bond_k * d)[None, :]
        j.flat[:: d.size + 1] += diag
        return np.linalg.inv(j).__matmul__       # small and well conditioned: the inverse is cheapest
    pattern, columns, diagonal = _jacobian_pattern(p)
    data = (-p.bond_k) * pattern.data * d[columns]      # A·D: column j scaled by d_j
    data[diagonal] += diag
    band = _band_layout(p)
    if band is None:
        j = pattern.copy()
        j.data = data
        return splu(j).solve
    perm, kl, ku, flat = band
    ab = np.zeros((2 * kl + ku + 1, d.size), order="F")
    ab.ravel(order="F")[flat] = data
    lu, piv, info = _lapack.dgbtrf(ab, kl, ku, overwrite_ab=1)
    if info != 0:
        raise np.linalg.LinAlgError("singular Newton matrix")

    def solve(r):
        y, _ = _lapack.dgbtrs(lu, kl, ku, np.asarray(r, float)[perm], piv)
        out = np.empty_like(y)
        out[perm] = y
        return out
    return solve


def _band_layout(p: MeanFieldProblem):
    """(permutation, lower and upper half-widths, position of each pattern entry in LAPACK's band storage)
    for the pattern in reverse Cuthill–McKee order, or None when that band is not narrow (over a quarter of
    the size). Built once per problem."""
    cached = getattr(p, "_band", False)
    if cached is False:
        from scipy.sparse.csgraph import reverse_cuthill_mckee

        pattern, columns, _ = _jacobian_pattern(p)
        n = pattern.shape[0]
        perm = reverse_cuthill_mckee(pattern.tocsr(), symmetric_mode=False)
        where = np.empty(n, int)
        where[perm] = np.arange(n)
        rows, cols = where[pattern.indices], where[columns]
        kl = int(max(np.max(rows - cols), 0))
        ku = int(max(np.max(cols - rows), 0))
        cached = None
        if max(kl, ku) <= n // 4:
            height = 2 * kl + ku + 1
            cached = (perm, kl, ku, (kl + ku + rows - cols) + cols * height)    # ab[kl+ku+i−j, j] = J_ij
        object.__setattr__(p, "_band", cached)
    return cached


def _jacobian_pattern(p: MeanFieldProblem):
    """A in CSC with the diagonal in its pattern, each entry's column, and the diagonal entries' positions.

    Built once per problem, so each Newton step only rescales the stored values.
    """
    cached = getattr(p, "_pattern", None)
    if cached is None:
        a = sparse.csc_matrix(p.neighbours, dtype=float)
        a = (a + sparse.identity(a.shape[0], format="csc") * 0.0).tocsc()   # diagonal kept even if 0
        a.sort_indices()
        columns = np.repeat(np.arange(a.shape[1]), np.diff(a.indptr))
        diagonal = np.flatnonzero(a.indices == columns)
        cached = (a, columns, diagonal)
        object.__setattr__(p, "_pattern", cached)
    return cached


def _dense_neighbours(problem: MeanFieldProblem):
    """A as a dense array for small problems (cached on the problem), None for large ones."""
    a = problem.neighbours
    if isinstance(a, np.ndarray):
        return a
    if problem.site_free_energy.size > _DENSE_MAX_SITES:
        return None
    dense = getattr(problem, "_dense", None)
    if dense is None:
        dense = a.toarray()
        object.__setattr__(problem, "_dense", dense)
    return dense


def solve_state(x0: np.ndarray, mu: float, problem: MeanFieldProblem, *, max_iter: int = 5000,
                tol: float = _TOLERANCE_K):
    """Descend from logits x0 to a stable state at μ.

    Returns
    -------
    x : ndarray, logits of the state
    converged : bool, max |∂Ω/∂n| < tol
    solve : callable applying J⁻¹ at the solution (for the continuation tangent)
    omega : float, Ω at the state (K)
    """
    a_dense = _dense_neighbours(problem)
    if a_dense is not None and compiled.available():
        return compiled.solve_state_dense(x0, mu, problem, a_dense, max_iter=max_iter, tol=tol)
    x = np.array(x0, float)
    damping = 0.0
    omega, flat, g, n = _evaluate(x, mu, problem)   # flat: Ω changes below this are rounding
    solve = None
    for _ in range(max_iter):
        gmax = np.max(np.abs(g)) if g.size else 0.0
        if gmax < tol:
            if solve is None or damping > 0:
                solve = _factor(problem, a_dense, problem.occupancy_slope(x), 0.0)
            return x, True, solve, omega
        d = problem.occupancy_slope(x)
        accepted = False
        while not accepted:
            try:
                solve = _factor(problem, a_dense, d, damping)
                step = -solve(g)
            except (np.linalg.LinAlgError, RuntimeError):   # singular at this damping
                step = None
            if step is not None and np.all(np.isfinite(step)):
                slope = float((problem.weights * g * d) @ step)      # dΩ along the step, to first order
                t = 1.0
                # a short line search: if Newton needs heavy backtracking the Hessian is not positive
                # definite here, and more damping (towards the plain iteration) serves better
                for _ in range(3 if damping < 1e6 else 40):
                    trial = x + t * step
                    evaluated = _evaluate(trial, mu, problem)
                    om, res = evaluated[0], evaluated[2]
                    # accept on sufficient decrease of Ω; where Ω cannot resolve the change (saturated
                    # sites, or Newton's quadratic basin) accept when the residual shrinks and Ω does not rise
                    accepted = (slope < 0 and om <= omega + 1e-4 * t * slope) or (
                        om <= omega + flat and np.max(np.abs(res)) < gmax)
                    if accepted:
                        x = trial
                        omega, flat, g, n = evaluated
                        break
                    t *= 0.5
            if not accepted:
                damping = max(1.0, 10.0 * damping) * (1.0 + 1e-3)   # off round values: no exact singularity
                if damping > 1e12:
                    return x, False, solve, omega
        damping = 0.0 if damping < 1e-6 else damping * 0.1
    return x, bool(np.max(np.abs(g)) < tol), solve, omega


@dataclass(frozen=True, eq=False)
class Branch:
    """States along a sweep of μ: logits (M, N), occupancies, grand potential (M,), converged (M,)."""

    mu: np.ndarray
    logits: np.ndarray
    grand_potential: np.ndarray
    converged: np.ndarray
    problem: MeanFieldProblem | None = None     # how logits become occupancies (None: expit)

    def __post_init__(self) -> None:
        # the occupancies are computed once (`occupancy`), so the states must not change under them
        for a in (self.mu, self.logits, self.grand_potential, self.converged):
            a.flags.writeable = False

    @cached_property
    def occupancy(self) -> np.ndarray:
        """(M, N) mean occupancies, computed once: the step finder reads single rows of them many times."""
        n = expit(self.logits) if self.problem is None else self.problem.occupancy(self.logits)
        n.flags.writeable = False
        return n

    @property
    def total(self) -> np.ndarray:
        """Σ_i n_i at each μ."""
        return self.occupancy.sum(axis=1)


def solve_branch(mu: np.ndarray, problem: MeanFieldProblem, x_start: np.ndarray) -> Branch:
    """Continuation along the given μ values (in order), starting the first from x_start."""
    mu = np.asarray(mu, float)
    n_sites = problem.site_free_energy.size
    logits = np.empty((mu.size, n_sites))
    omega = np.empty(mu.size)
    ok = np.empty(mu.size, bool)
    x = np.array(x_start, float)
    solve = None
    for k, m in enumerate(mu):
        if solve is not None and k > 0:
            x = x + solve(np.full(n_sites, m - mu[k - 1]))   # tangent predictor: J dx = dμ·1
        x, ok[k], solve, omega[k] = solve_state(x, m, problem)
        logits[k] = x
    return Branch(mu, logits, omega, ok, problem)
