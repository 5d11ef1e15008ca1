"""The dashboard: controls on the left, views on the right, an About page with the safety notes."""
from __future__ import annotations

import html

import panel as pn

from physics.scenario import Scenario

from .about import ABOUT
from .state import ExplorerState
from .views.isotherm import IsothermView
from .views.potential import PotentialView

__all__ = ["create_app"]

_SLIDERS = ("size_angstrom", "wall_angstrom", "temperature_k")


def controls(state: ExplorerState) -> pn.viewable.Viewable:
    widgets = {name: {"type": pn.widgets.FloatSlider, "throttled": True} for name in _SLIDERS}
    widgets["shape"] = {"type": pn.widgets.RadioButtonGroup}
    return pn.Param(state, parameters=["shape", "size_angstrom", "wall_angstrom", "isolated", "adsorbate",
                                       "temperature_k"], widgets=widgets, show_name=False, width=300)


def create_app(scenario: Scenario | None = None) -> pn.viewable.Viewable:
    """Build one session's page (called by the server for every browser tab)."""
    pn.extension(notifications=True)
    # the first classical gas loads CoolProp (a few seconds, once per server): show that work is going on
    pn.config.loading_indicator = True
    scenario = scenario or Scenario(wall_angstrom=8.0)
    state = ExplorerState.from_scenario(scenario)
    # titles and notes come from files others wrote: shown as escaped text, never as markup
    header = pn.pane.HTML(f"<h1 class='porefill-title'>porefill</h1>"
                          + (f"<p class='porefill-scenario-title'>{html.escape(scenario.title)}</p>"
                             if scenario.title else ""),
                          sizing_mode="stretch_width")
    views = pn.Column(PotentialView(state=state), "### Adsorption", IsothermView(state=state),
                      sizing_mode="stretch_width")
    pore_page = pn.Row(pn.Column("### Pore and gas", controls(state)), views, sizing_mode="stretch_width",
                       name="Pore")
    about = pn.pane.Markdown(ABOUT, name="About & safety", width=760)
    return pn.Column(header, pn.Tabs(pore_page, about, dynamic=False), sizing_mode="stretch_width")
