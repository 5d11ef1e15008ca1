"""Isotherms of the mean-field lattice gas in one pore: from a Scenario to both branches at real pressures.

Flow: scenario → lattice sites → site free energies f_i (classical cell average, or supplied by the
caller, e.g. quantum-corrected) → symmetry orbits → adsorption and desorption branches by continuation →
equilibrium (lower Ω) → pressures p = p0(T) exp[(μ − μ_coex)/kT] → layer steps (`physics.steps`).

Amounts are per lattice slice (one layer of sites, thickness ℓ along the axis) internally; `Isotherm`
converts to atoms per nm of pore length, per nm² of wall and to fractions of the full pore.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.special import expit

from .bond import bond_energy, default_bond_rule
from .geometry import CylinderPore, RegularPolygonPore, SlitPore
from .lattice import (COORDINATION, SiteLattice, build_lattice, cell_free_energies, default_spacing,
                      orbit_problem_matrices, symmetry_orbits)
from .meanfield import Branch, MeanFieldProblem, solve_branch
from .scenario import Scenario
from .vapour_pressure import liquid_number_density, saturated_vapour_pressure

__all__ = ["ModelSetup", "Isotherm", "setup_model", "compute_isotherm", "mu_from_pressure"]

# A site is kept when it could reach this occupancy at the top of the μ range with every neighbour full
_DROP_LOGIT = -15.0


@dataclass(frozen=True, eq=False)
class ModelSetup:
    """Everything the solver needs, built from a scenario (see `setup_model`)."""

    scenario: Scenario
    lattice: SiteLattice               # kept sites
    site_free_energy: np.ndarray       # (N,) K
    orbit: np.ndarray                  # (N,) orbit index of each site
    representative: np.ndarray         # (M,) a site of each orbit
    problem: MeanFieldProblem          # reduced to orbits
    bond_k: float
    bond_note: str
    saturation_pressure_pa: float
    mu_coexistence_k: float
    spacing_angstrom: float
    spacing_note: str

    @property
    def temperature_k(self) -> float:
        return self.scenario.temperature_k

    def pressure_pa(self, mu) -> np.ndarray:
        """p = p0 exp[(μ − μ_coex)/kT]."""
        return self.saturation_pressure_pa * np.exp((np.asarray(mu, float) - self.mu_coexistence_k)
                                                    / self.temperature_k)

    def full_occupancy(self, orbit_occupancy: np.ndarray) -> np.ndarray:
        """Expand (..., M) orbit occupancies to (..., N) sites."""
        return np.asarray(orbit_occupancy)[..., self.orbit]


def mu_from_pressure(setup: ModelSetup, pressure_pa) -> np.ndarray:
    return setup.mu_coexistence_k + setup.temperature_k * np.log(np.asarray(pressure_pa, float)
                                                                  / setup.saturation_pressure_pa)


def setup_model(scenario: Scenario, *, site_free_energy=None, mu_max: float | None = None) -> ModelSetup:
    """Build lattice, site free energies, bond and pressure scale for a scenario.

    Parameters
    ----------
    site_free_energy : callable, optional
        ``f(lattice, pore, pair, temperature_k) -> (N,) K`` replacing the classical cell average
        −kT ln⟨exp(−V/kT)⟩_cell (for example a quantum-corrected one). +inf marks a site that cannot fill.
    mu_max : float, optional
        Top of the μ range (K) used to decide which sites can ever fill (default μ_coex).
    """
    pore, pair, t = scenario.pore(), scenario.pair(), scenario.temperature_k
    p0 = saturated_vapour_pressure(scenario.adsorbate, t)
    density, density_source = liquid_number_density(scenario.adsorbate)
    if scenario.lattice_spacing_angstrom is not None:
        spacing, spacing_note = scenario.lattice_spacing_angstrom, "set by the user"
    else:
        spacing = default_spacing(density)
        spacing_note = f"full lattice at the bulk liquid density {density:.5f} Å⁻³ ({density_source})"
    cell_volume = np.sqrt(3.0) / 2.0 * spacing**3
    if scenario.bond_energy_k is not None:
        bond, note = scenario.bond_energy_k, f"ε_b = {scenario.bond_energy_k:g} K, set by the user"
    else:
        rule = scenario.bond_calibration or default_bond_rule(scenario.adsorbate)
        bond, note = bond_energy(rule, adsorbate=scenario.adsorbate, temperature_k=t,
                                 cell_volume_angstrom3=cell_volume)
    mu_coex = -COORDINATION * bond / 2.0
    candidates = build_lattice(pore, spacing)
    if site_free_energy is None:
        f = cell_free_energies(candidates, pore=pore, pair=pair, temperature_k=t)
    else:
        f = np.asarray(site_free_energy(candidates, pore, pair, t), float)
    top = mu_coex if mu_max is None else max(mu_max, mu_coex)
    max_bonds = np.asarray(candidates.neighbours.sum(axis=1)).ravel()
    orbit_all = symmetry_orbits(candidates)
    # keep whole orbits (rounding must not split one): by the orbit's lowest free energy
    f_orbit = np.full(orbit_all.max() + 1, np.inf)
    np.minimum.at(f_orbit, orbit_all, f)
    keep = (top + bond * max_bonds - f_orbit[orbit_all]) / t > _DROP_LOGIT
    if not np.any(keep):
        raise ValueError("no site of this pore can fill below the top of the pressure range "
                         "(the pore is too small for the adsorbate)")
    lattice = candidates.subset(keep, pore)
    f = f[keep]
    _, orbit = np.unique(orbit_all[keep], return_inverse=True)   # whole orbits were kept
    rep, weights, coupling = orbit_problem_matrices(lattice, orbit)
    f_red = np.zeros(weights.size)
    np.add.at(f_red, orbit, f)
    f_red /= weights                    # members agree to rounding; average them
    problem = MeanFieldProblem(f_red, coupling, bond, t, weights)
    return ModelSetup(scenario, lattice, f, orbit, rep, problem, float(bond), note, p0, mu_coex, spacing,
                      spacing_note)


@dataclass(frozen=True, eq=False)
class Isotherm:
    """Both branches on a common μ grid (ascending), with derived amounts and the layer steps."""

    setup: ModelSetup
    mu: np.ndarray
    adsorption: Branch                 # on mu, ascending
    desorption: Branch                 # on mu, ascending (solved descending)
    steps: list = field(default_factory=list)

    # amounts ---------------------------------------------------------------------------------
    @property
    def pressure_pa(self) -> np.ndarray:
        return self.setup.pressure_pa(self.mu)

    @property
    def relative_pressure(self) -> np.ndarray:
        return self.pressure_pa / self.setup.saturation_pressure_pa

    def sites_filled(self, branch: Branch) -> np.ndarray:
        """Occupied sites per lattice slice, Σ_i n_i (M,)."""
        return branch.occupancy @ self.setup.problem.weights

    def per_nm_per_site(self) -> float:
        """Atoms per nm of pore length for one occupied site per slice (slit: per nm², a row per ℓ of x)."""
        scale = 10.0 / self.setup.spacing_angstrom
        if self.setup.lattice.shape == "slit":
            scale *= 10.0 / self.setup.spacing_angstrom
        return scale

    def per_nm(self, branch: Branch) -> np.ndarray:
        """Atoms per nm of pore length (slit: per nm of axis and nm of width, i.e. per nm²)."""
        return self.sites_filled(branch) * self.per_nm_per_site()

    def per_nm2_wall(self, branch: Branch) -> np.ndarray:
        """Atoms per nm² of wall."""
        pore = self.setup.scenario.pore()
        if isinstance(pore, SlitPore):
            return self.per_nm(branch) / 2.0
        perimeter_nm = (2 * np.pi * pore.radius_angstrom if isinstance(pore, CylinderPore)
                        else 2 * pore.n_sides * pore.circumradius_angstrom * np.sin(np.pi / pore.n_sides)) / 10.0
        return self.per_nm(branch) / perimeter_nm

    def fraction(self, branch: Branch) -> np.ndarray:
        """Fraction of the full pore (all kept sites occupied)."""
        return self.sites_filled(branch) / self.setup.problem.weights.sum()

    def grand_potential_per_nm(self, branch: Branch) -> np.ndarray:
        """Ω per nm of pore length, K/nm."""
        return branch.grand_potential * 10.0 / self.setup.spacing_angstrom

    def compressibility_per_nm(self, branch: Branch) -> np.ndarray:
        """dN/dμ, atoms per nm per K (finite differences on the grid)."""
        return np.gradient(self.per_nm(branch), self.mu)

    def equilibrium_is_desorption(self) -> np.ndarray:
        """True where the desorption branch has the lower grand potential (beyond rounding)."""
        d = self.desorption.grand_potential - self.adsorption.grand_potential
        return d < -1e-9 * (1.0 + np.abs(self.adsorption.grand_potential))

    def equilibrium_occupancy(self) -> np.ndarray:
        """(M, M_orbits) occupancy of the lower-Ω state at each μ."""
        use = self.equilibrium_is_desorption()[:, None]
        return np.where(use, self.desorption.occupancy, self.adsorption.occupancy)

    def site_occupancy(self, k: int, branch: str = "equilibrium") -> np.ndarray:
        """(N,) occupancy of every kept site at grid point k."""
        if branch == "equilibrium":
            occ = self.equilibrium_occupancy()[k]
        else:
            occ = getattr(self, branch).occupancy[k]
        return self.setup.full_occupancy(occ)

    def channel_density_per_nm(self, k: int, branch: str = "equilibrium") -> np.ndarray:
        """(N,) linear density along each site's channel (atoms per nm of axis) at grid point k."""
        return self.site_occupancy(k, branch) * 10.0 / self.setup.spacing_angstrom

    def central_channel_occupancy(self, branch: str = "equilibrium") -> np.ndarray:
        """(M,) mean occupancy of the central channel's sites (kind 'centre') along μ."""
        centre = np.unique(self.setup.orbit[self.setup.lattice.kind == "centre"])
        occ = self.equilibrium_occupancy() if branch == "equilibrium" else getattr(self, branch).occupancy
        w = self.setup.problem.weights[centre]
        return occ[:, centre] @ w / w.sum()


