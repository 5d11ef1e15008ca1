"""The Measured data tab's view (porefill.explorer.views.measured) driven in Python, without a browser: what the
overlay draws once a fit finishes, and what the fit table says about each parameter. The browser walk is in
tests/test_measured_browser.py."""
from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from porefill.explorer.jobs.fit_job import FitDone, fitted_isotherm
from porefill.explorer.views.measured import MeasuredView
from porefill.explorer.views.overlay import model_curves, overlay_run
from porefill.explorer.views.state import ExplorerState
from porefill.physics.fitting import model as fm
from porefill.physics.fitting.measured import MeasuredRun
from porefill.physics.fitting.solve import FitRequest, fit
from porefill.physics.scenario import Scenario
from porefill.physics.substances.materials import pair_parameters

N2_EPS = pair_parameters("nitrogen", "silica").epsilon_k
# invented nitrogen data made by the model from a 17.3 Å hexagon (1 % seeded noise); the page starts at 16.5 Å
TRUE = Scenario(shape="hexagon", size_angstrom=17.3, wall_angstrom=8.0, adsorbate="nitrogen", temperature_k=77.35,
                pair_epsilon_k=1.08 * N2_EPS, pore_volume_cm3_g=0.62, site_model="classical")
BASE = TRUE.replace(size_angstrom=16.5, pore_volume_cm3_g=None)
SMALL = dict(global_points=32, local_points=120, population=4, global_iterations=2, local_evaluations=4,
             local_starts=1)


def _runs():
    p0 = fitted_isotherm(TRUE).stage.saturation_pressure_pa
    p = np.r_[np.geomspace(2e-3, 0.1, 6), np.linspace(0.15, 0.9, 20)] * p0
    run = fm.simulated_run(TRUE, pressure_pa=p, pressure_unit="kPa", amount_unit="mmol/g", n_points=400)
    amount = run.amount * (1 + 0.01 * np.random.default_rng(5).standard_normal(p.size))
    return (MeasuredRun("invented", "invented-n2.csv", run.pressure, "kPa", amount, "mmol/g", "adsorption", 77.35),)


@pytest.fixture(scope="module")
def fitted():
    """A view on the start scenario with the data and a typed pore volume, and a finished fit of size and pore
    volume (as the fit's process sends it: the result and the fitted scenario's isotherm)."""
    runs = _runs()
    view = MeasuredView(state=ExplorerState.from_scenario(BASE))
    view._document_runs = runs
    view.sample_inputs["pore_volume_cm3_g"].value = 0.5
    view.model_arrived(BASE, fitted_isotherm(BASE))
    view.amount_display.value = "per nm"          # the model's coverage: what these tests compare
    result = fit(FitRequest(BASE, runs, view.sample(), free=("size", "pore-volume"), **SMALL))
    return view, result, FitDone(result, fitted_isotherm(result.scenario))


def _drawn(view):
    return (np.asarray(view._model_src["adsorption"].data["y"], float),
            np.asarray(view._sources[0].data["r"], float))


def test_the_fitted_model_is_drawn_the_moment_the_fit_finishes(fitted):
    view, result, done = fitted
    axis = view.axis.value
    before_curve, before_res = _drawn(view)
    assert "Model for" in view.caption.object and view._before_src["adsorption"].data["y"] == []
    assert not view._before_legend.visible
    view._fit_done(done)
    curve, res = _drawn(view)
    # the overlay and the residuals are the fitted model's (its size and fitted pore volume), not the page's
    np.testing.assert_array_equal(curve, model_curves(done.isotherm, axis)["adsorption"][1])
    expected = overlay_run(done.isotherm, result.runs[0].run, result.sample, axis).residual
    np.testing.assert_allclose(res, expected, rtol=1e-12)
    assert np.sum(res**2) < np.sum(before_res**2)          # the fit moved the model onto the data
    # the model before the fit stays in view, grey, for comparison; the caption and titles say which is which
    np.testing.assert_array_equal(view._before_src["adsorption"].data["y"], before_curve)
    assert "Fitted model" in view.caption.object and "fitted" in view._fig.title.text
    assert "fitted model" in view._res_fig.title.text and view._before_legend.visible
    # the same inputs again (the Pore tab redrawing the same scenario) keep the fit on show
    view.model_arrived(BASE, view._iso)
    assert "Fitted model" in view.caption.object


