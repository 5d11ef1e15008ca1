"""Potential map, line cuts and the minimum readout.

These two plots redraw on every slider release, so they are plain Bokeh figures whose data sources are
updated in place (one websocket patch per change) rather than rebuilt. The map, cuts and readout are
computed in a worker thread (`porefill.explorer.jobs.compute`), never on the server's event loop.
"""
from __future__ import annotations

import html

import contourpy
import numpy as np
import panel as pn
import param
from bokeh.models import ColorBar, ColumnDataSource, HoverTool, LinearColorMapper, Range1d
from bokeh.palettes import Category10_10, Viridis256
from bokeh.plotting import figure

from porefill.physics.caching import memoize
from porefill.physics.scenario import Scenario
from porefill.physics.pore.line_cuts import line_cuts
from porefill.physics.pore.wall_potential import Minimum, PotentialMap, deepest_minimum, potential_map, wall_potential

from porefill.explorer.jobs.compute import SLIDER_SETTLE_S, LatestRunner, short_error
from porefill.explorer.outputs.formatting import format_minimum
from porefill.explorer.views.state import ExplorerState, describe

MAP_POINTS = 200
_STALE_AFTER_MS = 250
CUT_POINTS = 300
FRAME = 290            # px: frame width of every plot, so that two plots fit side by side at 1024 px
# a plot that grows with the window (explorer/views/layout words): from this width of its box to the max
GROW_MIN, GROW_MAX = FRAME + 70, 680


def growing_box(*objects, css_class: str, min_px: int = GROW_MIN, **params) -> pn.Column:
    """A column that takes its share of a wrapping row: at least ``min_px`` px (two fit beside the controls
    at 1024 px), at most ``GROW_MAX`` (a plot wider than that is harder to read, not easier)."""
    return pn.Column(*objects, css_classes=[css_class], sizing_mode="stretch_width",
                     styles={"flex": f"1 1 {min_px}px", "min-width": f"{min_px}px",
                             "max-width": f"{GROW_MAX}px"}, **params)


# a map's canvas around its frame: the y axis at the left, title and toolbar above, the x axis and the
# colour bar below (px, Bokeh's defaults for these fonts; measured, not published)
_MAP_SIDES_PX, _MAP_ABOVE_BELOW_PX = 60, 150
MAP_MIN = FRAME + _MAP_SIDES_PX          # px: the map's box at its narrowest (1024 px screens)


def map_figure(**params):
    """A figure for a map of the pore's cross-section that grows with its box and keeps one scale on both
    axes: the canvas scales with the width (`scale_width`), and `match_aspect` on data ranges widens
    whichever range the frame has room for, so a pore is never stretched. Set its shape with `fit_map`."""
    from bokeh.models import DataRange1d

    return figure(sizing_mode="scale_width", width=MAP_MIN, height=MAP_MIN - _MAP_SIDES_PX + _MAP_ABOVE_BELOW_PX,
                  match_aspect=True, aspect_scale=1.0, x_range=DataRange1d(range_padding=0.0),
                  y_range=DataRange1d(range_padding=0.0), **params)


def fit_map(fig, width: float, height: float) -> None:
    """Give a `map_figure` the proportions of a map ``width`` × ``height`` (Å) at its narrowest: the frame
    then has the map's own shape (the ranges take up what the fixed axes and bars leave over)."""
    frame_h = FRAME * height / width
    fig.aspect_ratio = MAP_MIN / (frame_h + _MAP_ABOVE_BELOW_PX)
GEOMETRY_KEYS = ["shape", "size_angstrom", "wall_angstrom", "isolated", "adsorbate", "plating", "plating_layers"]


def geometry_only(scenario: Scenario) -> Scenario:
    """The scenario reduced to what the wall potential depends on (`Scenario.geometry_key`): the cache key."""
    return Scenario(**dict(scenario.geometry_key()))


@memoize(maxsize=32)
def cached_map(scenario: Scenario) -> PotentialMap:
    return potential_map(pore=scenario.pore(), pair=scenario.pair(), n=MAP_POINTS)


