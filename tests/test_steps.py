"""Layer steps read off the branches: positive, inside their loops, each set of sites named once."""
from __future__ import annotations

from collections import Counter

import numpy as np
import pytest

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.steps import find_steps
from step_lists import steps_at_point_counts


@pytest.fixture(scope="module", params=[
    # cases that reported a first-order step adding nothing, and a 60-site face step adding 0.00 with a loop
    Scenario(size_angstrom=16.5, wall_angstrom=9.5, temperature_k=1.53, site_model="classical"),
    Scenario(size_angstrom=60.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical"),
    Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical"),
    Scenario(shape="cylinder", size_angstrom=30.0, adsorbate="nitrogen", temperature_k=77.35),
], ids=lambda s: f"{s.shape}-{s.size_angstrom:g}-{s.adsorbate}-{s.temperature_k:g}K")
def isotherm(request):
    return compute_isotherm(request.param, row_blend=False)   # one lattice's steps (blends: test_row_blend)


def test_every_step_adds_a_positive_amount(isotherm):
    assert isotherm.steps
    total = isotherm.stage.problem.weights.sum()
    for s in isotherm.steps:
        assert s.added_sites_per_slice > 1e-3 * total, s.label     # the pore-scaled threshold
        assert s.added_per_nm == pytest.approx(s.added_sites_per_slice * isotherm.per_nm_per_site(), rel=1e-12)


def test_first_order_equilibrium_lies_inside_its_loop(isotherm):
    for s in isotherm.steps:
        if s.kind == "first-order":
            assert s.desorption_jump_mu_k <= s.mu_k <= s.adsorption_jump_mu_k, s.label
            assert s.desorption_jump_pressure_pa <= s.pressure_pa <= s.adsorption_jump_pressure_pa


def test_a_set_of_sites_is_named_in_one_step_only(isotherm):
    # summed over the steps, no label is named for more sites than the pore has with that label
    lattice = isotherm.stage.lattice
    have = Counter(lattice.label(i) for i in range(lattice.size))
    named: Counter = Counter()
    for s in isotherm.steps:
        for where, count in s.filling:
            named[where] += count
    assert all(named[k] <= have[k] for k in named), (named, have)


def test_step_identities_are_distinct(isotherm):
    ids = [s.identity for s in isotherm.steps]
    assert len(set(ids)) == len(ids)


def test_first_order_steps_do_not_depend_on_the_grid():
    # the equilibrium transition is found by bisection on the re-solved states (to 1e-6 K), not on the grid
    sc = Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical")
    coarse = [s.mu_k for s in compute_isotherm(sc, n_points=150).steps if s.kind == "first-order"]
    fine = [s.mu_k for s in compute_isotherm(sc, n_points=600).steps if s.kind == "first-order"]
    assert len(coarse) == len(fine) >= 1
    np.testing.assert_allclose(coarse, fine, atol=1e-5)


def test_known_loop_from_arrays():
    # two orbits, hand-made branches: the desorption branch holds 5 sites more over a loop from point 3 to 6
    # and becomes the lower state between points 4 and 5, where Ω_a − Ω_d goes from −1 to +3 (root at 1/4)
    mu = np.arange(10.0)
    ads = np.zeros((10, 2))
    ads[7:] = 1.0
    des = ads.copy()
    des[3:7] = 1.0
    om_a = np.zeros(10)
    om_d = np.zeros(10)
    om_d[3:7] = [1.0, 1.0, -3.0, -3.0]
    steps = find_steps(mu, ads, des, om_a, om_d, weights=np.array([2.0, 3.0]), labels=["corner", "face"],
                       order=np.array([-5.0, -1.0]), pressure_pa=lambda m: np.exp(m), saturation_pressure_pa=1.0,
                       per_site=2.0)
    assert len(steps) == 1
    s = steps[0]
    assert s.kind == "first-order" and s.mu_k == pytest.approx(4.25, abs=1e-12)   # linear root of Ω_a − Ω_d
    assert s.added_sites_per_slice == pytest.approx(5.0) and s.added_per_nm == pytest.approx(10.0)
    assert s.filling == (("corner", 2.0), ("face", 3.0))
    assert s.desorption_jump_mu_k == 2.0 and s.adsorption_jump_mu_k == 7.0


def test_two_transitions_inside_one_loop_are_both_listed():
    # two rows filling in turn while both branches are still jumping (a 12.5 Å helium pore's ring 1, then
    # ring 2 with the centre): the branches differ from point 2 to 8; the equilibrium passes from the
    # adsorption branch to the desorption branch twice (roots at 2.5 and 6.25), and goes back to the
    # adsorption branch in between only because that branch has caught up (point 4: des has jumped on to full)
    mu = np.arange(11.0)
    ads = np.zeros((11, 2))
    ads[4:, 0] = 1.0                            # adsorption fills the first row at 4, the second at 9
    ads[9:, 1] = 1.0
    des = ads.copy()
    des[2:4, 0] = 1.0                           # desorption holds the first row down to 2, both rows down to 4
    des[4:9, 1] = 1.0
    om_a = np.zeros(11)
    om_d = np.zeros(11)
    om_d[2:4] = [1.0, -1.0]                     # first crossing between 2 and 3, root at 2.5
    om_d[4:9] = [4.0, 3.0, 1.0, -3.0, -4.0]     # second between 6 and 7, root at 6.25
    steps = find_steps(mu, ads, des, om_a, om_d, weights=np.array([6.0, 4.0]), labels=["ring 1", "ring 2"],
                       order=np.array([-5.0, -1.0]), pressure_pa=np.exp, saturation_pressure_pa=1.0, per_site=1.0)
    assert [(s.filling, round(s.mu_k, 12)) for s in steps] == [((("ring 1", 6.0),), 2.5), ((("ring 2", 4.0),), 6.25)]


def test_branches_that_part_without_omega_crossing_inside_the_range_give_no_step():
    # a loop that runs off the grid's top has its transition outside the range: no step is invented
    mu = np.arange(6.0)
    ads = np.zeros((6, 1))
    des = np.zeros((6, 1))
    des[3:] = 1.0
    om_d = np.zeros(6)
    om_d[3:] = 1.0                              # desorption is the higher state all through
    steps = find_steps(mu, ads, des, np.zeros(6), om_d, weights=np.array([6.0]), labels=["corner"],
                       order=np.array([0.0]), pressure_pa=np.exp, saturation_pressure_pa=1.0, per_site=1.0)
    assert steps == ()


def test_wide_slit_condenses_towards_p0():
    # the bulk transition of an ever wider slit moves up to the bulk coexistence, p -> p0 (Kelvin: the
    # shift falls as the width grows; common practice, no source for the lattice numbers)
    rel = []
    for width in (60.0, 120.0, 240.0):
        iso = compute_isotherm(Scenario(shape="slit", size_angstrom=width, temperature_k=1.5, site_model="classical"), n_points=300)
        rel.append(max(iso.steps, key=lambda s: s.added_per_nm).relative_pressure)
    assert rel[0] < rel[1] < rel[2] < 1.0
    assert 1.0 - rel[2] < 0.5 * (1.0 - rel[1]) and 1.0 - rel[2] < 0.1


@pytest.mark.parametrize("bond", [None, 0.0], ids=["vapour-pressure bond", "no bond"])
def test_continuous_steps_do_not_depend_on_the_grid(bond):
    # a continuous step sits at the maximum of dN/dμ of the re-solved states (exact from the Jacobian),
    # not at a grid interval: 100 and 400 points agree to 1e-3 K (common practice, no source: the grid
    # spacing here is 0.3–1 K, so a grid-bound location would miss by that much)
    sc = Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, bond_energy_k=bond,
                  site_model="classical")
    coarse = [s.mu_k for s in compute_isotherm(sc, n_points=100, row_blend=False).steps if s.kind == "continuous"]
    fine = [s.mu_k for s in compute_isotherm(sc, n_points=400, row_blend=False).steps if s.kind == "continuous"]
    assert len(coarse) == len(fine) >= 1
    np.testing.assert_allclose(coarse, fine, atol=1e-3)


