"""Save and open scenario files, the link that reopens the page, the report, and figures for slides.

- **Save scenario** writes the TOML of what is on screen (`porefill.explorer.files.scenario_file.dump_document`): the
  inputs, the sample, measured runs, fit and pore-size distribution (from the Measured data tab, else as
  loaded), and the view choices (isotherm axis, branch, picked pressure, tab, the Measured data and Sizing
  tabs' inputs: `porefill.explorer.views.tab_choices`).
- **Open scenario** reads a TOML file from the browser: parsed in memory, never executed or written to
  disk; a bad file is named with its line and key in a message, and the page keeps what it had.
- The page's URL carries the pore and gas controls (`URL_KEYS`, `pn.state.location`) and the Measured data
  and Sizing tabs' inputs that differ from the page's first (`porefill.explorer.views.tab_link`), so a
  copied link reopens the same inputs; a link with values the dashboard refuses says so and keeps the
  scenario's values instead.
- **Report** and **figures** (PNG 1920 px wide, SVG) are drawn on the server by matplotlib in a worker
  process (`porefill.explorer.outputs.report`, `porefill.explorer.outputs.figures`); their buttons show a loading state meanwhile.
"""
from __future__ import annotations

import asyncio
import html
import io
import logging
import math
import re
from functools import partial

import panel as pn
import param

from porefill.explorer.jobs.background import PoolJob
from porefill.explorer.jobs.compute import TIME_LIMIT_S, isotherm_pool, on_session, short_error
from porefill.explorer.jobs.file_parse import ParseRefused, parse_off_loop
from porefill.explorer.outputs.figures import FIGURES, figure_job
from porefill.explorer.files.scenario_file import MAX_SCENARIO_BYTES, TABS, ScenarioDocument, ScenarioFileError, ViewChoices, dump_document, parse_document
from porefill.explorer.views.state import ExplorerState

__all__ = ["ScenarioIO", "URL_KEYS", "MAX_SCENARIO_BYTES", "report_job"]

log = logging.getLogger("porefill.explorer")
URL_KEYS = ("shape", "size_angstrom", "wall_angstrom", "isolated", "adsorbate", "temperature_k", "pore_ends",
            "site_model", "plating", "plating_layers")
_APPLY_ORDER = ("adsorbate", "shape", "isolated", "wall_angstrom", "size_angstrom", "temperature_k", "pore_ends",
                "site_model", "plating", "plating_layers")
# the first word of each tab's title (explorer.views.dashboard), for every name in porefill.physics.choices.TABS
_TAB_NAMES = {"pore": "Pore", "quantum": "Quantum", "measured": "Measured", "sizing": "Sizing", "about": "About"}
WIDTH = 220


def report_job(toml_text: str) -> bytes:
    """The report of a scenario file's text, as UTF-8 bytes (runs in a worker process)."""
    from porefill.explorer.outputs.report import build_report

    return build_report(parse_document(toml_text, name="the page's scenario")).encode("utf-8")


async def _in_worker(fn, *args):
    """``fn(*args)`` as a background job in the shared worker pool (`PoolJob`), awaited within the time limit."""
    job = PoolJob(isotherm_pool(), fn, args, name=getattr(fn, "__name__", "job"))
    try:
        return await asyncio.wait_for(asyncio.wrap_future(job.future), timeout=TIME_LIMIT_S)
    except asyncio.TimeoutError:
        job.cancel()
        raise TimeoutError(TIME_LIMIT_S) from None


_UNITS = {"size_angstrom": "Å", "wall_angstrom": "Å", "temperature_k": "K"}


def _shown(value, limit: int = 80) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[:limit - 1] + "…"