@memoize(maxsize=32)
def cached_minimum(scenario: Scenario) -> Minimum:
    """The one deepest minimum (`porefill.physics.pore.wall_potential.deepest_minimum`) the command line prints too."""
    return deepest_minimum(pore=scenario.pore(), pair=scenario.pair())


def outline(scenario: Scenario) -> list[np.ndarray]:
    """Pore boundary as polylines, (N, 2) each (the pore's own)."""
    return scenario.pore().outline()


def colour_range(values: np.ndarray) -> tuple[float, float]:
    """Colour scale from the deepest value to 0 K (repulsive values shown in the 'above' colour)."""
    finite = values[np.isfinite(values)]
    lo = float(finite.min())
    hi = 0.0 if lo < 0 else float(np.median(finite))
    return lo, hi if hi > lo else lo + 1.0


def contour_lines(m: PotentialMap, levels) -> tuple[list, list]:
    z = np.ma.masked_invalid(m.values)
    gen = contourpy.contour_generator(m.x, m.y, z, line_type="Separate")
    xs, ys = [], []
    for level in levels:
        for line in gen.lines(level):
            xs.append(line[:, 0])
            ys.append(line[:, 1])
    return xs, ys


def potential_result(scenario: Scenario) -> dict:
    """Everything the map, the cuts and the readout show for ``scenario`` (runs in a worker thread)."""
    geo = geometry_only(scenario)
    m = cached_map(geo)
    pore, pair = scenario.pore(), scenario.pair()
    lo, hi = colour_range(m.values)
    dx, dy = m.x[1] - m.x[0], m.y[1] - m.y[0]
    x0, y0 = m.x[0] - dx / 2, m.y[0] - dy / 2
    width, height = m.x[-1] - m.x[0] + dx, m.y[-1] - m.y[0] + dy
    xs, ys = contour_lines(m, np.linspace(lo, hi, 11)[1:-1])
    cuts = []
    for cut in line_cuts(pore=pore, pair=pair, points=CUT_POINTS):
        cuts.append((cut.label, cut.r_angstrom, cut.potential_k, cut.length_angstrom, cut.minimum_k))
    return {"scenario": scenario, "image": np.where(np.isfinite(m.values), m.values, np.nan),
            "x0": x0, "y0": y0, "width": width, "height": height, "colour": (lo, hi),
            "contours": (xs, ys), "outline": outline(scenario), "cuts": cuts,
            "readout": readout_html(scenario)}


def readout_html(sc: Scenario) -> str:
    """The readout under the map: deepest minimum, centre, depth / kT, pore and pair (HTML, escaped)."""
    low = cached_minimum(geometry_only(sc))
    pore, pair = sc.pore(), sc.pair()
    depth = low.depth_k
    centre = float(wall_potential(0.0, 0.0, pore=pore, pair=pair))
    kt = sc.temperature_k
    layout = "isolated pore in an unbounded solid" if sc.wall_angstrom is None or sc.shape == "cylinder" \
        else f"array, walls {sc.wall_angstrom:g} Å thick"
    return (
        f"<p><b>Deepest minimum:</b> {html.escape(format_minimum(low).removeprefix('deepest minimum '))}<br>"
        f"<b>At the centre:</b> {centre:.3f} K &nbsp; <b>Depth / kT:</b> {abs(depth) / kt:.1f} at T = {kt:g} K "
        f"&nbsp; <b>Pore:</b> {html.escape(sc.shape)}, {html.escape(layout)}, "
        f"side / radius / width {sc.size_angstrom:g} Å, {html.escape(sc.adsorbate)}<br>"
        f"<b>Pair:</b> ε = {pair.epsilon_k:.2f} K, σ = {pair.sigma_angstrom:.3f} Å, "
        f"ρ = {pair.density_per_a3:.4f} Å⁻³ — {html.escape(pair.origin)}{_plating_words(sc, pair)}</p>"
    )


