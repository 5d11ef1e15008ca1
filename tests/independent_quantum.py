"""A second, independent solver for one atom in a pore cross-section, written to check porefill's.

    [−(ħ²/2m) ∇² + V(x, y)] ψ = E ψ   on the plane (free motion along the axis is not part of it).

Nothing here comes from `porefill.physics.sites`; the only porefill input is the wall potential V, taken as
given. The method is deliberately different from porefill's (triangular grid, fourth-order Laplacian, error
estimate from two grids):

- a SQUARE grid x = i h, y = j h with a point at the origin, so the mirrors x → −x and y → −y map the grid
  onto itself;
- the standard five-point Laplacian (second order, error ∝ h² for a smooth potential);
- the problem restricted to the grid points where V < ``cut_k`` (ψ = 0 elsewhere: deep in the repulsive wall
  every state kept has long decayed; the cut's effect is checked, not assumed);
- the four parity sectors (σ_x, σ_y) = (±1, ±1) of the two mirrors solved separately on the quadrant
  i, j ≥ 0 (a point on a mirror line is absent from the odd sector; in the even sector it couples to its
  neighbour off the line with √2 times the hopping, the symmetric form of the reflected stencil);
- shift-invert Lanczos (scipy.sparse.linalg.eigsh with sigma) for every level below E0 + ``window_k``;
- Richardson extrapolation in h² through three or more spacings (h² and h⁴ removed, h⁶ too with four), applied to the one-atom free energy
  F(T) = −kT ln Σ_n exp(−E_n/kT) (a symmetric function of the levels, so near-degenerate levels that swap
  order between grids cannot spoil it) and to the ground state.

Energies in K (E/k_B), lengths in Å; ħ²/(m k_B) from `scipy.constants` (see `hbar2_over_mk_helium4`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants, sparse
from scipy.sparse.linalg import eigsh

SECTORS = ((1, 1), (1, -1), (-1, 1), (-1, -1))   # (σ_x, σ_y): parity under x → −x and under y → −y


def hbar2_over_mk_helium4() -> float:
    """ħ²/(m k_B) of a helium-4 atom, K·Å², from CODATA via scipy.constants.

    The atom's mass is built from scipy.constants' alpha-particle and electron masses (CODATA) less the two
    electrons' binding, 24.587 + 54.418 eV (NIST Atomic Spectra Database ionisation energies of He and He⁺,
    value from memory; 8.5e-8 u, i.e. 2e-8 relative): 4.0026032541 u, the atomic mass of ⁴He (AME 2020,
    value from memory). porefill takes 4.002602 u, helium's standard atomic weight; the two differ by 3e-7.
    """
    binding_u = (24.587 + 54.418) * constants.eV / (constants.atomic_mass * constants.c**2)
    mass_u = (constants.physical_constants["alpha particle mass in u"][0]
              + 2.0 * constants.physical_constants["electron mass in u"][0] - binding_u)
    return constants.hbar**2 / (mass_u * constants.atomic_mass * constants.k) * 1e20


# --- one grid ---------------------------------------------------------------------------------------
@dataclass(frozen=True)
class QuadrantGrid:
    """The grid points i, j ≥ 0 of spacing h (Å) with V < cut, and V there (K)."""

    i: np.ndarray
    j: np.ndarray
    v: np.ndarray
    h: float


def quadrant_grid(potential, half_width: float, h: float, cut_k: float) -> QuadrantGrid:
    """Sample ``potential(x, y) -> K`` (inf or nan: outside) on the quadrant of a square grid of spacing h.

    The potential must be even in x and in y (checked by the caller where it matters); only the quadrant is
    evaluated. ``half_width`` (Å) must enclose every point where V < cut.
    """
    n = int(np.ceil(half_width / h)) + 1
    i, j = np.meshgrid(np.arange(n + 1), np.arange(n + 1), indexing="ij")
    i, j = i.ravel(), j.ravel()
    with np.errstate(invalid="ignore", over="ignore"):
        v = np.asarray(potential(i * h, j * h), float)
        keep = np.isfinite(v) & (v < cut_k)
    if keep.any() and (i[keep].max() >= n or j[keep].max() >= n):
        raise ValueError(f"half_width {half_width} Å does not enclose the region V < {cut_k} K")
    return QuadrantGrid(i[keep], j[keep], v[keep], float(h))


def sector_hamiltonian(grid: QuadrantGrid, sector: tuple[int, int], hbar2_over_mk: float) -> sparse.csc_matrix:
    """H = −(ħ²/2m) Δ_5 + V on the quadrant, for states of parity ``sector`` = (σ_x, σ_y).

    With t = ħ²/(2 m h²): diagonal V + 4t; −t between neighbours at distance h, −√2 t between a point on a
    mirror line (i = 0 or j = 0) and its neighbour off it. The √2 is ⟨e_p|H|e_q⟩ for the orthonormal
    symmetrised basis e_p = Σ_images χ δ / √(number of images); the odd sector has ψ = 0 on its mirror line,
    so those points are dropped and their neighbours see a node there.
    """
    sx, sy = sector
    keep = np.ones(grid.i.size, bool)
    if sx < 0:
        keep &= grid.i > 0
    if sy < 0:
        keep &= grid.j > 0
    i, j, v = grid.i[keep], grid.j[keep], grid.v[keep]
    n = v.size
    t = hbar2_over_mk / (2.0 * grid.h**2)
    stride = int(max(i.max(), j.max())) + 2
    code = i * stride + j
    order = np.argsort(code)
    rows, cols, vals = [np.arange(n)], [np.arange(n)], [v + 4.0 * t]
    for di, dj, on_line in ((1, 0, i == 0), (0, 1, j == 0)):
        target = (i + di) * stride + (j + dj)
        pos = np.searchsorted(code[order], target)
        pos = np.minimum(pos, n - 1)
        hit = code[order][pos] == target
        p, q = np.flatnonzero(hit), order[pos[hit]]
        hop = np.where(on_line[p], -np.sqrt(2.0) * t, -t)
        rows += [p, q]
        cols += [q, p]
        vals += [hop, hop]
    return sparse.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n))


def levels_between(hamiltonian: sparse.csc_matrix, low: float, high: float, *, slice_k: float = 12.0) -> np.ndarray:
    """Every eigenvalue of ``hamiltonian`` in [low, high) (ascending), by shift-invert Lanczos in slices.

    Each slice [a, b) of width at most ``slice_k`` (K) is solved with its own shift σ = (a + b)/2, asking for
    more eigenvalues until the farthest returned lies beyond the slice's ends: the k eigenvalues nearest σ are
    then all those within that distance, so the slice holds exactly those returned inside it. A shift amid the
    wanted levels keeps them well apart after the inversion (one shift below a long window converges slowly).
    """
    n = hamiltonian.shape[0]
    edges = np.linspace(low, high, int(np.ceil((high - low) / slice_k)) + 1)
    found, k = [], 16
    for a, b in zip(edges[:-1], edges[1:]):
        sigma = 0.5 * (a + b)
        while True:
            k = int(min(k, n - 2))
            e = eigsh(hamiltonian, k=k, sigma=sigma, which="LM", return_eigenvectors=False,
                      ncv=min(n - 1, max(2 * k + 1, k + 40)))
            if np.max(np.abs(e - sigma)) > 0.5 * (b - a) or k >= n - 2:
                break
            k = 2 * k
        inside = e[(e >= a) & (e < b)]
        found.append(inside)
        k = max(16, int(1.3 * inside.size) + 8)
    return np.sort(np.concatenate(found))


def grid_levels(potential, half_width: float, h: float, hbar2_over_mk: float, *, cut_k: float,
                window_k: float) -> dict:
    """All levels below E0 + window_k on one grid, per parity sector: {sector: energies (K)}."""
    grid = quadrant_grid(potential, half_width, h, cut_k)
    shift = float(grid.v.min()) - 1.0
    hams = {s: sector_hamiltonian(grid, s, hbar2_over_mk) for s in SECTORS}
    # the ground state is nodeless, hence even under both mirrors: it is the lowest level of sector (+, +)
    e0 = float(np.min(eigsh(hams[(1, 1)], k=4, sigma=shift, which="LM", return_eigenvectors=False)))
    return {s: levels_between(hams[s], e0 - 1.0, e0 + window_k) for s in SECTORS}


def all_levels(levels: dict) -> np.ndarray:
    return np.sort(np.concatenate([levels[s] for s in SECTORS]))


def free_energy_k(energies: np.ndarray, temperature_k) -> np.ndarray:
    """F = −kT ln Σ_n exp(−E_n/kT) (K) at each temperature."""
    t = np.atleast_1d(np.asarray(temperature_k, float))
    e = np.asarray(energies, float)
    e0 = e.min()
    return e0 - t * np.log(np.exp(-(e[None, :] - e0) / t[:, None]).sum(axis=1))


def richardson_h2(values, spacings) -> tuple[np.ndarray, np.ndarray]:
    """Extrapolate values(h) = a + b h² + c h⁴ + ... to h = 0 through all G ≥ 3 grids.

    ``values`` (G, ...) on ``spacings`` (G,) (Å, any order). The polynomial of degree G − 1 in h² through
    every point gives the limit; the error estimate is its distance to the same fit through the finest G − 1
    grids (one order less).
    """
    values = np.asarray(values, float)
    h2 = np.asarray(spacings, float) ** 2
    order = np.argsort(-h2)
    h2, values = h2[order], values[order]

    def limit(x, y):
        return np.linalg.solve(np.vander(x, x.size, increasing=True), y.reshape(x.size, -1))[0].reshape(y.shape[1:])

    best = limit(h2, values)
    return best, np.abs(best - limit(h2[1:], values[1:]))


def window_for(temperature_k: float) -> float:
    """Energy window above E0 (K) that holds the Boltzmann sum at T to well under 1e-6 of itself:
    kT ln 1e7 + 10 K (the 10 K and the factor 10 cover the level density; `tail_fraction` checks it)."""
    return float(temperature_k * np.log(1e7) + 10.0)


@dataclass(frozen=True)
class Reference:
    """The extrapolated answer of one geometry: ground state and F(T), with their error estimates (K).

    ``spacings_angstrom`` and ``windows_k`` are the grids solved and the energy window each was solved for;
    ``used`` (T,) the indices of the grids each temperature's F was extrapolated from."""

    ground_state_k: float
    ground_state_error_k: float
    temperatures_k: np.ndarray
    free_energy_k: np.ndarray
    free_energy_error_k: np.ndarray
    spacings_angstrom: np.ndarray
    windows_k: np.ndarray
    used: list
    levels_per_grid: list
    tail_fraction: np.ndarray      # estimated Boltzmann weight above the window, relative to the sum, per T


