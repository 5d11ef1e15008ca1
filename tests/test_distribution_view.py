"""The pore-size distribution panel of the Measured data tab (porefill.explorer.views.distribution and
distribution_drawing) driven in Python, without a browser: kernel inputs, what is drawn from a distribution,
saving and reopening through a scenario file, the carried prediction and the Sizing tab's layer bands. The
browser walk is in tests/test_distribution_browser.py."""
from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

from porefill.explorer.files.scenario_file import dump_document, load_document, parse_document
from porefill.explorer.views import distribution_drawing as drawing
from porefill.explorer.views.measured import MeasuredView
from porefill.explorer.views.scenario_io import ScenarioIO
from porefill.explorer.views.sizing import SizingView
from porefill.explorer.views.state import ExplorerState

DEMO = Path(__file__).resolve().parents[1] / "scenarios" / "demo-nitrogen-invented-measured.toml"
SMALL = (12.0, 30.0, 12)        # a small kernel: 12 hexagon sides, quick to build (common practice, no source)


@pytest.fixture(scope="module")
def cache(tmp_path_factory):
    """Kernels go to a folder of this module, never to ~/.cache."""
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("POREFILL_CACHE_DIR", str(tmp_path_factory.mktemp("kernels")))
        yield


def _view(doc):
    view = MeasuredView(state=ExplorerState.from_scenario(doc.scenario))
    view.show_document(doc)
    return view


@pytest.fixture(scope="module")
def found(cache):
    """The demo's runs (invented nitrogen data) with a distribution found on the small kernel (the panel's
    own path: in tests the work runs at once, with the kernel built here in one process first)."""
    from porefill.explorer.jobs.kernels import kernel_for

    doc = load_document(DEMO)
    view = _view(doc)
    psd = view.distribution
    psd.first.value, psd.last.value, psd.count.value = SMALL
    kernel_for(psd.spec(), workers=1)
    psd.compute()
    assert psd.result is not None, psd.status.object
    return doc, view


# inputs ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("first, last, count, words", [
    (-2.0, 30.0, 12, "first side length"),
    (12.0, 10.0, 12, "larger than the first"),
    (12.0, 30.0, 2, "whole number from 3 to 200"),
    (12.0, 30.0, 500, "whole number from 3 to 200"),
    (12.0, 30.0, None, "whole number from 3 to 200"),
    (12.0, 900.0, 12, "kernel sizes:"),            # beyond the hexagon's size limit (porefill.physics.limits)
])
def test_bad_kernel_inputs_are_named_in_one_line(first, last, count, words):
    """Common practice, no source: each refusal names the input, in one line."""
    base = load_document(DEMO).scenario
    with pytest.raises(ValueError) as info:
        drawing.kernel_spec(base, first, last, count)
    assert words in str(info.value) and "\n" not in str(info.value)


def test_default_kernel_spans_the_default_diameters():
    """The default inputs give `default_sizes` (equivalent diameters 2–10 nm; porefill.physics.distribution.kernel)."""
    from porefill.physics.distribution.kernel import default_sizes

    for shape in ("hexagon", "cylinder", "slit"):
        first, last, count = drawing.default_kernel_inputs(shape)
        sizes = default_sizes(shape)
        assert count == len(sizes) and first == pytest.approx(sizes[0], abs=0.005)
        assert last == pytest.approx(sizes[-1], abs=0.005)


def test_a_bad_input_changes_nothing_else(found):
    doc, view = found
    psd = view.distribution
    before = psd.saved
    psd.count.value = 2
    assert "whole number" in psd.sizes_note.object
    psd.compute()
    assert "whole number" in psd.status.object and psd.saved is before
    psd.count.value = SMALL[2]
    psd.compute()          # the small kernel again (from memory): the module's distribution is back


def test_runs_not_per_gram_are_refused_before_any_kernel(cache):
    from porefill.physics.fitting.measured import MeasuredRun

    doc = load_document(DEMO)
    view = _view(doc.replace(measured=(MeasuredRun("per pore", "x.csv", [10.0, 20.0, 30.0], "Pa", [1.0, 2.0, 3.0],
                                                   "per nm", "adsorption", 77.35),)))
    view.distribution.compute()
    assert "not per gram" in view.distribution.status.object and view.distribution.saved is None


