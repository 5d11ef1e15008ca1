"""Bands of the one-atom states: where they live, their degeneracies and splittings, their densities."""
from __future__ import annotations

import numpy as np
import pytest

from porefill.physics.sites.quantum import cached_states
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.stages import geometry_stage, thermal_stage
from porefill.physics.sites.state_bands import band_density, site_labels, state_bands

HELIUM = Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, site_model="quantum")


@pytest.fixture(scope="module")
def bands():
    geo = geometry_stage(HELIUM)
    states = cached_states(geo, 1.5)
    return states, state_bands(states, geo, 1.5, labels=site_labels(thermal_stage(HELIUM)))


def test_bands_partition_the_states_and_their_weight(bands):
    states, found = bands
    assert sum(b.degeneracy for b in found) == states.energies_k.size
    assert [b.first for b in found] == list(np.cumsum([0] + [b.degeneracy for b in found[:-1]]))
    assert sum(b.weight for b in found) == pytest.approx(1.0, rel=1e-12)


def test_lowest_bands_match_the_independent_check(bands):
    # the independent finite-difference check (15 Å side, 8 Å walls, helium-4): six corner states split
    # by under 0.01 K, the next band 15.4 K higher
    _, found = bands
    assert found[0].where == "corner" and found[0].degeneracy == 6 and found[0].splitting_k < 0.01
    assert found[1].excitation_k == pytest.approx(15.4, abs=0.2)


def test_band_densities_are_normalised_and_carry_the_pore_symmetry(bands):
    # a complete band of degenerate states summed over its members is invariant under the pore's point group
    # (C6v for the hexagon; any group-theory text): the density at a point equals that at its images
    states, found = bands
    tree_points = states.points
    from scipy.spatial import cKDTree
    tree = cKDTree(tree_points)
    for b in found[:2]:
        rho = band_density(states, b)
        assert rho.sum() * states.point_area_angstrom2 == pytest.approx(1.0, rel=1e-10)
        c, s = np.cos(np.pi / 3), np.sin(np.pi / 3)
        for rot in (np.array([[c, -s], [s, c]]), np.array([[1.0, 0.0], [0.0, -1.0]])):
            image = tree_points @ rot.T
            dist, idx = tree.query(image)
            inside = dist < 1e-6
            assert inside.mean() > 0.99          # the triangular grid maps onto itself
            np.testing.assert_allclose(rho[idx[inside]], rho[inside], atol=1e-6 * rho.max())
