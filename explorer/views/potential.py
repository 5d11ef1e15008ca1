"""Potential map, line cuts and the minimum readout."""
from __future__ import annotations

from functools import lru_cache

import holoviews as hv
import numpy as np
import panel as pn
import param
from scipy.optimize import minimize

from physics.geometry import CylinderPore, SlitPore
from physics.scenario import Scenario
from physics.wall_potential import PotentialMap, potential_map, wall_potential

from ..state import ExplorerState

MAP_POINTS = 200
CUT_POINTS = 300
_GEOMETRY_KEYS = ["shape", "size_angstrom", "wall_angstrom", "isolated", "adsorbate"]


@lru_cache(maxsize=32)
def cached_map(scenario: Scenario) -> PotentialMap:
    return potential_map(pore=scenario.pore(), pair=scenario.pair(), n=MAP_POINTS)


def _geometry_only(scenario: Scenario) -> Scenario:
    """The map does not depend on temperature: cache it without."""
    return scenario.replace(temperature_k=1.0, title="", notes="")


def cut_directions(scenario: Scenario) -> list[tuple[str, float, float]]:
    """(label, angle in rad, length Å) of the line cuts from the centre."""
    pore = scenario.pore()
    if isinstance(pore, CylinderPore):
        return [("centre → wall", 0.0, pore.radius_angstrom)]
    if isinstance(pore, SlitPore):
        return [("centre → wall (across the slit)", 0.5 * np.pi, 0.5 * pore.width_angstrom)]
    return [("centre → corner", 0.0, pore.circumradius_angstrom),
            ("centre → middle of a face", np.pi / pore.n_sides, pore.apothem_angstrom)]


def outline(scenario: Scenario) -> list[np.ndarray]:
    pore = scenario.pore()
    if isinstance(pore, CylinderPore):
        t = np.linspace(0, 2 * np.pi, 181)
        return [pore.radius_angstrom * np.column_stack([np.cos(t), np.sin(t)])]
    if isinstance(pore, SlitPore):
        h = 0.5 * pore.width_angstrom
        return [np.array([[-h, h], [h, h]]), np.array([[-h, -h], [h, -h]])]
    v = pore.vertices
    return [np.vstack([v, v[:1]])]


@lru_cache(maxsize=32)
def deepest_minimum(scenario: Scenario) -> tuple[float, float, float]:
    """(depth K, x Å, y Å): the map's deepest grid point polished with Nelder–Mead."""
    m = cached_map(_geometry_only(scenario))
    depth, x0, y0 = m.minimum()
    pore, pair = scenario.pore(), scenario.pair()

    def f(p):
        v = wall_potential(p[0], p[1], pore=pore, pair=pair)
        return float(v) if np.isfinite(v) else 1e300

    res = minimize(f, [x0, y0], method="Nelder-Mead", options={"xatol": 1e-6, "fatol": 1e-9})
    if res.fun < depth:
        return float(res.fun), float(res.x[0]), float(res.x[1])
    return depth, x0, y0


def colour_range(values: np.ndarray) -> tuple[float, float]:
    finite = values[np.isfinite(values)]
    lo = float(finite.min())
    hi = 0.0 if lo < 0 else float(np.percentile(finite, 50))
    return lo, hi if hi > lo else lo + 1.0


