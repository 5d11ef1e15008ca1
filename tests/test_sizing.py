"""The sizing view driven from Python (no browser): inputs to a sweep, messages, the list of pores meeting a target."""
from __future__ import annotations

import html

import pytest

from porefill.explorer.views.state import ExplorerState
from porefill.explorer.views.sizing import SizingView, step_rows
from porefill.physics.scenario import Scenario
from porefill.physics.sweep import Target, meets


@pytest.fixture()
def view():
    state = ExplorerState.from_scenario(Scenario(size_angstrom=10.0, wall_angstrom=8.0, temperature_k=1.5))
    v = SizingView(state=state)
    v.model.value, v.points.value = "classical", 60
    return v


@pytest.mark.parametrize("field, text, words", [("sizes", "10:50", "side lengths '10:50'"),
                                                ("sizes", "1:3:3", "size_angstrom"),
                                                ("walls", "0.5", "wall_angstrom")])
def test_bad_inputs_say_what_is_wrong(view, field, text, words):
    getattr(view, field).value = text
    view.compute()
    assert "Cannot sweep" in view.status.object and html.escape(words) in view.status.object
    assert view._plot is None                 # no figure until there is a result


def test_modes_build_their_sweeps(view):
    view.mode.value = "temperature (fixed side)"
    view.temps.value = "1.4:1.6:3"
    spec = view.spec()
    assert [s.temperature_k for s in spec.scenarios()] == pytest.approx([1.4, 1.5, 1.6])
    assert {s.size_angstrom for s in spec.scenarios()} == {10.0}
    view.mode.value = "side length at a known d100"
    view.sizes.value, view.d100.value = "10,12", 30.0
    assert spec is not view.spec() and view.spec().d100_angstrom == 30.0
    assert view.walls.visible is False and view.d100.visible is True


def test_the_list_shows_the_pores_meeting_the_target(view):
    view.sizes.value = "8,10,14"
    view.compute()
    assert "3 pores" in view.status.object and view._plot is not None
    assert len(step_rows(view._result, "size_angstrom")["p"]) == sum(len(p["steps"]) for p in view._result.done)
    view.low.value, view.high.value = 1e-3, 1.0
    view.target.value = "pore filled (every site)"
    want = [p["size_angstrom"] for p in view._result.done if meets(Target("full-pore", low_pa=1e-3, high_pa=1.0), p)[0]]
    assert f"{len(want)} of 3 pores" in view.meets_list.object
    for size in want:
        assert f"<tr><td>{size:g}</td>" in view.meets_list.object
    view.high.value = 1e-4                     # a window that is not one
    assert "lowest &lt; highest" in view.meets_list.object


def test_walls_full_centre_empty_a_layer_and_a_window_in_relative_pressure(view):
    # the sizing question as users ask it (issue: walls full with the central channel empty; a given layer
    # complete; the window in p/p0 as well as Pa), answered from the same sweep
    view.sizes.value = "10,14"
    view.compute()
    view.window_unit.value = "p/p₀"
    assert "p/p₀" in view.low.name and (view.low.value, view.high.value) == (0.0, 1.0)
    view.target.value = "walls full (first layer), central channel still empty"
    target = view.target_object()
    assert target.kind == "walls-full-centre-empty" and target.relative and view.layer.visible is False
    want = [p["size_angstrom"] for p in view._result.done if meets(target, p)[0]]
    assert want and f"{len(want)} of 2 pores" in view.meets_list.object and "p/p₀" in view.meets_list.object
    view.target.value = "a given layer complete (layer 1: against the wall; the centre is the last)"
    assert view.layer.visible is True
    view.layer.value = 2
    assert view.target_object() == Target("layer", low_pa=0.0, high_pa=1.0, layer=2, relative=True)
    assert "layer 2 complete" in view.meets_list.object


