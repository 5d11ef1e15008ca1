"""The dashboard: a narrow column of controls, the views beside it in wrapping rows, an About page with the
safety notes."""
from __future__ import annotations

import html
import os

import panel as pn

from porefill.physics.scenario import Scenario

from porefill.explorer.views.about import ABOUT
from porefill.explorer.files.scenario_file import ScenarioDocument
from porefill.explorer.views.state import ExplorerState
from porefill.explorer.views.isotherm import IsothermView
from porefill.explorer.views.potential import PotentialView
from porefill.explorer.views.measured import MeasuredView
from porefill.explorer.views.quantum import QuantumView
from porefill.explorer.views.scenario_io import ScenarioIO
from porefill.explorer.views.sizing import SizingView
from porefill.explorer.views.slider_keys import coalesce_slider_keys
from porefill.explorer.views.tab_keys import make_tabs_accessible

__all__ = ["create_app"]

CONTROLS_WIDTH = 230
_WALL_UNUSED = {
    "cylinder": "Wall thickness is not used: the cylinder is computed as one pore in an unbounded solid.",
    "isolated": "Wall thickness is not used: an isolated pore has no neighbours.",
}
# page-wide CSS: headings and tables that stay readable on a 1024 px projector
_CSS = """
h1 { font-size: 1.5em; margin: 0.2em 0 0.1em 0; }
.porefill-scenario-title { font-weight: normal; color: #444; }
"""


def controls(state: ExplorerState) -> pn.viewable.Viewable:
    """Shape, size, wall, isolated, adsorbate and temperature widgets, built from the state's parameters."""
    width = CONTROLS_WIDTH - 10

    def slider(name):
        return pn.widgets.FloatSlider.from_param(state.param[name], throttled=True, width=width)

    shape = pn.widgets.RadioButtonGroup.from_param(state.param.shape, width=width)
    size, wall, temperature = slider("size_angstrom"), slider("wall_angstrom"), slider("temperature_k")
    isolated = pn.widgets.Checkbox.from_param(state.param.isolated, width=width)
    half = (width - 20) // 2          # two selects and their margins within the column
    adsorbate = pn.widgets.Select.from_param(state.param.adsorbate, width=half)
    wall_note = pn.pane.HTML("", css_classes=["porefill-wall-note"], width=width, visible=False,
                             styles={"font-size": "12px", "color": "#555"})

    def fit_wall(*_):
        # the wall slider does nothing for the cylinder or an isolated pore: say so instead of ignoring it
        reason = "cylinder" if state.shape == "cylinder" else "isolated" if state.isolated else None
        wall.disabled = reason is not None
        isolated.disabled = state.shape == "cylinder"
        wall_note.object = f"<p>{_WALL_UNUSED[reason]}</p>" if reason else ""
        wall_note.visible = reason is not None

    fit_wall()
    state.param.watch(fit_wall, ["shape", "isolated"])
    site_model = pn.widgets.RadioButtonGroup.from_param(state.param.site_model, width=width,
                                                        css_classes=["porefill-site-model"])
    plating = pn.widgets.Select.from_param(state.param.plating, width=half, css_classes=["porefill-plating"])
    # the layers slider shows only with a plating chosen: the first screen keeps room for the scenario buttons
    layers = pn.widgets.IntSlider.from_param(state.param.plating_layers, width=width,
                                             visible=state.plating != "none")
    state.param.watch(lambda event: setattr(layers, "visible", event.new != "none"), "plating")
    # the gas and the gas plating the wall side by side: the first screen keeps room for the scenario buttons
    return pn.Column(shape, size, wall, wall_note, isolated, pn.Row(adsorbate, plating, margin=0), layers, temperature,
                     pn.pane.HTML("<span style='font-size:13px'>Site model (how a site's free energy is found)</span>",
                                  margin=(6, 10, 0, 10)),
                     site_model, width=CONTROLS_WIDTH, css_classes=["porefill-controls"])


def header(title: str) -> pn.pane.HTML:
    """One header line: the app's name and the scenario's title (escaped: it comes from a file)."""
    text = "porefill"
    if title:
        text += f" <span class='porefill-scenario-title'>— {html.escape(title)}</span>"
    return pn.pane.HTML(f"<h1>{text}</h1>", css_classes=["porefill-header"], sizing_mode="stretch_width",
                        stylesheets=[_CSS])


def _place(name: str, served: bool) -> pn.Column:
    """Where a tab's views go: a loading placeholder until they are filled in (at once outside a server)."""
    if not served:
        return pn.Column(sizing_mode="stretch_width", styles={"min-width": "0"})
    return pn.Column(pn.pane.HTML("<p>Drawing the plots …</p>", styles={"color": "#555"}), loading=True,
                     min_height=200, sizing_mode="stretch_width", styles={"min-width": "0"},
                     css_classes=["porefill-filling-in", f"porefill-filling-in-{name}"])