def _plating_words(sc, pair) -> str:
    """The plating line of the readout (empty for a bare wall)."""
    pl = pair.plating
    if pl is None:
        return ""
    where = ", ".join(f"{z:.2f}" for z in pl.distances_angstrom)
    return (f"<br><b>Plating:</b> {pl.layers} layer(s) of {html.escape(pl.gas)} at {where} Å from the solid, "
            f"{pl.areal_density_per_a2:.4f} Å⁻² each; {html.escape(sc.adsorbate)}–{html.escape(pl.gas)} "
            f"ε = {pl.epsilon_k:.2f} K, σ = {pl.sigma_angstrom:.3f} Å (Lorentz–Berthelot) — {html.escape(pl.source)}")


class PotentialView(pn.viewable.Viewer):
    """Map of the wall potential with contours and the pore outline; line cuts; readout."""

    state = param.ClassSelector(class_=ExplorerState)

    def __init__(self, **params):
        super().__init__(**params)
        self._image = ColumnDataSource({"image": [], "x": [], "y": [], "dw": [], "dh": []})
        self._contours = ColumnDataSource({"xs": [], "ys": []})
        self._outline = ColumnDataSource({"xs": [], "ys": []})
        self._mapper = LinearColorMapper(palette=Viridis256, nan_color="#dddddd", high_color="#fdf6d8")
        self._cuts = [ColumnDataSource({"r": [], "v": []}) for _ in range(2)]
        self._map_fig = self._make_map_figure()
        self._cut_fig = self._make_cut_figure()
        self._readout = pn.pane.HTML("", css_classes=["porefill-readout"], sizing_mode="stretch_width")
        self._message = pn.pane.HTML("", css_classes=["porefill-potential-message"], visible=False,
                                     sizing_mode="stretch_width")
        self._map_caption = pn.pane.HTML("", css_classes=["porefill-caption", "porefill-map-caption"],
                                         sizing_mode="stretch_width", styles={"font-size": "13px"})
        self._map_box = growing_box(self._map_caption, pn.pane.Bokeh(self._map_fig, sizing_mode="stretch_width"),
                                    css_class="porefill-map", min_px=MAP_MIN)
        self._cut_box = growing_box(pn.pane.Bokeh(self._cut_fig, sizing_mode="stretch_width"),
                                    css_class="porefill-cuts")
        # a burst of requests computes its first and last (a burst of slider keys arrives as one: slider_keys.py)
        self._runner = LatestRunner("map", name="potential map", settle_s=SLIDER_SETTLE_S)
        self._shown: Scenario | None = None       # the inputs the map and cuts now show
        self._pending: Scenario | None = None     # inputs asked for and not yet shown
        self._redraw()
        self.state.param.watch(self._redraw, GEOMETRY_KEYS + ["temperature_k"])

    # figures --------------------------------------------------------------------------------------
    def _make_map_figure(self):
        fig = map_figure(title="Wall potential V(x, y)", x_axis_label="x (Å)", y_axis_label="y (Å)",
                         tools="pan,wheel_zoom,box_zoom,reset,save", toolbar_location="above")
        img = fig.image(image="image", x="x", y="y", dw="dw", dh="dh", source=self._image,
                        color_mapper=self._mapper)
        fig.multi_line(xs="xs", ys="ys", source=self._contours, line_color="white", line_alpha=0.75,
                       line_width=0.9)
        fig.multi_line(xs="xs", ys="ys", source=self._outline, line_color="black", line_width=2)
        fig.add_layout(ColorBar(color_mapper=self._mapper, title="V (K)", height=10, orientation="horizontal",
                                title_standoff=4), "below")
        fig.add_tools(HoverTool(renderers=[img], tooltips=[("x, y (Å)", "$x{0.00}, $y{0.00}"),
                                                           ("V (K)", "@image{0.000}")]))
        return fig

    def _make_cut_figure(self):
        fig = figure(title="Line cuts", x_axis_label="distance from the pore centre (Å)", y_axis_label="V (K)",
                     sizing_mode="stretch_width", min_width=GROW_MIN - 10, frame_height=230,
                     x_range=Range1d(0, 1), y_range=Range1d(-1, 1),
                     tools="pan,wheel_zoom,box_zoom,reset,save,hover", toolbar_location="above",
                     tooltips=[("r (Å)", "@r{0.00}"), ("V (K)", "@v{0.000}")])
        self._cut_renderers = [fig.line("r", "v", source=src, line_width=2, color=Category10_10[k],
                                        legend_label=f"cut {k + 1}")
                               for k, src in enumerate(self._cuts)]
        fig.legend.location = "bottom_left"
        fig.legend.label_text_font_size = "12px"
        fig.legend.background_fill_alpha = 0.8
        return fig

    # updates --------------------------------------------------------------------------------------
    def _redraw(self, *events):
        sc = self.state.scenario()
        self._pending = sc
        doc = pn.state.curdoc
        if doc is not None and doc.session_context is not None and self._shown is not None:
            # a map arrives in ~0.1 s: mark it stale only if it has not arrived by then (a spinner that
            # flashes on every release costs the browser more than the redraw itself)
            doc.add_timeout_callback(lambda: self._mark_stale(sc), _STALE_AFTER_MS)
        else:
            self._mark_stale(sc)
        self._runner.submit(potential_result, (sc,), self._apply, self._fail)

    def _mark_stale(self, sc: Scenario):
        if self._pending != sc:
            return                     # its result is already shown
        with pn.io.hold():
            if self._shown is None or geometry_only(sc) != geometry_only(self._shown):
                self._map_box.loading = self._cut_box.loading = True
            self._readout.loading = True

    def _fail(self, exc: BaseException):
        with pn.io.hold():
            self._message.object = f"<p>No wall potential: {html.escape(short_error(exc))}</p>"
            self._message.visible = True
            self._readout.object = ""
            self._map_box.loading = self._cut_box.loading = self._readout.loading = False

    def _apply(self, res: dict):
        sc = res["scenario"]
        cut_data = res["cuts"]
        x0, y0, width, height = res["x0"], res["y0"], res["width"], res["height"]
        lo, hi = res["colour"]
        low = min(c[4] for c in cut_data)
        with pn.io.hold():
            if self._shown is None or geometry_only(sc) != geometry_only(self._shown):
                self._image.data = {"image": [res["image"]], "x": [x0], "y": [y0], "dw": [width], "dh": [height]}
                self._mapper.update(low=lo, high=hi)
                xs, ys = res["contours"]
                self._contours.data = {"xs": xs, "ys": ys}
                lines = res["outline"]
                self._outline.data = {"xs": [p[:, 0] for p in lines], "ys": [p[:, 1] for p in lines]}
                fit_map(self._map_fig, width, height)        # the ranges follow the image (DataRange1d)
                for k, src in enumerate(self._cuts):
                    if k < len(cut_data):
                        label, r, v, _, _ = cut_data[k]
                        src.data = {"r": r, "v": v}
                        self._cut_renderers[k].visible = True
                        self._cut_fig.legend.items[k].update(label={"value": label}, visible=True)
                    else:
                        src.data = {"r": [], "v": []}
                        self._cut_renderers[k].visible = False
                        self._cut_fig.legend.items[k].visible = False
                self._cut_fig.x_range.update(start=0.0, end=max(c[3] for c in cut_data))
                top = abs(low) * 0.4 if low < 0 else low + 1.0
                self._cut_fig.y_range.update(start=low * 1.08 if low < 0 else low - 1.0, end=top)
                self._map_caption.object = (f"<p>For {html.escape(describe(sc, temperature=False))}. "
                                            "Pale: V &gt; 0 K; grey: solid.</p>")
            self._shown = sc
            if self._pending == sc:
                self._pending = None
            self._message.visible = False
            self._readout.object = res["readout"]
            self._map_box.loading = self._cut_box.loading = self._readout.loading = False

    def __panel__(self):
        plots = pn.FlexBox(self._map_box, self._cut_box, flex_wrap="wrap", gap="8px 16px",
                           sizing_mode="stretch_width")
        return pn.Column(self._message, self._readout, plots, sizing_mode="stretch_width")
