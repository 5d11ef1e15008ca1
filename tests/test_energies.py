"""Energies per adsorbed atom: Gibbs–Helmholtz per site, the one-atom limit, the fluid–fluid sum rule."""
from __future__ import annotations

import numpy as np
import pytest

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.energies import isotherm_energies, site_energies
from porefill.physics.sites.quantum import cached_states
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.stages import thermal_stage
from porefill.physics.pore.wall_potential import potential_map

HELIUM = Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5)
NITROGEN = Scenario(shape="cylinder", size_angstrom=20.0, adsorbate="nitrogen", temperature_k=77.35)


@pytest.mark.parametrize("scenario", [HELIUM.replace(site_model="classical"), HELIUM.replace(site_model="quantum"),
                                      NITROGEN], ids=["helium-classical", "helium-quantum", "nitrogen"])
def test_site_energies_obey_gibbs_helmholtz(scenario):
    # Gibbs–Helmholtz (any statistical-mechanics text): the site free energy f_i is relative to a free ideal-gas
    # atom (energy 3kT/2), so ⟨V⟩_i + ⟨K⟩_i − 3kT/2 = ∂(f_i/kT)/∂(1/kT); central difference in 1/T.
    t = scenario.temperature_k
    hot, cold = (thermal_stage(scenario.replace(temperature_k=t * (1 + s * 2e-4))) for s in (1, -1))
    stage = thermal_stage(scenario)
    common = min(hot.site_free_energy.size, cold.site_free_energy.size, stage.site_free_energy.size)
    assert common == stage.site_free_energy.size            # no site dropped in or out over 0.04 % in T
    slope = (hot.site_free_energy / hot.temperature_k - cold.site_free_energy / cold.temperature_k) / (
        1 / hot.temperature_k - 1 / cold.temperature_k)
    e = site_energies(stage)
    deep = stage.site_free_energy < stage.site_free_energy.min() + 20 * t     # sites that hold atoms
    np.testing.assert_allclose((e.total_k - 1.5 * t)[deep], slope[deep], atol=2e-3 * abs(slope[deep]).max())


def test_quantum_energies_at_low_coverage_are_the_one_atom_averages():
    # Henry regime: occupancies ∝ e^{−f_i/kT}, and the quantum f_i carry the assigned states' Boltzmann sums, so
    # the energies per atom equal the thermal one-atom averages over all computed states (sum rule of the
    # assignment); the fluid–fluid part vanishes with the coverage.
    iso = compute_isotherm(HELIUM.replace(site_model="quantum"), n_points=40)
    en = isotherm_energies(iso, "adsorption")
    states = cached_states(iso.stage.geometry, 1.5)
    assert en.wall_k[0] == pytest.approx(states.mean_potential_k(1.5), rel=1e-3)
    assert en.kinetic_k[0] == pytest.approx(states.mean_kinetic_k(1.5), rel=1e-3)
    assert abs(en.fluid_k[0]) < 1e-3 * abs(en.wall_k[0])
    # zero-point motion: the kinetic energy is far above the classical 3kT/2 and the atom sits higher in the well
    classical = isotherm_energies(compute_isotherm(HELIUM.replace(site_model="classical"), n_points=40), "adsorption")
    assert en.kinetic_k[0] > 5 * 1.5 * 1.5 and en.wall_k[0] > classical.wall_k[0] + 10.0


def test_classical_wall_energy_at_low_coverage_against_quadrature(smooth_wall):
    # Nitrogen at 77 K on the smooth wall (no spread of site energies): the Boltzmann average of V over the
    # cross-section, ∫V e^{−V/kT}dA / ∫e^{−V/kT}dA, by direct quadrature of the potential map (numerical
    # integration, no source needed) on an 801² grid, which limits the agreement to a few 1e-3 (the cells' own
    # quadrature is converged).
    iso = compute_isotherm(NITROGEN, n_points=40)
    assert iso.stage.problem.spread is None
    en = isotherm_energies(iso, "adsorption")
    m = potential_map(pore=NITROGEN.pore(), pair=NITROGEN.pair(), n=801)
    v = m.values[np.isfinite(m.values)]
    b = np.exp(-(v - v.min()) / 77.35)
    assert en.wall_k[0] == pytest.approx(float((v * b).sum() / b.sum()), rel=5e-3)
    assert en.kinetic_k[0] == pytest.approx(1.5 * 77.35, rel=1e-12)     # equipartition, three free directions


def test_fluid_energy_sum_rule():
    # −(ε_b/2) Σ_ij A_ij n_i n_j / N: zero without bonds, between −zε_b/2 and 0 with them, and near −zε_b/2 per
    # atom in a full wide pore where most atoms have all z = 8 neighbours (Bragg–Williams, docs/REFERENCES.md §5)
    bare = isotherm_energies(compute_isotherm(HELIUM.replace(site_model="classical", bond_energy_k=0.0), n_points=30))
    assert np.all(bare.fluid_k == 0.0)
    iso = compute_isotherm(NITROGEN.replace(size_angstrom=40.0), n_points=80)
    en = isotherm_energies(iso, "desorption")
    bulk = 8 * iso.stage.bond_k / 2
    assert np.all(en.fluid_k <= 1e-12) and np.all(en.fluid_k >= -bulk * (1 + 1e-12))
    assert en.fluid_k[-1] < -0.75 * bulk
    # the total Σ over branches is consistent: the equilibrium branch picks one of the two at every μ
    eq = isotherm_energies(iso, "equilibrium").total_k
    ads = isotherm_energies(iso, "adsorption").total_k
    assert np.all(np.isclose(eq, ads) | np.isclose(eq, en.total_k))


def test_unknown_branch_is_refused():
    iso = compute_isotherm(NITROGEN, n_points=20)
    with pytest.raises(ValueError, match="branch must be"):
        isotherm_energies(iso, "sideways")