def test_taking_the_fitted_pore_or_typing_a_value_returns_to_the_pore_tabs_model(fitted):
    view, result, done = fitted
    view._fit_done(done)
    view._use_fit()
    assert view.state.scenario().size_angstrom == pytest.approx(result.scenario.size_angstrom, rel=1e-12)
    # the Pore tab then shows the fitted pore: the overlay draws that model, now the page's own
    view.model_arrived(view.state.scenario(), done.isotherm)
    assert "Model for" in view.caption.object and view._before_src["adsorption"].data["y"] == []
    assert not view._before_legend.visible
    view._fit_done(done)
    view.sample_inputs["pore_volume_cm3_g"].value = 0.7          # typed by hand: the page's model again
    assert "Model for" in view.caption.object


def test_fit_table_says_what_each_parameter_is(fitted):
    view, result, done = fitted
    view._fit_done(done)
    table = view.fit_result.object
    assert "side length" in table and "side of the hexagonal pore" in table      # "size" of a hexagon
    assert "pore volume" in table and "cm³/g" in table
    row = MeasuredView._parameter_row(result, "size", *result.parameters["size"])
    assert "<code>size</code>" in row and "Å" in row


@pytest.mark.parametrize("value, stderr, note", [
    (1.495, 0.004, "near its upper bound (1.5): error unreliable"),    # within 2 errors of 1.5 (report.near_bound)
    (1.2, 0.004, ""),
])
def test_fit_table_marks_a_parameter_near_its_bound(value, stderr, note):
    result = SimpleNamespace(scenario=BASE, bounds={"wall-strength": (0.5, 1.5)})
    row = MeasuredView._parameter_row(result, "wall-strength", value, stderr)
    assert f"<td class='porefill-fit-note'>{note}</td>" in row
    # the wall strength says what it multiplies, with the built-in ε it multiplies (porefill.physics.substances)
    assert f"built-in nitrogen–silica ε of {N2_EPS:.4g} K" in row and f"ε = {value * N2_EPS:.4g} K" in row


def test_per_gram_runs_are_drawn_without_a_pore_volume(fitted):
    """No pore volume typed: the runs are drawn with one estimated from the data, said so once, and the fit
    frees it by default (porefill.physics.fitting.model.estimate_pore_volume)."""
    runs = fitted[0]._document_runs
    view = MeasuredView(state=ExplorerState.from_scenario(BASE))
    view._document_runs = runs
    view.model_arrived(BASE, fitted_isotherm(BASE))
    caption = view.caption.object
    assert "No pore volume given" in caption and "estimated from the data" in caption and "fit frees it" in caption
    assert len(view._sources[0].data["y"]) == runs[0].amount.size
    assert "pore-volume" in view.free.value


def test_a_missing_sample_value_is_asked_for_once():
    # two dosed runs of one file without the sample mass: one message, not one per run
    iso = fitted_isotherm(BASE)
    runs = tuple(MeasuredRun(f"run {i}", "dosed.csv", [1e3, 2e3], "Pa", [1e-5, 2e-5], "mol", "adsorption", 77.35)
                 for i in (1, 2))
    view = MeasuredView(state=ExplorerState.from_scenario(BASE))
    view._document_runs = runs
    view.model_arrived(BASE, iso)
    assert view.caption.object.count("need the sample mass") == 1, view.caption.object


