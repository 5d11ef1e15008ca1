"""Measured isotherms: drop the lab's files, map columns and units, see them over the model, fit.

This module holds the tab's files and sample; the overlay is drawn by `porefill.explorer.views.measured_drawing`
and the fit run by `porefill.explorer.views.measured_fit` (the view's two mixins).

Files arrive in chunks (`pn.widgets.FileDropper`), are read in memory by `porefill.explorer.files.measured` (parsed, never
executed or written to disk), and drawn over the isotherm the Pore tab shows (`porefill.explorer.views.overlay`). The fit
runs in a process of its own (`porefill.explorer.jobs.fit_job`, a background `ProcessJob`) with progress and cancel.
"""
from __future__ import annotations

import html

import panel as pn
import param

from porefill.physics.choices import AXIS_LABELS
from porefill.physics.fitting.measured import MEASURED_AMOUNT_UNITS, Sample
from porefill.physics.substances.units import PRESSURE_UNITS

from porefill.explorer.files.measured import ColumnMap, MeasuredFileError, read_measured
from porefill.explorer.jobs.file_parse import ParseRefused, parse_off_loop
from porefill.explorer.views.distribution import DistributionView
from porefill.explorer.views.measured_drawing import OVERLAY_MAX, RUN_COLOURS, OverlayDrawing
from porefill.explorer.views.measured_fit import FIT_FILES, FitSection
from porefill.explorer.views.overlay import AXES, PER_NM
from porefill.explorer.views.state import ExplorerState

__all__ = ["MeasuredView", "ACCEPTED", "FIT_FILES", "OVERLAY_MAX", "RUN_COLOURS"]

ACCEPTED = [".csv", ".txt", ".tsv", ".dat", ".xlsx"]
FROM_FILE = "(from the header)"
NO_COLUMN = "(none)"
SAMPLE_FIELDS = (("mass_g", "Sample mass (g)"), ("pore_volume_cm3_g", "Pore volume (cm³/g)"),
                 ("surface_area_m2_g", "Surface area (m²/g)"), ("d100_angstrom", "X-ray d₁₀₀ (Å)"))


class MeasuredView(OverlayDrawing, FitSection, pn.viewable.Viewer):
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
        self.axis = pn.widgets.RadioButtonGroup(options={AXIS_LABELS[k]: k for k in AXES}, value="pressure",
                                                css_classes=["porefill-overlay-axis"])
        # amounts drawn in the files' own unit when they share one (and the sample allows it), else per nm
        self.amount_display = pn.widgets.Select(name="Amounts shown in", options={"coverage per nm of pore": PER_NM},
                                                value=PER_NM, width=220, css_classes=["porefill-amount-display"])
        self._display_default = True       # the choice follows the files until the user picks one
        self.caption = pn.pane.HTML("", css_classes=["porefill-overlay-caption"], sizing_mode="stretch_width",
                                    styles={"font-size": "13px"})
        self._build_fit_controls()
        self._files: dict[str, dict] = {}          # name -> {"data": bytes, "result": ReadResult | None, ...}
        self._document_runs: tuple = ()             # runs a scenario file brought with it
        self._iso = None
        # the fitted model drawn since the fit finished: (FitResult, its isotherm, key of the scenario the fit
        # started from); None draws the Pore tab's model (`_shown_model`)
        self._fitted = None
        self._estimated_volume = None      # cm³/g: the pore volume drawn with when none was given
        self._build_overlay()
        self.dropper.param.watch(self._dropped, "value")
        self.file_select.param.watch(self._show_file, "value")
        self.reread.on_click(self._reread)
        for w in self.sample_inputs.values():
            w.param.watch(self._sample_changed, "value")
        self.axis.param.watch(lambda *_: self._redraw(), "value")
        self.amount_display.param.watch(self._display_picked, "value")
        self._sample_source: dict[str, str] = {}
        self._show_sample_sources()
        self._axis_for_gas()
        self.state.param.watch(self._axis_for_gas, "adsorbate")
        # the pore-size distribution of the same runs, beside the single-pore fit (porefill.explorer.views.distribution)
        self.distribution = DistributionView(state=self.state, owner=self, run_colours=RUN_COLOURS)

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
                                  "given (a Gurvich volume: the liquid a full pore holds), else one estimated from " \
                                  "the data, and the fit frees it; dosed amounts " \
                                  "need the mass; d₁₀₀ ties the wall to the side (a₀ = 2·d₁₀₀/√3).</p>"

    def __panel__(self):
        # FlexBox wraps its menus onto the next line on a narrow screen (a Row keeps them on one line,
        # ~1150 px, and widened the whole page past a 1024 px screen)
        mapping = pn.FlexBox(self.file_select, *self.columns.values(), self.pressure_unit, self.amount_unit,
                             flex_wrap="wrap", sizing_mode="stretch_width")
        sample = pn.FlexBox(*self.sample_inputs.values(), flex_wrap="wrap", sizing_mode="stretch_width")
        fit = self._fit_panel()
        return pn.Column(pn.pane.HTML("<h3>Measured isotherms</h3>"), self.dropper, mapping, self.reread,
                         self.problems, pn.pane.HTML("<b>Sample</b>"), sample, self.sample_note,
                         pn.FlexBox(self.axis, self.amount_display, flex_wrap="wrap", align_items="center"),
                         self.caption, self._plots, fit, self.distribution, sizing_mode="stretch_width",
                         css_classes=["porefill-measured"])
