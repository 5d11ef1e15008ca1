"""One atom in the pore cross-section, exactly: the 2-D Schrödinger equation in the wall potential.

    [−(ħ²/2m) ∇² + V(x, y)] ψ_n = E_n ψ_n,   free motion along the axis.

The cross-section is covered by a triangular grid of spacing h with a point at the centre and rows along x,
so the grid has the hexagon's full point group (C6v) and the states carry its degeneracies exactly. The
Laplacian is fourth order, (4 L_h − L_2h)/3 with L_h f = (2/(3h²)) Σ_{6 nbrs at h} (f_j − f_0) and L_2h the
same over the six collinear points at 2h (see `_hamiltonian`); points where V exceeds ``_WALL_CUT_K`` (deep in
the repulsive wall, where every state kept has decayed) are left out, which is a hard wall there. The lowest
states come from a shift-invert sparse eigensolver (ARPACK via scipy.sparse.linalg.eigsh, with a sparse LU).
The energies' error is estimated from a second grid 2h, h is halved until the estimate is below a fraction
of kT, and the levels are then Richardson-extrapolated from the two grids (`solve_states`).

The one-atom partition function per length L is Z₁/L = (1/λ) Σ_n exp(−E_n/kT), so at low pressure
N/L = (p λ²/kT) Σ_n exp(−E_n/kT) (docs/REFERENCES.md §4); classically N/L = (p/kT) ∫ exp(−V/kT) dA.
Energies in K (E/k_B), lengths in Å; ħ²/(m k_B) from the adsorbate (scipy.constants).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants, sparse
from scipy.sparse.linalg import LinearOperator, eigsh, splu
from scipy.spatial import cKDTree

from porefill.physics.caching import BoundedCache
from porefill.physics.sites.lattice import _cell_offsets, _triangular_sites
from porefill.physics.sites.symmetry_blocks import block_states, symmetry_blocks
from porefill.physics.pore.wall_potential import wall_potential

__all__ = ["CrossSectionStates", "solve_states", "thermal_wavelength_angstrom", "classical_boltzmann_area",
           "grid_states", "potential_grid", "states_wanted_top_k", "henry_constant", "cached_states", "model_states"]

_WALL_CUT_K = 2000.0          # grid points with V above this are outside the problem (hard wall; 400 K moves E0 by 0.1 K)
_WEIGHT_FRACTION = 1e-6       # the first layer's states: until the next carries less Boltzmann weight than this
_FIRST_STATES = 24
_MAX_STATES = 480
_FINE_STEP_ANGSTROM = 0.04    # sample spacing of the classical integral where exp(−V/kT) matters
TOLERANCE_KT = 0.01           # the one-atom free energy's estimated grid error, in units of kT
_ERROR_DIVISOR = 7.0          # |E_h − E_2h| / this: the finer grid's error, short of the asymptotic 15 (see solve_states)


def thermal_wavelength_angstrom(hbar2_over_mk: float, temperature_k: float) -> float:
    """λ = h/√(2π m k T) = √(2π ħ²/(m k T)) in Å, with ħ²/(m k_B) in K·Å²."""
    return float(np.sqrt(2.0 * np.pi * hbar2_over_mk / temperature_k))


def _grid(pore, pair, h: float, wall_cut_k: float = _WALL_CUT_K):
    """Triangular grid points inside the pore where V < wall_cut_k, their potential, and the neighbour
    pairs of the stencil: (nearest at h, collinear at 2h)."""
    x0, x1, y0, y1 = pore.bounding_box()
    return potential_grid(lambda x, y: wall_potential(x, y, pore=pore, pair=pair),
                          np.hypot(max(abs(x0), x1), max(abs(y0), y1)) + h, h, wall_cut_k)


def potential_grid(potential, radius: float, h: float, wall_cut_k: float = _WALL_CUT_K):
    """The grid of any potential ``potential(x, y) -> K`` (+inf: outside) within ``radius`` of the origin."""
    pts = _triangular_sites(radius, h)
    v = potential(pts[:, 0], pts[:, 1])
    keep = v < wall_cut_k
    pts, v = pts[keep], v[keep]
    pairs = cKDTree(pts).query_pairs(h * 2.001, output_type="ndarray")
    d = np.hypot(*(pts[pairs[:, 0]] - pts[pairs[:, 1]]).T)
    return pts, v, (pairs[d < 1.01 * h], pairs[d > 1.99 * h])


def _hamiltonian(v: np.ndarray, pairs, h: float, hbar2_over_mk: float) -> sparse.csr_matrix:
    """H = −(ħ²/2m) L + diag(V), L the fourth-order Laplacian of the triangular grid.

    L_h f = (2/(3h²)) Σ_{6 at h} (f_j − f_0) = ∇²f + (h²/16)∇⁴f + O(h⁴), and the same over the 6 collinear
    points at 2h has four times the h² term, so L = (4 L_h − L_2h)/3 = ∇²f + O(h⁴) (Richardson on the
    operator; the 1-D analogue is the five-point second derivative). A missing neighbour is a node, ψ = 0.

    ``pairs`` may hold a third entry, (i, m, kind): i's neighbour at h (kind 1) or 2h (kind 2) lies beyond a
    straight edge where ψ = 0, its mirror image being m. ψ is odd there, so that coupling moves to (i, m) with
    its sign turned; without it the stencil's reach across a hard edge makes the energies first order in h
    (`porefill.physics.sites.inner_states.edge_mirrors`)."""
    near, far = pairs[0], pairs[1]
    t1 = hbar2_over_mk / 2.0 * (4.0 / 3.0) * 2.0 / (3.0 * h * h)
    t2 = -hbar2_over_mk / 2.0 * (1.0 / 3.0) * 2.0 / (3.0 * 4.0 * h * h)
    n = v.size
    rows = [near[:, 0], near[:, 1], far[:, 0], far[:, 1], np.arange(n)]
    cols = [near[:, 1], near[:, 0], far[:, 1], far[:, 0], np.arange(n)]
    vals = [np.full(2 * len(near), -t1), np.full(2 * len(far), -t2), v + 6.0 * (t1 + t2)]
    if len(pairs) > 2:
        i, m, kind = pairs[2]
        rows.append(i)
        cols.append(m)
        vals.append(np.where(kind == 1, t1, t2))
    return sparse.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n))


def grid_states(v: np.ndarray, pairs, h: float, hbar2_over_mk: float, *, k: int,
                shift: float, points: np.ndarray | None = None,
                vectors: bool | int = True, hint: list | None = None,
                owners: list | None = None, reduce=None):
    """The k eigenpairs of the grid Hamiltonian nearest above ``shift`` (energies ascending, vectors
    normalised to Σ|ψ|² = 1), by shift-invert Lanczos with a sparse LU of H − σ.

    With the grid's ``points``, the Hamiltonian is split into the symmetry blocks the grid and the potential
    keep (C6v's for the hexagon and the cylinder, the mirrors' otherwise;
    `porefill.physics.sites.symmetry_blocks`) and solved block by block: the same states, several times
    faster. ``vectors`` (all, the lowest so many, or none), ``reduce`` (a summary of every state's |ψ|²,
    returned third), ``hint`` and ``owners`` (the blocks' shares asked first, and the block of each state
    found): with the points only (`porefill.physics.sites.symmetry_blocks.block_states`)."""
    k = int(min(k, v.size - 2))
    hamiltonian = _hamiltonian(v, pairs, h, hbar2_over_mk)
    if points is None:
        e, vec = _shift_invert(hamiltonian.tocsc(), k, shift)
        return e, (vec if vectors else None)
    return block_states(hamiltonian, symmetry_blocks(points, v), k=k, shift=shift, solve=_shift_invert,
                        vectors=vectors, hint=hint, owners=owners, reduce=reduce)


_DENSE_BELOW = 800           # blocks this small are solved densely: exact, quicker, and no Krylov space to converge


def _dense_lowest(hamiltonian, k: int) -> tuple[np.ndarray, np.ndarray]:
    from scipy.linalg import eigh

    n = hamiltonian.shape[0]
    e, vec = eigh(hamiltonian.toarray(), subset_by_index=(0, min(k, n) - 1))
    return e, vec


def _shift_invert(hamiltonian: sparse.csc_matrix, k: int, shift: float) -> tuple[np.ndarray, np.ndarray]:
    """The k eigenpairs of one (block of the) Hamiltonian nearest above ``shift``, ascending. A block of
    fewer than `_DENSE_BELOW` points is diagonalised densely (every state below the shift lies above it:
    the shift is set below the lowest level)."""
    from scipy.sparse.linalg import ArpackNoConvergence

    n = hamiltonian.shape[0]
    if n < _DENSE_BELOW:
        return _dense_lowest(hamiltonian, k)
    k = int(min(k, n - 2))
    try:
        return _arpack(hamiltonian, k, shift)
    except ArpackNoConvergence:
        raise ValueError(f"the one-atom states did not converge on a grid block of {n} points; try a coarser "
                         "setting or the classical site model") from None


def _arpack(hamiltonian: sparse.csc_matrix, k: int, shift: float) -> tuple[np.ndarray, np.ndarray]:
    n = hamiltonian.shape[0]
    lu = splu((hamiltonian - shift * sparse.identity(n, format="csc")).tocsc(), permc_spec="MMD_AT_PLUS_A")
    inverse = LinearOperator(hamiltonian.shape, matvec=lu.solve, dtype=float)
    # a wider Krylov space than ARPACK's default (2k + 1) converges in far fewer restarts, so far fewer
    # solves with the LU: the states are the same (ARPACK's tolerance is unchanged)
    ncv = int(min(n - 1, max(2 * k + 1, k + 40)))
    e, vec = eigsh(hamiltonian, k=k, sigma=shift, OPinv=inverse, which="LM", ncv=ncv)
    order = np.argsort(e)
    return e[order], vec[:, order]


@dataclass(frozen=True, eq=False)
class CrossSectionStates:
    """The lowest one-atom states of a pore cross-section.

    ``energies_k`` (K,) ascending, Richardson-extrapolated; ``vectors`` (P, K_v) the lowest K_v ≤ K states
    on ``points`` (P, 2), each normalised so that Σ_p |ψ_p|² = 1 (a point stands for an area
    ``point_area_angstrom2``): those that carry the one-atom Boltzmann sum (the maps and densities use them);
    ``potential_k`` (P,) the wall potential there; ``error_k`` the estimated error of the energies.
    Of every state, K of them: ``state_potential_k`` (K,) ⟨n|V|n⟩ (K), and ``home_density`` (B, K) its
    probability summed over blocks of four neighbouring grid points, centred at ``home_points`` (B, 2), in
    single precision — what `porefill.physics.sites.state_sites.state_homes` needs to give the inner rows their states, at a sixteenth of the
    memory of the vectors (a 25 Å pore holds some 450 states on 90 000 points). ``centre_potential_k`` the
    wall potential at the pore's centre, which sets how many inner states are wanted
    (`porefill.physics.sites.inner_states.inner_top_k`).
    """

    energies_k: np.ndarray
    vectors: np.ndarray
    points: np.ndarray
    potential_k: np.ndarray
    spacing_angstrom: float
    error_k: float
    capped: bool
    potential_minimum_k: float
    hbar2_over_mk: float
    state_potential_k: np.ndarray
    home_points: np.ndarray
    home_density: np.ndarray
    centre_potential_k: float

    @property
    def point_area_angstrom2(self) -> float:
        return float(np.sqrt(3.0) / 2.0 * self.spacing_angstrom**2)

    @property
    def ground_state_k(self) -> float:
        return float(self.energies_k[0])

    @property
    def zero_point_energy_k(self) -> float:
        """Depth of the ground state above the classical minimum of the potential."""
        return float(self.energies_k[0] - self.potential_minimum_k)

    def boltzmann_sum(self, temperature_k: float) -> float:
        """Σ_n exp(−E_n/kT) over the computed states."""
        return float(np.exp(-self.energies_k / temperature_k).sum())

    @property
    def tail_cut_k(self) -> float:
        """Where the semiclassical tail takes over from the computed states (K): half a level spacing (the
        mean of the top ten) above the highest state."""
        e = self.energies_k
        top = e[-min(len(e), 11):]
        return float(e[-1] + (0.5 * (top[-1] - top[0]) / (len(top) - 1) if len(top) > 1 else 0.0))

    def tail_point_weights(self, temperature_k: float) -> np.ndarray:
        """(P,) each grid point's share of the semiclassical tail, relative to the ground state:
        (a/λ²) exp(−(max(E_cut, V) − E₀)/kT), a the area a grid point stands for."""
        kt = float(temperature_k)
        lam = thermal_wavelength_angstrom(self.hbar2_over_mk, kt)
        floor = np.maximum(self.potential_k, self.tail_cut_k)
        return self.point_area_angstrom2 / (lam * lam) * np.exp(-(floor - self.energies_k[0]) / kt)

    def tail_sum(self, temperature_k: float) -> float:
        """The Boltzmann sum of the states above the computed ones, semiclassically (Weyl's density of states
        N(E) = (m/2πħ²) ∫(E − V)₊ dA): Σ_{E_n > E_cut} exp(−E_n/kT) ≈ (1/λ²) ∫ exp(−max(E_cut, V)/kT) dA."""
        return float(self.tail_point_weights(temperature_k).sum() * np.exp(-self.energies_k[0] / temperature_k))

    def tail_fraction(self, temperature_k: float) -> float:
        """The semiclassical tail's share of the whole Boltzmann sum (what the computed states leave out)."""
        tail = self.tail_sum(temperature_k)
        return tail / (self.boltzmann_sum(temperature_k) + tail)

    def quantum_area_angstrom2(self, temperature_k: float) -> float:
        """λ² (Σ_n exp(−E_n/kT) + tail) (Å²): the quantum counterpart of ∫exp(−V/kT) dA, the states above the
        computed ones summed semiclassically (`tail_sum`)."""
        lam = thermal_wavelength_angstrom(self.hbar2_over_mk, temperature_k)
        return lam * lam * (self.boltzmann_sum(temperature_k) + self.tail_sum(temperature_k))

    def weights(self, temperature_k: float) -> np.ndarray:
        """Boltzmann occupation of each computed state (sum 1)."""
        w = np.exp(-(self.energies_k - self.energies_k[0]) / temperature_k)
        return w / w.sum()

    def thermal_density(self, temperature_k: float) -> np.ndarray:
        """(P,) one-atom probability density at the grid points, per Å² (integrates to 1, less the weight of
        the states above the stored vectors: below 1e-6 at the temperature the states were solved for)."""
        n = self.vectors.shape[1]
        return (np.abs(self.vectors) ** 2 @ self.weights(temperature_k)[:n]) / self.point_area_angstrom2

    def mean_potential_k(self, temperature_k: float) -> float:
        """⟨V⟩ of one atom at temperature T (K)."""
        return float(self.state_potential_k @ self.weights(temperature_k))

    def mean_kinetic_k(self, temperature_k: float) -> float:
        """⟨kinetic⟩ of one atom: in-plane ⟨E − V⟩ plus kT/2 for the free motion along the axis (K)."""
        in_plane = float(self.energies_k @ self.weights(temperature_k)) - self.mean_potential_k(temperature_k)
        return in_plane + 0.5 * temperature_k

    def henry_per_nm_pa(self, temperature_k: float) -> float:
        """Quantum Henry constant: atoms per nm of pore per Pa, (λ²/kT) Σ_n exp(−E_n/kT)."""
        return henry_constant(self.quantum_area_angstrom2(temperature_k), temperature_k)