def create_app(scenario: Scenario | ScenarioDocument | None = None) -> pn.viewable.Viewable:
    """Build one session's page (called by the server for every browser tab); a whole scenario file
    (`ScenarioDocument`) also brings its view choices, sample, measured runs and fit."""
    pn.extension("filedropper", notifications=True)
    doc = scenario if isinstance(scenario, ScenarioDocument) else ScenarioDocument(scenario or Scenario(wall_angstrom=8.0))
    scenario = doc.scenario
    state = ExplorerState.from_scenario(scenario)
    isotherm = IsothermView(state=state)
    pore_views = [PotentialView(state=state), pn.pane.HTML("<h3>Adsorption</h3>"), isotherm]
    measured = MeasuredView(state=state)
    measured.distribution.on_page = False      # its figures join the page when the tab is first shown
    isotherm.listeners.append(measured.model_arrived)
    if isotherm._iso is not None:
        measured.model_arrived(isotherm._shown, isotherm._iso)
    measured.show_document(doc)
    quantum = QuantumView(state=state)
    sizing = SizingView(state=state)
    scenario_io = ScenarioIO(state=state, document=doc, isotherm=isotherm, measured=measured, sizing=sizing)
    measured.distribution.listeners.append(sizing.show_layer_bands)     # the carried prediction's layer bands
    # the frame (header, tabs, controls) goes to the browser first; the views fill these places once it is
    # drawn (`fill_in`), so the page is never blank while the plots are built
    served = pn.state.curdoc is not None and pn.state.curdoc.session_context is not None
    places = {name: _place(name, served) for name in ("pore", "quantum", "measured", "sizing")}
    views = places["pore"]
    side = pn.Column(pn.pane.HTML("<h3>Pore and gas</h3>"), controls(state), scenario_io, width=CONTROLS_WIDTH)
    pore_page = pn.Row(side, views, sizing_mode="stretch_width", name="Pore")
    about = pn.pane.Markdown(ABOUT, name="About & safety", sizing_mode="stretch_width",
                             styles={"max-width": "760px"})
    quantum_page = pn.Column(places["quantum"], name="Quantum states", sizing_mode="stretch_width")
    measured_side = pn.Column(pn.pane.HTML("<h3>Pore and gas</h3>"), controls(state), width=CONTROLS_WIDTH)
    measured_page = pn.Row(measured_side, places["measured"], sizing_mode="stretch_width", name="Measured data")
    sizing_page = pn.Column(places["sizing"], name="Sizing", sizing_mode="stretch_width")
    tabs = pn.Tabs(pore_page, quantum_page, measured_page, sizing_page, about, dynamic=False)
    # opening the quantum tab computes what it shows for the current inputs (the light gases only)
    tabs.param.watch(lambda event: quantum.refresh() if event.new == 1 else None, "active")
    tabs.param.watch(lambda event: setattr(measured.distribution, "on_page", True) if event.new == 2 else None,
                     "active")
    scenario_io.tabs = tabs
    scenario_io.show_tab(doc.view.tab)
    scenario_io.sync_url()             # the link carries the inputs; a link's own values are checked first
    make_tabs_accessible(pn.state.curdoc)     # roles and arrow keys once the page is drawn
    coalesce_slider_keys(pn.state.curdoc)     # a burst of slider keys sends its last value only
    head = header(state.title)         # a link's values may have retitled it; follows every later title
    state.param.watch(lambda event: head.param.update(object=header(event.new).object), "title")

    def fill_in():
        with pn.io.hold():
            places["pore"].objects = pore_views
            places["quantum"].objects = [quantum]
            places["measured"].objects = [measured]
            places["sizing"].objects = [sizing]
            for place in places.values():
                place.loading = False
                place.css_classes = []

    if served:
        pn.state.onload(fill_in)
    else:
        fill_in()
    return pn.Column(head, tabs, sizing_mode="stretch_width")


def notebook_app(scenario=None) -> pn.viewable.Viewable:
    """The dashboard for a notebook cell (`porefill.explorer.app`): ``scenario`` a `Scenario`, a `ScenarioDocument`,
    a scenario file's path or the name of a shipped one (None: the defaults)."""
    if isinstance(scenario, (str, os.PathLike)):
        from porefill.explorer.files.scenario_file import load_document, resolve_scenario
        scenario = load_document(resolve_scenario(str(scenario)))
    return create_app(scenario)