def test_runs_at_another_temperature_are_refused_before_any_kernel(cache):
    """The inversion's rule (porefill.physics.distribution.inversion: a run within 0.05 K of the kernel's
    temperature), said before a kernel is built."""
    doc = load_document(DEMO)
    view = _view(doc.replace(scenario=doc.scenario.replace(temperature_k=80.0)))
    view.distribution.compute()
    assert "measured at 77.35 K" in view.distribution.status.object and view.distribution.saved is None


def test_the_kernel_inputs_follow_the_shape():
    """A cylinder's kernel is in radii, with its own default range (diameters 2–10 nm)."""
    view = _view(load_document(DEMO))
    psd = view.distribution
    view.state.shape = "cylinder"
    assert "radius" in psd.first.name and "radius" in psd.last.name
    assert (psd.first.value, psd.last.value, psd.count.value) == drawing.default_kernel_inputs("cylinder")
    assert psd.first.value == pytest.approx(10.0, abs=0.01)       # 2 nm diameter: a 10 Å radius


# what is drawn --------------------------------------------------------------------------------------
def test_bars_hold_the_distribution(found):
    """Bar heights × widths are the pore volumes, and the cumulative curve ends at the total (a sum rule)."""
    _, view = found
    psd = view.distribution
    data = psd.sources["bars"].data
    w = psd.result.pore_volume_cm3_g
    np.testing.assert_allclose(np.asarray(data["density"]) * np.asarray(data["width"]), w, rtol=1e-12)
    s = psd.result.sizes_angstrom          # the bins tile the kernel's range and half a step beyond each end
    np.testing.assert_allclose(np.asarray(data["width"]).sum(),
                               s[-1] - s[0] + 0.5 * (s[1] - s[0]) + 0.5 * (s[-1] - s[-2]), rtol=1e-12)
    assert psd.sources["cumulative"].data["cumulative"][-1] == pytest.approx(w.sum(), rel=1e-12)
    assert np.all(np.asarray(data["lower"]) <= np.asarray(data["density"]))
    assert len(psd.plots.objects) == 4          # distribution, cumulative, fitted isotherm, residuals


def test_the_drawn_isotherm_is_the_inversions_model(found):
    """The curve drawn over the measured points, taken at those points, is the inversion's own model there,
    and the residuals drawn are its weighted residuals (measured − model)/σ."""
    _, view = found
    dist = view.distribution.result
    p0 = dist.kernel.saturation_pressure_pa
    for i, f in enumerate(dist.fitted):
        p = f["run"].pressure_pa(p0)[f["points"]]
        np.testing.assert_allclose(drawing.model_at(dist, i, np.log(p)), f["model"], rtol=1e-9)
        drawn = view.distribution.sources[f"fit{i}"].data
        np.testing.assert_allclose(drawn["r"], (f["measured"] - f["model"]) / f["sigma"], rtol=1e-12)
        np.testing.assert_allclose(drawn["x"], p / p0, rtol=1e-12)


def test_summary_shows_errors_and_the_single_size_beside(found):
    _, view = found
    psd = view.distribution
    text = psd.summary.object
    total = psd.result.summary["total_cm3_g"]
    assert "total pore volume" in text and f"{total:.4g}" in text
    assert "most pore volume at side length" in text and "diameter" in text
    assert f"{psd.result.reduced_chi2:.3g}" in text and f"{psd.result.single_size['reduced_chi2']:.3g}" in text
    assert text.count("± ") >= 5          # every summary value with its bootstrap error
    assert "kernel covers side lengths" in psd.notes.object


def test_figures_wait_for_the_tab(found):
    """A hidden tab gets no new figures (porefill.explorer.views.sizing says why); they come when it shows."""
    doc, _ = found
    view = _view(doc)
    psd = view.distribution
    psd.on_page = False
    psd.show_saved(parse_document(dump_document(doc.replace(distribution=found[1].distribution.saved))).distribution)
    assert psd.plots.objects == [] and psd.summary.object
    psd.on_page = True
    assert len(psd.plots.objects) == 2            # distribution and cumulative: a file keeps no fitted isotherm