def _link_refusal(state: ExplorerState, key: str, value) -> str | None:
    """What ``state``'s control ``key`` accepts, in plain words, when ``value`` is not it; None when the
    control would take it (the scenario's own check refused it then)."""
    p = state.param[key]
    if isinstance(p, param.Selector):
        return None if value in p.objects else f"must be one of {', '.join(map(str, p.objects))}"
    if isinstance(p, param.Boolean):
        return None if isinstance(value, bool) else "must be true or false"
    if isinstance(p, param.Number):
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            return "must be a number"
        if isinstance(value, float) and not math.isfinite(value):
            return "must be a finite number"
        lo, hi = p.bounds
        if (lo is not None and value < lo) or (hi is not None and value > hi):
            where = {"size_angstrom": f" for a {state.shape}", "temperature_k": f" for {state.adsorbate}"}
            return f"must be between {lo:g} and {hi:g} {_UNITS.get(key, '')}".rstrip() + where.get(key, "")
    return None


def refused_link_message(wanted: dict, refused: dict) -> str:
    """One line for a link's refused values: each query key, its value and what it accepts."""
    words = "; ".join(f"{k} = {_shown(wanted[k])} ({why})" for k, why in refused.items())
    return f"This link asked for values the dashboard cannot show: {words}. The scenario's values are shown instead."


def _plain(exc: BaseException) -> str:
    """An exception's first line without param's class and parameter names (a safety net: the controls'
    refusals are worded by `_link_refusal`)."""
    text = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
    return re.sub(r"\b\w+ parameter '[\w.]+' ", "", text)[:160]


