"""Unit conversions against their definitions (SI, IUPAC), both ways."""
from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
from scipy import constants

from porefill.physics.substances import units
from porefill.physics.pore.geometry import CylinderPore, HexagonPore, SlitPore


def test_stp_molar_volume():
    # IUPAC physisorption STP 273.15 K, 101.325 kPa: 1 mmol = 22.414 cm³(STP) (Sing et al. 1985; docs/REFERENCES.md §7)
    assert units.STP_CM3_PER_MMOL == pytest.approx(22.414, abs=1e-3)
    # and not the 100 kPa standard-pressure volume, 22.711 cm³ per mmol (IUPAC 1982 standard pressure)
    assert units.STP_CM3_PER_MMOL != pytest.approx(22.711, abs=1e-2)


@pytest.mark.parametrize("unit, pascal", [
    ("Pa", 1.0), ("kPa", 1e3), ("mbar", 100.0), ("bar", 1e5),   # SI multiples
    ("Torr", 101325.0 / 760.0),                                   # 1 Torr = 1 atm / 760 (definition)
])
def test_pressure_units_by_definition_and_round_trip(unit, pascal):
    assert units.to_pascal(1.0, unit) == pytest.approx(pascal, rel=1e-15)
    values = np.array([1e-20, 3.7, 2.5e7])
    np.testing.assert_allclose(units.from_pascal(units.to_pascal(values, unit), unit), values, rtol=1e-14)


def test_relative_pressure_needs_p0():
    # p/p0 with p0 = 471.5 Pa (ITS-90 helium-4 at 1.5 K, docs/REFERENCES.md §3)
    assert units.to_pascal(0.5, "p/p0", p0_pa=471.5) == pytest.approx(235.75, rel=1e-15)
    with pytest.raises(ValueError, match="p0"):
        units.to_pascal(0.5, "p/p0")
    with pytest.raises(ValueError, match="furlong"):
        units.to_pascal(1.0, "furlong")


def test_pore_full_of_liquid_helium():
    # docs/REFERENCES.md §7: a pore volume V_p (cm³/g) full of liquid He-4 holds V_p × 36.26 mmol
    n_liquid = 0.021837                 # Å^-3, Donnelly & Barenghi (1998)
    area = 600.0                        # any cross-section, Å²
    full = n_liquid * area              # atoms per Å of pore
    assert units.amount_mmol_per_g(full, cross_section_angstrom2=area, pore_volume_cm3_g=0.8) == \
        pytest.approx(0.8 * 36.26, rel=1e-3)
    assert units.amount_cm3_stp_per_g(full, cross_section_angstrom2=area, pore_volume_cm3_g=1.0) == \
        pytest.approx(36.26 * 22.414, rel=1e-3)


@pytest.mark.parametrize("pore", [HexagonPore(15.0, 8.0), CylinderPore(20.0), SlitPore(12.0)], ids=repr)
def test_amount_units_round_trip_and_definitions(pore):
    # the liquid a full pore holds is thinner than the pore by the layer by the wall (any smaller area will do)
    liquid_area = 0.9 * pore.area_angstrom2
    basis = units.AmountBasis.of(SimpleNamespace(pore=pore, liquid_area_angstrom2=liquid_area), pore_volume_cm3_g=0.9)
    n = np.array([0.0, 0.37, 12.0])        # atoms per Å (slit: per Å²)
    for unit in units.AMOUNT_UNITS:
        np.testing.assert_allclose(units.to_atoms_per_angstrom(units.from_atoms_per_angstrom(n, unit, basis),
                                                               unit, basis), n, rtol=1e-14)
    # per nm² of wall: the amount per nm of pore over the perimeter in nm (definition)
    per_nm = units.from_atoms_per_angstrom(n, "per nm", basis)
    per_wall = units.from_atoms_per_angstrom(n, "per nm2 wall", basis)
    perimeter_nm = pore.perimeter_angstrom / 10.0
    np.testing.assert_allclose(per_wall, per_nm / perimeter_nm / (10.0 if basis.per_area else 1.0), rtol=1e-14)
    # mmol/g: a gram holds V_p/A_l of pore length, V_p the Gurvich volume (IUPAC 2015, Thommes et al., §6), A_l
    # the liquid's cross-section; 1 cm³ = 1e24 Å³ (definition); N_A from scipy.constants
    length_per_g = 0.9e24 / liquid_area
    np.testing.assert_allclose(units.from_atoms_per_angstrom(n, "mmol/g", basis),
                               n * length_per_g / constants.Avogadro * 1e3, rtol=1e-14)


def test_perimeters_and_areas_of_the_shapes():
    # regular hexagon of side t: perimeter 6t, area (3√3/2)t²; circle: 2πR, πR² (elementary geometry)
    assert HexagonPore(7.0).perimeter_angstrom == pytest.approx(42.0, rel=1e-14)
    assert CylinderPore(5.0).perimeter_angstrom == pytest.approx(10 * np.pi, rel=1e-14)
    assert CylinderPore(5.0).area_angstrom2 == pytest.approx(25 * np.pi, rel=1e-14)
    # slit: per Å along x, two walls and a cross-section of the width
    assert SlitPore(9.0).perimeter_angstrom == 2.0 and SlitPore(9.0).area_angstrom2 == 9.0


def test_particle_word():
    # nitrogen and hydrogen are diatomic molecules; helium, neon, argon monatomic (chemistry)
    assert units.particle_word("nitrogen") == "molecules" and units.particle_word("hydrogen") == "molecules"
    assert units.particle_word("helium-4") == "atoms" and units.particle_word("argon") == "atoms"


def test_amounts_per_square_metre_of_sample_surface():
    # per m² of the sample (BET) area × the specific area = per gram: 1 µmol/m² × 500 m²/g = 0.5 mmol/g
    # (SI prefixes; common practice, no source)
    from porefill.physics.fitting.measured import MeasuredRun, Sample, amount_to_model

    basis = units.AmountBasis(area_angstrom2=500.0, perimeter_angstrom=90.0)
    sample = Sample(pore_volume_cm3_g=0.6, surface_area_m2_g=500.0)
    per_area = MeasuredRun("a", "a.csv", [1.0, 2.0], "Pa", [1.0, 3.0], "umol/m2")
    per_gram = MeasuredRun("g", "g.csv", [1.0, 2.0], "Pa", [0.5, 1.5], "mmol/g")
    np.testing.assert_allclose(amount_to_model(per_area, basis, sample), amount_to_model(per_gram, basis, sample),
                               rtol=1e-14)
    milli = MeasuredRun("m", "m.csv", [1.0], "Pa", [1e-3], "mmol/m2")
    np.testing.assert_allclose(amount_to_model(milli, basis, sample), amount_to_model(per_area, basis, sample)[:1],
                               rtol=1e-14)
    with pytest.raises(ValueError, match="need the sample's specific surface area"):
        amount_to_model(per_area, basis, Sample(pore_volume_cm3_g=0.6))
