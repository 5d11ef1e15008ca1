"""The staged model: geometry cached without temperature, thermal stage, Henry limit against the map,
the bond rules, and the limits every entry point shares."""
from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from scipy import constants

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.bond import bond_energy
from porefill.physics.pore.geometry import CylinderPore, HexagonPore, SlitPore
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.stages import geometry_stage, thermal_stage
from porefill.physics.substances.vapour_pressure import critical_temperature
from porefill.physics.pore.wall_potential import deepest_minimum, potential_map, wall_potential


def test_geometry_stage_is_shared_across_temperatures_and_words():
    a = Scenario(size_angstrom=14.0, wall_angstrom=7.0, temperature_k=1.5, title="one", site_model="classical")
    b = a.replace(temperature_k=2.0, title="two", notes="other words", bond_calibration="critical-temperature")
    assert geometry_stage(a) is geometry_stage(b)
    assert geometry_stage(a) is not geometry_stage(a.replace(size_angstrom=14.5))
    assert thermal_stage(a).site_free_energy.shape == thermal_stage(b).site_free_energy.shape


def test_results_are_frozen():
    iso = compute_isotherm(Scenario(size_angstrom=12.0, wall_angstrom=5.0), n_points=60)
    with pytest.raises(dataclasses.FrozenInstanceError):
        iso.steps = ()
    with pytest.raises(dataclasses.FrozenInstanceError):
        iso.stage.bond_k = 1.0


def test_henry_limit_of_the_isotherm_against_direct_quadrature_of_the_map(smooth_wall):
    # at low pressure N/L = (p/kT) ∫ exp(−V/kT) dA (docs/REFERENCES.md §4, classical limit; derived there), the
    # integral here by the trapezoid rule on an 801 x 801 map (converged: 1601 agrees to 1e-4). Nitrogen at
    # 77.35 K on the smooth wall (its spread of site energies is checked in tests/test_wall_spread.py): within
    # 1e-3 (the converged cell integrals, tests/test_cells.py, for helium too).
    sc = Scenario(shape="cylinder", size_angstrom=30.0, adsorbate="nitrogen", temperature_k=77.35)
    iso = compute_isotherm(sc, n_points=5, relative_pressure_range=(1e-14, 1e-13))
    kt = sc.temperature_k
    m = potential_map(pore=sc.pore(), pair=sc.pair(), n=801)
    inside = np.isfinite(m.values)
    boltz = np.where(inside, np.exp(-np.where(inside, m.values, 0.0) / kt), 0.0)
    integral = boltz.sum() * (m.x[1] - m.x[0]) * (m.y[1] - m.y[0])            # Å²
    henry = iso.pressure_pa / (constants.k * kt) * 1e-30 * integral            # atoms per Å
    np.testing.assert_allclose(iso.per_angstrom("equilibrium"), henry, rtol=1e-3)


def test_bond_rules_by_their_definitions():
    # Bragg–Williams kT_c = z ε_b / 4 (Hill 1960) with CoolProp's critical temperature (reference library)
    eb, _ = bond_energy("critical-temperature", adsorbate="nitrogen", temperature_k=77.35,
                        cell_volume_angstrom3=50.0)
    assert 8 * eb / 4 == pytest.approx(critical_temperature("nitrogen"), rel=1e-12)
    assert critical_temperature("nitrogen") == pytest.approx(126.19, abs=0.01)   # CoolProp (Span et al. 2000)
    # z ε_b / 2 = L0/R = 7.196 K for helium-4 (Donnelly & Barenghi 1998)
    eb, _ = bond_energy("binding-energy", adsorbate="helium-4", temperature_k=1.5, cell_volume_angstrom3=46.0)
    assert 8 * eb / 2 == pytest.approx(7.196, rel=1e-12)
    with pytest.raises(ValueError, match="helium-4 only"):
        bond_energy("binding-energy", adsorbate="argon", temperature_k=90.0, cell_volume_angstrom3=50.0)


@pytest.mark.parametrize("rule", ["critical-temperature", "binding-energy"])
def test_other_bond_rules_give_isotherms_with_bulk_coexistence_at_p0(rule):
    # with every rule μ_coex = −z ε_b/2 maps to p0 (Bragg–Williams particle–hole symmetry, docs/REFERENCES.md §5)
    iso = compute_isotherm(Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5,
                                    bond_calibration=rule, site_model="classical"), n_points=150)
    st = iso.stage
    assert st.mu_coexistence_k == pytest.approx(-8 * st.bond_k / 2, rel=1e-12)
    assert iso.pressure_pa[-1] == pytest.approx(st.saturation_pressure_pa, rel=1e-12)
    assert rule in st.bond_note and iso.steps and iso.steps[0].filling[0][0] == "corner"


