"""Quantum states of the cross-section, the two site models side by side, and energies along the isotherm.

Computed on demand (one worker job, `porefill.explorer.views.model_comparison.comparison_job`): when this tab is opened with
inputs it has not shown yet, or when its button is pressed. Until a result for the current inputs is here,
what is on show says which inputs it belongs to.
"""
from __future__ import annotations

import html

import numpy as np
import panel as pn
import param
from bokeh.models import ColorBar, ColumnDataSource, LinearColorMapper, Range1d
from bokeh.palettes import Cividis256
from bokeh.plotting import figure

from porefill.physics.scenario import Scenario
from porefill.physics.sites.site_models import QUANTUM_BY_DEFAULT

from porefill.explorer.jobs.compute import LatestRunner, short_error
from porefill.explorer.views.model_comparison import ComparisonSummary, comparison_job
from porefill.explorer.views.state import ExplorerState, describe
from porefill.explorer.views.isotherm import ADS_COLOUR, DES_COLOUR, coverage_unit
from porefill.explorer.views.potential import FRAME, GROW_MIN, MAP_MIN, fit_map, growing_box, map_figure, outline
from porefill.explorer.views.ticks import readable_log_axes

MODEL_COLOUR = {"classical": DES_COLOUR, "quantum": ADS_COLOUR}
ENERGY_COLOURS = {"wall": "#1b6ca8", "kinetic": "#d1495b", "fluid": "#2e8540", "total": "#222222"}


def _key(sc: Scenario) -> Scenario:
    return sc.replace(title="", notes="")


