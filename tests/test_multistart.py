"""The equilibrium is the lowest grand potential among all states found (physics/lattice_gas/multistart.py).

Source for the rule: the equilibrium state of an open system minimises its grand potential (Evans, J. Phys.:
Condens. Matter 2, 8989 (1990), the density-functional statement of it; from memory). The checks below are
independent of the code's own search: cold descents from every layered start at grid points of their own.
"""
from __future__ import annotations

import numpy as np
import pytest

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.meanfield import solve_state
from porefill.physics.scenario import Scenario
from step_lists import steps_at_point_counts


def _helium(size: float) -> Scenario:
    return Scenario(adsorbate="helium-4", temperature_k=1.5, shape="hexagon", size_angstrom=size,
                    wall_angstrom=8.0, site_model="classical")


@pytest.fixture(scope="module")
def helium_20():
    return compute_isotherm(_helium(20.0), n_points=300)


def _cold_lowest(iso, k: int) -> tuple[float, float]:
    """(lowest Ω, its amount in sites per slice) over cold descents from every layered start at grid point k."""
    st, p = iso.stage, iso.stage.problem
    row = st.lattice.ring[st.representative]
    best = (np.inf, np.nan)
    for r in range(0, int(row.max()) + 2):
        x, ok, _, om = solve_state(np.where(row < r, 30.0, -30.0), iso.mu[k], p)
        if ok and om < best[0]:
            best = (om, float(p.weights @ p.occupancy(x)))
    return best


def test_no_layered_state_lies_below_the_equilibrium(helium_20):
    # at every grid point where the branches differ, no cold descent from any layered start (rows from the
    # wall full, the rest empty) finds a lower Ω than the equilibrium's
    iso = helium_20
    w = iso.stage.problem.weights
    differ = np.flatnonzero((iso.desorption.occupancy - iso.adsorption.occupancy) @ w > 1e-6 * w.sum())
    assert differ.size > 5
    for k in differ:
        lowest, _ = _cold_lowest(iso, int(k))
        eq = iso.equilibrium.grand_potential[k]
        assert eq <= lowest + 1e-7 * (1.0 + abs(lowest)), (k, eq, lowest)
        assert eq <= min(iso.adsorption.grand_potential[k], iso.desorption.grand_potential[k]) + 1e-12


def test_a_state_of_neither_branch_is_found_and_is_the_equilibrium(helium_20):
    # a 20 Å hexagon (8 Å walls) of classical helium at 1.5 K: between the first layer and condensation a
    # pore with its outer rows full and the centre empty lies below both branches (found by the cold descents
    # above, which the code does not use); its layering step is listed between ring 1's and condensation
    iso = helium_20
    ks = np.flatnonzero(iso.equilibrium.source >= 2)
    assert ks.size >= 1
    k = int(ks[0])
    lowest, amount = _cold_lowest(iso, k)
    assert iso.equilibrium.grand_potential[k] == pytest.approx(lowest, abs=1e-6)
    n = iso.equilibrium_occupancy()[k] @ iso.stage.problem.weights
    assert n == pytest.approx(amount, abs=1e-3)
    n_a, n_d = (b.occupancy[k] @ iso.stage.problem.weights for b in (iso.adsorption, iso.desorption))
    assert n_a + 1 < n < n_d - 1
    rows = [s for s in iso.steps if s.kind == "first-order" and any(name == "ring 2" for name, _ in s.filling)]
    cond = [s for s in iso.steps if any(name == "centre" for name, _ in s.filling)]
    assert rows and cond and rows[0].pressure_pa < cond[-1].pressure_pa


@pytest.mark.parametrize("size", [20.0, 24.0, 25.0])
def test_first_order_steps_do_not_move_with_the_point_count(size):
    # issue's criterion: a step's pressure does not depend on the number of points (to 1e-3 in p/p0)
    # between 150 and 3000 points (common practice, no source: a grid must not decide the physics).
    # 24 Å: at 150 points the 6-row lattice's adsorption branch jumps from the ring-1 film onto the ring-2
    # layer between two grid points, inside the condensation's loop, and stays the equilibrium on both
    # sides; before that jump was looked for, ring 2 was listed for one lattice only (p/p0 0.127 against 0.096)
    lists = {}
    for n in (150, 3000):
        iso = compute_isotherm(_helium(size), n_points=n)
        lists[n] = [(s.relative_pressure, s.where) for s in iso.steps if s.relative_pressure > 1e-6]
    assert [w for _, w in lists[150]] == [w for _, w in lists[3000]]
    np.testing.assert_allclose([p for p, _ in lists[150]], [p for p, _ in lists[3000]], atol=1e-3)


def test_without_other_states_the_equilibrium_is_the_lower_branch():
    # nitrogen in a 4.3 nm silica cylinder: no layered start lies below both branches, and the equilibrium
    # is exactly the lower of the two branches at every grid point (the rule before several starts)
    iso = compute_isotherm(Scenario(adsorbate="nitrogen", temperature_k=77.35, shape="cylinder",
                                    size_angstrom=21.5, wall_angstrom=8.0), n_points=200,
                           relative_pressure_range=(1e-6, 1.0))
    assert iso.equilibrium.found_below_both == 0
    lower = np.minimum(iso.adsorption.grand_potential, iso.desorption.grand_potential)
    np.testing.assert_allclose(iso.equilibrium.grand_potential, lower, rtol=1e-9, atol=1e-9)


def test_a_layer_both_branches_jump_over_is_found_beside_their_loop():
    # quantum helium, 18.75 Å: in the 4-row lattice both branches cross ring 1's layer in one grid interval
    # (the adsorption branch jumps up onto ring 1 where the desorption branch falls from the full pore past
    # it), so they agree at the grid point below, where the ring-1 layer is the lower state (measured: Ω
    # 2.6 K per slice below theirs at 200 points). The layer, continued out of the loop, is found there, and
    # ring 1's step is first order at one pressure at every point count; before, 200 points listed a
    # continuous step 0.19 decades lower, at a rise of its own film (the rule: `test_no_layered_state_...`)
    sc = Scenario(adsorbate="helium-4", temperature_k=1.5, shape="hexagon", size_angstrom=18.75,
                  wall_angstrom=8.0, site_model="quantum")
    found = steps_at_point_counts(sc, (150, 200, 300), "ring 1", rows=4)
    assert [k for k, *_ in found[150]] == [k for k, *_ in found[200]] == [k for k, *_ in found[300]]
    assert "first-order" in [k for k, *_ in found[200]]
    for n in (150, 300):
        # 5e-3 decades: the tolerance `bench_step_grid.py` allows is 0.01; measured, the steps agree to 1e-3
        np.testing.assert_allclose([p for *_, p in found[n]], [p for *_, p in found[200]], atol=5e-3)
