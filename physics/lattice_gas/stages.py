"""The model's stages, each a frozen result of the one before, all keyed by the scenario alone.

    Scenario ──geometry_stage──▶ GeometryStage   pore, pair, adsorbate, candidate sites in rows that follow
                                                  the wall, quadrature nodes of their cells and the wall
                                                  potential there (no temperature; cached)
             ──thermal_stage───▶ ThermalStage    site free energies (by the scenario's site model), bond ε_b,
                                                  pressure scale p0 / μ_coex, kept sites reduced to orbits
             ──compute_isotherm (porefill.physics.lattice_gas.adsorption)──▶ Isotherm, complete with its steps

A temperature change reuses the geometry stage; nothing is patched after it is built.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from porefill.physics.caching import memoize
from porefill.physics.lattice_gas.bond import bond_energy, default_bond_rule
from porefill.physics.pore.geometry import Pore
from porefill.physics.sites.cells import SiteCells, site_cells
from porefill.physics.sites.lattice import (COORDINATION, SiteLattice, default_spacing, lattice_of, orbit_problem_matrices,
                      symmetry_orbits)
from porefill.physics.substances.materials import Adsorbate, PairParameters, get_adsorbate
from porefill.physics.lattice_gas.meanfield import MeanFieldProblem
from porefill.physics.lattice_gas.wall_spread import wall_spread
from porefill.physics.scenario import Scenario
from porefill.physics.sites.site_models import site_model
from porefill.physics.sites.placement import first_row_distance, place_sites, row_fraction
from porefill.physics.substances.vapour_pressure import (liquid_number_density, p0_is_extrapolated, saturated_vapour_pressure,
                              temperature_range)

__all__ = ["GeometryStage", "ThermalStage", "PressureScale", "geometry_stage", "thermal_stage", "rescaled_geometry",
           "strength_free_key"]

# A site is kept when it could reach this occupancy at the top of the μ range with every neighbour full
_DROP_LOGIT = -15.0


@dataclass(frozen=True)
class PressureScale:
    """p = p0 exp[(μ − μ_coex)/kT]: the map between chemical potential (K) and pressure (Pa)."""

    saturation_pressure_pa: float
    mu_coexistence_k: float
    temperature_k: float
    p0_extrapolated: bool = False       # p0 from an extrapolation beyond its equation's range

    def pressure_pa(self, mu_k) -> np.ndarray:
        return self.saturation_pressure_pa * np.exp((np.asarray(mu_k, float) - self.mu_coexistence_k)
                                                    / self.temperature_k)

    def mu_k(self, pressure_pa) -> np.ndarray:
        return self.mu_coexistence_k + self.temperature_k * np.log(np.asarray(pressure_pa, float)
                                                                    / self.saturation_pressure_pa)

    def relative_pressure(self, mu_k) -> np.ndarray:
        return self.pressure_pa(mu_k) / self.saturation_pressure_pa

    def pressure_from_relative(self, relative) -> np.ndarray:
        return np.asarray(relative, float) * self.saturation_pressure_pa


@dataclass(frozen=True, eq=False)
class GeometryStage:
    """Temperature-independent inputs: every candidate site and the quadrature of its cell."""

    key: tuple
    pore: Pore
    pair: PairParameters
    adsorbate: Adsorbate
    candidates: SiteLattice
    cells: SiteCells                    # nodes, weights and wall potential of every cell, converged over T
    orbit: np.ndarray                   # (N,) symmetry orbit of each candidate
    spacing_angstrom: float
    spacing_note: str
    liquid_density_per_a3: float        # the bulk liquid's, `liquid_number_density`
    rows: int = 0                       # row steps m between the first row and the centre
    row_fraction: float = 0.0           # D/Δ, what the pore would hold unstrained (`placement.row_fraction`)
    rows_forced: bool = False           # m was asked for (a neighbour lattice of a row blend), not round(D/Δ)

    @property
    def scenario_key(self) -> tuple:
        """The scenario's geometry key (`Scenario.geometry_key`), without the forced row count."""
        return self.key[:-1] if self.rows_forced else self.key

    @property
    def liquid_area_angstrom2(self) -> float:
        """Cross-section (Å²; slit: width, Å) of the bulk liquid that the full lattice's atoms would make: the
        pore's volume per Å of length as a measurement counts it by the Gurvich rule (the amount held by a full
        pore, as liquid). It is smaller than the geometric cross-section `Pore.area_angstrom2` by the layer
        next to the wall that no atom's centre reaches; with the default spacing it is the number of sites
        times their cell area.
        """
        return float(self.candidates.size * self.atoms_per_angstrom_per_site / self.liquid_density_per_a3)

    @property
    def atoms_per_angstrom_per_site(self) -> float:
        """One occupied site per slice, in atoms per Å of pore; for the slit a row's one site stands for a
        site every ℓ along x, so per Å²."""
        per = 1.0 / self.spacing_angstrom
        return per / self.spacing_angstrom if self.candidates.shape == "slit" else per


