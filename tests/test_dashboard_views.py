"""Dashboard views driven from Python (no browser): state changes reach the views' data."""
from __future__ import annotations

import numpy as np

from porefill.explorer.views.state import ExplorerState
from porefill.explorer.views.isotherm import IsothermView
from porefill.physics.scenario import Scenario


def test_csv_download_matches_the_current_isotherm():
    state = ExplorerState.from_scenario(Scenario(size_angstrom=12.0, wall_angstrom=5.0, temperature_k=1.5))
    view = IsothermView(state=state)
    text = view.csv_file().getvalue().decode()
    assert "# pore ends: open" in text.splitlines()           # the header lines name the pore ends
    lines = [line for line in text.splitlines() if not line.startswith("#")]
    assert lines[0].startswith("mu_K,pressure_Pa") and "adsorption_as_measured_coverage_per_nm" in lines[0]
    assert len(lines) == 1 + view._iso.mu.size
    state.temperature_k = 2.0
    table = [line for line in view.csv_file().getvalue().decode().splitlines() if not line.startswith("#")]
    first = [float(v) for v in table[1].split(",")]
    assert np.isclose(first[0], view._iso.mu[0]) and view._iso.setup.temperature_k == 2.0


def test_out_of_range_settings_show_a_message_and_keep_the_view_alive():
    state = ExplorerState.from_scenario(Scenario(size_angstrom=2.0, temperature_k=1.5))
    view = IsothermView(state=state)                    # a pore too small for any site
    assert view._message.visible and "too small" in view._message.object
    assert view.csv_file().getvalue().startswith(b"no isotherm")
    state.size_angstrom = 15.0                          # recovers
    assert not view._message.visible and view._iso.steps


def test_measured_runs_and_sample_of_a_scenario_file_reach_the_measured_tab():
    """A scenario file's [[measured]] runs and [sample] show in the Measured data tab as they were saved,
    each sample value with its source, and Save writes them back (scenario save → load round trip)."""
    from porefill.explorer.files.scenario_file import load_document, resolve_scenario
    from porefill.explorer.views.measured import MeasuredView
    from porefill.explorer.views.scenario_io import ScenarioIO

    doc = load_document(resolve_scenario("demo-nitrogen-invented-measured"))
    state = ExplorerState.from_scenario(doc.scenario)
    measured = MeasuredView(state=state)
    io_view = ScenarioIO(state=state, document=doc, measured=measured)
    measured.show_document(doc)
    assert [r.name for r in measured.runs()] == [r.name for r in doc.measured]
    sample = measured.sample()
    assert sample.pore_volume_cm3_g == doc.sample.pore_volume_cm3_g and sample.source_of("pore_volume_cm3_g") == "typed"
    assert "From the scenario file" in measured.problems.object
    saved = io_view.current_document()
    assert [r.name for r in saved.measured] == [r.name for r in doc.measured]
    np.testing.assert_array_equal(saved.measured[0].amount, doc.measured[0].amount)


def test_the_coverage_axis_says_what_it_counts():
    # issue 21: nitrogen's axis said "atoms/nm; slit: per nm²"; molecular gases count molecules (the catalog's
    # flag), a slit's amounts are per area of wall (porefill.physics.substances.units)
    state = ExplorerState.from_scenario(Scenario(shape="cylinder", size_angstrom=21.5, adsorbate="nitrogen",
                                                 temperature_k=77.35, site_model="classical"))
    view = IsothermView(state=state)
    assert view._fig_p.yaxis.axis_label == "coverage (molecules per nm of pore)"
    assert view._fig_k.yaxis.axis_label == "dN/dμ (molecules per nm of pore per K)"
    state.param.update(adsorbate="argon", shape="slit", size_angstrom=20.0)
    assert view._fig_rel.yaxis.axis_label == "coverage (atoms per nm² of wall)"


def test_the_quantum_comparison_names_the_unit_of_the_pore_shown():
    # issue 21: the comparison plot said "coverage (per nm; slit: per nm²)" whatever the pore; it names the
    # shown pore's unit as the isotherm's axes do (per nm of pore; a slit's per nm² of wall)
    from porefill.explorer.views.quantum import QuantumView

    state = ExplorerState.from_scenario(Scenario(shape="hexagon", size_angstrom=6.0, adsorbate="helium-4",
                                                 temperature_k=1.5))
    view = QuantumView(state=state)
    view.refresh(force=True)                  # outside a served page: computed at once
    assert view._fig_cmp.yaxis.axis_label == "coverage (atoms per nm of pore)"
    view.energy_axis.value = "coverage"
    assert view._fig_energy.xaxis.axis_label == "coverage (atoms per nm of pore)"
    state.param.update(shape="slit", size_angstrom=8.0)
    view.refresh(force=True)
    assert view._fig_cmp.yaxis.axis_label == "coverage (atoms per nm² of wall)"
    assert view._fig_energy.xaxis.axis_label == "coverage (atoms per nm² of wall)"