def test_amounts_are_shown_in_the_files_own_unit():
    """The file's own numbers are drawn as they are (mmol/g here), the model converted to that unit through the
    sample's pore volume (1 mmol/g at 0.5 cm³/g is 2 mmol per cm³ of pore: units.amount_mmol_per_g)."""
    from porefill.physics.substances.units import amount_mmol_per_g

    runs = _runs()
    iso = fitted_isotherm(BASE)
    view = MeasuredView(state=ExplorerState.from_scenario(BASE))
    view._document_runs = runs
    view.sample_inputs["pore_volume_cm3_g"].value = 0.5
    view.model_arrived(BASE, iso)
    assert view.amount_display.value == "mmol/g"
    assert view._fig.yaxis.axis_label == "amount (mmol/g)" and view._res_fig.yaxis.axis_label == "mmol/g"
    y = np.asarray(view._sources[0].data["y"], float)
    np.testing.assert_allclose(y, runs[0].amount, rtol=1e-12)
    branch = iso.measured_branch("adsorption")
    # the pore volume is a Gurvich volume: counted on the cross-section of the liquid a full pore holds
    expected = amount_mmol_per_g(iso.per_angstrom(branch), cross_section_angstrom2=iso.amount_basis().area_angstrom2,
                                 pore_volume_cm3_g=0.5)
    np.testing.assert_allclose(view._model_src["adsorption"].data["y"], expected, rtol=1e-12)
    # the user's pick holds; per nm draws the model's coverage again
    view.amount_display.value = "per nm"
    assert view._fig.yaxis.axis_label == "coverage (per nm)"
    np.testing.assert_allclose(view._model_src["adsorption"].data["y"], iso.per_nm(branch), rtol=1e-12)
    view.model_arrived(BASE, iso)
    assert view.amount_display.value == "per nm"


def test_points_above_p0_are_named_and_offered_to_drop(monkeypatch):
    # common practice, no source: one point above p0 does not refuse the fit silently; it is named, and
    # leaving it out is one tick away
    runs = _runs()
    p0 = fitted_isotherm(BASE).stage.saturation_pressure_pa
    high = MeasuredRun("high", "high.csv", [*runs[0].pressure, 1.02 * p0 / 1e3], "kPa", [*runs[0].amount, 9.0],
                       "mmol/g", "adsorption", 77.35)
    view = MeasuredView(state=ExplorerState.from_scenario(BASE))
    view._document_runs = (high,)
    started = []
    import porefill.explorer.jobs.fit_job as fit_job
    monkeypatch.setattr(fit_job, "start_fit", lambda request: started.append(request) or SimpleNamespace())
    monkeypatch.setattr("panel.state.add_periodic_callback", lambda *a, **k: None)
    view._start_fit()
    assert not started and "above the model's p₀" in view.fit_status.object
    assert f"rows {high.rows[-1]}" in view.fit_status.object and "Leave out points above p₀" in view.fit_status.object
    view.drop_high.value = True
    view._start_fit()
    assert len(started) == 1 and started[0].runs[0].amount.size == high.amount.size - 1
    assert "left out" in view.fit_status.object


def test_the_overlay_axes_scale_as_their_labels_say():
    # p/p0 and μ on linear axes, pressure on a log one; on the coverage axis pressure is the (log) y
    # (the p/p0 axis was drawn logarithmic though labelled linear)
    from bokeh.models import LinearScale, LogScale

    view = MeasuredView(state=ExplorerState.from_scenario(BASE))
    view._document_runs = _runs()
    view.sample_inputs["pore_volume_cm3_g"].value = 0.5
    view.model_arrived(BASE, fitted_isotherm(BASE))
    expected = {"relative-pressure": (LinearScale, LinearScale), "pressure": (LogScale, LinearScale),
                "chemical-potential": (LinearScale, LinearScale), "coverage": (LinearScale, LogScale)}
    for axis, (x_scale, y_scale) in expected.items():
        view.axis.value = axis
        assert isinstance(view._fig.x_scale, x_scale) and isinstance(view._fig.y_scale, y_scale), axis
        assert isinstance(view._res_fig.x_scale, x_scale)
        assert len(view._sources) == 1 and len(view._sources[0].data["x"]) > 0      # the run drawn again