@memoize(maxsize=48)
def _geometry_stage(key: tuple, rows: int | None = None) -> GeometryStage:
    scenario = Scenario(**dict(key))
    pore, pair = scenario.pore(), scenario.pair()
    density, source = liquid_number_density(scenario.adsorbate)
    if scenario.lattice_spacing_angstrom is not None:
        spacing, note = scenario.lattice_spacing_angstrom, "set by the user"
    else:
        spacing = default_spacing(density)
        note = f"full lattice at the bulk liquid density {density:.5f} Å⁻³ ({source})"
    d1 = first_row_distance(pore, pair)
    placement = place_sites(pore, spacing, d1, rows=rows)
    candidates = lattice_of(pore, placement, spacing)
    orbit = symmetry_orbits(candidates, pore)
    t_min, t_max, _ = temperature_range(scenario.adsorbate)
    cells = site_cells(pore, pair, placement, orbit, temperature_range_k=(t_min, t_max))
    if placement.area_scale != 1.0:
        note += (f"; rows scaled by s = {np.sqrt(placement.area_scale):.4f} to fit the pore, axial spacing "
                 f"ℓ/s² = {candidates.spacing_angstrom:.4f} Å keeps the cell volume")
    forced = rows is not None
    return GeometryStage(key + ((("rows", int(rows)),) if forced else ()), pore, pair,
                         get_adsorbate(scenario.adsorbate), candidates, cells, orbit,
                         float(candidates.spacing_angstrom), note, float(density), placement.rings - 1,
                         float(row_fraction(pore, spacing, d1)), forced)


def geometry_stage(scenario: Scenario, rows: int | None = None) -> GeometryStage:
    """The geometry stage of a scenario, cached on the inputs it depends on (`Scenario.geometry_key`).

    ``rows``: the number of row steps between the first row and the centre when not the pore's own
    round(D/Δ) (`porefill.physics.lattice_gas.row_blend` mixes the two lattices either side of D/Δ); asking
    for the pore's own count returns its own stage.
    """
    own = _geometry_stage(scenario.geometry_key())
    if rows is None or int(rows) == own.rows:
        return own
    return _geometry_stage(scenario.geometry_key(), int(rows))


def strength_free_key(key: tuple) -> tuple:
    """A geometry key less the pair's ε: geometries that differ by a wall strength alone share it."""
    return tuple(item for item in key if item[0] != "pair_epsilon_k")


def rescaled_geometry(reference: GeometryStage, scenario: Scenario,
                      temperatures_k) -> GeometryStage | None:
    """The geometry stage of ``scenario`` made from ``reference`` by scaling its wall potential, when the two
    differ in the pair's ε alone; None when they differ otherwise, or when a node set converged for the
    reference would not be converged for the new ε at every temperature in ``temperatures_k``.

    The continuum wall potential is linear in ε (`porefill.physics.pore.wall_potential`), and the first row's
    distance is the potential's minimum, which scaling does not move; so only the quadrature needs a check. The
    reference's nodes are converged for exp(−V/kT) at every T of the gas's range (`porefill.physics.sites.cells`);
    exp(−sV/kT) = exp(−V/(kT/s)), so they serve ε' = s ε wherever T/s lies in that range, with the error of
    kT ln Z at most s times the cells' tolerance (2e-3 K; the requirement is 0.01 K). A fit that varies the
    wall strength (`porefill.physics.fitting`) reuses one geometry per pore this way.
    """
    key = scenario.geometry_key()
    if key == reference.scenario_key:
        return reference
    if strength_free_key(key) != strength_free_key(reference.scenario_key):
        return None
    pair = scenario.pair()
    factor = pair.epsilon_k / reference.pair.epsilon_k
    t_min, t_max, _ = temperature_range(scenario.adsorbate)
    reduced = np.asarray(temperatures_k, float) / factor
    if not (np.isfinite(factor) and factor > 0 and np.all((reduced >= t_min) & (reduced <= t_max))):
        return None
    c = reference.cells
    cells = SiteCells(c.group, c.weight, c.potential_k * factor, c.site_group, c.area_angstrom2)
    return GeometryStage(key + reference.key[len(reference.scenario_key):], reference.pore, pair,
                         reference.adsorbate, reference.candidates, cells, reference.orbit,
                         reference.spacing_angstrom, reference.spacing_note, reference.liquid_density_per_a3,
                         reference.rows, reference.row_fraction, reference.rows_forced)


