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
