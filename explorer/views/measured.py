"""Measured isotherms: drop the lab's files, map columns and units, see them over the model, fit.

Files arrive in chunks (`pn.widgets.FileDropper`), are read in memory by `porefill.explorer.files.measured` (parsed, never
executed or written to disk), and drawn over the isotherm the Pore tab shows (`porefill.explorer.views.overlay`). The fit
runs in a process of its own (`porefill.explorer.jobs.fit_job`, a background `ProcessJob`) with progress and cancel.
"""
from __future__ import annotations

import html
import io

import numpy as np
import panel as pn
import param
from bokeh.models import ColumnDataSource, Range1d, Span
from bokeh.plotting import figure

from porefill.explorer.outputs.fit_export import companion_paths, parameter_label, statistic_label
from porefill.physics.choices import AXIS_LABELS
from porefill.physics.fitting.model import PER_GRAM_UNITS, estimate_pore_volume
from porefill.physics.fitting.params import DEFAULT_PORE_VOLUME_BOUNDS
from porefill.physics.fitting.report import near_bound
from porefill.physics.fitting.solve import FREE_PARAMETERS, PARAMETER_UNITS, FitRequest, carry_to
from porefill.physics.fitting.measured import MEASURED_AMOUNT_UNITS, Sample
from porefill.physics.substances.units import PRESSURE_UNITS

from porefill.explorer.files.measured import ColumnMap, MeasuredFileError, read_measured
from porefill.explorer.jobs.file_parse import ParseRefused, parse_off_loop
from porefill.explorer.views.distribution import DistributionView
from porefill.explorer.views.overlay import AXES, PER_NM, display_scale, display_unit, model_curves, overlay_run
from porefill.explorer.views.state import ExplorerState, describe
from porefill.explorer.views.isotherm import ADS_COLOUR, DES_COLOUR, _key as model_key, _remember
from porefill.explorer.views.potential import FRAME

OVERLAY_MAX = 1100         # px: the overlay and residuals grow with the window up to this
from porefill.explorer.views.ticks import readable_log_axes

ACCEPTED = [".csv", ".txt", ".tsv", ".dat", ".xlsx"]
FROM_FILE = "(from the header)"
NO_COLUMN = "(none)"
BEFORE_FIT_COLOUR = "#9a9a9a"
BEFORE_FIT_LABEL = "Pore tab's model (before the fit)"
RUN_COLOURS = ("#2a9d8f", "#e76f51", "#6a4c93", "#8ab17d", "#bc6c25", "#577590")
SAMPLE_FIELDS = (("mass_g", "Sample mass (g)"), ("pore_volume_cm3_g", "Pore volume (cm³/g)"),
                 ("surface_area_m2_g", "Surface area (m²/g)"), ("d100_angstrom", "X-ray d₁₀₀ (Å)"))


FIT_FILES = ("porefill-fit.csv", *(p.name for p in companion_paths("porefill-fit.csv")))