@dataclass(frozen=True, eq=False)
class ThermalStage:
    """Everything the solver needs at one temperature: kept sites, their free energies, ε_b, pressures."""

    scenario: Scenario
    geometry: GeometryStage
    lattice: SiteLattice               # kept sites
    site_free_energy: np.ndarray       # (N,) K, in the frame of `porefill.physics.sites.site_models`
    orbit: np.ndarray                  # (N,) orbit index of each kept site
    representative: np.ndarray         # (M,) a site of each orbit
    problem: MeanFieldProblem          # reduced to orbits
    bond_k: float
    bond_note: str
    scale: PressureScale

    @property
    def temperature_k(self) -> float:
        return self.scenario.temperature_k

    @property
    def spacing_angstrom(self) -> float:
        return self.geometry.spacing_angstrom

    @property
    def spacing_note(self) -> str:
        return self.geometry.spacing_note

    @property
    def saturation_pressure_pa(self) -> float:
        return self.scale.saturation_pressure_pa

    @property
    def mu_coexistence_k(self) -> float:
        return self.scale.mu_coexistence_k

    def pressure_pa(self, mu) -> np.ndarray:
        return self.scale.pressure_pa(mu)

    def full_occupancy(self, orbit_occupancy: np.ndarray) -> np.ndarray:
        """Expand (..., M) orbit occupancies to (..., N) sites."""
        return np.asarray(orbit_occupancy)[..., self.orbit]

    def orbit_labels(self) -> list[str]:
        return [self.lattice.label(i) for i in self.representative]


def thermal_stage(scenario: Scenario, *, mu_max: float | None = None,
                  geometry: GeometryStage | None = None) -> ThermalStage:
    """Site free energies, bond and pressure scale at the scenario's temperature, on its geometry stage.

    ``mu_max`` (K) is the top of the μ range, which decides which sites can ever fill (default μ_coex).
    ``geometry``: the scenario's geometry stage when the caller holds one (`rescaled_geometry`); by default
    `geometry_stage(scenario)`.
    """
    if geometry is not None and geometry.scenario_key != scenario.geometry_key():
        raise ValueError("the geometry stage given is not the scenario's")
    geo = geometry_stage(scenario) if geometry is None else geometry
    t = scenario.temperature_k
    p0 = saturated_vapour_pressure(scenario.adsorbate, t)
    cell_volume = geo.candidates.cell_volume_angstrom3
    if scenario.bond_energy_k is not None:
        bond, note = float(scenario.bond_energy_k), f"ε_b = {scenario.bond_energy_k:g} K, set by the user"
    else:
        rule = scenario.bond_calibration or default_bond_rule(scenario.adsorbate)
        bond, note = bond_energy(rule, adsorbate=scenario.adsorbate, temperature_k=t,
                                 cell_volume_angstrom3=cell_volume)
    mu_coex = -COORDINATION * bond / 2.0
    scale = PressureScale(p0, mu_coex, t, p0_is_extrapolated(scenario.adsorbate, t))
    f = np.asarray(site_model(scenario.site_model_used)(geo, temperature_k=t), float)
    top = mu_coex if mu_max is None else max(mu_max, mu_coex)
    max_bonds = np.asarray(geo.candidates.neighbours.sum(axis=1)).ravel()
    # keep whole orbits (rounding must not split one): by the orbit's lowest free energy
    f_orbit = np.full(geo.orbit.max() + 1, np.inf)
    np.minimum.at(f_orbit, geo.orbit, f)
    keep = (top + bond * max_bonds - f_orbit[geo.orbit]) / t > _DROP_LOGIT
    if not np.any(keep):
        raise ValueError("no site of this pore can fill below the top of the pressure range "
                         "(the pore is too small for the adsorbate)")
    lattice = geo.candidates.subset(keep, geo.pore)
    f = f[keep]
    _, orbit = np.unique(geo.orbit[keep], return_inverse=True)     # whole orbits were kept
    rep, weights, coupling = orbit_problem_matrices(lattice, orbit)
    f_red = np.zeros(weights.size)
    np.add.at(f_red, orbit, f)
    f_red /= weights                    # members agree to rounding; average them
    spread = wall_spread(scenario.adsorbate, scenario.solid, lattice.ring[rep])
    problem = MeanFieldProblem(f_red, coupling, bond, t, weights, spread)
    return ThermalStage(scenario, geo, lattice, f, orbit, rep, problem, float(bond), note, scale)
