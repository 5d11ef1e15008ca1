"""Nitrogen at 77.35 K in silica cylinders: a type IV isotherm whose condensation follows the Kelvin equation
with a statistical film (Kruk, Jaroniec & Sayari 1997), with the pair and wall factor of porefill.physics.substances.materials;
and the bulk facts each calibration keeps (porefill.physics.lattice_gas.bond.calibration_facts)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import constants

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.bond import calibration_facts
from porefill.physics.substances.kelvin import kelvin_length_nm, kjs_condensation_relative_pressure
from porefill.physics.substances.materials import PUBLISHED_PAIRS, WALL_FACTORS, pair_parameters
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.steps import condensation_step
from porefill.physics.substances.vapour_pressure import p0_is_extrapolated, saturated_vapour_pressure

MONOLAYER_PER_NM2 = 6.17     # close-packed N2, 0.162 nm² per molecule (IUPAC, Sing et al. 1985; docs/REFERENCES.md §6)


def _cylinder(diameter_nm: float, **kw) -> Scenario:
    return Scenario(shape="cylinder", size_angstrom=5.0 * diameter_nm, adsorbate="nitrogen", temperature_k=77.35, **kw)


def _table(**kw):
    rows = {}
    for d in (3, 4, 5, 6, 7, 8):
        iso = compute_isotherm(_cylinder(d, **kw), n_points=200)
        k = int(np.searchsorted(iso.relative_pressure, 0.2))
        rows[d] = (condensation_step(iso.steps).relative_pressure,
                   float(iso.per_nm2_wall("equilibrium")[k]) / MONOLAYER_PER_NM2)
    return rows


@pytest.fixture(scope="module")
def table():
    return _table()


def test_kelvin_length_matches_the_handbook():
    # 2γV_L/RT = 0.954 nm from γ = 8.85 mN/m, V_L = 34.68 cm³/mol at 77.35 K (docs/REFERENCES.md §6, handbook values);
    # CoolProp's γ and V_L differ by 0.3 % and 0.2 %, so 1 % covers both
    assert kelvin_length_nm(77.35) == pytest.approx(0.954, rel=0.01)


@pytest.mark.parametrize("diameter_nm, expected", [(3, 0.21), (4, 0.38), (5, 0.51), (6, 0.59)])
def test_kjs_relation_gives_the_tabulated_condensation(diameter_nm, expected):
    # derived condensation pressures of docs/REFERENCES.md §6 (Kruk, Jaroniec & Sayari, Langmuir 13, 6267 (1997);
    # the t-curve from memory), quoted to two decimals
    assert kjs_condensation_relative_pressure(diameter_nm) == pytest.approx(expected, abs=0.006)


def test_nitrogen_forms_a_monolayer_before_it_condenses(table):
    # type IV (IUPAC, Thommes et al. 2015): at least 0.7 of a close-packed monolayer by p/p0 = 0.2 in 3–8 nm pores
    for d, (_, monolayers) in table.items():
        assert monolayers >= 0.7, (d, monolayers)


@pytest.mark.parametrize("diameter_nm", [4, 5, 6, 7, 8])
def test_condensation_follows_kelvin_with_a_film(table, diameter_nm):
    # within ±0.05 of the KJS relation (the criterion; the relation itself is quoted from memory)
    model, _ = table[diameter_nm]
    assert model == pytest.approx(kjs_condensation_relative_pressure(diameter_nm), abs=0.05)


def test_three_nanometre_pore_condenses_near_kjs_since_the_row_blend(table):
    # at 3 nm (four molecular diameters across) one rounded lattice condensed at p/p0 ≈ 0.15 against KJS 0.21;
    # mixed from the lattices either side of its row count (row_blend) it condenses at 0.227, within the
    # issue's ±0.04 of KJS like the wider pores
    model, _ = table[3]
    assert model == pytest.approx(kjs_condensation_relative_pressure(3), abs=0.04)


def test_stored_wall_factor_condenses_near_kjs():
    # benchmarks/calibrate_wall_factor.py on the stored factor and 0.02 either side, with the wall spread held:
    # all three form the monolayer by p/p0 0.2 and condense within rms 0.03 of KJS over 3–8 nm (the factor was
    # calibrated on the smooth wall; with the spread the scan's rms still falls towards 1.15, see WALL_FACTORS)
    eps0, sigma, _ = PUBLISHED_PAIRS[("nitrogen", "silica")]
    factor, source = WALL_FACTORS[("nitrogen", "silica")]
    assert "Kruk" in source
    assert pair_parameters("nitrogen").epsilon_k == pytest.approx(eps0 * factor, rel=1e-12)
    rms = {}
    for f in (factor - 0.02, factor, factor + 0.02):
        rows = _table(pair_epsilon_k=eps0 * f, pair_sigma_angstrom=sigma)
        assert all(m >= 0.7 for _, m in rows.values()), f
        rms[f] = np.sqrt(np.mean([(c - kjs_condensation_relative_pressure(d)) ** 2 for d, (c, _) in rows.items()]))
    assert rms[factor] < 0.03
    assert rms[factor + 0.02] < rms[factor] < rms[factor - 0.02]        # a stronger wall condenses lower


def test_nitrogen_facts_kept_and_missed():
    # vapour-pressure rule: coexistence at p0 and the Henry limit by construction; T_c = zε_b/4 (Bragg–Williams,
    # Hill 1960) misses CoolProp's 126.19 K by about +60 % (docs/REFERENCES.md §5: 201 K, measured here)
    iso = compute_isotherm(_cylinder(5), n_points=50)
    facts = {f["fact"]: f for f in calibration_facts(adsorbate="nitrogen", temperature_k=77.35, bond_k=iso.stage.bond_k,
                                                      rule="vapour-pressure",
                                                      cell_volume_angstrom3=iso.stage.lattice.cell_volume_angstrom3)}
    assert facts["bulk coexistence at p0"]["kept"] and facts["ideal-vapour Henry limit"]["kept"]
    tc = facts["critical temperature"]
    assert tc["reference"] == pytest.approx(126.19, abs=0.01)        # CoolProp (NIST: 126.192 K)
    assert tc["model"] == pytest.approx(8 * iso.stage.bond_k / 4, rel=1e-12)
    assert tc["miss"] == pytest.approx(0.60, abs=0.03)
    # capacity: one molecule per cell, the liquid at its normal boiling point (77.36 K), so kept at 77.35 K
    assert facts["liquid density (capacity)"]["kept"]


def test_helium_keeps_its_critical_temperature():
    # the vapour-pressure rule puts helium-4's Bragg–Williams T_c within 5 % of 5.195 K (docs/REFERENCES.md §5)
    iso = compute_isotherm(Scenario(site_model="classical"), n_points=50)
    facts = {f["fact"]: f for f in calibration_facts(adsorbate="helium-4", temperature_k=1.5, bond_k=iso.stage.bond_k,
                                                      rule="vapour-pressure",
                                                      cell_volume_angstrom3=iso.stage.lattice.cell_volume_angstrom3)}
    assert abs(facts["critical temperature"]["miss"]) < 0.05


def test_argon_at_77_k_is_a_supercooled_liquid_and_says_so():
    # argon at 77.35 K is below its triple point (83.81 K); its supercooled liquid's p0 is about 230 Torr
    # (value from memory; the solid's is about 200 Torr), common practice for pore analysis
    p0 = saturated_vapour_pressure("argon", 77.35)
    assert p0 / (constants.atm / 760) == pytest.approx(230.0, rel=0.05)
    assert p0_is_extrapolated("argon", 77.35) and not p0_is_extrapolated("argon", 87.3)
    # the extrapolation joins CoolProp's liquid line at the triple point
    t_triple = 83.8058
    assert saturated_vapour_pressure("argon", t_triple - 1e-9) == pytest.approx(
        saturated_vapour_pressure("argon", t_triple + 1e-9), rel=1e-6)
    iso = compute_isotherm(Scenario(shape="cylinder", size_angstrom=20.0, adsorbate="argon", temperature_k=77.35),
                           n_points=50)
    assert iso.stage.scale.p0_extrapolated
