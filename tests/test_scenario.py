"""Scenarios: validation and round trip through TOML."""
from __future__ import annotations

from pathlib import Path

import pytest

from porefill.explorer.files.scenario_file import ScenarioFileError, dump_scenario, load_scenario
from porefill.physics.scenario import Scenario

ROOT = Path(__file__).resolve().parents[1]


def test_demo_scenario_loads_and_is_labelled_invented():
    s = load_scenario(ROOT / "scenarios" / "demo-hexagon-helium.toml")
    assert s.shape == "hexagon" and s.adsorbate == "helium-4"
    assert "invented" in s.title.lower()


def test_round_trip(tmp_path):
    s = Scenario(shape="slit", size_angstrom=12.5, wall_angstrom=None, adsorbate="argon", temperature_k=87.3,
                 pair_epsilon_k=90.0, title='quote " and \\ back')
    f = tmp_path / "s.toml"
    f.write_text(dump_scenario(s))
    assert load_scenario(f) == s


@pytest.mark.parametrize("body, word", [
    ("[scenario]\nsize_angstrom = -3.0\n", "side length"),
    ("[scenario]\ncolour = 'red'\n", "colour"),
    ("[scenario]\nadsorbate = 'xenon'\n", "xenon"),
    ("[scenario\n", "not valid TOML"),
])
def test_bad_files_name_the_file_and_problem(tmp_path, body, word):
    f = tmp_path / "bad.toml"
    f.write_text(body)
    with pytest.raises(ScenarioFileError) as info:
        load_scenario(f)
    assert "bad.toml" in str(info.value) and word in str(info.value)


@pytest.mark.parametrize("path", sorted((ROOT / "scenarios").glob("*.toml")), ids=lambda p: p.name)
def test_every_shipped_scenario_loads_and_computes(path):
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    s = load_scenario(path)
    assert "invented" in s.title.lower()            # demo data is labelled as invented
    iso = compute_isotherm(s, n_points=60)
    assert iso.adsorption.converged.all() and iso.desorption.converged.all()
    assert iso.steps


@pytest.mark.parametrize("adsorbate, expected", [
    # light gases whose thermal wavelength is comparable to a lattice cell take the exact states by default
    ("helium-4", "quantum"), ("hydrogen", "quantum"), ("neon", "quantum"),
    ("argon", "classical"), ("nitrogen", "classical"),
])
def test_site_model_default_follows_the_adsorbate(adsorbate, expected):
    sc = Scenario(adsorbate=adsorbate, temperature_k=20.0)
    assert sc.site_model is None and sc.site_model_used == expected
    assert "site_model" not in sc.to_dict()                     # a saved file keeps "by gas", not a name
    assert Scenario(adsorbate=adsorbate, temperature_k=20.0, site_model="classical").site_model_used == "classical"