def tail_fraction(energies: np.ndarray, temperature_k, window_k: float) -> np.ndarray:
    """Estimate of the Boltzmann sum's part above the window, relative to the sum: ρ kT e^{−W/kT} / Z_rel,
    with ρ the level density over the window's top 10 K (it only grows with energy in a closed pore, so
    the estimate is taken from the highest levels held)."""
    e = np.sort(energies) - np.min(energies)
    rho = np.count_nonzero(e > window_k - 10.0) / 10.0
    t = np.atleast_1d(np.asarray(temperature_k, float))
    z = np.exp(-e[None, :] / t[:, None]).sum(axis=1)
    return rho * t * np.exp(-window_k / t) / z


def reference_solution(potential, half_width: float, hbar2_over_mk: float, temperatures_k, *,
                       spacings=(0.2, 0.2 / np.sqrt(2.0), 0.1), windows_k=None,
                       cut_k: float = 10_000.0) -> Reference:
    """Ground state and F(T) extrapolated in h² from grids of ``spacings`` (Å, decreasing).

    Grid g is solved for every level below E0 + ``windows_k[g]`` (default: the window of the highest
    temperature on every grid). F(T) is extrapolated through every grid whose window covers T (`window_for`),
    so a grid solved for a narrower window serves the low temperatures only; the ground state through all
    grids. ``cut_k`` 10 000 K: against 20 000 K it moves the levels by 2e-8 K, where 2000 K moves them by
    2e-4 K (15 Å / 8 Å pore, h = 0.2 Å). BLAS runs on one thread (the solver is sequential; several
    BLAS threads on a shared machine only wait on each other).
    """
    from threadpoolctl import threadpool_limits

    t = np.atleast_1d(np.asarray(temperatures_k, float))
    spacings = np.asarray(spacings, float)
    if windows_k is None:
        windows_k = np.full(spacings.size, window_for(t.max()))
    windows_k = np.asarray(windows_k, float)
    with threadpool_limits(limits=1, user_api="blas"):
        levels = [all_levels(grid_levels(potential, half_width, h, hbar2_over_mk, cut_k=cut_k, window_k=w))
                  for h, w in zip(spacings, windows_k)]
    ground, ground_err = richardson_h2(np.array([lv[0] for lv in levels]), spacings)
    f, f_err, used, tails = [], [], [], []
    for temp in t:
        ok = np.flatnonzero(windows_k >= window_for(temp) - 1e-9)
        if ok.size < 3:
            raise ValueError(f"fewer than three grids hold the window {window_for(temp):.1f} K that T = {temp} K needs")
        values = np.array([free_energy_k(levels[g], temp)[0] for g in ok])
        a, b = richardson_h2(values, spacings[ok])
        f.append(float(a))
        f_err.append(float(b))
        used.append(ok)
        tails.append(float(tail_fraction(levels[ok[-1]], temp, windows_k[ok[-1]])[0]))
    return Reference(float(ground), float(ground_err), t, np.array(f), np.array(f_err), spacings, windows_k,
                     used, levels, np.array(tails))