# save and reopen ------------------------------------------------------------------------------------
def test_saving_writes_the_distribution_and_reopening_shows_it_without_inverting(found, monkeypatch):
    doc, view = found
    io = ScenarioIO(state=view.state, document=doc, measured=view)
    text = io.toml_text()
    assert "[distribution]" in text and "[distribution.kernel]" in text
    reopened = parse_document(text)
    import porefill.explorer.jobs.distribution_job as job

    def refuse(*args, **kwargs):
        raise AssertionError("reopening must not invert")
    monkeypatch.setattr(job, "distribution_work", refuse)
    again = _view(reopened)
    psd = again.distribution
    assert psd.result is None and psd.saved == view.distribution.saved
    numbers = lambda html: re.findall(r"<td class='porefill-psd-value'>([^<]*)</td>", html)     # noqa: E731
    assert numbers(psd.summary.object) == numbers(view.distribution.summary.object)
    assert "Reopened from the scenario file" in psd.summary.object
    assert (psd.first.value, psd.last.value, psd.count.value) == SMALL
    np.testing.assert_array_equal(psd.sources["bars"].data["density"], view.distribution.sources["bars"].data["density"])
    assert not psd.carry_button.disabled          # a reopened distribution can be carried when asked


# carried prediction and the Sizing tab --------------------------------------------------------------
def test_carry_lists_layer_bands_here_and_on_the_sizing_tab(found):
    """Argon at 87.3 K (classical sites, quick): each layer's band has p10 ≤ median ≤ p90, and the Sizing
    tab lists them, shading them only over a sweep of argon at 87.3 K."""
    _, view = found
    psd = view.distribution
    sizing = SizingView(state=view.state)
    psd.listeners.append(sizing.show_layer_bands)
    psd.gas.value = "argon"
    psd.temperature.value = 87.3
    psd.site_model.value = "classical"
    psd.predict()
    carried = psd.carried
    assert carried is not None, psd.carry_status.object
    rows = [r for r in drawing.layer_rows(carried) if r["median"] is not None]
    assert rows and all(r["p10"] <= r["median"] <= r["p90"] for r in rows)
    assert "argon at 87.3 K" in psd.layers.object and "pore full" in psd.layers.object
    assert sizing.bands.visible and "Layer bands in the measured sample" in sizing.bands.object
    assert "when the sweep is of argon at 87.3 K" in sizing.bands.object
    assert sizing._band_layers() == []                   # no sweep yet: nothing to shade over
    psd.temperature.value = -1.0
    psd.predict()
    assert "temperature" in psd.carry_status.object and psd.carried is carried    # refused; nothing else changed


def test_carry_to_the_same_gas_draws_the_distributions_isotherm(found):
    """Carried to its own gas and temperature, the distribution predicts the isotherm it was found from (the
    carried amount in mmol/g against the fitted model converted from cm³(STP)/g; 22.414 L/mol, IUPAC's STP
    molar volume, value from memory); 2 % for the two kernels' different pressure grids away from jumps."""
    _, view = found
    psd = view.distribution
    dist = psd.result
    psd.gas.value, psd.temperature.value, psd.site_model.value = "nitrogen", 77.35, "classical"
    psd.predict()
    c = psd.carried
    f = dist.fitted[0]
    p = f["run"].pressure_pa(dist.kernel.saturation_pressure_pa)[f["points"]]
    carried = np.interp(np.log(p), np.log(c.pressure_pa), c.amount_mmol_g["equilibrium"])
    fitted = np.asarray(f["model"]) / 22.414
    far = np.abs(np.gradient(np.log(fitted), np.log(p))) < 0.4         # away from the condensation ramp
    assert far.sum() >= 10
    np.testing.assert_allclose(carried[far], fitted[far], rtol=0.02)


def test_sizing_shades_the_bands_over_a_sweep_of_the_carried_gas(found):
    """Carried to nitrogen at 77.35 K (the page's own gas), a nitrogen sweep at 77.35 K gets one shaded band
    and one median line per layer that at least 1 % of the pore volume forms (common practice, no source)."""
    import holoviews as hv

    _, view = found
    psd = view.distribution
    sizing = SizingView(state=view.state)
    psd.listeners.append(sizing.show_layer_bands)
    psd.gas.value, psd.temperature.value, psd.site_model.value = "nitrogen", 77.35, "classical"
    psd.predict()
    sizing.sizes.value, sizing.points.value = "14:20:3", 120
    sizing.compute()
    bands = sizing._band_layers()
    expected = [r for r in drawing.layer_rows(psd.carried) if r["median"] is not None and r["fraction"] >= 0.01]
    assert [b[0] for b in bands] == [r["name"] for r in expected] and bands
    overlay = sizing._plot.object
    spans = [e for e in overlay if isinstance(e, hv.HSpan)]
    lines = [e for e in overlay if isinstance(e, hv.HLine)]
    assert len(spans) == 1 + len(bands) and len(lines) == len(bands)        # the apparatus's window + one each
    assert "Shaded across the plot" in sizing.bands.object