def test_continuous_step_of_a_langmuir_site_at_its_free_energy():
    # ε_b = 0: one orbit of independent sites, N = w/(1 + e^{(f−μ)/kT}), whose dN/dμ peaks at μ = f exactly
    # (Langmuir 1918); the located step falls there to 1e-5 K whatever the grid
    sc = Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, bond_energy_k=0.0,
                  site_model="classical")
    iso = compute_isotherm(sc, n_points=57, row_blend=False)
    first = iso.steps[0]
    f = iso.stage.problem.site_free_energy
    assert first.mu_k == pytest.approx(float(f.min()), abs=1e-5)


@pytest.mark.parametrize("gas, temperature", [("nitrogen", 77.35), ("argon", 87.3)])
def test_condensation_is_listed_at_every_size_and_does_not_depend_on_the_grid(gas, temperature):
    # issue figures (nitrogen/argon fidelity): hexagon arrays with 8 Å walls dropped the condensation step at
    # 15 of 41 sizes between 6.05 and 8.0 nm, and a step moved with the point count; the target is none
    # missing and the same p/p0 to 1e-3 between 150 and 3000 points. Sampled here at 3 sides over the range
    # (the dense 41-size scan found none missing, nitrogen, 150–3000 points)
    from porefill.physics.lattice_gas.steps import condensation_step

    for side in (30.25, 35.1, 40.0):
        sc = Scenario(shape="hexagon", size_angstrom=side, wall_angstrom=8.0, adsorbate=gas, temperature_k=temperature)
        found = []
        for n in (150, 3000):
            step = condensation_step(compute_isotherm(sc, n_points=n).steps)
            assert step is not None and any(name == "centre" for name, _ in step.filling), (side, n)
            found.append((step.kind, step.relative_pressure))
        assert found[0][0] == found[1][0] == "first-order"
        assert found[0][1] == pytest.approx(found[1][1], abs=1e-3), side


