"""The Measured data tab's fit (`porefill.explorer.views.measured`): the parameters to free, the fit in a
process of its own (`porefill.explorer.jobs.fit_job`) with progress and cancel, the table of what it found,
taking the fitted pore and sample, and the fit's CSV files (`porefill.explorer.outputs.fit_export`)."""
from __future__ import annotations

import html
import io

import numpy as np
import panel as pn

from porefill.explorer.outputs.fit_export import companion_paths, parameter_label, statistic_label
from porefill.explorer.views.isotherm import _key as model_key, _remember
from porefill.physics.fitting.report import near_bound
from porefill.physics.fitting.solve import FREE_PARAMETERS, PARAMETER_UNITS, FitRequest, carry_to

__all__ = ["FitSection", "FIT_FILES", "DEFAULT_FREE"]

FIT_FILES = ("porefill-fit.csv", *(p.name for p in companion_paths("porefill-fit.csv")))
DEFAULT_FREE = ("wall-strength", "size", "pore-volume")


class FitSection:
    """The fit half of `MeasuredView`, a mixin: it fits the view's runs and sample (``runs()``, ``sample()``)
    with the scenario of its ``state``, and redraws the overlay (``_redraw``) against the fitted model."""

    def _build_fit_controls(self) -> None:
        self.free = pn.widgets.CheckBoxGroup(options=list(FREE_PARAMETERS),
                                             value=list(DEFAULT_FREE), inline=True,
                                             css_classes=["porefill-fit-free"])
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
        self._fit = None
        self._job = None
        self._poller = None
        self.fit_button.on_click(self._start_fit)
        self.cancel_button.on_click(self._cancel_fit)
        self.use_fit.on_click(self._use_fit)

    def _fit_panel(self):
        return pn.Column(pn.pane.HTML("<b>Free parameters</b>"), self.free,
                         pn.Row(self.fit_button, self.cancel_button, self.progress), self.drop_high,
                         self.fit_status,
                         self.fit_result, pn.Row(self.use_fit, self.download, self.download_parameters,
                                                 self.download_model, styles={"flex-wrap": "wrap"}),
                         css_classes=["porefill-fit"])

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