def _tab_inputs(measured, sizing) -> dict:
    """Every input of the Measured data and Sizing tabs as the widgets hold it (the names on screen)."""
    d = measured.distribution
    widgets = {"axis": measured.axis, "amounts": measured.amount_display, "free": measured.free,
               "drop": measured.drop_high, "first": d.first, "last": d.last, "count": d.count, "gas": d.gas,
               "carry_t": d.temperature, "carry_model": d.site_model, "across": sizing.mode, "sizes": sizing.sizes,
               "walls": sizing.walls, "temps": sizing.temps, "d100": sizing.d100, "model": sizing.model,
               "points": sizing.points, "unit": sizing.window_unit, "low": sizing.low, "high": sizing.high,
               "target": sizing.target, "layer": sizing.layer}
    return {k: w.value for k, w in widgets.items()}


def _tab_views(doc):
    from porefill.explorer.views.measured import MeasuredView
    from porefill.explorer.views.scenario_io import ScenarioIO
    from porefill.explorer.views.sizing import SizingView

    state = ExplorerState.from_scenario(doc.scenario)
    measured, sizing = MeasuredView(state=state), SizingView(state=state)
    iso = IsothermView(state=state)
    iso.listeners.append(measured.model_arrived)
    measured.model_arrived(iso._shown, iso._iso)
    measured.show_document(doc)
    io_view = ScenarioIO(state=state, document=doc, measured=measured, sizing=sizing, isotherm=iso)
    return measured, sizing, io_view


def test_the_measured_and_sizing_tabs_inputs_round_trip_through_the_file():
    # issue 21: everything on screen reopens as it was; the two tabs' inputs were not saved at all
    from porefill.explorer.files.scenario_file import load_document, parse_document, resolve_scenario

    doc = load_document(resolve_scenario("demo-nitrogen-invented-measured"))
    measured, sizing, io_view = _tab_views(doc)
    start = _tab_inputs(measured, sizing)
    # every input changed, as a person would (the window's unit before its ends: a new unit resets them)
    measured.axis.value = "chemical-potential"
    measured.amount_display.value = next(v for v in measured.amount_display.options.values() if v != start["amounts"])
    measured.free.value = ["size", "wall"]
    measured.drop_high.value = True
    d = measured.distribution
    d.first.value, d.last.value, d.count.value = 12.5, 40.0, 12
    d.gas.value = "argon"
    d.temperature.value = 90.5
    d.site_model.value = "quantum"
    sizing.mode.value = "side length at a known d100"
    sizing.sizes.value, sizing.walls.value, sizing.temps.value = "14:24:6", "7", "70:80:3"
    sizing.d100.value = 46.5
    sizing.model.value = "classical"
    sizing.points.value = 120
    sizing.window_unit.value = "p/p₀"
    sizing.low.value, sizing.high.value = 0.1, 0.7
    sizing.target.value = sizing.target.options[-1]
    sizing.layer.value = 3
    changed = _tab_inputs(measured, sizing)
    assert [k for k in start if start[k] == changed[k]] == []            # the test is about changed inputs

    text = io_view.toml_text()
    assert "[view.measured]" in text and "[view.sizing]" in text
    reopened = parse_document(text, name="saved.toml")
    # a fresh page on the shipped file, then the saved file opened in it
    m2, s2, io2 = _tab_views(load_document(resolve_scenario("demo-nitrogen-invented-measured")))
    assert _tab_inputs(m2, s2) == start
    io2.apply_document(reopened)
    assert _tab_inputs(m2, s2) == changed
    # and a page built on the saved file at once
    m3, s3, _ = _tab_views(reopened)
    assert _tab_inputs(m3, s3) == changed


def test_a_links_tab_inputs_are_checked_and_shown_and_changes_are_written_back():
    # the link carries the two tabs' inputs that differ from the page's first ones, in the file's words;
    # a refused value is named with what it accepts, and the page keeps its own (explorer/views/tab_link.py)
    from porefill.explorer.files.scenario_file import load_document, resolve_scenario
    from porefill.explorer.views.tab_link import TabLink

    measured, sizing, _ = _tab_views(load_document(resolve_scenario("demo-nitrogen-invented-measured")))
    link = TabLink(measured, sizing)
    assert all(getattr(link, k) is None for k in ("sizing_points", "sizing_sizes", "measured_axis"))
    points = sizing.points.value
    refused = link.apply({"sizing_points": 5, "sizing_sizes": 12, "measured_axis": "chemical-potential",
                          "measured_free": ["size", "a0"]},
                         raw={"sizing_points": "5", "sizing_sizes": "12", "measured_axis": "chemical-potential"})
    assert list(refused) == ["sizing_points"] and "from 20 to 2000" in refused["sizing_points"]
    assert sizing.points.value == points                       # the page's own kept
    assert sizing.sizes.value == "12"                          # typed text stays text
    assert measured.axis.value == "chemical-potential" and measured.free.value == ["size", "a0"]
    assert link.sizing_sizes == "12" and link.measured_axis == "chemical-potential"
    sizing.points.value = 400                                   # a change on the page goes into the link
    assert link.sizing_points == 400
    sizing.points.value = points                                # and back out when it is as opened again
    assert link.sizing_points is None