class QuantumView(pn.viewable.Viewer):
    """Bands and probability maps of the lowest states, classical against quantum isotherms, step shifts,
    energies per atom."""

    state = param.ClassSelector(class_=ExplorerState)

    def __init__(self, **params):
        super().__init__(**params)
        self.button = pn.widgets.Button(name="Compute the states and compare the site models", button_type="primary",
                                        width=360, css_classes=["porefill-quantum-compute"])
        self.caption = pn.pane.HTML("", css_classes=["porefill-quantum-caption"], sizing_mode="stretch_width",
                                    styles={"font-size": "13px"})
        self.summary = pn.pane.HTML("", css_classes=["porefill-quantum-summary"], sizing_mode="stretch_width")
        self.shifts = pn.pane.HTML("", css_classes=["porefill-step-shifts"], sizing_mode="stretch_width")
        self.map_choice = pn.widgets.Select(name="Probability map", options=["thermal density"],
                                            value="thermal density", width=FRAME)
        self.energy_axis = pn.widgets.RadioButtonGroup(options=["chemical potential", "coverage"],
                                                       value="chemical potential")
        self._image = ColumnDataSource({"image": [np.full((1, 1), np.nan)], "x": [0.0], "y": [0.0],
                                        "dw": [1.0], "dh": [1.0]})
        self._outline = ColumnDataSource({"xs": [], "ys": []})
        self._curves = {m: ColumnDataSource({"p": [], "n": []}) for m in MODEL_COLOUR}
        self._energy = ColumnDataSource({k: [] for k in ("x", "wall", "kinetic", "fluid", "total")})
        self._fig_map = self._map_figure()
        self._fig_cmp = self._comparison_figure()
        self._fig_energy = self._energy_figure()
        self._summary: ComparisonSummary | None = None
        self._shown: Scenario | None = None
        self._runner = LatestRunner("isotherm", name="quantum states", time_limit_s=120.0)
        self.button.on_click(lambda *_: self.refresh(force=True))
        self.map_choice.param.watch(self._show_map, "value")
        self.energy_axis.param.watch(self._show_energies, "value")
        self.state.param.watch(self._mark_stale, ["shape", "size_angstrom", "wall_angstrom", "isolated",
                                                  "adsorbate", "temperature_k", "site_model", "plating",
                                                  "plating_layers"])
        # the figures join the page with the first result, when this tab is on show: Bokeh figures that sit
        # in a hidden tab before they were ever laid out stall the painting of every other plot on the page
        self._body = pn.Column(css_classes=["porefill-quantum-body"], sizing_mode="stretch_width",
                               min_height=40)
        self._mark_stale()

    # figures --------------------------------------------------------------------------------------
    def _map_figure(self):
        self._mapper = LinearColorMapper(palette=Cividis256, low=0.0, high=1.0, nan_color=(0, 0, 0, 0))
        # grows with its box at one scale on both axes (explorer/views/potential.py: map_figure); the ranges
        # follow the image
        fig = map_figure(title="One-atom probability density", x_axis_label="x (Å)", y_axis_label="y (Å)",
                         tools="pan,wheel_zoom,reset,save", toolbar_location="above")
        fig.image(image="image", x="x", y="y", dw="dw", dh="dh", source=self._image, color_mapper=self._mapper)
        fig.multi_line(xs="xs", ys="ys", source=self._outline, line_color="black", line_width=2)
        fig.add_layout(ColorBar(color_mapper=self._mapper, title="density (Å⁻²)", height=10,
                                orientation="horizontal", title_standoff=4), "below")
        return fig

    def _comparison_figure(self):
        fig = figure(title="Equilibrium isotherm, both site models", x_axis_type="log",
                     x_axis_label="pressure p (Pa)", y_axis_label="coverage (per nm)", sizing_mode="stretch_width",
                     min_width=GROW_MIN - 10, frame_height=230, x_range=Range1d(1e-30, 1.0), y_range=Range1d(0, 1),
                     tools="pan,wheel_zoom,box_zoom,reset,save", toolbar_location="above")
        for m, colour in MODEL_COLOUR.items():
            fig.line("p", "n", source=self._curves[m], color=colour, line_width=2, legend_label=m,
                     line_dash="solid" if m == "quantum" else "dashed")
        readable_log_axes(fig)
        fig.legend.location = "top_left"
        fig.legend.background_fill_alpha = 0.8
        return fig

    def _energy_figure(self):
        fig = figure(title="Mean-field energy per adsorbed atom (equilibrium branch)",
                     x_axis_label="chemical potential μ (K)", y_axis_label="energy per atom (K)",
                     frame_width=FRAME + 120, frame_height=230, x_range=Range1d(0, 1), y_range=Range1d(-1, 1),
                     tools="pan,wheel_zoom,box_zoom,reset,save", toolbar_location="above")
        for name, colour in ENERGY_COLOURS.items():
            fig.line("x", name, source=self._energy, color=colour, line_width=2 if name == "total" else 1.5,
                     legend_label=name if name != "fluid" else "fluid–fluid")
        fig.legend.location = "bottom_left"
        fig.legend.background_fill_alpha = 0.8
        return fig

    # updates --------------------------------------------------------------------------------------
    def _scenario(self) -> Scenario | None:
        try:
            return self.state.scenario()
        except ValueError:
            return None

    def _mark_stale(self, *_):
        sc = self._scenario()
        if sc is None:
            self.caption.object = "<p>These inputs cannot be computed: see the Pore tab.</p>"
            return
        if self._shown is not None and _key(sc) == _key(self._shown):
            return
        light = sc.adsorbate in QUANTUM_BY_DEFAULT
        what = ("the quantum site model is in use for this gas" if light else
                f"{sc.adsorbate} is heavy enough for the classical model (in use); its states are many and the "
                "computation is slow")
        shown = "" if self._shown is None else f" The results below are for {html.escape(describe(self._shown))}."
        self.caption.object = (f"<p>For {html.escape(describe(sc))}: {what}. Press the button to compute the "
                               f"one-atom states and both isotherms.{shown}</p>")

    def refresh(self, *, force: bool = False) -> None:
        """Compute for the current inputs unless they are on show; without ``force``, only for the light gases
        (called when the tab is opened)."""
        sc = self._scenario()
        if sc is None or (self._shown is not None and _key(sc) == _key(self._shown)):
            return
        if not force and sc.adsorbate not in QUANTUM_BY_DEFAULT:
            return
        self._body.loading = True
        self.button.disabled = True
        self.caption.object = f"<p>Computing the states and both isotherms for {html.escape(describe(sc))} …</p>"
        self._runner.submit(comparison_job, (_key(sc),), lambda result: self._apply(sc, result), self._fail)

    def _fail(self, exc: BaseException) -> None:
        self._body.loading = False
        self.button.disabled = False
        self.caption.object = f"<p style='color:#8a4b00'><b>No states for these inputs:</b> {html.escape(short_error(exc))}</p>"

    def _apply(self, sc: Scenario, s: ComparisonSummary) -> None:
        self._summary, self._shown = s, sc
        if not self._body.objects:
            # the map and the comparison share a wrapping row and grow with it (explorer/views/potential.py);
            # a plain Row with flex-wrap, not a FlexBox: growing plots in a FlexBox added to the page after
            # it was drawn were never laid out by Bokeh (a frame of 0 px, a blank canvas)
            maps = growing_box(self.map_choice, pn.pane.Bokeh(self._fig_map, sizing_mode="stretch_width"),
                               css_class="porefill-quantum-map", min_px=MAP_MIN)
            comparison = growing_box(pn.pane.Bokeh(self._fig_cmp, sizing_mode="stretch_width"), self.shifts,
                                     css_class="porefill-quantum-comparison")
            self._body.objects = [
                self.summary, pn.Row(maps, comparison, sizing_mode="stretch_width",
                                     styles={"flex-wrap": "wrap", "gap": "8px 16px"}),
                pn.pane.HTML("<h3>Energies per adsorbed atom</h3>"), self.energy_axis, pn.pane.Bokeh(self._fig_energy)]
        with pn.io.hold():
            label = html.escape(describe(sc))
            self.caption.object = f"<p>For {label}; site model in use: <b>{s.model_in_use}</b>.</p>"
            self.summary.object = self._summary_html(s)
            lines = outline(sc)
            self._outline.data = {"xs": [q[:, 0] for q in lines], "ys": [q[:, 1] for q in lines]}
            x0, x1, y0, y1 = s.extent
            fit_map(self._fig_map, x1 - x0, y1 - y0)            # the ranges follow the image (DataRange1d)
            options = list(s.images)
            self.map_choice.options = options
            if self.map_choice.value not in options:
                self.map_choice.value = options[0]
            self._show_map()
            lo, hi = np.inf, -np.inf
            top = 0.0
            for m, src in self._curves.items():
                p, n = s.curves[m]["p"], s.curves[m]["n"]
                src.data = {"p": p, "n": n}
                lo, hi, top = min(lo, p.min()), max(hi, p.max()), max(top, float(np.nanmax(n)))
            self._fig_cmp.x_range.update(start=lo, end=hi)
            self._fig_cmp.y_range.update(start=0.0, end=1.05 * top or 1.0)
            self._fig_cmp.yaxis.axis_label = f"coverage ({coverage_unit(sc)})"      # the unit of the pore shown
            self.shifts.object = self._shifts_html(s)
            self._show_energies()
            self._body.loading = False
            self.button.disabled = False

    def _show_map(self, *_):
        s = self._summary
        if s is None or self.map_choice.value not in s.images:
            return
        img = s.images[self.map_choice.value]
        x0, x1, y0, y1 = s.extent
        self._mapper.high = float(np.nanmax(img)) or 1.0
        self._image.data = {"image": [img], "x": [x0], "y": [y0], "dw": [x1 - x0], "dh": [y1 - y0]}

    def _show_energies(self, *_):
        s = self._summary
        if s is None:
            return
        e = s.energies
        by_coverage = self.energy_axis.value == "coverage"
        x = s.coverage_per_nm if by_coverage else e.mu_k
        ok = e.atoms_per_slice > 1e-9 * max(float(e.atoms_per_slice.max()), 1e-300)   # an empty pore has no mean
        data = {"x": x[ok], "wall": e.wall_k[ok], "kinetic": e.kinetic_k[ok], "fluid": e.fluid_k[ok],
                "total": e.total_k[ok]}
        self._energy.data = data
        values = np.concatenate([data[k] for k in ENERGY_COLOURS])
        if values.size:
            lo, hi = float(values.min()), float(values.max())
            pad = 0.05 * (hi - lo or 1.0)
            self._fig_energy.y_range.update(start=lo - pad, end=hi + pad)
            self._fig_energy.x_range.update(start=float(data["x"].min()), end=float(data["x"].max()))
        self._fig_energy.xaxis.axis_label = (f"coverage ({coverage_unit(self._shown)})" if by_coverage
                                             else "chemical potential μ (K)")

    @staticmethod
    def _summary_html(s: ComparisonSummary) -> str:
        st = s.states
        inner = _inner_html(st.get("inner_states"))
        capped = " (capped)" if st["states_capped"] else ""
        rows = "".join(
            f"<tr><td>{b.excitation_k:.3f}</td><td>{b.degeneracy}</td><td>{b.splitting_k:.2g}</td>"
            f"<td>{html.escape(b.where)}</td><td>{b.weight:.3g}</td></tr>" for b in s.bands[:12])
        ratio = st["henry_quantum"] / st["henry_classical"]
        return (
            "<div class='porefill-quantum-numbers'>"
            f"<p>Ground state <b>{st['ground_state_k']:.2f} K</b>; potential minimum {st['potential_minimum_k']:.2f} K; "
            f"zero-point energy <b>{st['zero_point_energy_k']:.2f} K</b>. "
            f"Henry constant: quantum {st['henry_quantum']:.3g}, classical {st['henry_classical']:.3g} per nm per Pa "
            f"(ratio {ratio:.3g}). Mean energies of one atom: kinetic {st['mean_kinetic_energy_k']:.2f} K, "
            f"potential {st['mean_potential_energy_k']:.2f} K.</p>"
            f"<p>{st['states_used']} states{capped} of the whole cross-section, wanted up to "
            f"{st['states_wanted']['top_k']:.2f} K (the first layer's, to {st['states_wanted']['weight_fraction']:g} "
            f"of the ground state's weight), on a {st['grid']['spacing_angstrom']:g} Å grid "
            f"({st['grid']['points']} points; free energy good to about {st['grid']['energy_error_estimate_k']:.2g} K); "
            f"the states above them, summed semiclassically, hold {st['boltzmann_tail_fraction']:.2g} of the "
            f"Boltzmann sum.</p>{inner}"
            "<table class='porefill-band-table'><caption style='text-align:left'><b>Lowest bands</b></caption>"
            "<tr><th>above ground (K)</th><th>states</th><th>splitting (K)</th><th>where</th><th>weight</th></tr>"
            f"{rows}</table>"
            "<table class='porefill-orbit-table'><caption style='text-align:left'><b>Where each site's free energy "
            "comes from</b> (quantum site model)</caption><tr><th>sites</th><th>count</th><th>source</th>"
            "<th>states homed</th><th>share of Σ e<sup>−E/kT</sup></th><th>free energy (K)</th>"
            "<th>classical (K)</th></tr>"
            + "".join(f"<tr><td>{html.escape(o['label'])}</td><td>{o['sites']}</td><td>{html.escape(o['source'])}</td>"
                      f"<td>{o['states']}</td><td>{o['boltzmann_share']:.3g}</td><td>{o['free_energy_k']:.2f}</td>"
                      f"<td>{o['classical_free_energy_k']:.2f}</td></tr>" for o in st.get("orbits", []))
            + "</table></div>")

    @staticmethod
    def _shifts_html(s: ComparisonSummary) -> str:
        rows = "".join(
            f"<tr><td>{html.escape(x.where)}</td><td>{x.mu_reference_k:.2f}</td><td>{x.mu_other_k:.2f}</td>"
            f"<td>{x.shift_mu_k:+.2f}</td><td>{x.pressure_reference_pa:.3g}</td><td>{x.pressure_other_pa:.3g}</td>"
            f"<td>{x.shift_decades:+.2f}</td></tr>" for x in s.shifts)
        only_c, only_q = s.unmatched
        note = ""
        if only_c or only_q:
            note = ("<p>Steps in one model only: " + "; ".join(
                [f"classical: {html.escape(', '.join(only_c))}"] * bool(only_c)
                + [f"quantum: {html.escape(', '.join(only_q))}"] * bool(only_q)) + "</p>")
        return ("<table class='porefill-shift-table'><caption style='text-align:left'><b>Shift of every step</b>, "
                "quantum against classical</caption><tr><th>step</th><th>μ classical (K)</th><th>μ quantum (K)</th>"
                "<th>Δμ (K)</th><th>p classical (Pa)</th><th>p quantum (Pa)</th><th>decades</th></tr>"
                f"{rows}</table>{note}")

    def __panel__(self):
        return pn.Column(pn.pane.HTML("<h3>Quantum states and the two site models</h3>"), self.caption, self.button,
                         self._body, sizing_mode="stretch_width", css_classes=["porefill-quantum"])


def _inner_html(inner: dict | None) -> str:
    """The line on the states of the region inside the first row (the inner rows' free energies)."""
    if not inner:
        return ""
    capped = " (capped: the rest summed semiclassically)" if inner["capped"] else ""
    return (f"<p>Rows inside the first: {inner['states_used']} states{capped} of the region the filled first row "
            f"leaves (ψ = 0 on its edge; {inner['points']} grid points), up to {inner['top_k']:.2f} K "
            f"({inner['margin_kt']:g} kT above the higher of its ground state, {inner['ground_state_k']:.2f} K, and "
            f"the potential at the pore's centre), each shared among the sites by its probability on their cells.</p>")