class ScenarioIO(pn.viewable.Viewer):
    """The scenario's file and link controls, beside the pore controls."""

    state = param.ClassSelector(class_=ExplorerState)
    document = param.ClassSelector(class_=ScenarioDocument, doc="The loaded file: what the controls do not hold")
    isotherm = param.Parameter(default=None, doc="The IsothermView (axis, branch, picked pressure)")
    measured = param.Parameter(default=None, doc="The MeasuredView (runs, sample, fit), if the page has one")
    sizing = param.Parameter(default=None, doc="The SizingView (its inputs are saved), if the page has one")
    tabs = param.Parameter(default=None, doc="The page's pn.Tabs (the tab on show is saved)")

    def __init__(self, **params):
        super().__init__(**params)
        if self.document is None:
            self.document = ScenarioDocument(self.state.scenario())
        self.save = pn.widgets.FileDownload(callback=self.toml_file, filename="porefill-scenario.toml",
                                            label="Save scenario (TOML)", width=WIDTH,
                                            css_classes=["porefill-save-scenario"])
        self.open = pn.widgets.FileInput(accept=".toml", multiple=False, width=WIDTH, name="Open scenario (TOML)",
                                         css_classes=["porefill-open-scenario"])
        self.report = pn.widgets.FileDownload(callback=self.report_file, filename="porefill-report.html",
                                              label="Report (HTML, opens offline)", width=WIDTH,
                                              css_classes=["porefill-report-button"])
        self.figure = pn.widgets.Select(name="Figure for slides", options={v: k for k, v in FIGURES.items()},
                                        value="isotherm", width=WIDTH)
        self.png = pn.widgets.FileDownload(callback=self._figure_png, filename="porefill-isotherm.png",
                                           label="PNG, 1920 px", width=WIDTH // 2 - 10,
                                           css_classes=["porefill-figure-png"])
        self.svg = pn.widgets.FileDownload(callback=self._figure_svg, filename="porefill-isotherm.svg",
                                           label="SVG", width=WIDTH // 2 - 10, css_classes=["porefill-figure-svg"])
        self.message = pn.pane.HTML("", css_classes=["porefill-scenario-message"], width=WIDTH, visible=False,
                                    styles={"font-size": "12px", "color": "#8a4b00"})
        self.open.param.watch(self._opened, "value")
        self.figure.param.watch(self._rename_figures, "value")
        self._pending_pick = None
        if self.isotherm is not None and hasattr(self.isotherm, "listeners"):
            self.isotherm.listeners.append(self._isotherm_arrived)
        self.apply_view(self.document.view)

    # saving ----------------------------------------------------------------------------------------
    def view_choices(self) -> ViewChoices:
        """The isotherm view's axis, branch and picked pressure and the tab on show, as a file keeps them."""
        axis, branch, pick, tab = "pressure", "equilibrium", None, "pore"
        iso = self.isotherm
        if iso is not None:
            axis = iso.x_axis.value
            branch = iso.branch.value
            if getattr(iso, "_iso", None) is not None:
                pick = float(iso.pick.value)
        if self.tabs is not None:
            name = self.tabs._names[self.tabs.active] if self.tabs.active < len(self.tabs) else ""  # noqa: SLF001
            tab = next((k for k, v in _TAB_NAMES.items() if str(name).startswith(v)), "pore")
        from porefill.explorer.views.tab_choices import measured_choices, sizing_choices

        return ViewChoices(axis=axis, branch=branch, pick_log10_pa=pick, tab=tab,
                           measured=None if self.measured is None else measured_choices(self.measured),
                           sizing=None if self.sizing is None else sizing_choices(self.sizing))

    def current_document(self) -> ScenarioDocument:
        """What Save writes: the state's scenario, the measured tab's runs, sample, fit and pore-size
        distribution when it has them (else those of the loaded file), and the view choices."""
        doc = self.document.replace(scenario=self.state.scenario(), view=self.view_choices())
        m = self.measured
        if m is not None:
            runs = tuple(m.runs())
            if runs:
                doc = doc.replace(measured=runs)
            sample = m.sample()
            if sample.to_dict():
                doc = doc.replace(sample=sample)
            result = getattr(m, "_fit", None)
            if result is not None:
                from porefill.explorer.files.saved_fit import SavedFit
                doc = doc.replace(fit=SavedFit.from_result(result))
            shown = getattr(getattr(m, "distribution", None), "saved", None)
            if shown is not None:          # the pore-size distribution on show, found here or reopened
                doc = doc.replace(distribution=shown)
        return doc

    def toml_text(self) -> str:
        return dump_document(self.current_document())

    def toml_file(self) -> io.BytesIO:
        return io.BytesIO(self.toml_text().encode("utf-8"))

    async def report_file(self) -> io.BytesIO:
        """The report of what is on screen, built in a worker (seconds to a minute): the button shows
        that it is busy meanwhile."""
        return await self._busy(self.report, report_job, self.toml_text())

    async def _figure(self, fmt: str, widget) -> io.BytesIO:
        sc = self.state.scenario().model_key()
        choices = self.view_choices()
        pick = None if choices.pick_log10_pa is None else 10.0 ** choices.pick_log10_pa
        job = partial(figure_job, sc, self.figure.value, fmt, pick_pa=pick, branch=choices.branch)
        return await self._busy(widget, job)

    async def _figure_png(self):
        return await self._figure("png", self.png)

    async def _figure_svg(self):
        return await self._figure("svg", self.svg)

    async def _busy(self, widget, fn, *args) -> io.BytesIO:
        widget.loading = True
        try:
            data = await _in_worker(fn, *args)
        except Exception as exc:          # noqa: BLE001 - said on the page, logged here
            log.warning("%s failed", getattr(fn, "__name__", fn), exc_info=True)
            self._say(f"Could not make it: {short_error(exc)}")
            return io.BytesIO(f"porefill could not make this file: {short_error(exc)}\n".encode("utf-8"))
        finally:
            widget.loading = False
        return io.BytesIO(data)

    def _rename_figures(self, *_):
        self.png.filename = f"porefill-{self.figure.value}.png"
        self.svg.filename = f"porefill-{self.figure.value}.svg"

    # opening ---------------------------------------------------------------------------------------
    def _say(self, text: str) -> None:
        self.message.object = f"<p>{html.escape(text)}</p>" if text else ""
        self.message.visible = bool(text)

    async def _opened(self, event) -> None:
        data, name = event.new, str(self.open.filename or "scenario.toml")
        if not data:
            return
        if len(data) > MAX_SCENARIO_BYTES:
            self._say(f"{name}: {len(data) / 1e6:.1f} MB is more than a scenario file holds "
                      f"(at most {MAX_SCENARIO_BYTES / 1e6:.0f} MB); nothing was changed.")
            return
        try:
            text = bytes(data).decode("utf-8")
        except UnicodeDecodeError as exc:
            self._say(f"{name}: not UTF-8 text (byte {exc.start}); nothing was changed.")
            return
        try:     # parsed in a worker process of its own, with a time and a memory limit (jobs.file_parse)
            doc = await parse_off_loop(parse_document, text, name=name, file_name=name,
                                       refusals=(ScenarioFileError, ValueError))
        except (ParseRefused, ValueError) as exc:
            self._say(f"{exc} Nothing was changed.")
            return
        # after the await this coroutine no longer holds the document's lock, and the views change Bokeh models
        # of their own (the isotherm's axis shows another figure): shown on the session's next tick, locked
        session = pn.state.curdoc
        if session is not None and session.session_context is not None:
            on_session(session, partial(self._show_opened, doc, name))
        else:
            self._show_opened(doc, name)

    def _show_opened(self, doc: ScenarioDocument, name: str) -> None:
        try:
            self.apply_document(doc)
        except ValueError as exc:
            self._say(f"{exc} Nothing was changed.")
            return
        self._say("")
        pn.state.notifications and pn.state.notifications.success(f"Opened {html.escape(name)}", duration=3000)   # shown as HTML

    def apply_document(self, doc: ScenarioDocument) -> None:
        """Show ``doc``: its inputs in the controls, its view choices; ValueError (and nothing changed) when
        the controls cannot hold its inputs."""
        sc = doc.scenario
        values = {"shape": sc.shape, "size_angstrom": sc.size_angstrom, "isolated": sc.wall_angstrom is None,
                  "adsorbate": sc.adsorbate, "temperature_k": sc.temperature_k, "pore_ends": sc.pore_ends,
                  "site_model": sc.site_model_used, "plating": sc.plating or "none",
                  "plating_layers": sc.plating_layers or 1}
        if sc.wall_angstrom is not None:
            values["wall_angstrom"] = sc.wall_angstrom
        self._check_on_probe(sc, values)
        with param.edit_constant(self.state):          # the solid is set by files only, never by a control
            self.state.param.update(base=sc, solid=sc.solid, title=sc.title, adsorbate=sc.adsorbate)
        self.state.param.update(**{k: v for k, v in values.items() if k != "adsorbate"})
        self.document = doc
        if self.measured is not None:
            self.measured.show_document(doc)
        self.apply_view(doc.view)

    @staticmethod
    def _check_on_probe(sc, values: dict) -> None:
        """Build a throwaway state from ``sc`` first, so that a value the controls refuse changes nothing."""
        try:
            ExplorerState.from_scenario(sc).scenario()
        except ValueError as exc:
            raise ValueError(f"the dashboard's controls cannot show this scenario: "
                             f"{str(exc).splitlines()[0][:200]}") from None

    def apply_view(self, view: ViewChoices) -> None:
        from porefill.explorer.views.tab_choices import show_measured_choices, show_sizing_choices

        if self.measured is not None:
            show_measured_choices(self.measured, view.measured)
        if self.sizing is not None:
            show_sizing_choices(self.sizing, view.sizing)
        iso = self.isotherm
        if iso is not None:
            iso.x_axis.value = view.axis
            iso.branch.value = view.branch
            self._pending_pick = view.pick_log10_pa
            if getattr(iso, "_iso", None) is not None:
                self._isotherm_arrived(iso._shown, iso._iso)      # noqa: SLF001 - already on show
        if self.tabs is not None:
            self.show_tab(view.tab)

    def show_tab(self, tab: str) -> None:
        if tab not in TABS or self.tabs is None:
            return
        for i, name in enumerate(self.tabs._names):                 # noqa: SLF001 - Panel keeps titles there
            if str(name).startswith(_TAB_NAMES[tab]):
                self.tabs.active = i
                return

    def _isotherm_arrived(self, scenario, result) -> None:
        """Move the picked pressure to the file's once its isotherm is on show (the view picks its own
        when a new pressure range arrives)."""
        value, pick = self._pending_pick, self.isotherm.pick if self.isotherm is not None else None
        if value is None or result is None or pick is None:
            return
        if scenario is None or scenario.model_key() != self.document.scenario.model_key():
            return
        self._pending_pick = None
        if pick.start <= value <= pick.end:
            with param.edit_constant(pick):
                pick.param.update(value=value, value_throttled=value)

    # the link --------------------------------------------------------------------------------------
    def sync_url(self) -> None:
        """Tie the URL's query to the inputs: a link's values are applied (each checked; a refused one is
        named in a message and the scenario's is kept), then every change is written to the URL."""
        from urllib.parse import parse_qsl, urlencode

        loc, doc = pn.state.location, pn.state.curdoc
        if loc is None or doc is None or doc.session_context is None:
            return                       # a notebook or a test: no page URL of our own
        from porefill.explorer.views.tab_link import LINK_KEYS, TabLink

        # the tabs' inputs as the page opened, before the link's values: the link carries what differs
        tabs = (TabLink(self.measured, self.sizing) if self.measured is not None or self.sizing is not None
                else None)
        query = loc.query_params                 # numbers and booleans already decoded by Panel
        wanted = {k: query[k] for k in URL_KEYS if k in query}
        refused = self._apply_link(wanted) if wanted else {}
        if tabs is not None:       # after the pore's: a new shape or gas resets some of the tabs' inputs
            raw = dict(parse_qsl(loc.search.lstrip("?")))
            tab_refused = tabs.apply(query, raw)
            wanted.update({k: query[k] for k in tab_refused})
            refused.update(tab_refused)
        if refused:
            self._say(refused_link_message(wanted, refused))

        def tie():
            # once the page is up (the browser sends its own URL first): the refused values out of the URL,
            # so that the sync does not try them again, then the inputs into it from now on
            kept = [(k, v) for k, v in parse_qsl(loc.search.lstrip("?")) if k not in refused]
            if refused:
                loc.search = "?" + urlencode(kept) if kept else ""
            loc.sync(self.state, {k: k for k in URL_KEYS})
            if tabs is not None:
                loc.sync(tabs, {k: k for k in LINK_KEYS})

        pn.state.onload(tie)

    def _probe(self, values: dict) -> ExplorerState:
        """A throwaway state with ``values`` set in a safe order (the adsorbate first: it sets the
        temperature range); raises what a control or the scenario refuses."""
        probe = ExplorerState.from_scenario(self.state.scenario())
        for key in _APPLY_ORDER:
            if key in values:
                setattr(probe, key, values[key])
        probe.scenario()
        return probe

    def _apply_link(self, wanted: dict) -> dict:
        """Apply the link's values that a probe state accepts; {key: reason} of the refused ones."""
        refused, good = {}, {}
        for key in _APPLY_ORDER:
            if key not in wanted:
                continue
            try:
                self._probe({**good, key: wanted[key]})
            except Exception as exc:          # noqa: BLE001 - any refusal: name it, keep the scenario's
                refused[key] = _link_refusal(self._probe(good), key, wanted[key]) or _plain(exc)
                continue
            good[key] = wanted[key]
        if "adsorbate" in good:
            self.state.adsorbate = good.pop("adsorbate")
        if good:
            self.state.param.update(**good)
        return refused

    def __panel__(self):
        return pn.Column(pn.pane.HTML("<h3>Scenario</h3>"), self.save, self.open, self.message, self.report, self.figure, pn.Row(self.png, self.svg),
                         width=WIDTH + 10, css_classes=["porefill-scenario-io"])