class MeasuredView(pn.viewable.Viewer):
    """Upload, column mapping, sample description, overlay with residuals, and the fit."""

    state = param.ClassSelector(class_=ExplorerState)

    def __init__(self, **params):
        super().__init__(**params)
        self.dropper = pn.widgets.FileDropper(multiple=True, accepted_filetypes=ACCEPTED, max_file_size="64MB",
                                              max_total_file_size="200MB", chunk_size=4_000_000,
                                              name="Measured isotherms", css_classes=["porefill-dropper"],
                                              sizing_mode="stretch_width")
        self.file_select = pn.widgets.Select(name="File", options=[], width=250)
        self.columns = {name: pn.widgets.Select(name=label, options=[FROM_FILE], value=FROM_FILE, width=160)
                        for name, label in (("pressure", "Pressure column"), ("amount", "Amount column"),
                                            ("leg", "Leg column"), ("temperature", "Temperature column"))}
        self.pressure_unit = pn.widgets.Select(name="Pressure unit", options=[FROM_FILE, *PRESSURE_UNITS], width=160)
        self.amount_unit = pn.widgets.Select(name="Amount unit", options=[FROM_FILE, *MEASURED_AMOUNT_UNITS],
                                             width=160)
        self.reread = pn.widgets.Button(name="Read the file with these choices", width=250)
        self.problems = pn.pane.HTML("", css_classes=["porefill-file-problems"], sizing_mode="stretch_width",
                                     styles={"font-size": "13px"})
        self.sample_inputs = {name: pn.widgets.FloatInput(name=label, value=None, start=0.0, width=150)
                              for name, label in SAMPLE_FIELDS}
        self.sample_note = pn.pane.HTML("", css_classes=["porefill-sample-note"], styles={"font-size": "12px"})
        self.axis = pn.widgets.RadioButtonGroup(options={AXIS_LABELS[k]: k for k in AXES}, value="pressure")
        # amounts drawn in the files' own unit when they share one (and the sample allows it), else per nm
        self.amount_display = pn.widgets.Select(name="Amounts shown in", options={"coverage per nm of pore": PER_NM},
                                                value=PER_NM, width=220, css_classes=["porefill-amount-display"])
        self._display_default = True       # the choice follows the files until the user picks one
        self.caption = pn.pane.HTML("", css_classes=["porefill-overlay-caption"], sizing_mode="stretch_width",
                                    styles={"font-size": "13px"})
        self.free = pn.widgets.CheckBoxGroup(options=list(FREE_PARAMETERS),
                                             value=["wall-strength", "size", "pore-volume"], inline=True)
        self.fit_button = pn.widgets.Button(name="Fit", button_type="primary", width=120,
                                            css_classes=["porefill-fit-button"])
        self.cancel_button = pn.widgets.Button(name="Cancel", width=100, disabled=True)
        self.drop_high = pn.widgets.Checkbox(name="Leave out points above p₀", value=False,
                                             css_classes=["porefill-drop-above-p0"])
        self.progress = pn.indicators.Progress(value=0, max=1000, width=300, visible=False)
        self.fit_status = pn.pane.HTML("", css_classes=["porefill-fit-status"], sizing_mode="stretch_width")
        self.fit_result = pn.pane.HTML("", css_classes=["porefill-fit-result"], sizing_mode="stretch_width")
        self.use_fit = pn.widgets.Button(name="Use the fitted pore and sample", width=250, disabled=True)
        # one table per file (porefill.explorer.outputs.fit_export): points with residuals, parameters, model curves
        self.download = pn.widgets.FileDownload(callback=self.fit_csv, filename=FIT_FILES[0],
                                                label="Download the points and residuals (CSV)", width=300,
                                                disabled=True)
        self.download_parameters = pn.widgets.FileDownload(
            callback=lambda: self._fit_file("parameters"), filename=FIT_FILES[1],
            label="Download the fitted parameters (CSV)", width=280, disabled=True)
        self.download_model = pn.widgets.FileDownload(
            callback=lambda: self._fit_file("model"), filename=FIT_FILES[2],
            label="Download the fitted model curves (CSV)", width=290, disabled=True)
        self._files: dict[str, dict] = {}          # name -> {"data": bytes, "result": ReadResult | None, ...}
        self._document_runs: tuple = ()             # runs a scenario file brought with it
        self._iso = None
        self._fit = None
        # the fitted model drawn since the fit finished: (FitResult, its isotherm, key of the scenario the fit
        # started from); None draws the Pore tab's model (`_shown_model`)
        self._fitted = None
        self._estimated_volume = None      # cm³/g: the pore volume drawn with when none was given
        self._job = None
        self._poller = None
        self._sources: list[ColumnDataSource] = []
        self._model_src = {b: ColumnDataSource({"x": [], "y": []}) for b in ("adsorption", "desorption")}
        self._before_src = {b: ColumnDataSource({"x": [], "y": []}) for b in ("adsorption", "desorption")}
        self._fig, self._res_fig = self._figures()
        self._plots = pn.Column(css_classes=["porefill-overlay"], sizing_mode="stretch_width")
        self.dropper.param.watch(self._dropped, "value")
        self.file_select.param.watch(self._show_file, "value")
        self.reread.on_click(self._reread)
        for w in self.sample_inputs.values():
            w.param.watch(self._sample_changed, "value")
        self.axis.param.watch(lambda *_: self._redraw(), "value")
        self.amount_display.param.watch(self._display_picked, "value")
        self.fit_button.on_click(self._start_fit)
        self.cancel_button.on_click(self._cancel_fit)
        self.use_fit.on_click(self._use_fit)
        self._sample_source: dict[str, str] = {}
        self._show_sample_sources()
        self._axis_for_gas()
        self.state.param.watch(self._axis_for_gas, "adsorbate")
        # the pore-size distribution of the same runs, beside the single-pore fit (porefill.explorer.views.distribution)
        self.distribution = DistributionView(state=self.state, owner=self, run_colours=RUN_COLOURS)

    def _display_picked(self, event) -> None:
        if getattr(self, "_setting_display", False):
            return
        self._display_default = False
        self._redraw()

    def _display_choices(self, runs) -> str:
        """Offer per nm and each file unit; keep the user's pick while it is offered, else the files' own."""
        options = {"coverage per nm of pore": PER_NM}
        for unit in dict.fromkeys(r.amount_unit for r in runs):
            if unit != PER_NM:
                options[f"{unit} (the file's unit)"] = unit
        value = self.amount_display.value
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

    # files -------------------------------------------------------------------------------------------
    async def _dropped(self, event) -> None:
        value = event.new or {}
        for name in list(self._files):
            if name not in value:
                del self._files[name]
        newest = None
        for name, data in value.items():
            if name not in self._files:
                raw = data.encode("utf-8") if isinstance(data, str) else bytes(data)
                # shown as it is while the worker reads it (another event may redraw meanwhile)
                self._files[name] = {"data": raw, "choices": ColumnMap(), "sheet": None, "result": None,
                                     "error": f"{name}: still being read"}
                await self._read(name)
                newest = name
        self._fitted = None
        self.file_select.options = list(self._files)
        if newest is not None:
            self.file_select.value = newest            # the file just dropped is the one to look at
        elif self._files and self.file_select.value not in self._files:
            self.file_select.value = next(iter(self._files))
        self._show_file()
        self._redraw()

    async def _read(self, name: str) -> None:
        """Read a dropped file in a worker process of its own (`porefill.explorer.jobs.file_parse`): other
        sessions go on meanwhile, and a file past the time or memory limit gets one line naming it."""
        entry = self._files[name]
        try:
            entry["result"], entry["error"] = await parse_off_loop(
                read_measured, name, entry["data"], columns=entry["choices"], sheet=entry["sheet"], file_name=name,
                refusals=(MeasuredFileError,)), None
        except ParseRefused as exc:
            entry["result"], entry["error"] = None, str(exc)
        except Exception as exc:        # noqa: BLE001 - a reader bug must not take the session with it
            entry["result"], entry["error"] = None, f"{name}: could not be read ({type(exc).__name__})"

    def _show_file(self, *_):
        name = self.file_select.value
        entry = self._files.get(name)
        if entry is None:
            self.problems.object = ""
            return
        result = entry.get("result")
        if result is None:
            self.problems.object = f"<p class='porefill-file-error'><b>Not used:</b> {html.escape(entry['error'])}</p>"
            return
        cols = list(result.columns)
        for key, widget in self.columns.items():
            widget.options = [FROM_FILE, *cols] if key in ("pressure", "amount") else [FROM_FILE, NO_COLUMN, *cols]
            chosen = getattr(entry["choices"], key)
            widget.value = FROM_FILE if chosen is None else (NO_COLUMN if chosen == "" else chosen)
        self.pressure_unit.value = entry["choices"].pressure_unit or FROM_FILE
        self.amount_unit.value = entry["choices"].amount_unit or FROM_FILE
        lines = [f"<p><b>{html.escape(name)}</b>: {len(result.runs)} run(s) — "
                 + ", ".join(html.escape(f"{r.name} ({r.amount.size} points)") for r in result.runs) + "</p>"]
        used = result.used
        lines.append(f"<p>Read as: pressure <code>{html.escape(str(used.pressure))}</code> in "
                     f"{html.escape(str(used.pressure_unit))}, amount <code>{html.escape(str(used.amount))}</code> in "
                     f"{html.escape(str(used.amount_unit))}.</p>")
        if result.to_choose:
            lines.append("<p class='porefill-file-error'><b>Choose:</b> " + html.escape(", ".join(result.to_choose))
                         + " (the header does not say).</p>")
        if result.problems:
            shown = result.problems[:12]
            more = len(result.problems) - len(shown)
            lines.append("<ul>" + "".join(f"<li>{html.escape(str(p))}</li>" for p in shown)
                         + (f"<li>… and {more} more</li>" if more else "") + "</ul>")
        self.problems.object = "".join(lines)

    async def _reread(self, *_):
        name = self.file_select.value
        if name not in self._files:
            return

        def pick(key):
            v = self.columns[key].value
            return None if v == FROM_FILE else ("" if v == NO_COLUMN else v)

        unit = lambda w: None if w.value == FROM_FILE else w.value     # noqa: E731
        self._files[name]["choices"] = ColumnMap(pressure=pick("pressure"), amount=pick("amount"),
                                                 leg=pick("leg"), temperature=pick("temperature"),
                                                 pressure_unit=unit(self.pressure_unit),
                                                 amount_unit=unit(self.amount_unit))
        await self._read(name)
        self._fitted = None
        self._show_file()
        self._redraw()

    def runs(self) -> list:
        """The runs a scenario file brought and those of every dropped file."""
        dropped = [r for e in self._files.values() if e.get("result") is not None for r in e["result"].runs]
        return [*self._document_runs, *dropped]

    def show_document(self, doc) -> None:
        """Show what a scenario file holds for this tab: its measured runs (as copied into the file) and its
        sample, each value with the source the file gives."""
        self._document_runs = tuple(doc.measured)
        self._fitted = None
        self.distribution.show_saved(doc.distribution)
        if doc.sample is not None:
            self._setting_sample = True
            try:
                for name, widget in self.sample_inputs.items():
                    value = getattr(doc.sample, name, None)
                    widget.value = value
                    if value is not None:
                        self._sample_source[name] = doc.sample.source_of(name) or "typed"
            finally:
                self._setting_sample = False
            self._show_sample_sources()
        if self._document_runs:
            names = ", ".join(html.escape(f"{r.name} ({r.amount.size} points)") for r in self._document_runs)
            self.problems.object = f"<p><b>From the scenario file</b>: {len(self._document_runs)} run(s) — {names}</p>"
        self._redraw()

    # sample -----------------------------------------------------------------------------------------
    def sample(self) -> Sample:
        values = {name: (None if w.value in (None, 0) else float(w.value)) for name, w in self.sample_inputs.items()}
        sources = tuple((n, self._sample_source.get(n, "typed")) for n, v in values.items() if v is not None)
        return Sample(**values, sources=sources)

    def _sample_changed(self, event) -> None:
        name = next(n for n, w in self.sample_inputs.items() if w is event.obj)
        if not getattr(self, "_setting_sample", False):
            self._sample_source[name] = "typed"
            self._fitted = None          # a value typed by hand: the model of these inputs, not the fit
        self._show_sample_sources()
        self._redraw()

    def _show_sample_sources(self) -> None:
        parts = []
        for name, label in SAMPLE_FIELDS:
            value = self.sample_inputs[name].value
            where = self._sample_source.get(name, "typed") if value not in (None, 0) else "not given"
            parts.append(f"{html.escape(label.split(' (')[0])}: {where}")
        self.sample_note.object = "<p>" + "; ".join(parts) + ". Amounts per gram are drawn with the pore volume " \
                                  "given, else one estimated from the data, and the fit frees it; dosed amounts " \
                                  "need the mass; d₁₀₀ ties the wall to the side (a₀ = 2·d₁₀₀/√3).</p>"

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

    # fit ---------------------------------------------------------------------------------------------
    def _start_fit(self, *_):
        runs = self.runs()
        if not runs:
            self.fit_status.object = "<p class='porefill-fit-error'>Drop a measured isotherm first.</p>"
            return
        from porefill.physics.fitting.model import drop_above_p0

        scenario = self.state.scenario()
        kept, said = drop_above_p0(runs, scenario.adsorbate, scenario.temperature_k)
        if said and not self.drop_high.value:
            self.fit_status.object = ("<p class='porefill-fit-error'>Points above the model's p₀: "
                                      + "; ".join(html.escape(t) for t in said).replace("left out", "recorded")
                                      + ". Tick “Leave out points above p₀” to fit the rest.</p>")
            return
        if not kept:
            self.fit_status.object = "<p class='porefill-fit-error'>Every point lies above p₀: nothing to fit.</p>"
            return
        try:
            request = FitRequest(scenario=scenario, runs=tuple(kept), sample=self.sample(),
                                 free=tuple(self.free.value))
        except ValueError as exc:
            self.fit_status.object = f"<p class='porefill-fit-error'>{html.escape(str(exc))}</p>"
            return
        from porefill.explorer.jobs.fit_job import start_fit

        self._job = start_fit(request)
        self.fit_button.disabled, self.cancel_button.disabled = True, False
        self.progress.value, self.progress.visible = 0, True
        self.fit_status.object = "<p>Starting the fit …" + "".join(
            f" {html.escape(t)}." for t in said) + "</p>"
        self._poller = pn.state.add_periodic_callback(self._poll, period=300)

    def _cancel_fit(self, *_):
        if self._job is not None:
            self._job.cancel()
            self.fit_status.object = "<p>Cancelling …</p>"

    def _poll(self) -> None:
        job = self._job
        if job is None:
            return
        for message in job.poll():
            kind = message[0]
            if kind == "progress":
                self.progress.value = int(1000 * message[1])
                self.fit_status.object = f"<p>{html.escape(message[2])}</p>"
            elif kind == "done":
                self._fit_done(message[1])
            elif kind in ("cancelled", "error"):
                word = "Cancelled" if kind == "cancelled" else "The fit failed"
                self.fit_status.object = (f"<p class='porefill-fit-error'><b>{word}:</b> "
                                          f"{html.escape(message[1])}</p>")
        if job.finished:
            self._job = None
            if self._poller is not None:
                self._poller.stop()
                self._poller = None
            self.fit_button.disabled, self.cancel_button.disabled = False, True
            self.progress.visible = False

    def _fit_done(self, done) -> None:
        """A fit finished (`porefill.explorer.jobs.fit_job.FitDone`): its table, and the overlay and residuals
        redrawn against the fitted model at once (the Pore tab keeps its scenario until "Use the fitted pore
        and sample")."""
        result = done.result
        self._fit = result
        if done.isotherm is not None:
            self._fitted = (result, done.isotherm, model_key(result.request.scenario))
            _remember(result.scenario, done.isotherm)    # taking the fitted pore then redraws the Pore tab at once
        stats = result.statistics()
        rows = "".join(self._parameter_row(result, name, value, err)
                       for name, (value, err) in result.parameters.items())
        warnings = "".join(f"<li>{html.escape(w)}</li>" for w in result.warnings)
        self.fit_result.object = (
            "<table class='porefill-fit-table'><caption style='text-align:left'><b>Fitted parameters</b></caption>"
            "<tr><th>parameter</th><th>value</th><th>standard error</th><th>unit</th><th>note</th></tr>"
            f"{rows}</table>"
            f"<p>{statistic_label('chi2')} = {stats['chi2']:.4g}, {statistic_label('reduced_chi2')} = "
            f"{stats['reduced_chi2']:.3g}, {statistic_label('r_squared')} = {stats['r_squared']:.4f}, "
            f"{stats['points']} {statistic_label('points')}, {stats['evaluations']} "
            f"{statistic_label('evaluations')}.</p>"
            + (f"<ul class='porefill-fit-warnings'>{warnings}</ul>" if warnings else ""))
        self.fit_status.object = ("<p>Fit finished: the plot and residuals show the fitted model.</p>"
                                  if done.isotherm is not None else
                                  "<p>Fit finished; the fitted model cannot be drawn here "
                                  f"({html.escape(done.isotherm_error)}).</p>")
        self.use_fit.disabled = self.download.disabled = False
        self.download_parameters.disabled = self.download_model.disabled = False
        self._redraw()

    @staticmethod
    def _parameter_row(result, name: str, value: float, err: float) -> str:
        """One row of the fit table: what the parameter is (its label and meaning, the machine name beside),
        value, standard error, unit, and a note where the error is unreliable (near a bound)."""
        from porefill.physics.substances.materials import pair_parameters

        scenario = result.scenario
        label, meaning = parameter_label(name, scenario.shape)
        if name == "wall-strength":
            eps = pair_parameters(scenario.adsorbate, scenario.solid).epsilon_k
            meaning = (f"multiplies the built-in {scenario.adsorbate}–{scenario.solid} ε of {eps:.4g} K "
                       f"(ε = {value * eps:.4g} K)")
        side = near_bound(value, err, result.bounds[name])
        note = (f"near its {side} bound ({result.bounds[name][0 if side == 'lower' else 1]:g}): error unreliable"
                if side else "")
        error = "—" if not np.isfinite(err) else f"{err:.2g}"
        return (f"<tr data-parameter='{html.escape(name)}'><td><b>{html.escape(label)}</b><br>"
                f"<small>{html.escape(meaning)} (<code>{html.escape(name)}</code>)</small></td>"
                f"<td class='porefill-fit-value'>{value:.5g}</td><td class='porefill-fit-stderr'>{error}</td>"
                f"<td>{html.escape(PARAMETER_UNITS.get(name, '')) or '—'}</td>"
                f"<td class='porefill-fit-note'>{html.escape(note)}</td></tr>")

    def _use_fit(self, *_):
        result = self._fit
        if result is None:
            return
        current = self.state.scenario()
        new = carry_to(result, current)
        if current.adsorbate == result.scenario.adsorbate:
            new = new.replace(pair_epsilon_k=result.scenario.pair_epsilon_k)
        self.state.base = new
        self.state.param.update(size_angstrom=new.size_angstrom,
                                **({"wall_angstrom": new.wall_angstrom} if new.wall_angstrom is not None else {}))
        self._setting_sample = True
        try:
            for name, value in result.sample.to_dict().items():
                if name in self.sample_inputs and value is not None:
                    self.sample_inputs[name].value = value
                    self._sample_source[name] = dict(result.sample.sources).get(name, "fitted")
        finally:
            self._setting_sample = False
        self._show_sample_sources()

    def fit_csv(self) -> io.BytesIO:
        """The measured points against the fit, every term of each residual (measured − model) in its row."""
        return self._fit_file("points")

    def _fit_file(self, which: str) -> io.BytesIO:
        from porefill.explorer.outputs import fit_export

        result = self._fit
        if result is None:
            return io.BytesIO(b"no fit yet\n")
        text = {"points": lambda: fit_export.points_csv(result, name=FIT_FILES[0]),
                "parameters": lambda: fit_export.parameters_csv(result),
                "model": lambda: fit_export.model_csv(result)}[which]()
        return io.BytesIO(text.encode("utf-8"))

    def __panel__(self):
        # FlexBox wraps its menus onto the next line on a narrow screen (a Row keeps them on one line,
        # ~1150 px, and widened the whole page past a 1024 px screen)
        mapping = pn.FlexBox(self.file_select, *self.columns.values(), self.pressure_unit, self.amount_unit,
                             flex_wrap="wrap", sizing_mode="stretch_width")
        sample = pn.FlexBox(*self.sample_inputs.values(), flex_wrap="wrap", sizing_mode="stretch_width")
        fit = pn.Column(pn.pane.HTML("<b>Free parameters</b>"), self.free,
                        pn.Row(self.fit_button, self.cancel_button, self.progress), self.drop_high,
                        self.fit_status,
                        self.fit_result, pn.Row(self.use_fit, self.download, self.download_parameters,
                                                self.download_model, styles={"flex-wrap": "wrap"}),
                        css_classes=["porefill-fit"])
        return pn.Column(pn.pane.HTML("<h3>Measured isotherms</h3>"), self.dropper, mapping, self.reread,
                         self.problems, pn.pane.HTML("<b>Sample</b>"), sample, self.sample_note,
                         pn.FlexBox(self.axis, self.amount_display, flex_wrap="wrap", align_items="center"),
                         self.caption, self._plots, fit, self.distribution, sizing_mode="stretch_width",
                         css_classes=["porefill-measured"])


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