def test_slit_isotherm_amounts_per_area_and_fraction():
    iso = compute_isotherm(Scenario(shape="slit", size_angstrom=20.0, wall_angstrom=6.0, temperature_k=1.5, site_model="classical"),
                           n_points=120, row_blend=False)
    assert iso.basis.per_area
    full = iso.fraction("desorption")[-1]
    assert 0.99 < full <= 1.0
    # a full slit holds (rows)/(ℓ · ℓ) sites per Å² of wall area pair: per nm² = rows × 100/ℓ²
    ell, rows = iso.stage.spacing_angstrom, iso.stage.problem.weights.sum()
    assert iso.per_nm("desorption")[-1] == pytest.approx(full * rows * 100.0 / ell**2, rel=1e-12)
    np.testing.assert_allclose(iso.per_nm2_wall("desorption"), iso.per_nm("desorption") / 2.0, rtol=1e-14)


def test_full_pore_in_mmol_per_gram():
    # a (Gurvich) pore volume V_p of cylinders full of lattice fluid holds V_p·n_l: the sites per Å of pore
    # over the liquid's cross-section A_l = sites per Å / n_l (IUPAC 2015, §6; porefill.physics.substances.units)
    sc = Scenario(shape="cylinder", size_angstrom=25.0, adsorbate="nitrogen", temperature_k=77.35,
                  pore_volume_cm3_g=0.7)
    iso = compute_isotherm(sc, n_points=60, row_blend=False)
    sites, ell = iso.stage.problem.weights.sum(), iso.stage.spacing_angstrom
    liquid_area = sites / ell / iso.stage.geometry.liquid_density_per_a3
    assert liquid_area < sc.pore().area_angstrom2
    expected = iso.fraction("desorption")[-1] * sites / ell * 0.7e24 / liquid_area / constants.Avogadro * 1e3
    assert iso.amount("desorption", "mmol/g")[-1] == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("pore", [HexagonPore(15.0, 8.0), HexagonPore(12.0), CylinderPore(9.0),
                                  SlitPore(10.0, 4.0)], ids=repr)
def test_deepest_minimum_is_the_true_minimum(pore, helium_pair):
    # no point of a fine map lies deeper than the refined minimum, and the minimum is a stationary point
    low = deepest_minimum(pore=pore, pair=helium_pair)
    fine = potential_map(pore=pore, pair=helium_pair, n=601)
    assert low.depth_k <= fine.values.min() + 1e-9
    h = 1e-3
    x, y = low.x_angstrom, low.y_angstrom
    v = lambda dx, dy: float(wall_potential(x + dx, y + dy, pore=pore, pair=helium_pair))
    assert v(h, 0) >= low.depth_k - 1e-7 and v(-h, 0) >= low.depth_k - 1e-7
    assert v(0, h) >= low.depth_k - 1e-7 and v(0, -h) >= low.depth_k - 1e-7


@pytest.mark.parametrize("pore", [HexagonPore(15.0, 8.0), CylinderPore(9.0), SlitPore(10.0)], ids=repr)
def test_pores_answer_for_themselves(pore):
    # the outline lies on the boundary; the line cuts end on it; the symmetry operations map the pore onto
    # itself (depth is invariant)
    for line in pore.outline():
        assert np.allclose(pore.depth_inside(line[:, 0], line[:, 1]), 0.0, atol=1e-9)
    for _, angle, length in pore.line_cuts():
        assert abs(float(pore.depth_inside(length * np.cos(angle), length * np.sin(angle)))) < 1e-9
    pts = np.random.default_rng(3).uniform(-4, 4, size=(50, 2))
    for op in pore.symmetry_operations():
        img = pts @ op.T
        np.testing.assert_allclose(pore.depth_inside(img[:, 0], img[:, 1]), pore.depth_inside(pts[:, 0], pts[:, 1]),
                                   atol=1e-12)


@pytest.mark.parametrize("changes, words", [
    ({"size_angstrom": True}, "must be a number"),                 # TOML `size = true` is not a size
    ({"wall_angstrom": 0.0}, "2.83 Å"),                            # thinner than one layer of the solid
    ({"size_angstrom": 1e-9}, ">= 2"),
    ({"shape": "slit", "size_angstrom": 1e6}, "<= 1000"),
    ({"lattice_spacing_angstrom": 0.1}, "lattice spacing"),
    ({"shape": "cylinder", "size_angstrom": 290.0, "lattice_spacing_angstrom": 2.0}, "limit is"),
    ({"temperature_k": float("nan")}, "temperature_k"),
    ({"site_model": "magic"}, "site_model"),
    ({"title": 5}, "title"),
])
def test_limits_are_checked_once_with_the_value_named(changes, words):
    with pytest.raises(ValueError, match=words):
        Scenario(**{"wall_angstrom": 8.0, **changes})


