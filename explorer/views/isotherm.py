"""Isotherm, compressibility and the occupancy map of the cross-section at a chosen pressure."""
from __future__ import annotations

import io
from functools import lru_cache

import numpy as np
import panel as pn
import param
from bokeh.events import Tap
from bokeh.models import (ColorBar, ColumnDataSource, LabelSet, LinearColorMapper, Range1d, Span)
from bokeh.palettes import Cividis256
from bokeh.plotting import figure

from physics.adsorption import Isotherm, compute_isotherm
from physics.scenario import Scenario

from ..isotherm_export import isotherm_csv
from ..state import ExplorerState
from .potential import outline

ISOTHERM_POINTS = 300
ADS_COLOUR, DES_COLOUR, EQ_COLOUR = "#1b6ca8", "#d1495b", "#333333"
MODEL_KEYS = ["shape", "size_angstrom", "wall_angstrom", "isolated", "adsorbate", "temperature_k"]


@lru_cache(maxsize=16)
def cached_isotherm(scenario: Scenario) -> Isotherm:
    return compute_isotherm(scenario.replace(title="", notes=""), n_points=ISOTHERM_POINTS)


class IsothermView(pn.viewable.Viewer):
    """Both branches against log pressure or μ, steps numbered, dN/dμ, and where the atoms sit."""

    state = param.ClassSelector(class_=ExplorerState)

    def __init__(self, **params):
        super().__init__(**params)
        self._curves = ColumnDataSource({k: [] for k in ("mu", "p", "ads", "des", "kads", "kdes")})
        self._steps = ColumnDataSource({k: [] for k in ("mu", "p", "n", "label")})
        self._sites = ColumnDataSource({k: [] for k in ("x", "y", "occ", "where")})
        self._outline = ColumnDataSource({"xs": [], "ys": []})
        self._pick_src = ColumnDataSource({"mu": [], "p": []})
        self.x_axis = pn.widgets.RadioButtonGroup(label="x axis", options=["pressure (log)", "chemical potential"],
                                                  value="pressure (log)")
        self.branch = pn.widgets.RadioButtonGroup(label="branch", options=["adsorption", "desorption", "equilibrium"],
                                                  value="equilibrium")
        self.pick = pn.widgets.FloatSlider(label="Occupancy map at log₁₀(p / Pa)", start=-10, end=0, step=0.01,
                                           value=-1, width=420)
        self._p0_span = [Span(dimension="height", line_dash="dashed", line_color="#888888") for _ in range(2)]
        self._pick_span = [Span(dimension="height", line_color="#f4a259", line_width=2) for _ in range(2)]
        self._fig_p = self._isotherm_figure("log")
        self._fig_mu = self._isotherm_figure("linear")
        self._fig_k = self._compressibility_figure()
        self._fig_occ = self._occupancy_figure()
        self._message = pn.pane.Alert("", alert_type="warning", visible=False)
        self._table = pn.pane.HTML("", css_classes=["porefill-steps"], sizing_mode="stretch_width")
        self._occ_text = pn.pane.Markdown("", css_classes=["porefill-occupancy"], sizing_mode="stretch_width")
        self.download = pn.widgets.FileDownload(callback=self.csv_file, filename="isotherm.csv",
                                                label="Download the isotherm (CSV)",
                                                width=260)
        self._iso: Isotherm | None = None
        self._redraw()
        self.state.param.watch(self._schedule_redraw, MODEL_KEYS)
        self.pick.param.watch(self._update_occupancy, "value_throttled")
        self.branch.param.watch(self._update_occupancy, "value")
        self.x_axis.param.watch(self._swap_axis, "value")
        for fig in (self._fig_p, self._fig_mu):
            fig.on_event(Tap, self._on_tap)

    # figures --------------------------------------------------------------------------------------
    def _isotherm_figure(self, axis: str):
        log = axis == "log"
        x = "p" if log else "mu"
        # the μ figure starts hidden, so it gets explicit ranges (Bokeh cannot size a hidden plot's own)
        extra = {} if log else {"x_range": Range1d(0, 1), "y_range": Range1d(0, 1)}
        fig = figure(title="Isotherm (mean-field lattice gas)", x_axis_type="log" if log else "linear",
                     x_axis_label="pressure p (Pa)" if log else "chemical potential μ (K)",
                     y_axis_label="coverage (atoms per nm of pore; slit: per nm²)", frame_width=430, frame_height=280,
                     tools="pan,wheel_zoom,box_zoom,reset,save,tap", visible=log, **extra)
        fig.line(x, "ads", source=self._curves, color=ADS_COLOUR, line_width=2, legend_label="adsorption")
        fig.line(x, "des", source=self._curves, color=DES_COLOUR, line_width=2, line_dash="dashed",
                 legend_label="desorption")
        fig.scatter(x, "n", source=self._steps, size=9, color="#f4a259", line_color="black")
        fig.add_layout(LabelSet(x=x, y="n", text="label", source=self._steps, x_offset=6, y_offset=-14,
                                text_font_size="11px"))
        k = 0 if log else 1
        fig.add_layout(self._p0_span[k])
        fig.add_layout(self._pick_span[k])
        fig.legend.location = "top_left"
        return fig

    def _compressibility_figure(self):
        fig = figure(title="Compressibility dN/dμ", x_axis_label="chemical potential μ (K)",
                     y_axis_label="dN/dμ (atoms per nm per K)", frame_width=430, frame_height=200,
                     tools="pan,wheel_zoom,box_zoom,reset,save", y_axis_type="linear")
        fig.line("mu", "kads", source=self._curves, color=ADS_COLOUR, line_width=1.5, legend_label="adsorption")
        fig.line("mu", "kdes", source=self._curves, color=DES_COLOUR, line_width=1.5, line_dash="dashed",
                 legend_label="desorption")
        fig.legend.location = "top_left"
        return fig

    def _occupancy_figure(self):
        self._occ_mapper = LinearColorMapper(palette=Cividis256, low=0.0, high=1.0)
        fig = figure(title="Site occupancy", x_axis_label="x (Å)", y_axis_label="y (Å)", frame_width=330,
                     frame_height=330, match_aspect=True, x_range=Range1d(-1, 1), y_range=Range1d(-1, 1),
                     tools="pan,wheel_zoom,reset,save,hover",
                     tooltips=[("site", "@where"), ("occupancy", "@occ{0.000}"), ("x, y (Å)", "@x{0.0}, @y{0.0}")])
        self._site_glyph = fig.scatter("x", "y", source=self._sites, size=10, line_color="#444444",
                                       fill_color={"field": "occ", "transform": self._occ_mapper})
        fig.multi_line(xs="xs", ys="ys", source=self._outline, line_color="black", line_width=2)
        fig.add_layout(ColorBar(color_mapper=self._occ_mapper, title="occupancy", width=12), "right")
        return fig

    # updates --------------------------------------------------------------------------------------
    def _schedule_redraw(self, *_):
        """In a served page, recompute on the next tick: the cheaper views' updates reach the browser
        first instead of waiting for the isotherm."""
        doc = pn.state.curdoc
        if doc is not None and doc.session_context is not None:
            doc.add_next_tick_callback(self._redraw)
        else:
            self._redraw()

    def _redraw(self, *_):
        sc = self.state.scenario()
        try:
            iso = cached_isotherm(sc)
        except ValueError as exc:          # includes VapourPressureRangeError
            self._iso = None
            self._message.object = f"No isotherm: {exc}"
            self._message.visible = True
            return
        self._iso = iso
        self._message.visible = False
        ads, des = iso.per_nm(iso.adsorption), iso.per_nm(iso.desorption)
        p = iso.pressure_pa
        lo, hi = float(np.log10(p[0])), float(np.log10(p[-1]))
        with pn.io.hold():
            self._curves.data = {"mu": iso.mu, "p": p, "ads": ads, "des": des,
                                 "kads": iso.compressibility_per_nm(iso.adsorption),
                                 "kdes": iso.compressibility_per_nm(iso.desorption)}
            steps = iso.steps
            self._steps.data = {"mu": [s.mu_k for s in steps], "p": [s.pressure_pa for s in steps],
                                "n": [float(np.interp(s.mu_k, iso.mu, 0.5 * (ads + des))) for s in steps],
                                "label": [str(i) for i in range(1, len(steps) + 1)]}
            top = float(max(ads.max(), des.max())) * 1.05 or 1.0
            self._fig_mu.x_range.update(start=float(iso.mu[0]), end=float(iso.mu[-1]))
            self._fig_mu.y_range.update(start=-0.02 * top, end=top)
            self._p0_span[0].location = iso.setup.saturation_pressure_pa
            self._p0_span[1].location = iso.setup.mu_coexistence_k
            self._table.object = self._steps_table(iso)
            lines = outline(sc)
            self._outline.data = {"xs": [q[:, 0] for q in lines], "ys": [q[:, 1] for q in lines]}
            x0, x1, y0, y1 = sc.pore().bounding_box()
            pad = 0.05 * (x1 - x0)
            self._fig_occ.x_range.update(start=x0 - pad, end=x1 + pad)
            self._fig_occ.y_range.update(start=y0 - pad, end=y1 + pad)
            self._site_glyph.glyph.size = max(3.0, 330 * iso.setup.spacing_angstrom / (x1 - x0 + 2 * pad) * 0.9)
            old = self.pick.value
            self.pick.param.update(start=round(lo, 2), end=round(hi, 2))
            value = old if lo <= old <= hi else round(lo + 0.8 * (hi - lo), 2)
            self.pick.param.update(value=value, value_throttled=value)
            self._update_occupancy()

    def _steps_table(self, iso: Isotherm) -> str:
        rows = []
        for i, s in enumerate(iso.steps, 1):
            where = ", ".join(f"{n} ({c:g})" for n, c in s.filling) or "spread"
            loop = ""
            if s.kind == "first-order":
                up = "—" if s.adsorption_jump_pressure_pa is None else f"{s.adsorption_jump_pressure_pa:.3g}"
                down = "—" if s.desorption_jump_pressure_pa is None else f"{s.desorption_jump_pressure_pa:.3g}"
                loop = f"{down} – {up}"
            rows.append(f"<tr><td>{i}</td><td>{where}</td><td>{s.kind}</td><td>{s.pressure_pa:.3g}</td>"
                        f"<td>{s.relative_pressure:.3g}</td><td>{s.added_per_nm:.2f}</td><td>{loop}</td></tr>")
        setup = iso.setup
        head = ("<tr><th>#</th><th>sites that fill</th><th>kind</th><th>p (Pa)</th><th>p/p₀</th>"
                "<th>adds (atoms/nm)</th><th>hysteresis (Pa)</th></tr>")
        body = "".join(rows) or "<tr><td colspan=7>no steps in this range</td></tr>"
        note = (f"<p style='font-size:90%'>p₀ = {setup.saturation_pressure_pa:.4g} Pa; {setup.bond_note}; "
                f"lattice spacing {setup.spacing_angstrom:.3f} Å, {setup.problem.weights.sum():g} sites per slice. "
                f"First-order steps are placed where the branches' grand potentials cross.</p>")
        return f"<table class='porefill-step-table'>{head}{body}</table>{note}"

    def csv_file(self) -> io.BytesIO:
        """Both branches of the current isotherm as CSV (what `porefill isotherm --csv` writes)."""
        if self._iso is None:
            return io.BytesIO(b"no isotherm for these settings\n")
        return io.BytesIO(isotherm_csv(self._iso).encode("utf-8"))

    def _pick_index(self) -> int:
        iso = self._iso
        target = 10.0 ** self.pick.value_throttled
        return int(np.argmin(np.abs(np.log(iso.pressure_pa) - np.log(target))))

    def _update_occupancy(self, *_):
        iso = self._iso
        if iso is None:
            return
        k = self._pick_index()
        occ = iso.site_occupancy(k, self.branch.value)
        lat = iso.setup.lattice
        centre = iso.central_channel_occupancy(self.branch.value)[k]
        branch = {"adsorption": iso.adsorption, "desorption": iso.desorption}.get(self.branch.value)
        total = float(iso.per_nm(branch)[k]) if branch is not None else float(
            iso.equilibrium_occupancy()[k] @ iso.setup.problem.weights * iso.per_nm_per_site())
        x, y, where = lat.x, lat.y, [lat.label(i) for i in range(lat.size)]
        if lat.shape == "slit":       # one site stands for its row: draw the row across the plot
            half = 0.5 * iso.setup.scenario.size_angstrom
            ell = lat.spacing_angstrom
            rows = np.rint(lat.y / (ell * np.sqrt(3.0) / 2.0)).astype(int)
            ks = np.arange(-int(half / ell) - 1, int(half / ell) + 2)
            x = np.concatenate([ell * (ks + 0.5 * (r % 2)) for r in rows])
            keep = np.abs(x) <= half
            reps = len(ks)
            x = x[keep]
            y = np.repeat(lat.y, reps)[keep]
            occ = np.repeat(occ, reps)[keep]
            where = list(np.repeat(np.array(where, dtype=object), reps)[keep])
        with pn.io.hold():
            self._sites.data = {"x": x, "y": y, "occ": occ, "where": where}
            self._pick_span[0].location = float(iso.pressure_pa[k])
            self._pick_span[1].location = float(iso.mu[k])
            self._occ_text.object = (
                f"**Occupancy map** ({self.branch.value}) at p = {iso.pressure_pa[k]:.3g} Pa "
                f"(p/p₀ = {iso.relative_pressure[k]:.3g}, μ = {iso.mu[k]:.2f} K): "
                f"{total:.2f} atoms per nm; central channel occupancy {centre:.3f}, "
                f"i.e. {centre * 10.0 / iso.setup.spacing_angstrom:.2f} atoms per nm along it")

    def _on_tap(self, event):
        iso = self._iso
        if iso is None or event.x is None:
            return
        p = event.x if self.x_axis.value.startswith("pressure") else float(iso.setup.pressure_pa(event.x))
        if p > 0:
            value = float(np.clip(np.log10(p), self.pick.start, self.pick.end))
            self.pick.param.update(value=value, value_throttled=value)

    def _swap_axis(self, event):
        log = event.new.startswith("pressure")
        self._fig_p.visible, self._fig_mu.visible = log, not log

    def __panel__(self):
        controls = pn.Row(self.x_axis, self.branch)
        left = pn.Column(self._message, controls, pn.pane.Bokeh(self._fig_p), pn.pane.Bokeh(self._fig_mu),
                         pn.pane.Bokeh(self._fig_k), css_classes=["porefill-isotherm"])
        right = pn.Column(self.pick, pn.pane.Bokeh(self._fig_occ), self._occ_text,
                          css_classes=["porefill-occupancy-map"])
        return pn.Column(pn.Row(left, right), self._table, self.download, sizing_mode="stretch_width")
