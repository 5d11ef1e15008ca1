"""The Measured data tab's drawing (`porefill.explorer.views.measured`): the measured runs over the model the
Pore tab shows (or the fitted one), with residuals, on the axis and in the amount unit chosen
(`porefill.explorer.views.overlay` places each run)."""
from __future__ import annotations

import html

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource, Range1d, Span
from bokeh.plotting import figure

from porefill.explorer.views.isotherm import ADS_COLOUR, DES_COLOUR, _key as model_key
from porefill.explorer.views.overlay import PER_NM, display_scale, display_unit, model_curves, overlay_run
from porefill.explorer.views.potential import FRAME
from porefill.explorer.views.state import describe
from porefill.explorer.views.ticks import readable_log_axes
from porefill.physics.fitting.model import PER_GRAM_UNITS, estimate_pore_volume
from porefill.physics.fitting.params import DEFAULT_PORE_VOLUME_BOUNDS

__all__ = ["OverlayDrawing", "OVERLAY_MAX", "RUN_COLOURS", "BEFORE_FIT_COLOUR", "BEFORE_FIT_LABEL"]

OVERLAY_MAX = 1100         # px: the overlay and residuals grow with the window up to this
BEFORE_FIT_COLOUR = "#9a9a9a"
BEFORE_FIT_LABEL = "Pore tab's model (before the fit)"
RUN_COLOURS = ("#2a9d8f", "#e76f51", "#6a4c93", "#8ab17d", "#bc6c25", "#577590")