def test_sizes_are_labelled_as_what_they_are(view):
    # issue 21: cylinders were labelled "side length" (the number is a radius; users think in diameters)
    assert view.sizes.name.startswith("Side lengths (Å)")
    view.state.shape = "cylinder"
    assert view.sizes.name.startswith("Radii (diameter = 2 × radius) (Å)")
    view.sizes.value = "30,40"
    view.compute()
    view.target.value = "pore filled (every site)"
    assert "<th>Radius (diameter = 2 × radius) (Å)</th>" in view.meets_list.object


def test_the_status_says_the_sweeps_size_and_rough_time_before_it_starts():
    # common practice, no source: the page says what pressing Compute will cost
    from porefill.explorer.views.sizing import SizingView
    from porefill.explorer.views.state import ExplorerState
    from porefill.physics.scenario import Scenario

    view = SizingView(state=ExplorerState.from_scenario(Scenario(site_model="classical")))
    view.sizes.value = "10:20:3"
    assert "Press Compute: 3 pores" in view.status.object
    view.sizes.value = "10:20:9"
    assert "Press Compute: 9 pores" in view.status.object


def test_the_temperatures_follow_the_gas(view):
    # a temperature sweep offered for argon must not stay at 87 K once the gas is helium (issue: "a temperature
    # that follows the gas"); each gas's window is its vapour-pressure equation's (ITS-90 for helium-4, CoolProp)
    view.state.adsorbate = "argon"
    assert view.state.temperature_k > 83.0
    view.mode.value = "temperature (fixed side)"
    spec = view.spec()
    assert all(83.0 < s.temperature_k < 151.0 for s in spec.scenarios()) and spec.base.adsorbate == "argon"
    view.state.adsorbate = "helium-4"
    spec = view.spec()
    assert spec.base.adsorbate == "helium-4"
    assert all(0.3 <= s.temperature_k <= 5.0 for s in spec.scenarios())
    assert spec.scenarios()[0].temperature_k == pytest.approx(max(view.state.temperature_k - 0.25, 0.3))


def test_each_plotted_pressure_says_its_branch_and_the_measured_legs_pair_it(view):
    # issue 21 point 1: which branch each plotted pressure is on, with the adsorption/desorption pair shown where
    # they differ. Helium in open pores fills on the adsorption branch (its film holds up to the spinodal) and
    # empties at equilibrium (porefill.physics.lattice_gas.branches): each first-order step with a loop gets an
    # "adsorption as measured" point at its adsorption jump, above its equilibrium pressure
    from porefill.explorer.views.sizing import measured_leg_rows

    view.sizes.value = "14,20"
    view.compute()
    rows = step_rows(view._result, "size_angstrom")
    assert set(rows["branch"]) == {"equilibrium"}
    legs = measured_leg_rows(view._result, "size_angstrom")
    loops = [s for pt in view._result.done for s in pt["steps"]
             if s["kind"] == "first-order" and s["adsorption_jump_pressure_pa"] is not None]
    assert loops and set(legs["leg"]) == {"adsorption"} and len(legs["p"]) == len(loops)
    assert all(p > q for p, q in zip(legs["p"], legs["p_eq"]))
    labels = [el.label for el in view._figure([]).values()]
    assert "measured" in labels
    # with a closed end both legs follow the equilibrium: no pair is drawn
    view.state.pore_ends = "closed-end"
    view.compute()
    assert not measured_leg_rows(view._result, "size_angstrom")["x"]
    assert "measured" not in [el.label for el in view._figure([]).values()]


def test_the_d100_mode_s_defaults_make_a_sweep(view):
    # issue 21: the d100 mode's defaults failed at once ("side 26 Å with d100 = 40 Å leaves a wall of 1.15 Å").
    # w = 2·d100/√3 − √3·side (p6mm lattice, physics.sweep.wall_from_d100): the default d100 of 50 Å leaves the
    # default sides 10–30 Å walls of 5.7–40.4 Å
    from porefill.physics.sweep import wall_from_d100

    view.sizes.value = "10:30:11"
    view.mode.value = "side length at a known d100"
    sides = [s.size_angstrom for s in view.spec().scenarios()]     # no error
    assert len(sides) == 11 and min(wall_from_d100(sides, view.d100.value)) > 5.0
