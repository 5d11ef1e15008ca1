"""Isotherm, compressibility and the occupancy map of the cross-section at a chosen pressure.

The isotherm is computed in a worker process (`porefill.explorer.jobs.compute`); until it arrives every part of this
view that belongs to the previous inputs is marked as loading, and each part says which inputs it shows.
"""
from __future__ import annotations

import html
import io

import numpy as np
import panel as pn
import param
from bokeh.events import Tap
from bokeh.models import (ColorBar, ColumnDataSource, LabelSet, LinearColorMapper, Range1d, Span)
from bokeh.palettes import Cividis256
from bokeh.plotting import figure

from porefill.physics.caching import BoundedCache
from porefill.physics.choices import AXIS_LABELS, ISOTHERM_AXES
from porefill.physics.lattice_gas.adsorption import Isotherm
from porefill.physics.lattice_gas.branches import branch_notes
from porefill.physics.sites.lattice import slit_row_sites
from porefill.physics.scenario import Scenario

from porefill.explorer.jobs.compute import SLIDER_SETTLE_S, LatestRunner, isotherm_job, short_error
from porefill.explorer.outputs.isotherm_export import amount_labels, calibration_note, isotherm_csv
from porefill.explorer.views.state import ExplorerState, describe
from porefill.explorer.views.potential import FRAME, GROW_MIN, MAP_MIN, fit_map, growing_box, map_figure, outline
from porefill.explorer.views.ticks import readable_log_axes

ADS_COLOUR, DES_COLOUR, EQ_COLOUR = "#1b6ca8", "#d1495b", "#333333"
MODEL_KEYS = ["shape", "size_angstrom", "wall_angstrom", "isolated", "adsorbate", "temperature_k", "pore_ends",
              "site_model", "plating", "plating_layers"]
# a change of these moves the pressure range so much that the picked pressure starts afresh
RANGE_KEYS = ("shape", "adsorbate", "temperature_k")
PICK_FRACTION = 0.8      # where in the log-pressure range the occupancy map starts: the upper layers
TABLE_MIN = 380          # px: the steps table beside the occupancy map at its narrowest, else below it

_recent = BoundedCache(16)       # isotherms this server has shown lately (porefill.physics.caching)


def coverage_unit(sc: Scenario) -> str:
    """What the isotherm's amounts count, for axis labels: atoms or molecules, per nm of pore (per nm² of wall
    for a slit)."""
    from porefill.physics.substances.materials import get_adsorbate

    what = "molecules" if get_adsorbate(sc.adsorbate).molecular else "atoms"
    return f"{what} per nm² of wall" if sc.shape == "slit" else f"{what} per nm of pore"


def _key(scenario: Scenario) -> Scenario:
    return scenario.replace(title="", notes="")


def _remember(scenario: Scenario, iso: Isotherm) -> None:
    _recent.put(_key(scenario), iso)


def cached_isotherm(scenario: Scenario) -> Isotherm:
    """The isotherm for ``scenario``, from this server's recent ones or computed here (no worker)."""
    iso = _recent.get(_key(scenario))
    if iso is None:
        iso = isotherm_job(_key(scenario))
        _remember(scenario, iso)
    return iso