class OverlayDrawing:
    """The drawing half of `MeasuredView`, a mixin: its figures, the amount unit and axis shown, and the
    redraw of the view's runs (``runs()``) over the model of its ``state``."""

    def _build_overlay(self) -> None:
        self._sources: list[ColumnDataSource] = []
        self._model_src = {b: ColumnDataSource({"x": [], "y": []}) for b in ("adsorption", "desorption")}
        self._before_src = {b: ColumnDataSource({"x": [], "y": []}) for b in ("adsorption", "desorption")}
        self._fig, self._res_fig = self._figures()
        self._plots = pn.Column(css_classes=["porefill-overlay"], sizing_mode="stretch_width")

    def _display_picked(self, event) -> None:
        if getattr(self, "_setting_display", False):
            return
        self.pick_amount_unit(event.new)

    def pick_amount_unit(self, unit: str) -> None:
        """Show amounts in ``unit`` from now on (a person's pick, or a reopened file's), whenever the runs
        offer it; the choice no longer follows the files."""
        self._display_default, self._display_pick = False, unit
        self._redraw()

    def _display_choices(self, runs) -> str:
        """Offer per nm and each file unit; keep the user's pick while it is offered, else the files' own."""
        options = {"coverage per nm of pore": PER_NM}
        for unit in dict.fromkeys(r.amount_unit for r in runs):
            if unit != PER_NM:
                options[f"{unit} (the file's unit)"] = unit
        value = self.amount_display.value
        if not self._display_default and getattr(self, "_display_pick", None) in options.values():
            value = self._display_pick
        if self._display_default or value not in options.values():
            value = display_unit(runs)
        self._setting_display = True
        try:
            self.amount_display.options = options
            self.amount_display.value = value
        finally:
            self._setting_display = False
        return value

    def _axis_for_gas(self, *_):
        """p/p0 on a linear axis is what nitrogen and argon users read; log p for the light gases, whose
        first layers form decades below p0."""
        from porefill.physics.sites.site_models import QUANTUM_BY_DEFAULT
        self.axis.value = "pressure" if self.state.adsorbate in QUANTUM_BY_DEFAULT else "relative-pressure"

    # the model the Pore tab shows ----------------------------------------------------------------
    def model_arrived(self, scenario, iso) -> None:
        """Called by the isotherm view with every isotherm it shows (None: none for these inputs)."""
        self._iso = iso
        if self._fitted is not None and (scenario is None or model_key(scenario) != self._fitted[2]):
            self._fitted = None          # the Pore tab moved on (or took the fitted pore): its model is the one
        self._redraw()

    # drawing ------------------------------------------------------------------------------------------
    def _figures(self, axis: str = "pressure"):
        """The overlay and residual figures for ``axis``: log pressure, linear p/p₀ and μ, and for the coverage
        axis amount (linear) against pressure (log)."""
        x_type, y_type = _AXIS_TYPES[axis]
        self._axis_types = (x_type, y_type)
        self._sources = []                 # the runs' glyphs belong to the figures: new figures, new sources
        fig = figure(title="Measured over the model", x_axis_type=x_type, y_axis_type=y_type,
                     sizing_mode="stretch_width", min_width=FRAME + 120, max_width=OVERLAY_MAX, frame_height=260,
                     x_range=Range1d(*_START[x_type]),
                     y_range=Range1d(*_START[y_type]), tools="pan,wheel_zoom,box_zoom,reset,save",
                     toolbar_location="above", x_axis_label="pressure p (Pa)", y_axis_label="coverage (per nm)")
        fig.line("x", "y", source=self._model_src["adsorption"], color=ADS_COLOUR, line_width=2,
                 legend_label="model, adsorption")
        fig.line("x", "y", source=self._model_src["desorption"], color=DES_COLOUR, line_width=2, line_dash="dashed",
                 legend_label="model, desorption")
        for branch, dash in (("adsorption", "solid"), ("desorption", "dashed")):
            fig.line("x", "y", source=self._before_src[branch], color=BEFORE_FIT_COLOUR, line_width=1.2,
                     line_dash=dash, line_alpha=0.8, legend_label=BEFORE_FIT_LABEL)
        self._before_legend = next(i for i in fig.legend.items if getattr(i.label, "value", None) == BEFORE_FIT_LABEL)
        self._before_legend.visible = False           # only while a fitted model is drawn
        fig.legend.location = "top_left"
        fig.legend.background_fill_alpha = 0.8
        res = figure(title="Residuals (measured − model)", x_axis_type=x_type, sizing_mode="stretch_width",
                     min_width=FRAME + 120, max_width=OVERLAY_MAX,
                     frame_height=140, x_range=fig.x_range, y_range=Range1d(-1, 1),
                     tools="pan,wheel_zoom,box_zoom,reset,save", toolbar_location="above",
                     y_axis_label="per nm")
        res.add_layout(Span(location=0, dimension="width", line_color="#888888", line_dash="dotted"))
        return readable_log_axes(fig), readable_log_axes(res)

    def _shown_model(self):
        """(isotherm, sample, fit or None) the overlay draws: the fitted model, with the fitted pore volume,
        from the moment a fit finishes until the inputs change; else the Pore tab's model and the typed sample."""
        if self._fitted is not None:
            result, iso, _ = self._fitted
            return iso, result.sample, result
        return self._iso, self._drawing_sample(self._iso), None

    def _drawing_sample(self, iso):
        """The typed sample; where per-gram runs have no pore volume, one estimated from the data against the
        model shown (closed-form least squares, `porefill.physics.fitting.model.estimate_pore_volume`; kept in
        ``_estimated_volume`` for the caption) — the fit frees the pore volume by default."""
        sample = self.sample()
        runs = self.runs()
        self._estimated_volume = None
        if (iso is None or sample.pore_volume_cm3_g is not None
                or not any(r.amount_unit in PER_GRAM_UNITS for r in runs)):
            return sample
        try:
            v = estimate_pore_volume(iso, runs, sample, bounds=DEFAULT_PORE_VOLUME_BOUNDS)
        except Exception:         # noqa: BLE001 - a guess for drawing must never take the tab down
            v = None
        if v is None:
            return sample
        self._estimated_volume = v
        return sample.with_value("pore_volume_cm3_g", v, "default")     # for drawing only; never saved

    def _redraw(self) -> None:
        runs = self.runs()
        iso, sample, fitted = self._shown_model()
        if not runs:
            self.caption.object = "<p>Drop one or more measured isotherms (CSV, TXT, TSV, DAT or XLSX) above.</p>"
            return
        if iso is None:
            self.caption.object = "<p>The model has no isotherm for these inputs (see the Pore tab).</p>"
            return
        if not self._plots.objects:
            # the figures join the page with the first data, while the tab is on show (see views.quantum)
            self._plots.objects = [pn.pane.Bokeh(self._fig, sizing_mode="stretch_width"),
                                  pn.pane.Bokeh(self._res_fig, sizing_mode="stretch_width")]
        axis = self.axis.value
        overlays, notes = [], []
        unit = self._display_choices(runs)
        try:
            scale = display_scale(iso, unit, sample)
        except ValueError as exc:
            notes.append(f"shown per nm of pore: {exc}")
            unit, scale = PER_NM, 1.0
        for run in runs:
            try:
                overlays.append(_scaled(overlay_run(iso, run, sample, axis), axis, scale))
            except ValueError as exc:
                notes.append(str(exc))
        if _AXIS_TYPES[axis] != self._axis_types:       # Bokeh cannot change an axis's scale in place
            self._fig, self._res_fig = self._figures(axis)
            self._plots.objects = [pn.pane.Bokeh(self._fig, sizing_mode="stretch_width"),
                                  pn.pane.Bokeh(self._res_fig, sizing_mode="stretch_width")]
        with pn.io.hold():
            self._set_axes(axis, unit)
            for branch, (x, y) in model_curves(iso, axis).items():
                self._model_src[branch].data = _scaled_curve(x, y, axis, scale)
            before = model_curves(self._iso, axis) if fitted is not None and self._iso is not None else {}
            for branch, src in self._before_src.items():
                x, y = before.get(branch, ([], []))
                src.data = _scaled_curve(x, y, axis, scale) if branch in before else {"x": x, "y": y}
            self._before_legend.visible = fitted is not None
            self._fig.title.text = "Measured over the fitted model" if fitted is not None else "Measured over the model"
            self._res_fig.title.text = ("Residuals (measured − fitted model)" if fitted is not None
                                        else "Residuals (measured − model)")
            while len(self._sources) < len(overlays):
                self._add_run_glyphs(len(self._sources))
            for i, src in enumerate(self._sources):
                o = overlays[i] if i < len(overlays) else None
                src.data = ({"x": o.x, "y": o.y, "r": o.residual, "row": o.rows} if o is not None
                            else {"x": [], "y": [], "r": [], "row": []})
            self._fit_ranges(iso, axis, overlays, scale)
            for o in overlays:
                if o.note:
                    notes.append(f"{o.run.name}: {o.note}")
            notes = list(dict.fromkeys(notes))            # runs of one file share a message: say it once
            if fitted is None and self._estimated_volume is not None:
                free = "pore-volume" in self.free.value
                notes.insert(0, f"No pore volume given: drawn with {sample.pore_volume_cm3_g:.3g} cm³/g, estimated "
                                "from the data (least squares against this model). "
                                + ("The fit frees it." if free else "Free pore-volume to fit it, or type it in "
                                   "Sample."))
            label = html.escape(describe(self.state.scenario()))
            legend = "; ".join(f"<span style='color:{RUN_COLOURS[i % len(RUN_COLOURS)]}'>●</span> "
                               f"{html.escape(o.run.name)}" for i, o in enumerate(overlays))
            if not overlays:
                legend = "no run can be placed yet (see below)"
            if fitted is not None:
                label = html.escape(describe(fitted.scenario))
                volume = fitted.sample.pore_volume_cm3_g
                head = (f"<b>Fitted model</b> for {label}"
                        + (f", pore volume {volume:.4g} cm³/g" if volume is not None else "")
                        + ". Grey: the Pore tab's model before the fit; “Use the fitted pore and sample” makes the "
                          "fitted pore the scenario of every tab")
            else:
                head = f"Model for {label}"
            self.caption.object = (f"<p>{head}. Measured: {legend}.</p>"
                                   + "".join(f"<p class='porefill-overlay-note'>{html.escape(n)}</p>" for n in notes))

    def _add_run_glyphs(self, i: int) -> None:
        src = ColumnDataSource({"x": [], "y": [], "r": [], "row": []})
        colour = RUN_COLOURS[i % len(RUN_COLOURS)]
        self._fig.scatter("x", "y", source=src, size=6, color=colour, marker="circle")
        self._res_fig.scatter("x", "r", source=src, size=5, color=colour)
        self._sources.append(src)

    def _set_axes(self, axis: str, unit: str = PER_NM) -> None:
        amount = "coverage (per nm)" if unit == PER_NM else f"amount ({unit})"
        x_label = {"pressure": "pressure p (Pa)", "relative-pressure": "relative pressure p/p₀",
                   "chemical-potential": "chemical potential μ (K)", "coverage": amount}[axis]
        self._fig.xaxis.axis_label = x_label
        self._fig.yaxis.axis_label = "pressure p (Pa)" if axis == "coverage" else amount
        self._res_fig.yaxis.axis_label = ("log₁₀(p/p_model)" if axis == "coverage"
                                          else ("per nm" if unit == PER_NM else unit))

    def _fit_ranges(self, iso, axis, overlays, scale: float = 1.0) -> None:
        curves = [_scaled_curve(x, y, axis, scale) for x, y in model_curves(iso, axis).values()]
        xs = [c["x"] for c in curves] + [o.x for o in overlays]
        ys = [c["y"] for c in curves] + [o.y for o in overlays]
        x = np.concatenate([np.asarray(a, float).ravel() for a in xs])
        y = np.concatenate([np.asarray(a, float).ravel() for a in ys])
        x, y = x[np.isfinite(x)], y[np.isfinite(y)]
        if axis == "pressure":
            x = x[x > 0]
        if axis == "relative-pressure":
            x = x[(x >= 0) & (x <= 1.05)]
        if x.size:
            lo, hi = float(x.min()), float(x.max())
            self._fig.x_range.update(start=lo, end=hi if hi > lo else lo + 1)
        if y.size:
            lo, hi = float(y.min()), float(y.max())
            self._fig.y_range.update(start=lo if axis == "coverage" else min(0.0, lo), end=hi * 1.05 if hi > 0 else 1)
        r = np.concatenate([o.residual for o in overlays]) if overlays else np.array([])
        r = r[np.isfinite(r)]
        top = float(np.abs(r).max()) * 1.1 if r.size else 1.0
        self._res_fig.y_range.update(start=-top or -1, end=top or 1)

def _scaled_curve(x, y, axis: str, scale: float) -> dict:
    """A model curve in the shown unit: the amount is y on the pressure axes, x on the coverage axis."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    return {"x": x * scale, "y": y} if axis == "coverage" else {"x": x, "y": y * scale}


def _scaled(o, axis: str, scale: float):
    """A run's overlay in the shown unit (its residual too, on the pressure axes: measured − model)."""
    if scale == 1.0:
        return o
    from dataclasses import replace

    if axis == "coverage":
        return replace(o, x=o.x * scale)
    return replace(o, y=o.y * scale, residual=o.residual * scale)


# each overlay axis's scales (x, y): log pressure; p/p₀ and μ linear; on the coverage axis pressure is y
_AXIS_TYPES = {"pressure": ("log", "linear"), "relative-pressure": ("linear", "linear"),
               "chemical-potential": ("linear", "linear"), "coverage": ("linear", "log")}
_START = {"log": (1e-3, 1e3), "linear": (0.0, 1.0)}