class PotentialView(pn.viewable.Viewer):
    """Map of the wall potential with contours and the pore outline; line cuts; readout."""

    state = param.ClassSelector(class_=ExplorerState)

    def __init__(self, **params):
        super().__init__(**params)
        stream = hv.streams.Params(self.state, _GEOMETRY_KEYS)
        self._map = hv.DynamicMap(self._map_plot, streams=[stream])
        self._cuts = hv.DynamicMap(self._cut_plot, streams=[stream])
        self._readout = pn.pane.Markdown(self._readout_text(), name="minimum-readout",
                                         css_classes=["porefill-readout"], sizing_mode="stretch_width")
        self.state.param.watch(self._update_readout, _GEOMETRY_KEYS + ["temperature_k"])

    def _scenario(self) -> Scenario:
        return self.state.scenario()

    def _map_plot(self, **_):
        sc = self._scenario()
        m = cached_map(_geometry_only(sc))
        values = np.where(np.isfinite(m.values), m.values, np.nan)
        lo, hi = colour_range(m.values)
        dx, dy = m.x[1] - m.x[0], m.y[1] - m.y[0]
        bounds = (m.x[0] - dx / 2, m.y[0] - dy / 2, m.x[-1] + dx / 2, m.y[-1] + dy / 2)
        vdim = hv.Dimension("V", label="V", unit="K")
        img = hv.Image(values, bounds=bounds, kdims=[hv.Dimension("x", unit="Å"), hv.Dimension("y", unit="Å")],
                       vdims=[vdim]).opts(
            cmap="viridis", clim=(lo, hi), colorbar=True, clipping_colors={"NaN": "#dddddd", "max": "#fdf6d8"},
            colorbar_opts={"title": "V (K)"}, tools=["hover"], xlabel="x (Å)", ylabel="y (Å)",
            frame_width=420, frame_height=int(420 * (m.y[-1] - m.y[0]) / (m.x[-1] - m.x[0])),
            title="Wall potential V(x, y); pale: V > 0 K, grey: solid")
        levels = list(np.linspace(lo, hi, 11)[1:-1])
        contours = hv.operation.contours(img, levels=levels, filled=False).opts(
            color="white", line_width=0.8, alpha=0.7, colorbar=False, cmap=["white"], show_legend=False)
        paths = hv.Path(outline(sc), kdims=["x", "y"]).opts(color="black", line_width=2)
        return (img * contours * paths).opts(framewise=True)

    def _cut_plot(self, **_):
        sc = self._scenario()
        pore, pair = sc.pore(), sc.pair()
        curves = []
        lows = []
        for label, angle, length in cut_directions(sc):
            r = np.linspace(0.0, length, CUT_POINTS)[:-1]
            v = wall_potential(r * np.cos(angle), r * np.sin(angle), pore=pore, pair=pair)
            lows.append(np.nanmin(v[np.isfinite(v)]))
            curves.append(hv.Curve((r, v), "r", "V", label=label))
        lo = min(lows)
        top = abs(lo) * 0.4 if lo < 0 else lo + 1.0
        return hv.Overlay(curves).opts(
            hv.opts.Curve(xlabel="distance from the pore centre (Å)", ylabel="V (K)", line_width=2,
                          frame_width=420, frame_height=260, ylim=(lo * 1.08, top), show_grid=True,
                          tools=["hover"]),
            hv.opts.Overlay(title="Line cuts", legend_position="bottom_left", framewise=True))

    def _readout_text(self) -> str:
        sc = self._scenario()
        depth, x, y = deepest_minimum(_geometry_only(sc))
        pore, pair = sc.pore(), sc.pair()
        centre = float(wall_potential(0.0, 0.0, pore=pore, pair=pair))
        wall_gap = float(pore.depth_inside(x, y))
        kt = sc.temperature_k
        return (
            f"**Deepest minimum:** {depth:.2f} K at x = {x:.2f} Å, y = {y:.2f} Å "
            f"({np.hypot(x, y):.2f} Å from the centre, {wall_gap:.2f} Å from the nearest wall)  \n"
            f"**At the centre:** {centre:.3f} K &nbsp; **Depth / kT:** {abs(depth) / kt:.1f} at T = {kt:g} K  \n"
            f"**Pair:** ε = {pair.epsilon_k:.2f} K, σ = {pair.sigma_angstrom:.3f} Å, "
            f"ρ = {pair.density_per_a3:.4f} Å⁻³ — {pair.origin}"
        )

    def _update_readout(self, *_):
        self._readout.object = self._readout_text()

    def __panel__(self):
        plots = pn.Row(pn.pane.HoloViews(self._map, linked_axes=False, name="potential-map"),
                       pn.pane.HoloViews(self._cuts, linked_axes=False, name="line-cuts"))
        return pn.Column(self._readout, plots, sizing_mode="stretch_width")