def default_mu_range(setup: ModelSetup) -> tuple[float, float]:
    """From a nearly empty pore (deepest site at occupancy ~1e-5 with full neighbours) to p = p0."""
    p = setup.problem
    max_bonds = np.asarray(p.neighbours.sum(axis=1)).ravel()
    lo = float(np.min(p.site_free_energy - p.bond_k * max_bonds)) - 11.5 * p.temperature_k
    return lo, setup.mu_coexistence_k


def compute_isotherm(scenario: Scenario, *, n_points: int = 300, mu_range: tuple[float, float] | None = None,
                     pressure_range_pa: tuple[float, float] | None = None, site_free_energy=None) -> Isotherm:
    """Adsorption and desorption branches of the pore's isotherm on ``n_points`` chemical potentials.

    The μ grid is uniform (uniform in log p). ``pressure_range_pa`` or ``mu_range`` (K) bound it; by default
    it runs from a nearly empty pore to p0.
    """
    from .steps import find_steps

    if n_points < 3:
        raise ValueError(f"n_points must be at least 3, got {n_points}")
    setup = setup_model(scenario, site_free_energy=site_free_energy)
    if pressure_range_pa is not None:
        lo_p, hi_p = pressure_range_pa
        if not (0 < lo_p < hi_p):
            raise ValueError(f"pressure range must satisfy 0 < low < high Pa, got {lo_p!r}, {hi_p!r}")
        mu_range = tuple(mu_from_pressure(setup, [lo_p, hi_p]))
        if mu_range[1] > setup.mu_coexistence_k:   # sites that fill only above p0 must be kept
            setup = setup_model(scenario, site_free_energy=site_free_energy, mu_max=mu_range[1])
    lo, hi = mu_range if mu_range is not None else default_mu_range(setup)
    mu = np.linspace(lo, hi, n_points)
    p = setup.problem
    max_bonds = np.asarray(p.neighbours.sum(axis=1)).ravel()
    ads = solve_branch(mu, p, (mu[0] - p.site_free_energy) / p.temperature_k)
    start_full = (mu[-1] - p.site_free_energy + p.bond_k * max_bonds) / p.temperature_k
    des_rev = solve_branch(mu[::-1], p, np.maximum(start_full, 30.0))
    des = Branch(mu, des_rev.logits[::-1], des_rev.grand_potential[::-1], des_rev.converged[::-1])
    iso = Isotherm(setup, mu, ads, des)
    object.__setattr__(iso, "steps", find_steps(iso))
    return iso