class IsothermView(pn.viewable.Viewer):
    """Both branches against log pressure or μ, steps numbered, dN/dμ, and where the atoms sit."""

    state = param.ClassSelector(class_=ExplorerState)

    def __init__(self, **params):
        super().__init__(**params)
        self._curves = ColumnDataSource({k: [] for k in ("mu", "p", "rel", "ads", "des", "lim", "kads", "kdes")})
        self._steps = ColumnDataSource({k: [] for k in ("mu", "p", "rel", "n", "label")})
        self._sites = ColumnDataSource({k: [] for k in ("x", "y", "occ", "where")})
        self._outline = ColumnDataSource({"xs": [], "ys": []})
        self.x_axis = pn.widgets.RadioButtonGroup(options={AXIS_LABELS[k]: k for k in ISOTHERM_AXES},
                                                  value="pressure")
        self.branch = pn.widgets.RadioButtonGroup(options=["adsorption", "desorption", "equilibrium"],
                                                  value="equilibrium")
        self.pore_ends = pn.widgets.RadioButtonGroup.from_param(self.state.param.pore_ends, name="Pore ends")
        self.pick = pn.widgets.FloatSlider(label="Occupancy map at log₁₀(p / Pa)", start=-10, end=0, step=0.01,
                                           value=-1, width=FRAME + 50)
        self._p0_span = [Span(dimension="height", line_dash="dashed", line_color="#888888") for _ in range(3)]
        self._pick_span = [Span(dimension="height", line_color="#f4a259", line_width=2) for _ in range(3)]
        self._fig_p = self._isotherm_figure("log")
        self._fig_mu = self._isotherm_figure("linear")
        self._fig_rel = self._isotherm_figure("relative")
        self._fig_k = self._compressibility_figure()
        self._fig_occ = self._occupancy_figure()
        self._message = pn.pane.HTML("", css_classes=["porefill-isotherm-message"], visible=False,
                                     sizing_mode="stretch_width",
                                     styles={"color": "#8a4b00", "font-weight": "bold"})
        self._iso_caption = pn.pane.HTML("", css_classes=["porefill-caption", "porefill-isotherm-caption"],
                                         width=FRAME + 60, styles={"font-size": "13px"})
        self._table = pn.pane.HTML("", css_classes=["porefill-steps"], sizing_mode="stretch_width")
        self._occ_text = pn.pane.HTML("", css_classes=["porefill-occupancy"], sizing_mode="stretch_width",
                                      styles={"font-size": "13px"})
        self.download = pn.widgets.FileDownload(callback=self.csv_file, filename="isotherm.csv",
                                                label="Download the isotherm (CSV)", width=260)
        self._iso_box = growing_box(self._iso_caption, self.x_axis, pn.Row(pn.pane.HTML("Pore ends:"), self.pore_ends),
                                    self.branch, *(pn.pane.Bokeh(f, sizing_mode="stretch_width")
                                                   for f in (self._fig_p, self._fig_rel, self._fig_mu)),
                                    css_class="porefill-isotherm")
        self._occ_box = growing_box(self.pick, pn.pane.Bokeh(self._fig_occ, sizing_mode="stretch_width"),
                                    self._occ_text, css_class="porefill-occupancy-map", min_px=MAP_MIN)
        self._k_box = growing_box(pn.pane.Bokeh(self._fig_k, sizing_mode="stretch_width"),
                                  css_class="porefill-compressibility")
        self._table_box = pn.Column(self._table, self.download, sizing_mode="stretch_width",
                                    css_classes=["porefill-steps-box"],
                                    styles={"flex": f"1 1 {TABLE_MIN}px", "min-width": f"{TABLE_MIN}px"})
        self._iso: Isotherm | None = None
        self._shown: Scenario | None = None       # inputs of the isotherm on show (None: nothing shown)
        self._wanted: Scenario | None = None      # inputs of the newest request
        self._asked = 0                           # inputs asked for, one per change (cached or computed)
        self._pick_log10 = -1.0
        # requests in a burst (two drags released in quick succession): the first and the last are computed;
        # a burst of slider keys reaches the server as its last position only (slider_keys.py)
        self._runner = LatestRunner("isotherm", name="isotherm", settle_s=SLIDER_SETTLE_S)
        self.listeners: list = []      # called with (scenario, isotherm or None) whenever what is shown changes
        self._redraw()
        self.state.param.watch(self._redraw, MODEL_KEYS)
        self.pick.param.watch(self._on_pick, "value_throttled")
        self.branch.param.watch(self._update_occupancy, "value")
        self.x_axis.param.watch(self._swap_axis, "value")
        for fig in (self._fig_p, self._fig_mu, self._fig_rel):
            fig.on_event(Tap, self._on_tap)

    @property
    def _stale_boxes(self):
        return (self._iso_box, self._occ_box, self._k_box, self._table_box)

    # figures --------------------------------------------------------------------------------------
    def _isotherm_figure(self, axis: str):
        """axis: 'log' (pressure, log scale), 'relative' (p/p0, linear) or 'linear' (μ)."""
        log = axis == "log"
        x = {"log": "p", "relative": "rel", "linear": "mu"}[axis]
        # the μ and p/p0 figures start hidden, so they get explicit ranges (Bokeh cannot size a hidden plot's own)
        extra = {} if log else {"x_range": Range1d(0, 1), "y_range": Range1d(0, 1)}
        label = {"log": "pressure p (Pa)", "relative": "relative pressure p/p₀",
                 "linear": "chemical potential μ (K)"}[axis]
        fig = figure(title="Isotherm (mean-field lattice gas)", x_axis_type="log" if log else "linear",
                     x_axis_label=label,
                     y_axis_label="coverage (atoms/nm; slit: per nm²)", sizing_mode="stretch_width",
                     min_width=GROW_MIN - 10, frame_height=230,
                     tools="pan,wheel_zoom,box_zoom,reset,save,tap", toolbar_location="above", visible=log,
                     **extra)
        fig.line(x, "ads", source=self._curves, color=ADS_COLOUR, line_width=2, legend_label="adsorption")
        fig.line(x, "des", source=self._curves, color=DES_COLOUR, line_width=2, line_dash="dashed",
                 legend_label="desorption (as measured)")
        fig.line(x, "lim", source=self._curves, color="#9a9a9a", line_width=1.5, line_dash="dotted",
                 legend_label="mean-field desorption limit")
        fig.scatter(x, "n", source=self._steps, size=9, color="#f4a259", line_color="black")
        fig.add_layout(LabelSet(x=x, y="n", text="label", source=self._steps, x_offset=6, y_offset=-14,
                                text_font_size="11px"))
        k = {"log": 0, "linear": 1, "relative": 2}[axis]
        fig.add_layout(self._p0_span[k])
        fig.add_layout(self._pick_span[k])
        readable_log_axes(fig)            # helium's thirty decades: every k-th decade labelled
        fig.legend.location = "bottom_right" if axis == "relative" else "top_left"
        fig.legend.label_text_font_size = "12px"
        fig.legend.background_fill_alpha = 0.8
        return fig

    def _compressibility_figure(self):
        fig = figure(title="Compressibility dN/dμ", x_axis_label="chemical potential μ (K)",
                     y_axis_label="dN/dμ (atoms/nm per K)", sizing_mode="stretch_width", min_width=GROW_MIN - 10,
                     frame_height=200,
                     tools="pan,wheel_zoom,box_zoom,reset,save", toolbar_location="above", y_axis_type="linear")
        fig.line("mu", "kads", source=self._curves, color=ADS_COLOUR, line_width=1.5, legend_label="adsorption")
        fig.line("mu", "kdes", source=self._curves, color=DES_COLOUR, line_width=1.5, line_dash="dashed",
                 legend_label="desorption")
        fig.legend.location = "top_left"
        fig.legend.label_text_font_size = "12px"
        fig.legend.background_fill_alpha = 0.8
        return fig

    def _occupancy_figure(self):
        self._occ_mapper = LinearColorMapper(palette=Cividis256, low=0.0, high=1.0)
        # grows with its box at one scale on both axes (explorer/views/potential.py: map_figure); the ranges
        # follow the outline with a margin, and the sites are drawn in Å, so they grow with the map
        fig = map_figure(title="Site occupancy", x_axis_label="x (Å)", y_axis_label="y (Å)",
                         tools="pan,wheel_zoom,reset,save,hover", toolbar_location="above",
                         tooltips=[("site", "@where"), ("occupancy", "@occ{0.000}"), ("x, y (Å)", "@x{0.0}, @y{0.0}")])
        fig.x_range.range_padding = fig.y_range.range_padding = 0.05
        self._site_glyph = fig.circle("x", "y", source=self._sites, radius=1.0, line_color="#444444",
                                      fill_color={"field": "occ", "transform": self._occ_mapper})
        fig.multi_line(xs="xs", ys="ys", source=self._outline, line_color="black", line_width=2)
        fig.add_layout(ColorBar(color_mapper=self._occ_mapper, title="occupancy", height=10,
                                orientation="horizontal", title_standoff=4), "below")
        return fig

    # updates --------------------------------------------------------------------------------------
    def _redraw(self, *_):
        """Ask for the isotherm of the current inputs; until it is here, mark what is stale."""
        try:
            sc = self.state.scenario()
        except ValueError as exc:
            self._fail(exc)
            return
        if self._wanted is not None and _key(sc) == _key(self._wanted):
            return                                   # already asked for (e.g. adsorbate, then its temperature)
        self._wanted = sc
        self._asked += 1
        if self._shown is not None and _key(sc) == _key(self._shown):
            self._runner.generation += 1             # whatever is on its way is for other inputs
            self._set_loading(False)
            return
        iso = _recent.get(_key(sc))
        if iso is not None:
            self._runner.generation += 1
            self._apply(sc, iso)
            return
        self._set_loading(True)
        self._runner.submit(isotherm_job, (_key(sc),), lambda result: self._arrived(sc, result),
                            self._fail)

    def _set_loading(self, on: bool) -> None:
        with pn.io.hold():                  # all parts go stale (or fresh) in one message
            for box in self._stale_boxes:
                box.loading = on

    def _arrived(self, sc: Scenario, iso: Isotherm) -> None:
        _remember(sc, iso)
        self._apply(sc, iso)

    def _fail(self, exc: BaseException) -> None:
        """No isotherm for the current inputs: say why in this view and show nothing of the old one."""
        self._iso, self._shown = None, None
        what = describe(self._wanted) if self._wanted is not None else "these settings"
        with pn.io.hold():
            self._message.object = f"<p>No isotherm for {html.escape(what)}: {html.escape(short_error(exc))}</p>"
            self._message.visible = True
            for src in (self._curves, self._steps, self._sites):
                src.data = {k: [] for k in src.data}
            self._iso_caption.object = ""
            self._occ_text.object = ""
            self._table.object = ""
            self._set_loading(False)
        self._tell(self._wanted, None)

    def _apply(self, sc: Scenario, iso: Isotherm) -> None:
        previous, self._iso, self._shown = self._shown, iso, sc
        ads, des = iso.per_nm(iso.measured_branch("adsorption")), iso.per_nm(iso.measured_branch("desorption"))
        limit = iso.per_nm(iso.desorption)
        if iso.measured_branch("desorption") == "desorption":
            limit = np.full(limit.shape, np.nan)        # the drawn desorption is the limit itself
        p = iso.pressure_pa
        lo, hi = round(float(np.log10(p[0])), 2), round(float(np.log10(p[-1])), 2)
        label = html.escape(describe(sc))
        coverage = coverage_unit(sc)
        with pn.io.hold():
            for fig in (self._fig_p, self._fig_mu, self._fig_rel):
                fig.yaxis.axis_label = f"coverage ({coverage})"
            self._fig_k.yaxis.axis_label = f"dN/dμ ({coverage} per K)"
            self._message.visible = False
            rel = iso.relative_pressure
            self._curves.data = {"mu": iso.mu, "p": p, "rel": rel, "ads": ads, "des": des, "lim": limit,
                                 "kads": iso.compressibility_per_nm(iso.adsorption),
                                 "kdes": iso.compressibility_per_nm(iso.desorption)}
            steps = iso.steps
            self._steps.data = {"mu": [s.mu_k for s in steps], "p": [s.pressure_pa for s in steps],
                                "rel": [s.relative_pressure for s in steps],
                                "n": [float(np.interp(s.mu_k, iso.mu, 0.5 * (ads + des))) for s in steps],
                                "label": [str(i) for i in range(1, len(steps) + 1)]}
            top = float(max(ads.max(), des.max())) * 1.05 or 1.0
            self._fig_mu.x_range.update(start=float(iso.mu[0]), end=float(iso.mu[-1]))
            self._fig_mu.y_range.update(start=-0.02 * top, end=top)
            self._fig_rel.x_range.update(start=0.0, end=min(1.02, max(1.0, float(rel[-1])) * 1.02))
            self._fig_rel.y_range.update(start=-0.02 * top, end=top)
            self._p0_span[0].location = iso.setup.saturation_pressure_pa
            self._p0_span[1].location = iso.setup.mu_coexistence_k
            self._p0_span[2].location = 1.0
            notes = "".join(f"<li>{html.escape(n)}</li>" for n in branch_notes(iso))
            # data-computed: isotherms this page has started computing; data-asked: the inputs it was asked to
            # show, from this server's recent isotherms or computed (the browser tests read both)
            self._iso_caption.object = (f"<p data-computed='{self._runner.started}' data-asked='{self._asked}'>"
                                        f"For {label}. Dashed line: p₀.</p>"
                                        f"<ul class='porefill-branch-notes'>{notes}</ul>")
            self._table.object = self._steps_table(iso, label)
            lines = outline(sc)
            self._outline.data = {"xs": [q[:, 0] for q in lines], "ys": [q[:, 1] for q in lines]}
            x0, x1, y0, y1 = sc.pore().bounding_box()
            fit_map(self._fig_occ, x1 - x0, y1 - y0)          # the ranges follow the outline (DataRange1d)
            self._site_glyph.glyph.radius = 0.45 * iso.setup.spacing_angstrom
            moved = previous is None or any(getattr(previous, k) != getattr(sc, k) for k in RANGE_KEYS)
            value = self._pick_log10
            if moved or not lo <= value <= hi:
                value = round(lo + PICK_FRACTION * (hi - lo), 2)
            self._set_pick(value, start=lo, end=hi)
            self._update_occupancy()
            self._set_loading(False)
        self._tell(sc, iso)

    def _tell(self, sc, iso) -> None:
        for listener in self.listeners:
            try:
                listener(sc, iso)
            except Exception:          # noqa: BLE001 - another view's bug must not break this one
                import logging
                logging.getLogger("porefill.explorer").exception("isotherm listener failed")

    def _set_pick(self, value: float, **bounds) -> None:
        """Move the occupancy slider (and what it stands for) without waiting for the browser."""
        self._pick_log10 = value
        with param.edit_constant(self.pick):     # value_throttled is the browser's, read-only here
            self.pick.param.update(**bounds, value=value, value_throttled=value)

    def _on_pick(self, event) -> None:
        self._pick_log10 = float(event.new)
        self._update_occupancy()

    def _steps_table(self, iso: Isotherm, label: str) -> str:
        rows = []
        for i, s in enumerate(iso.steps, 1):
            where = html.escape(s.where)
            loop = ""
            if s.kind == "first-order":
                up = "—" if s.adsorption_jump_pressure_pa is None else f"{s.adsorption_jump_pressure_pa:.3g}"
                down = "—" if s.desorption_jump_pressure_pa is None else f"{s.desorption_jump_pressure_pa:.3g}"
                loop = f"{down} – {up}"
            rows.append(f"<tr><td>{i}</td><td>{where}</td><td>{html.escape(s.kind)}</td><td>{s.pressure_pa:.3g}</td>"
                        f"<td>{s.relative_pressure:.3g}</td><td>{s.added_per_nm:.2f}</td><td>{loop}</td></tr>")
        setup = iso.setup
        head = ("<tr><th>#</th><th>sites that fill</th><th>kind</th><th>p (Pa)</th><th>p/p₀</th>"
                f"<th>adds ({html.escape(amount_labels(iso)['short'])})</th><th>hysteresis (Pa)</th></tr>")
        body = "".join(rows) or "<tr><td colspan=7>no steps in this range</td></tr>"
        note = (f"<p style='font-size:90%'>p₀ = {setup.saturation_pressure_pa:.4g} Pa; "
                f"{html.escape(setup.bond_note)}; lattice spacing {setup.spacing_angstrom:.3f} Å, "
                f"{setup.problem.weights.sum():g} sites per slice. "
                f"First-order steps are placed where the branches' grand potentials cross.</p>"
                f"{calibration_note(iso)}")
        return (f"<table class='porefill-step-table'><caption style='text-align:left'><b>Layer steps</b> for "
                f"{label}</caption>{head}{body}</table>{note}")

    def csv_file(self) -> io.BytesIO:
        """Both branches of the isotherm on show as CSV (what `porefill isotherm --csv` writes)."""
        if self._iso is None:
            return io.BytesIO(b"no isotherm for these settings\n")
        return io.BytesIO(isotherm_csv(self._iso).encode("utf-8"))

    def _pick_index(self) -> int:
        iso = self._iso
        target = 10.0 ** self._pick_log10
        return iso.nearest_index(target)

    def _update_occupancy(self, *_):
        iso, sc = self._iso, self._shown
        if iso is None:
            return
        k = self._pick_index()
        occ = iso.site_occupancy(k, self.branch.value)
        lat = iso.setup.lattice
        centre = iso.central_channel_occupancy(self.branch.value)[k]
        total = float(iso.per_nm(self.branch.value)[k])
        words = amount_labels(iso)
        x, y, where = lat.x, lat.y, [lat.label(i) for i in range(lat.size)]
        if lat.shape == "slit":       # one site stands for its row: draw the row across the plot
            x, y, site = slit_row_sites(lat, iso.setup.scenario.size_angstrom)
            occ, where = occ[site], [where[i] for i in site]
        with pn.io.hold():
            self._sites.data = {"x": x, "y": y, "occ": occ, "where": where}
            self._pick_span[0].location = float(iso.pressure_pa[k])
            self._pick_span[1].location = float(iso.mu[k])
            self._pick_span[2].location = float(iso.relative_pressure[k])
            self._occ_text.object = (
                f"<p><b>Occupancy map</b> ({html.escape(self.branch.value)}) for {html.escape(describe(sc))}, "
                f"at p = {iso.pressure_pa[k]:.3g} Pa "
                f"(p/p₀ = {iso.relative_pressure[k]:.3g}, μ = {iso.mu[k]:.2f} K): "
                f"{total:.2f} {html.escape(words['coverage'].replace(' of pore length', ''))}; central channel "
                f"occupancy {centre:.3f}, i.e. {centre * 10.0 / iso.setup.spacing_angstrom:.2f} "
                f"{words['particles']} per nm along it"
                + (f". Sites: {html.escape(iso.row_note)}" if len(iso.lattices) > 1 else "") + "</p>")

    def _on_tap(self, event):
        iso = self._iso
        if iso is None or event.x is None:
            return
        if self.x_axis.value == "pressure":
            p = event.x
        elif self.x_axis.value == "relative-pressure":
            p = event.x * iso.setup.saturation_pressure_pa
        else:
            p = float(iso.setup.pressure_pa(event.x))
        if p > 0:
            value = round(float(np.clip(np.log10(p), self.pick.start, self.pick.end)), 2)
            self._set_pick(value)
            self._update_occupancy()

    def _swap_axis(self, event):
        shown = {"pressure": self._fig_p, "relative-pressure": self._fig_rel, "chemical-potential": self._fig_mu}
        for key, fig in shown.items():
            fig.visible = event.new == key

    def __panel__(self):
        # the isotherm and dN/dμ share a row; the occupancy map has one of its own, beside the steps table
        # (a map in the first row took its width from the two plots: 556 px each at 1920 px, not 680)
        plots = pn.FlexBox(self._iso_box, self._k_box, flex_wrap="wrap", gap="8px 16px",
                           sizing_mode="stretch_width")
        where = pn.FlexBox(self._occ_box, self._table_box, flex_wrap="wrap", gap="8px 16px",
                           sizing_mode="stretch_width")
        return pn.Column(self._message, plots, where, sizing_mode="stretch_width")
