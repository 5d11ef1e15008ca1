"""Energies per adsorbed atom along an isotherm, in mean field: wall potential, kinetic and fluid–fluid.

Per site i, at temperature T (K; energies as E/k_B):

- classical site model: ⟨V⟩_i = ∫_cell V e^{−V/kT} dA / ∫_cell e^{−V/kT} dA on the cell's converged quadrature
  nodes (`porefill.physics.sites.cells`), and the kinetic energy of free classical motion, 3kT/2;
- quantum site model: the states given to the site's orbit (`porefill.physics.sites.state_sites.state_shares` for
  the first row; for the rows inside, the states of their region, each with its probability on the orbit's
  cells, `porefill.physics.sites.inner_states`), Boltzmann weights b_n: ⟨V⟩_i = Σ b_n ⟨n|V|n⟩ / Σ b_n and kinetic
  Σ b_n (E_n − ⟨n|V|n⟩) / Σ b_n + kT/2 (free motion along the axis), the sums weighted by the state's share.
  Sites no computed state reaches keep the classical values, as their free energies do.

Both obey the Gibbs–Helmholtz relation in the frame of `porefill.physics.sites.site_models` (free energy relative to a free
ideal-gas atom, whose energy is 3kT/2): ⟨V⟩_i + ⟨K⟩_i − 3kT/2 = ∂(f_i/kT)/∂(1/kT); the tests check it.

Along a branch with orbit occupancies n_o (orbit sizes w_o, coupling B of `porefill.physics.lattice_gas.meanfield`), per slice:
N = Σ w_o n_o, U_wall = Σ w_o n_o ⟨V⟩_o, U_kin = Σ w_o n_o ⟨K⟩_o, U_ff = −(ε_b/2) Σ_o w_o n_o (B n)_o — the
mean-field (Bragg–Williams) energy whose grand potential the solver minimises. Divided by N they are the
energies per adsorbed atom.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

__all__ = ["SiteEnergies", "site_energies", "IsothermEnergies", "isotherm_energies"]


@dataclass(frozen=True, eq=False)
class SiteEnergies:
    """Mean wall potential and kinetic energy of an atom on each kept site (N,), K."""

    potential_k: np.ndarray
    kinetic_k: np.ndarray

    @property
    def total_k(self) -> np.ndarray:
        return self.potential_k + self.kinetic_k


def _classical(cells, temperature_k: float):
    """Boltzmann-weighted mean potential over each site's cell (`porefill.physics.sites.cells.SiteCells.mean_potential_k`)
    and the classical kinetic energy 3kT/2."""
    potential = cells.mean_potential_k(temperature_k)
    return potential, np.full(potential.shape, 1.5 * float(temperature_k))


def _weighted(shares, energies_k, potential_k, ground_k: float, kt: float):
    """Per orbit: Σ_n s_on b_n, Σ_n s_on b_n ⟨n|V|n⟩ and Σ_n s_on b_n (E_n − ⟨n|V|n⟩), b_n = e^{−(E_n − E₀)/kT}."""
    b = np.exp(-(energies_k - ground_k) / kt)
    return shares @ b, shares @ (b * potential_k), shares @ (b * (energies_k - potential_k))


def _quantum(geometry, temperature_k: float, potential: np.ndarray, kinetic: np.ndarray):
    from porefill.physics.sites.inner_states import cached_inner_states
    from porefill.physics.sites.quantum import cached_states
    from porefill.physics.sites.state_sites import first_row_orbits, geometry_shares

    kt = float(temperature_k)
    states = cached_states(geometry, kt)
    weight, v_sum, k_sum = _weighted(geometry_shares(states, geometry, kt), states.energies_k,
                                     states.state_potential_k, states.energies_k[0], kt)
    inner = cached_inner_states(states, geometry, kt)
    if inner is not None:                  # the rows inside the first: the states of their region
        w_in, v_in, k_in = _weighted(inner.orbit_probability, inner.energies_k, inner.state_potential_k,
                                     states.energies_k[0], kt)
        inside = ~first_row_orbits(geometry)
        weight, v_sum, k_sum = (np.where(inside, a, b) for a, b in ((w_in, weight), (v_in, v_sum), (k_in, k_sum)))
    with np.errstate(invalid="ignore", divide="ignore"):
        v_orbit = v_sum / weight
        k_orbit = k_sum / weight + 0.5 * kt
    reached = (weight > 0)[geometry.orbit]
    return (np.where(reached, v_orbit[geometry.orbit], potential),
            np.where(reached, k_orbit[geometry.orbit], kinetic))


def _candidate_energies(geometry, site_model: str, temperature_k: float):
    potential, kinetic = _classical(geometry.cells, temperature_k)
    if site_model == "quantum":
        potential, kinetic = _quantum(geometry, temperature_k, potential, kinetic)
    return potential, kinetic


def site_energies(stage) -> SiteEnergies:
    """Mean wall potential and kinetic energy (K) on each kept site of a `porefill.physics.lattice_gas.stages.ThermalStage`,
    by the stage's site model (see the module notes)."""
    geo = stage.geometry
    potential, kinetic = _candidate_energies(geo, stage.scenario.site_model_used, stage.temperature_k)
    # the kept sites are a subset of the candidates, at the same positions
    cand = np.column_stack([geo.candidates.x, geo.candidates.y])
    kept = np.column_stack([stage.lattice.x, stage.lattice.y])
    dist, index = cKDTree(cand).query(kept)
    if np.any(dist > 1e-9):
        raise RuntimeError("kept sites do not sit on candidate sites")       # a broken stage, not user input
    return SiteEnergies(potential[index], kinetic[index])


@dataclass(frozen=True, eq=False)
class IsothermEnergies:
    """Energies per adsorbed atom (K) along one branch, on the isotherm's μ grid (M,)."""

    mu_k: np.ndarray
    branch: str
    atoms_per_slice: np.ndarray
    wall_k: np.ndarray
    kinetic_k: np.ndarray
    fluid_k: np.ndarray

    @property
    def total_k(self) -> np.ndarray:
        return self.wall_k + self.kinetic_k + self.fluid_k


def _branch_logits(iso, branch: str) -> np.ndarray:
    if branch == "equilibrium":
        return iso.equilibrium.logits
    if branch not in ("adsorption", "desorption"):
        raise ValueError(f"branch must be adsorption, desorption or equilibrium; got {branch!r}")
    return getattr(iso, branch).logits


def isotherm_energies(iso, branch: str = "equilibrium") -> IsothermEnergies:
    """Mean-field energies per adsorbed atom along ``branch`` of an `porefill.physics.lattice_gas.adsorption.Isotherm`."""
    stage, p = iso.stage, iso.stage.problem
    sites = site_energies(stage)
    rep = stage.representative
    x = _branch_logits(iso, branch)
    n = p.occupancy(x)                                              # (M, orbits)
    w = p.weights
    atoms = n @ w
    coupling = p.neighbours
    bonds = np.asarray((coupling @ n.T).T)                          # (B n)_o at every μ
    with np.errstate(invalid="ignore", divide="ignore"):
        wall = (n * sites.potential_k[rep]) @ w / atoms
        if p.spread is not None:                                    # the wall's spread of contact energies
            wall = wall + p.spread.energy(x, p.temperature_k) @ w / atoms
        kinetic = (n * sites.kinetic_k[rep]) @ w / atoms
        fluid = -0.5 * p.bond_k * ((n * bonds) @ w) / atoms
    return IsothermEnergies(np.asarray(iso.mu), branch, atoms, wall, kinetic, fluid)
