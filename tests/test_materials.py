"""Catalog values against their cited sources; constants from scipy.constants."""
from __future__ import annotations

import pytest
from scipy import constants

from porefill.physics.substances.materials import ADSORBATES, SOLIDS, get_adsorbate, pair_parameters


@pytest.mark.parametrize("name, eps, sigma", [
    ("helium-4", 10.22, 2.556),    # de Boer & Michels, Physica 5, 945 (1938) (docs/REFERENCES.md §2, published)
    ("argon", 119.8, 3.405),       # Michels; Rahman (1964) — value from memory (docs/REFERENCES.md §2)
    ("nitrogen", 95.77, 3.572),    # Lastoskie, Gubbins & Quirke (1993) — value from memory
    ("neon", 35.6, 2.75),          # Hirschfelder, Curtiss & Bird (1954) — value from memory
    ("hydrogen", 34.2, 2.96),      # Buch (1994) — value from memory
])
def test_adsorbate_lj_parameters(name, eps, sigma):
    a = get_adsorbate(name)
    assert (a.epsilon_k, a.sigma_angstrom) == (eps, sigma)
    assert a.source


@pytest.mark.parametrize("name, value", [
    # ħ²/(m k_B) in K·Å², CODATA via scipy.constants (docs/REFERENCES.md §4, verified)
    # neon's 2.426 is for the isotope Ne-20 (19.99244 u, value from memory); the catalog holds natural neon
    ("helium-4", 12.1193), ("hydrogen", 24.066), ("neon", 2.426 * 19.99244 / 20.1797), ("nitrogen", 1.732),
    ("argon", 1.214),
])
def test_quantum_scale(name, value):
    a = get_adsorbate(name)
    assert a.hbar2_over_mk == pytest.approx(value, rel=3e-4)   # references quoted to 4 digits
    assert a.hbar2_over_mk == pytest.approx(constants.hbar**2 / (a.mass_u * constants.atomic_mass * constants.k) * 1e20,
                                            rel=1e-12)


def test_silica_oxygen_density():
    # 2.20 g/cm³, 60.08 g/mol, two O per SiO2 -> 0.0441 Å^-3 (docs/REFERENCES.md §2, verified arithmetic)
    assert SOLIDS["silica"].density_per_a3 == pytest.approx(0.0441, abs=1e-4)
    assert "derived" in SOLIDS["silica"].density_source


def test_argon_uses_published_pair():
    # Talu & Myers, Colloids Surf. A 187-188, 83 (2001): ε = 93.0 K, σ = 3.335 Å (docs/REFERENCES.md §2), times
    # argon's wall-strength factor for porefill's lattice (calibrated, WALL_FACTORS; tests/test_wall_spread.py)
    from porefill.physics.substances.materials import WALL_FACTORS

    factor = WALL_FACTORS[("argon", "silica")][0]
    p = pair_parameters("argon")
    assert (p.epsilon_k, p.sigma_angstrom) == (pytest.approx(93.0 * factor, rel=1e-12), 3.335)
    assert p.origin.startswith("published") and "wall-strength factor" in p.origin


def test_oxygen_backed_out_and_helium_mixed():
    # docs/REFERENCES.md §2: ε_O ≈ 72 K, σ_O ≈ 3.27 Å; He–O ≈ 27 K, 2.91 Å (derived, not published)
    o = SOLIDS["silica"]
    assert o.epsilon_k == pytest.approx(72.2, abs=0.1)
    assert o.sigma_angstrom == pytest.approx(3.265, abs=1e-3)
    he = pair_parameters("helium-4")
    assert he.epsilon_k == pytest.approx(27.16, abs=0.01)
    assert he.sigma_angstrom == pytest.approx(2.91, abs=0.005)
    assert he.origin.startswith("derived")


def test_overrides_are_applied_and_labelled():
    p = pair_parameters("helium-4", epsilon_k=30.0, sigma_angstrom=2.8, density_per_a3=0.05)
    assert (p.epsilon_k, p.sigma_angstrom, p.density_per_a3) == (30.0, 2.8, 0.05)
    assert "user override" in p.origin


@pytest.mark.parametrize("kwargs, word", [({"epsilon_k": -1.0}, "epsilon_k"), ({"sigma_angstrom": 0.0}, "sigma"),
                                          ({"density_per_a3": float("nan")}, "density")])
def test_bad_overrides_are_named(kwargs, word):
    with pytest.raises(ValueError, match=word):
        pair_parameters("helium-4", **kwargs)


def test_unknown_adsorbate_lists_known():
    with pytest.raises(ValueError, match="helium-4"):
        get_adsorbate("xenon")


def test_catalog_has_required_species():
    assert {"helium-4", "hydrogen", "neon", "argon", "nitrogen"} <= set(ADSORBATES)
