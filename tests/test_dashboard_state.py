"""The dashboard's state honours every field of a loaded scenario (no browser needed)."""
from __future__ import annotations

import dataclasses

from porefill.explorer.views.state import ExplorerState
from porefill.physics.scenario import Scenario


def test_every_scenario_field_survives_the_page():
    full = Scenario(shape="hexagon", size_angstrom=17.5, wall_angstrom=9.0, adsorbate="helium-4", solid="silica",
                    temperature_k=1.8, pair_epsilon_k=30.0, pair_sigma_angstrom=2.95, solid_density_per_a3=0.045,
                    lattice_spacing_angstrom=3.6, bond_energy_k=2.5, bond_calibration="critical-temperature",
                    site_model="classical", pore_volume_cm3_g=0.75, plating="argon", plating_layers=2,
                    title="a <b>title</b>", notes="some notes")
    assert all(getattr(full, f.name) is not None for f in dataclasses.fields(Scenario))   # every field set
    state = ExplorerState.from_scenario(full)
    assert state.scenario() == full
    state.size_angstrom = 20.0                          # a slider moves: the rest stays as loaded ...
    moved = state.scenario()
    assert moved.replace(title="", notes="") == full.replace(size_angstrom=20.0, title="", notes="")
    # ... and the title and notes say it is no longer the file's scenario (issue: a new title when the scenario
    # changes; the saved file, the header and the report read it)
    assert moved.title.startswith("hexagon, side length 20 Å") and "“a <b>title</b>”" in moved.title
    assert moved.notes.startswith("Changed on the page from “a <b>title</b>”: size 17.5 Å → 20 Å.")
    assert moved.notes.endswith("Its notes: some notes")
    state.size_angstrom = 17.5                          # back to the file's inputs: the file's words again
    assert state.scenario() == full


def test_pore_ends_and_tidy_numbers_reach_the_scenario():
    # a slider's float steps are held as the number meant (issue: a link carried size_angstrom=22.999999999999996)
    state = ExplorerState.from_scenario(Scenario(pore_ends="closed-end", title="t"))
    assert state.scenario().pore_ends == "closed-end"
    state.size_angstrom = 22.999999999999996
    state.temperature_k = 1.7000000000000002
    assert state.size_angstrom == 23.0 and state.temperature_k == 1.7
    assert state.scenario().size_angstrom == 23.0


def test_isolated_and_cylinder_scenarios_round_trip():
    for sc in (Scenario(shape="hexagon", size_angstrom=12.0, wall_angstrom=None, temperature_k=1.5),
               Scenario(shape="cylinder", size_angstrom=30.0, adsorbate="nitrogen", temperature_k=77.35)):
        assert ExplorerState.from_scenario(sc).scenario() == sc


def test_wall_slider_starts_at_the_thinnest_physical_wall():
    # the scenario refuses walls thinner than one spacing of the solid's force centres (porefill.physics.limits)
    from porefill.physics.limits import minimum_wall_angstrom
    from porefill.physics.substances.materials import SOLIDS

    low = ExplorerState.param.wall_angstrom.bounds[0]
    assert low >= minimum_wall_angstrom(SOLIDS["silica"].density_per_a3)
    Scenario(wall_angstrom=low)                         # accepted at the slider's end


def test_the_site_model_is_a_control_that_round_trips():
    # helium opens on its default (quantum; none named in the file stays none), a change reaches the scenario,
    # the title and the notes, and another gas starts on its own default (issue: a visible site-model control)
    plain = Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, title="t")
    state = ExplorerState.from_scenario(plain)
    assert state.site_model == "quantum" and state.scenario() == plain
    state.site_model = "classical"
    assert state.scenario().site_model == "classical" and "site model quantum → classical" in state.scenario().notes
    state.adsorbate = "nitrogen"
    assert state.site_model == "classical"
    state.adsorbate = "helium-4"
    assert state.site_model == "quantum"
    named = ExplorerState.from_scenario(plain.replace(site_model="classical"))
    assert named.site_model == "classical" and named.scenario().site_model == "classical"


def test_wall_plating_on_the_page_round_trips_with_the_scenario():
    # the plating controls hold a scenario's plating, and a bare one stays without the lines (common practice)
    from porefill.explorer.views.state import ExplorerState
    from porefill.physics.scenario import Scenario

    plated = Scenario(shape="hexagon", size_angstrom=18.0, wall_angstrom=8.0, plating="argon", plating_layers=2)
    state = ExplorerState.from_scenario(plated)
    assert (state.plating, state.plating_layers) == ("argon", 2)
    assert state.scenario().model_key() == plated.model_key() and state.changes() == []
    state.plating = "none"
    sc = state.scenario()
    assert sc.plating is None and sc.plating_layers is None
    assert any("plating argon → none" in c for c in state.changes())
    bare = ExplorerState.from_scenario(Scenario())
    bare.plating = "hydrogen"
    assert bare.scenario().plating == "hydrogen" and bare.scenario().plating_layers is None
