"""The pore-size distribution on the Measured data tab, beside the single-pore fit.

The loaded per-gram runs are expressed as a non-negative, smoothed combination of a kernel of model isotherms
over pore sizes (`porefill.physics.distribution`); the kernel's range and count are the user's (default
`porefill.physics.distribution.kernel.default_sizes`). The work runs off the event loop
(`porefill.explorer.jobs.distribution_job`, a `ThreadJob` whose kernel build runs in worker processes and whose
inversion runs in the shared worker pool) with progress and cancel. Then the panel shows the distribution
(pore volume per Å of the shape's own size, bootstrap error bars, the equivalent diameter on the top axis),
the cumulative pore volume, the distribution's isotherm over the measured points with its residuals, the
summary beside the best single size, and the notes. A carried prediction (another gas and temperature in the
same sample) draws that gas's isotherm with the band of pressures each layer forms over, and hands the bands
to the Sizing tab (``listeners``).

What is drawn (data and HTML) is `porefill.explorer.views.distribution_drawing`; the Bokeh figures are made
afresh with each result, and only while the tab is on show (``on_page``; see `porefill.explorer.views.sizing`
for why).
"""
from __future__ import annotations

import html
from functools import partial

import numpy as np
import panel as pn
import param
from bokeh.models import BoxAnnotation, ColumnDataSource, CustomJSTickFormatter, LinearAxis, Span, Whisker
from bokeh.plotting import figure

from porefill.explorer.jobs.background import ThreadJob
from porefill.explorer.jobs.compute import on_session, temperature_window
from porefill.explorer.jobs.distribution_job import CarryRequest, DistributionRequest, carry_work, distribution_work
from porefill.explorer.views import distribution_drawing as drawing
from porefill.explorer.views.state import ExplorerState
from porefill.physics.choices import SITE_MODELS
from porefill.physics.fitting.model import PER_GRAM_UNITS
from porefill.physics.substances.materials import ADSORBATES

__all__ = ["DistributionView"]

BAR_COLOUR = "#3d5a80"
CUMULATIVE_COLOUR = "#7a4e2d"
CARRY_COLOURS = {"adsorption": "#c8553d", "desorption": "#588b8b"}
BAND_COLOURS = ("#f2c14e", "#9bc1bc", "#e3a587", "#b8b8d1", "#a3c4a8", "#d6b3a1")
_GAS_DEFAULT = "the gas's default"
_W = 560


def _error(text: str) -> str:
    return f"<p class='porefill-psd-error' style='color:#8a4b00'>{html.escape(text)}</p>"