def henry_constant(area_angstrom2: float, temperature_k: float) -> float:
    """Henry constant, atoms per nm of pore per Pa, of an effective area (Å²): N/L = p·area/kT."""
    return area_angstrom2 * 1e-30 / (constants.k * temperature_k) * 10.0


def classical_boltzmann_area(pore, pair, temperature_k: float, *, spacing_angstrom: float = 0.15) -> float:
    """∫ exp(−V/kT) dA (Å²) over the cross-section.

    A triangular grid of ``spacing_angstrom`` finds where the integrand matters (V within 40 kT of the
    grid's lowest); there each grid cell is sampled again every ``_FINE_STEP_ANGSTROM`` (the Boltzmann factor of a
    deep well is a spike a few hundredths of an Å wide at low temperature).
    """
    kt = float(temperature_k)
    pts, v, _ = _grid(pore, pair, spacing_angstrom)
    cell = np.sqrt(3.0) / 2.0 * spacing_angstrom**2
    vmin = float(v.min())
    near = v < vmin + 40.0 * kt                   # 30 kT of what matters, 10 kT for a bottom the grid missed
    far_sum = float(np.exp(-(v[~near] - vmin) / kt).sum() * cell)
    m = int(np.ceil(spacing_angstrom / _FINE_STEP_ANGSTROM))
    offsets, w = _cell_offsets(spacing_angstrom, m, slit=False)
    total = far_sum
    chunk = max(1, 400_000 // len(w))
    idx = np.flatnonzero(near)
    for lo in range(0, idx.size, chunk):
        sel = idx[lo:lo + chunk]
        px = (pts[sel, 0][:, None] + offsets[None, :, 0]).ravel()
        py = (pts[sel, 1][:, None] + offsets[None, :, 1]).ravel()
        vf = wall_potential(px, py, pore=pore, pair=pair).reshape(sel.size, -1)
        with np.errstate(over="ignore"):
            total += float((np.exp(-(vf - vmin) / kt) @ w).sum() * cell)
    return float(total * np.exp(-vmin / kt))


def states_wanted_top_k(ground_k: float, temperature_k: float, *, weight_fraction: float = _WEIGHT_FRACTION) -> float:
    """The energy (K) up to which the cross-section's states are wanted: E₀ − kT ln(``weight_fraction``), the
    states that carry the one-atom Boltzmann sum (the first layer's). The rows inside the first take their
    states from the region the first row leaves (`porefill.physics.sites.inner_states`), not from these."""
    return float(ground_k - float(temperature_k) * np.log(weight_fraction))


def _weyl_count(v: np.ndarray, point_area: float, top_k: float, hbar2_over_mk: float) -> float:
    """Weyl's estimate of the number of states below ``top_k``: N(E) = (m/2πħ²) ∫ (E − V)₊ dA."""
    return float(np.clip(top_k - v, 0.0, None).sum() * point_area / (2.0 * np.pi * hbar2_over_mk))


def solve_states(pore, pair, hbar2_over_mk: float, *, temperature_k: float, tol_kt: float = TOLERANCE_KT,
                 spacing_angstrom: float = 0.25, weight_fraction: float = _WEIGHT_FRACTION, max_states: int = _MAX_STATES,
                 min_spacing_angstrom: float = 0.05) -> CrossSectionStates:
    """The lowest states, as many as the temperature needs — every state below `states_wanted_top_k` (the
    first layer's states to ``weight_fraction`` of the ground state's weight), or ``max_states``: then
    ``capped`` — on a grid
    fine enough that the estimated error of the one-atom free energy −kT ln Σ_n e^{−E_n/kT} (the
    Boltzmann-weighted mean error of the levels) is below ``tol_kt`` × kT.

    The estimate compares grids h and 2h. The scheme is fourth order, so asymptotically the finer grid's
    error is |E_h − E_2h|/15; but at the grids used here the steep wall keeps it from the asymptote (helium in
    15 and 21.5 Å hexagons: the differences fall 10.2-fold, then 14.9-fold per halving from h = 0.5 Å), so
    /15 would understate it and the estimate divides by `_ERROR_DIVISOR` = 7 instead. Once it is met, the
    energies returned are Richardson-extrapolated level by level, E_h + (E_h − E_2h)/15, which leaves far
    less than the estimate (those two pores at h = 0.125 Å: 2e-4 K; tests/test_quantum_convergence.py checks
    against an independent square-grid solver). ``error_k`` is the estimate, a bound for the returned levels.
    How many states the top needs is first estimated by Weyl's law on the coarse grid, then counted there.
    Levels above those the coarser grid was solved for (only the first layer's, when the grid was halved)
    keep the finer grid's values, without the extrapolation (their error is about the estimate's size).
    """
    h = float(spacing_angstrom)
    kt = float(temperature_k)
    centre = float(np.asarray(wall_potential(0.0, 0.0, pore=pore, pair=pair)))

    def top(ground_k: float) -> float:
        return states_wanted_top_k(ground_k, kt, weight_fraction=weight_fraction)

    # every state below the top counted on the grid 2h (four times fewer points than h), from a first guess by
    # Weyl's law at the lowest the ground state can be
    ptc, vc, pc = _grid(pore, pair, 2.0 * h)
    if vc.size < _FIRST_STATES + 2:
        raise ValueError(f"the pore is too small for the adsorbate: only {vc.size} points of a {2.0 * h:g} Å "
                         f"grid over its cross-section lie below {_WALL_CUT_K:g} K, too few for its states")
    weyl = _weyl_count(vc, np.sqrt(3.0) / 2.0 * (2.0 * h) ** 2, top(float(vc.min())), hbar2_over_mk)
    ec, k, asked, owners = None, int(min(max(_FIRST_STATES, 1.15 * weyl + 8), max_states)), None, []
    while ec is None or not (ec[-1] >= top(ec[0]) or len(ec) >= max_states
                             or len(ec) >= vc.size - 2 or (asked is not None and len(ec) < asked)):
        if ec is not None:
            k = min(2 * k, max_states)
        asked = min(k, vc.size - 2)
        # a grid split into symmetry blocks holds a few states fewer than its points: fewer than asked
        # back means the grid has no more to give
        ec, _ = grid_states(vc, pc, 2.0 * h, hbar2_over_mk, k=asked, shift=float(vc.min()) - 1.0, points=ptc,
                            vectors=False, owners=owners)
    k_all = int(min(max(np.searchsorted(ec, top(ec[0])) + 6, _FIRST_STATES), len(ec)))
    # each block is asked first for its share of the states on this grid, so that none is solved twice
    hint = list(np.bincount(np.asarray(owners[:k_all], int)))
    # The grid is halved while the error estimate (grids h and 2h) exceeds the tolerance. Only the states that
    # carry the Boltzmann sum (the first layer's rule) decide it, so grids that turn out too coarse are solved
    # for those alone; a grid expected to pass (the last estimate over the 10-fold fall per halving measured
    # here) is solved for every state at once.
    expected = None
    while True:
        pts, v, pairs = _grid(pore, pair, h)
        last = h / 2.0 < min_spacing_angstrom
        every = last or (expected is not None and expected <= 0.5 * tol_kt * kt)
        shift = float(ec[0]) - 2.0        # just below the ground state: (H − σ)⁻¹'s wanted eigenvalues well apart
        if every:
            owners = []
            # the whole vectors of the states that carry the Boltzmann sum; the others' |ψ|² only as sums
            # over blocks of four points, and ⟨n|V|n⟩
            n_whole = int(np.searchsorted(ec, top(ec[0]), side="right")) + 8
            block_points, blocks = _home_blocks(pts, h)
            summary = sparse.vstack([blocks, sparse.csr_matrix(v[None, :])]).tocsr()
            e, vec, reduced = grid_states(v, pairs, h, hbar2_over_mk, k=min(k_all, v.size - 2), shift=shift,
                                          points=pts, hint=hint, owners=owners,
                                          vectors=max(_FIRST_STATES, n_whole), reduce=summary)
        else:
            k_first = int(min(max(np.searchsorted(ec, top(ec[0])) + 6, _FIRST_STATES), len(ec), v.size - 2))
            e, _ = grid_states(v, pairs, h, hbar2_over_mk, k=k_first, shift=shift, points=pts, vectors=False)
        n = min(len(e), len(ec))
        # the error that reaches every result: that of the one-atom free energy −kT ln Σ e^{−E/kT}, i.e. the
        # Boltzmann-weighted mean error of the levels (states far up the spectrum carry little weight)
        w = np.exp(-(e[:n] - e[0]) / kt)
        err = float((w @ np.abs(e[:n] - ec[:n])) / w.sum() / _ERROR_DIVISOR)
        if every and (err <= tol_kt * kt or last):
            break
        if not every and err <= tol_kt * kt:
            expected = 0.0                  # this grid passes: solve it again for every state
            continue
        expected = err / 10.0
        ec = e
        h /= 2.0
    enough = bool(e[-1] >= top(e[0]))
    e = e.copy()
    e[:n] += (e[:n] - ec[:n]) / 15.0          # Richardson, fourth order
    order = np.argsort(e, kind="stable")
    # Richardson can swap two close levels: the whole vectors kept are the lowest after it, whole bands
    e, reduced = e[order], reduced[:, order]
    keep = int(np.searchsorted(e, e[0] - kt * np.log(weight_fraction), side="right"))
    band = _clusters(e, kt)
    keep = int(min(vec.shape[1], max(_FIRST_STATES, np.searchsorted(band, band[max(keep - 1, 0)], side="right"))))
    whole = order[:keep]
    if whole.max(initial=0) >= vec.shape[1]:
        keep = int(np.flatnonzero(order >= vec.shape[1])[0])        # stop before a state without its vector
        whole = order[:keep]
    return CrossSectionStates(e, np.ascontiguousarray(vec[:, whole]), pts, v, h, err, not enough,
                              float(min(v.min(), _deepest(pore, pair))), float(hbar2_over_mk), reduced[-1].copy(),
                              block_points, np.asarray(reduced[:-1], dtype=np.float32), centre)


def _home_blocks(points: np.ndarray, h: float):
    """Blocks of four neighbouring points of the triangular grid of spacing h (a rhombus of the grid twice as
    coarse): each block's centre (B, 2) and the (B, P) sparse sum over its members."""
    j = np.rint(points[:, 1] / (h * np.sqrt(3.0) / 2.0)).astype(int)
    i = np.rint(points[:, 0] / h - 0.5 * j).astype(int)
    key = np.floor_divide(i, 2) * 1_000_003 + np.floor_divide(j, 2)
    _, block = np.unique(key, return_inverse=True)
    n_blocks = int(block.max()) + 1
    summed = sparse.csr_matrix((np.ones(points.shape[0]), (block, np.arange(points.shape[0]))),
                               shape=(n_blocks, points.shape[0]))
    count = np.asarray(summed.sum(axis=1)).ravel()
    centres = np.column_stack([summed @ points[:, 0], summed @ points[:, 1]]) / count[:, None]
    return centres, summed


def _deepest(pore, pair) -> float:
    from porefill.physics.pore.wall_potential import deepest_minimum
    return deepest_minimum(pore=pore, pair=pair).depth_k


# --- states assigned to sites -----------------------------------------------------------------------
_CLUSTER_GAP_KT = 0.02        # states closer than this (in kT, at least 0.02 K) form one band


def _clusters(energies: np.ndarray, temperature_k: float) -> np.ndarray:
    """Band index of every state: a new band starts where the gap to the previous state is large."""
    gap = max(0.02, _CLUSTER_GAP_KT * temperature_k)
    return np.concatenate([[0], np.cumsum(np.diff(energies) > gap)])


_STATES = BoundedCache(16)    # geometry key -> (temperature the states were solved for, states)
_REUSE_MARGIN_KT = 2.0        # held states serve a warmer temperature while their top is within this of the wanted top


def cached_states(geometry, temperature_k: float) -> CrossSectionStates:
    """The states of a geometry stage, computed once and reused for every temperature they cover: a lower
    temperature needs fewer states, and a somewhat higher one is covered while the highest state held lies
    no more than ``_REUSE_MARGIN_KT`` kT below the top that temperature wants (`states_wanted_top_k`: the
    first layer's states then reach 1e-6 e² of the ground state's weight at worst), so a temperature slider
    nudged upwards does not solve again."""
    key = geometry.scenario_key          # the states do not depend on the lattice
    held = _STATES.get(key)
    if held is not None:
        e = held[1].energies_k
        kt = float(temperature_k)
        wanted = states_wanted_top_k(float(e[0]), kt, weight_fraction=_WEIGHT_FRACTION)
        covered = held[0] >= temperature_k or e[-1] >= wanted - _REUSE_MARGIN_KT * kt
    if held is None or not covered:
        held = (float(temperature_k), model_states(geometry, temperature_k))
        _STATES.put(key, held)
    return held[1]


_MORE_STATES = 1e-4           # each extra round asks for states 9.2 kT further up


def _first_row_without_states(states: CrossSectionStates, geometry, temperature_k: float) -> bool:
    from porefill.physics.sites.state_sites import first_row_orbits, state_homes

    lat = geometry.candidates
    home = state_homes(states, lat.x, lat.y, geometry.orbit, temperature_k)
    first = first_row_orbits(geometry)
    return bool(np.any(first & (np.bincount(home, minlength=first.size) == 0)))


def _blend_lattices(geometry) -> list:
    """The geometry stages of every lattice the pore's row blend mixes (the same whichever of them is given),
    or the stage alone where it was not built from a scenario."""
    from porefill.physics.lattice_gas.row_blend import blend_weights
    from porefill.physics.lattice_gas.stages import geometry_stage
    from porefill.physics.scenario import Scenario

    try:
        scenario = Scenario(**dict(geometry.scenario_key))
        return [geometry_stage(scenario, rows) for _, rows in blend_weights(geometry.row_fraction)]
    except (TypeError, ValueError):
        return [geometry]


def model_states(geometry, temperature_k: float, *, max_states: int = _MAX_STATES) -> CrossSectionStates:
    """The states the quantum site model uses for a pore: the first layer's (`solve_states`), and more, 9.2 kT
    further up at a time, while an orbit of the first row of either lattice of the pore's row blend has no
    band of its own (a face orbit that appears with the pore's size lies above the corner's states by more
    than the weight rule reaches: at 24 Å, 1e-14 of the ground state's weight), unless the count reaches
    ``max_states``. Both lattices are asked, so the states do not depend on which one was computed first."""
    fraction = _WEIGHT_FRACTION
    lattices = _blend_lattices(geometry)
    while True:
        states = solve_states(geometry.pore, geometry.pair, geometry.adsorbate.hbar2_over_mk,
                              temperature_k=temperature_k, weight_fraction=fraction, max_states=max_states)
        if states.capped or fraction < 1e-40 or not any(_first_row_without_states(states, g, temperature_k)
                                                         for g in lattices):
            return states
        fraction *= _MORE_STATES