def test_pressure_ranges_above_p0_need_asking():
    sc = Scenario(size_angstrom=12.0, wall_angstrom=5.0, temperature_k=1.5, site_model="classical")
    with pytest.raises(ValueError, match="above the saturated vapour pressure"):
        compute_isotherm(sc, n_points=20, pressure_range_pa=(1.0, 1e4))
    iso = compute_isotherm(sc, n_points=20, pressure_range_pa=(1.0, 1e3), allow_above_p0=True)
    assert iso.pressure_pa[-1] == pytest.approx(1e3, rel=1e-9)
    with pytest.raises(ValueError, match="finite"):
        compute_isotherm(sc, n_points=20, pressure_range_pa=(1.0, float("inf")))


def test_extrapolated_p0_is_flagged():
    # ITS-90 helium-4 covers 1.25–5 K (Preston-Thomas 1990); below, the extrapolation is flagged
    assert thermal_stage(Scenario(size_angstrom=12.0, wall_angstrom=5.0, temperature_k=1.0, site_model="classical")).scale.p0_extrapolated
    assert not thermal_stage(Scenario(size_angstrom=12.0, wall_angstrom=5.0, temperature_k=1.5, site_model="classical")).scale.p0_extrapolated


@pytest.mark.parametrize("shape, size, gas, temperature", [("hexagon", 15.0, "helium-4", 1.5),
                                                            ("cylinder", 21.5, "nitrogen", 77.35)])
def test_a_rescaled_geometry_gives_the_isotherm_of_a_fresh_one(shape, size, gas, temperature):
    # the continuum LJ wall potential is linear in ε (Steele's integrated 9-3 form and its pore integrals:
    # Steele, Surf. Sci. 36, 317 (1973)), so a fit's change of wall strength may rescale a stored geometry:
    # site free energies then agree with a freshly converged geometry to the cells' tolerance (0.01 K
    # requirement, DEVELOPERS.md), and so do the isotherms
    from porefill.physics.lattice_gas.stages import rescaled_geometry

    base = Scenario(shape=shape, size_angstrom=size, wall_angstrom=8.0, adsorbate=gas, temperature_k=temperature,
                    site_model="classical")
    eps = base.pair().epsilon_k
    reference = geometry_stage(base.replace(pair_epsilon_k=eps))
    target = base.replace(pair_epsilon_k=1.2 * eps)
    rescaled = rescaled_geometry(reference, target, [temperature])
    assert rescaled is not None and rescaled.key == target.geometry_key()
    fresh = geometry_stage(target)
    np.testing.assert_allclose(rescaled.candidates.x, fresh.candidates.x, atol=1e-6)    # the first row's place
    f_rescaled = thermal_stage(target, geometry=rescaled).site_free_energy
    f_fresh = thermal_stage(target).site_free_energy
    np.testing.assert_allclose(f_rescaled, f_fresh, atol=0.01)
    a = compute_isotherm(target, n_points=60, geometry=rescaled)
    b = compute_isotherm(target, n_points=60, row_blend=False)    # `geometry=` gives one lattice
    np.testing.assert_allclose(a.adsorption.total, b.adsorption.total, rtol=2e-3, atol=1e-6 * b.adsorption.total.max())


def test_a_geometry_is_rescaled_only_where_its_nodes_are_converged():
    from porefill.physics.lattice_gas.stages import rescaled_geometry
    from porefill.physics.substances.vapour_pressure import temperature_range

    base = Scenario(shape="hexagon", size_angstrom=15.0, wall_angstrom=8.0, site_model="classical")
    reference = geometry_stage(base)
    eps = reference.pair.epsilon_k
    t_min, t_max, _ = temperature_range("helium-4")
    # exp(−sV/kT) = exp(−V/(kT/s)): the nodes serve s·ε only while T/s stays in the range they were checked over
    assert rescaled_geometry(reference, base.replace(pair_epsilon_k=2.0 * eps), [2.0 * t_min * 1.01]) is not None
    assert rescaled_geometry(reference, base.replace(pair_epsilon_k=2.0 * eps), [2.0 * t_min * 0.99]) is None
    assert rescaled_geometry(reference, base.replace(pair_epsilon_k=0.5 * eps), [0.5 * t_max * 1.01]) is None
    # anything but ε changed: not a rescaling
    assert rescaled_geometry(reference, base.replace(size_angstrom=15.5), [1.5]) is None
    assert rescaled_geometry(reference, base.replace(pair_sigma_angstrom=2.7), [1.5]) is None
    with pytest.raises(ValueError, match="not the scenario's"):
        thermal_stage(base.replace(size_angstrom=15.5), geometry=reference)