class DistributionView(pn.viewable.Viewer):
    """Kernel inputs, Find / Cancel, the distribution's plots, summary and notes, and the carried prediction."""

    state = param.ClassSelector(class_=ExplorerState)
    owner = param.Parameter(doc="The MeasuredView: runs(), sample() and its axis")
    run_colours = param.Parameter(default=("#2a9d8f", "#e76f51", "#6a4c93", "#8ab17d"))
    on_page = param.Boolean(default=True, doc="False while the tab is hidden: figures wait for it")

    def __init__(self, **params):
        super().__init__(**params)
        first, last, count = drawing.default_kernel_inputs(self.state.shape)
        self.first = pn.widgets.FloatInput(value=first, start=0.0, step=0.5, width=170,
                                           css_classes=["porefill-psd-first"])
        self.last = pn.widgets.FloatInput(value=last, start=0.0, step=0.5, width=170, css_classes=["porefill-psd-last"])
        self.count = pn.widgets.IntInput(name="Kernel sizes (count)", value=count, start=drawing.KERNEL_COUNT_BOUNDS[0],
                                         end=drawing.KERNEL_COUNT_BOUNDS[1], width=150,
                                         css_classes=["porefill-psd-count"])
        self.sizes_note = pn.pane.HTML("", css_classes=["porefill-psd-sizes"], styles={"font-size": "12px"},
                                       sizing_mode="stretch_width")
        self.find = pn.widgets.Button(name="Find the pore-size distribution", button_type="primary", width=260,
                                      css_classes=["porefill-psd-find"])
        self.cancel = pn.widgets.Button(name="Cancel", width=100, disabled=True, css_classes=["porefill-psd-cancel"])
        self.progress = pn.indicators.Progress(value=0, max=1000, width=260, visible=False)
        self.status = pn.pane.HTML("", css_classes=["porefill-psd-status"], sizing_mode="stretch_width")
        self.summary = pn.pane.HTML("", css_classes=["porefill-psd-summary"], sizing_mode="stretch_width",
                                    styles={"font-size": "13px"})
        self.notes = pn.pane.HTML("", css_classes=["porefill-psd-notes"], sizing_mode="stretch_width",
                                  styles={"font-size": "12px"})
        self.plots = pn.Column(css_classes=["porefill-psd-plots"], sizing_mode="stretch_width")
        self.gas = pn.widgets.Select(name="Carry to gas", options=list(ADSORBATES), value="helium-4", width=150,
                                     css_classes=["porefill-psd-gas"])
        self.temperature = pn.widgets.FloatInput(name="at temperature (K)", value=1.5, start=0.0, step=0.1, width=140,
                                                 css_classes=["porefill-psd-temperature"])
        self.site_model = pn.widgets.Select(name="Site model", options=[_GAS_DEFAULT, *SITE_MODELS],
                                            value=_GAS_DEFAULT, width=170)
        self.carry_button = pn.widgets.Button(name="Predict in the same sample", width=220, disabled=True,
                                              css_classes=["porefill-psd-carry"])
        self.carry_cancel = pn.widgets.Button(name="Cancel", width=100, disabled=True)
        self.carry_progress = pn.indicators.Progress(value=0, max=1000, width=220, visible=False)
        self.carry_status = pn.pane.HTML("", css_classes=["porefill-psd-carry-status"], sizing_mode="stretch_width")
        self.layers = pn.pane.HTML("", css_classes=["porefill-psd-layers"], sizing_mode="stretch_width",
                                   styles={"font-size": "13px"})
        self.saved = None          # SavedDistribution on show (computed here or reopened from a file)
        self.result = None         # the Distribution computed in this session (it alone has the fitted isotherm)
        self.carried = None        # CarriedPrediction for `saved`, when asked
        self.listeners: list = []  # called with (carried or None, saved or None) whenever either changes
        self.sources: dict[str, ColumnDataSource] = {}
        self._jobs: dict[str, ThreadJob | None] = {"find": None, "carry": None}
        self._pending = False
        self.find.on_click(self.compute)
        self.cancel.on_click(lambda *_: self._cancel("find"))
        self.carry_button.on_click(self.predict)
        self.carry_cancel.on_click(lambda *_: self._cancel("carry"))
        self.gas.param.watch(self._gas_changed, "value")
        for w in (self.first, self.last, self.count):
            w.param.watch(self._describe_sizes, "value")
        self.state.param.watch(self._shape_changed, "shape")
        self.param.watch(lambda e: self._draw() if e.new and self._pending else None, "on_page")
        self._name_inputs()
        self._describe_sizes()

    # inputs ---------------------------------------------------------------------------------------
    def _name_inputs(self) -> None:
        word = drawing.size_word(self.state.shape)
        self.first.name, self.last.name = f"Kernel: first {word} (Å)", f"last {word} (Å)"

    def _shape_changed(self, *_):
        self.first.value, self.last.value, self.count.value = drawing.default_kernel_inputs(self.state.shape)
        self._name_inputs()

    def _describe_sizes(self, *_):
        try:
            spec = self.spec()
        except ValueError as exc:
            self.sizes_note.object = _error(str(exc))
            return
        d = drawing.diameter_factor(spec.base.shape)
        s = spec.sizes_angstrom
        self.sizes_note.object = (f"<p>{len(s)} sizes {s[0]:.4g}–{s[-1]:.4g} Å, steps of {spec.spacing_angstrom:.3g} Å "
                                  f"(equivalent diameters {s[0] * d:.3g}–{s[-1] * d:.3g} Å); each size is one model "
                                  "isotherm, built once and kept for later runs.</p>")

    def _gas_changed(self, *_):
        try:
            self.temperature.value = round(temperature_window(self.gas.value)[2], 3)
        except Exception:          # noqa: BLE001 - a guess for the input only; the user types their own
            pass

    def spec(self):
        """The kernel the inputs ask for; ValueError in one line naming the input."""
        return drawing.kernel_spec(self.state.scenario(), self.first.value, self.last.value, self.count.value)

    # running --------------------------------------------------------------------------------------
    def _start(self, which: str, fn, args: tuple, done) -> None:
        """Run ``fn`` as a ThreadJob when served (progress, cancel); at once in tests and notebooks."""
        button, cancel, bar, status = self._controls(which)
        doc = pn.state.curdoc
        if doc is None or doc.session_context is None:
            try:
                value = fn(*args, progress=lambda *_: None, should_stop=lambda: False)
            except ValueError as exc:
                status.object = _error(str(exc))
                return
            done(value)
            return
        button.disabled, cancel.disabled = True, False
        bar.value, bar.visible = 0, True
        status.object = "<p>Starting …</p>"

        def on_event(event):          # on the job's thread: hand it to the session
            on_session(doc, partial(self._event, which, event, done))

        self._jobs[which] = job = ThreadJob(fn, args, name=f"porefill-psd-{which}")
        job.watch(on_event)

    def _controls(self, which: str):
        if which == "find":
            return self.find, self.cancel, self.progress, self.status
        return self.carry_button, self.carry_cancel, self.carry_progress, self.carry_status

    def _event(self, which: str, event: tuple, done) -> None:
        button, cancel, bar, status = self._controls(which)
        kind = event[0]
        if kind == "progress":
            bar.value = int(1000 * event[1])
            status.object = f"<p>{html.escape(event[2])}</p>"
            return
        self._jobs[which] = None
        cancel.disabled, bar.visible = True, False
        self._fit_buttons()
        if kind == "done":
            done(event[1])
        else:
            word = "Cancelled" if kind == "cancelled" else "Could not finish"
            status.object = _error(f"{word}: {event[1]}")

    def _fit_buttons(self) -> None:
        """Find while nothing runs; Predict when a distribution is on show and neither job runs."""
        busy = any(job is not None for job in self._jobs.values())
        self.find.disabled = self._jobs["find"] is not None
        self.carry_button.disabled = self.saved is None or busy

    def _cancel(self, which: str) -> None:
        job = self._jobs.get(which)
        if job is not None and job.outcome is None:
            job.cancel()
            self._controls(which)[3].object = "<p>Cancelling …</p>"

    def compute(self, *_) -> None:
        """Find the distribution of the tab's runs with the kernel the inputs ask for."""
        runs = tuple(self.owner.runs()) if self.owner is not None else ()
        if not runs:
            self.status.object = _error("Drop a measured isotherm (amounts per gram) first.")
            return
        wrong = [r.name for r in runs if r.amount_unit not in PER_GRAM_UNITS]
        if wrong:
            self.status.object = _error(f"Run {wrong[0]!r} is not per gram: a pore-size distribution needs amounts "
                                        "per gram (mmol/g, mol/g, cm³(STP)/g, or dosed amounts with the mass).")
            return
        try:
            spec = self.spec()
        except ValueError as exc:
            self.status.object = _error(str(exc))
            return
        t = spec.base.temperature_k
        other = next((r for r in runs if r.temperature_k is not None and abs(r.temperature_k - t) > 0.05), None)
        if other is not None:          # the inversion's own rule, said before the kernel is built
            self.status.object = _error(f"Run {other.name!r} was measured at {other.temperature_k:g} K and the page's "
                                        f"temperature is {t:g} K: set the temperature to the run's first.")
            return
        request = DistributionRequest(spec, runs, self.owner.sample())
        executor = None
        if pn.state.curdoc is not None and pn.state.curdoc.session_context is not None:
            from porefill.explorer.jobs.compute import isotherm_pool
            executor = isotherm_pool()
        self._start("find", distribution_work, (request, executor), self._found)
        self._fit_buttons()

    def _found(self, dist) -> None:
        from porefill.explorer.files.saved_distribution import SavedDistribution

        self.result, self.saved, self.carried = dist, SavedDistribution.from_result(dist), None
        total = dist.summary.get("total_cm3_g", float("nan"))
        self.status.object = (f"<p>Distribution found from {len(dist.runs)} run(s), {dist.points} points: "
                              f"{total:.4g} cm³/g of pore volume over {len(dist.sizes_angstrom)} kernel sizes.</p>")
        self.carry_status.object = ""
        self._shown_changed()

    def show_saved(self, saved) -> None:
        """Show a distribution a scenario file kept (None: none), without inverting again."""
        self.result, self.saved, self.carried = None, saved, None
        self.carry_status.object = ""
        if saved is not None:
            even = drawing.evenly_spaced_inputs(saved.sizes_angstrom)
            if even is not None and saved.kernel.shape == self.state.shape:
                self.first.value, self.last.value, self.count.value = even
            self.status.object = ("<p>Distribution from the scenario file (not inverted again; Find recomputes it "
                                  "and draws its isotherm over the measured points).</p>")
        else:
            self.status.object = ""
        self._shown_changed()

    def predict(self, *_) -> None:
        """The carried prediction of the distribution on show for the chosen gas and temperature."""
        from porefill.physics.distribution.carry import carried_base
        from porefill.physics.distribution.kernel import KernelSpec

        saved = self.saved
        if saved is None:
            self.carry_status.object = _error("Find a distribution first.")
            return
        model = None if self.site_model.value == _GAS_DEFAULT else self.site_model.value
        try:
            t = self.temperature.value
            if t is None or not np.isfinite(t) or t <= 0:
                raise ValueError(f"temperature must be a positive number of kelvin; got {t!r}")
            base = carried_base(saved.kernel, adsorbate=self.gas.value, temperature_k=t, site_model=model)
            spec = KernelSpec(base, saved.sizes_angstrom, n_points=saved.n_points, relative_pressure_range=None,
                              parts=saved.parts)
        except ValueError as exc:
            self.carry_status.object = _error(f"Cannot carry: {str(exc).splitlines()[0]}")
            return
        self._start("carry", carry_work, (CarryRequest(spec, tuple(saved.pore_volume_cm3_g)),), self._carried)

    def _carried(self, carried) -> None:
        self.carried = carried
        base = carried.kernel.spec.base
        self.carry_status.object = (f"<p>Predicted {html.escape(base.adsorbate)} at {base.temperature_k:g} K "
                                    f"({html.escape(base.site_model_used)} sites).</p>")
        self._shown_changed()

    def _shown_changed(self) -> None:
        saved = self.saved
        self._fit_buttons()
        if saved is None:
            self.summary.object = self.notes.object = self.layers.object = ""
        else:
            source = ("Computed on this page." if self.result is not None else "Reopened from the scenario file.")
            self.summary.object = drawing.summary_html(saved, source=source)
            self.notes.object = drawing.notes_html(saved.notes)
            self.layers.object = drawing.layers_html(self.carried) if self.carried is not None else ""
        self._draw()
        for listener in list(self.listeners):
            listener(self.carried, saved)

    # drawing --------------------------------------------------------------------------------------
    def _draw(self) -> None:
        if not self.on_page:
            self._pending = True
            return
        self._pending = False
        figs = [] if self.saved is None else self._distribution_figures(self.saved)
        if self.result is not None:
            figs += self._fit_figures(self.result)
        if self.carried is not None:
            figs.append(self._carried_figure(self.carried))
        self.plots.objects = [pn.pane.Bokeh(f) for f in figs]

    def _distribution_figures(self, saved):
        cols = drawing.bar_columns(saved)
        word = drawing.size_word(saved.kernel.shape)
        src = self.sources["bars"] = ColumnDataSource({k: v for k, v in cols.items()})
        pad = 0.6 * float(cols["width"][0])
        lo, hi = float(cols["size"][0] - pad), float(cols["size"][-1] + pad)
        fig = figure(title=f"Pore-size distribution: pore volume per Å of {word}", frame_width=_W, frame_height=230,
                     x_range=(lo, hi), y_range=(0, max(float(np.nanmax(cols["upper"])), 1e-12) * 1.1),
                     tools="pan,wheel_zoom,box_zoom,reset,save,hover", toolbar_location="above",
                     x_axis_label=f"{word} (Å)", y_axis_label="dV/d(size) (cm³/g per Å)",
                     tooltips=[(word, "@size{0.00} Å"), ("diameter", "@diameter{0.0} Å"),
                               ("pore volume", "@volume{0.0000} ± @stderr{0.0000} cm³/g")])
        fig.vbar(x="size", width="width", top="density", source=src, color=BAR_COLOUR, alpha=0.75,
                 line_color="white")
        fig.add_layout(Whisker(base="size", lower="lower", upper="upper", source=src, line_color="#222222"))
        factor = drawing.diameter_factor(saved.kernel.shape)
        top = LinearAxis(axis_label="equivalent diameter (Å)",
                         formatter=CustomJSTickFormatter(args={"f": factor}, code="return (tick * f).toFixed(1);"))
        fig.add_layout(top, "above")
        cum_src = self.sources["cumulative"] = ColumnDataSource(
            {"edge": np.r_[lo, cols["edge"]], "cumulative": np.r_[0.0, cols["cumulative"]]})
        cum = figure(title="Cumulative pore volume", frame_width=_W, frame_height=150, x_range=fig.x_range,
                     y_range=(0, max(float(cols["cumulative"][-1]), 1e-12) * 1.1), tools="pan,wheel_zoom,reset,save",
                     toolbar_location="above", x_axis_label=f"{word} (Å)", y_axis_label="cm³/g up to this size")
        cum.step(x="edge", y="cumulative", source=cum_src, mode="after", color=CUMULATIVE_COLOUR, line_width=2)
        return [fig, cum]

    def _fit_figures(self, dist):
        quantum = dist.kernel.spec.base.site_model_used == "quantum"
        axis = "pressure" if quantum or (self.owner is not None and self.owner.axis.value == "pressure") \
            else "relative-pressure"
        series = drawing.fitted_series(dist, axis)
        x_label = "pressure p (Pa)" if axis == "pressure" else "relative pressure p/p₀"
        units = ", ".join(dict.fromkeys(s["unit"] for s in series))
        kind = "log" if axis == "pressure" else "linear"
        fig = figure(title="Measured over the distribution's isotherm", x_axis_type=kind, frame_width=_W,
                     frame_height=230, tools="pan,wheel_zoom,box_zoom,reset,save", toolbar_location="above",
                     x_axis_label=x_label, y_axis_label=f"amount ({units})")
        res = figure(title="Residuals ((measured − distribution) / σ)", x_axis_type=kind, frame_width=_W,
                     frame_height=130, x_range=fig.x_range, tools="pan,wheel_zoom,reset,save",
                     toolbar_location="above", y_axis_label="σ")
        res.add_layout(Span(location=0, dimension="width", line_color="#888888", line_dash="dotted"))
        for i, s in enumerate(series):
            colour = self.run_colours[i % len(self.run_colours)]
            src = self.sources[f"fit{i}"] = ColumnDataSource({"x": s["x"], "y": s["measured"], "r": s["residual"]})
            fig.line(s["curve_x"], s["curve_y"], color=colour, line_width=2, legend_label=f"{s['short']}, model")
            fig.scatter("x", "y", source=src, color=colour, size=6, legend_label=f"{s['short']}, measured")
            res.scatter("x", "r", source=src, color=colour, size=5)
        fig.legend.location = "bottom_right"
        fig.legend.label_text_font_size = "11px"
        fig.legend.background_fill_alpha = 0.8
        return [fig, res]

    def _carried_figure(self, carried):
        base = carried.kernel.spec.base
        fig = figure(title=f"Carried: {base.adsorbate} at {base.temperature_k:g} K, same sample; bands: layers",
                     x_axis_type="log", frame_width=_W, frame_height=240,
                     tools="pan,wheel_zoom,box_zoom,reset,save", toolbar_location="above",
                     x_axis_label="pressure p (Pa)", y_axis_label="amount (mmol/g)")
        for branch, colour in CARRY_COLOURS.items():
            self.sources[f"carried-{branch}"] = src = ColumnDataSource(
                {"x": carried.pressure_pa, "y": carried.amount_mmol_g[branch]})
            fig.line("x", "y", source=src, color=colour, line_width=2, legend_label=branch,
                     line_dash="solid" if branch == "adsorption" else "dashed")
        for i, r in enumerate(drawing.layer_rows(carried)):
            if r["median"] is None or r["fraction"] < 0.01:
                continue
            colour = BAND_COLOURS[i % len(BAND_COLOURS)]
            fig.add_layout(BoxAnnotation(left=r["p10"], right=max(r["p90"], r["p10"] * 1.02), fill_color=colour,
                                         fill_alpha=0.25))
            fig.add_layout(Span(location=r["median"], dimension="height", line_color=colour, line_width=2))
        fig.legend.location = "top_left"
        return fig

    def __panel__(self):
        kernel = pn.FlexBox(self.first, self.last, self.count, flex_wrap="wrap", sizing_mode="stretch_width")
        carry = pn.FlexBox(self.gas, self.temperature, self.site_model, flex_wrap="wrap", sizing_mode="stretch_width")
        return pn.Column(
            pn.pane.HTML("<h3>Pore-size distribution</h3><p style='font-size:13px'>Many pore sizes instead of one: "
                         "the runs as a non-negative, smoothed sum of model isotherms over a range of sizes "
                         "(amounts per gram).</p>"),
            kernel, self.sizes_note, pn.Row(self.find, self.cancel, self.progress), self.status, self.summary,
            self.plots, self.notes, pn.pane.HTML("<b>Carry to another gas in the same sample</b>"), carry,
            pn.Row(self.carry_button, self.carry_cancel, self.carry_progress), self.carry_status, self.layers,
            sizing_mode="stretch_width", css_classes=["porefill-psd"])