def test_a_continuous_step_beside_a_loop_is_listed_at_every_point_count():
    # quantum helium, 18.75 Å, one rounded lattice (4 rows): ring 1 fills one orbit continuously (dN/dμ peaks
    # at 11.9 sites/K at 10^0.34 Pa, against 2.97 in the dip before the next orbit's loop: a contrast of 4.0,
    # measured with the exact dN/dμ) 0.19 decades below the rest of the row's first-order step. On a coarse
    # grid the peak's interval touches the loop's; before, it was taken for the loop's rounded shoulder and
    # listed only from 600 points on (common practice, no source: a grid must not decide the physics)
    sc = Scenario(adsorbate="helium-4", temperature_k=1.5, shape="hexagon", size_angstrom=18.75,
                  wall_angstrom=8.0, site_model="quantum")
    found = steps_at_point_counts(sc, (150, 200, 300, 600), "ring 1", row_blend=False)
    for n in (150, 200, 300, 600):
        assert [k for k, *_ in found[n]] == ["continuous", "first-order"]
        # 5e-3 decades: the tolerance `bench_step_grid.py` allows is 0.01; measured, the steps agree to 1e-3
        np.testing.assert_allclose([p for *_, p in found[n]], [p for *_, p in found[600]], atol=5e-3)


def test_two_continuous_steps_closer_than_the_grid_are_both_listed():
    # classical helium, 20 Å, the blend's 4-row lattice: its two face orbits fill continuously 0.33 decades
    # apart (the exact dN/dμ peaks at 16.8 and 18.3 sites/K with a dip of 3.9 between: each stands 4.3× and
    # more above it, measured). At 150 points the grid shows one peak; both are listed at every point count
    # (common practice, no source: a grid must not decide the physics)
    sc = Scenario(adsorbate="helium-4", temperature_k=1.5, shape="hexagon", size_angstrom=20.0,
                  wall_angstrom=8.0, site_model="classical")
    found = steps_at_point_counts(sc, (150, 300, 600), "face", rows=4)
    for n in (150, 300, 600):
        assert [(k, f) for k, f, _ in found[n]] == [("continuous", (("face", 12.0),)), ("continuous", (("face", 6.0),))]
        # 5e-3 decades: the tolerance `bench_step_grid.py` allows is 0.01; measured, the steps agree to 1e-3
        np.testing.assert_allclose([p for *_, p in found[n]], [p for *_, p in found[600]], atol=5e-3)
