"""Sizing map: the pressure of every layer step against side length (or temperature, or along the line an
X-ray d100 spacing ties wall to side), coloured by what fills, the apparatus's pressure window shaded,
and the pores that meet a stated target marked, in the plot and in a list beside it. When the Measured data
tab has carried a pore-size distribution to another gas (`porefill.explorer.views.distribution`), the band of
pressures over which each layer forms in that sample is listed here, and shaded across the plot when the sweep
is of the same gas at the same temperature.

Sweeps run off the event loop (`porefill.explorer.jobs.sweep_runner.SweepRunner`: worker processes shared by every
session, or a Dask scheduler whose address is typed in), with a progress bar and a Stop button; results
are cached per pore (`SWEEP_CACHE`), so going back to sizes already computed is instant. The HoloViews
plots are made with the first result, when this tab is on show: Bokeh figures laid into a hidden tab
before they were ever shown stall the painting of every other plot on the page.
"""
from __future__ import annotations

import html
import math
import threading
from functools import partial

import numpy as np
import panel as pn
import param

from porefill.explorer.files.page_choices import SWEEP_POINTS_RANGE, TARGET_LAYER_RANGE
from porefill.explorer.jobs.background import ThreadJob
from porefill.physics.choices import DEFAULT_POINTS, SIZE_NAMES
from porefill.physics.sweep import TARGET_KINDS, SweepSpec, Target, edge_words, meets, parse_range, wall_from_d100

from porefill.explorer.jobs.compute import on_session, short_error
from porefill.explorer.views.distribution import BAND_COLOURS
from porefill.explorer.views.state import ExplorerState, describe
from porefill.explorer.views.ticks import decade_ticker
from porefill.explorer.outputs.figures import SITE_FAMILY_COLOURS
from porefill.explorer.jobs.sweep_runner import SWEEP_CACHE, ClusterError, SweepRunner, estimate_seconds

__all__ = ["SizingView", "FILL_COLOURS"]

FILL_COLOURS = SITE_FAMILY_COLOURS       # porefill.explorer.outputs.figures: the same everywhere
MODES = {"side length": "size", "temperature (fixed side)": "temperature", "side length at a known d100": "d100"}
_NO_TARGET = "(no target)"


def _duration(seconds: float) -> str:
    """", about 2 min" — the sweep's rough time, said before it starts."""
    if seconds < 1.0:
        return ""
    if seconds < 90:
        return f", about {seconds:.0f} s"
    return f", about {seconds / 60:.0f} min" if seconds < 5400 else f", about {seconds / 3600:.1f} h"


def _size_words(shape: str) -> str:
    """What a sweep's size is, for labels: a cylinder's radius also names the diameter users think in."""
    return "radius (diameter = 2 × radius)" if shape == "cylinder" else SIZE_NAMES[shape]


def _temperatures_around(t: float) -> str:
    """The temperature sweep offered by default: six temperatures 0.5 K wide around ``t``."""
    return f"{max(t - 0.25, 0.3):.2f}:{t + 0.25:.2f}:6"


def _sizes_label(shape: str) -> str:
    plural = {"hexagon": "Side lengths", "cylinder": "Radii (diameter = 2 × radius)", "slit": "Widths"}[shape]
    return f"{plural} (Å): start:stop:count, or a list"
_WINDOW_UNITS = ("Pa", "p/p₀")
_WIDTH = 620
_MIN_WIDTH, _MAX_WIDTH = 520, 1100      # px: the plot grows with the window between these

_runners: dict[str, SweepRunner] = {}
_runners_lock = threading.Lock()


def _runner(address: str) -> SweepRunner:
    """One runner per place (this machine, or a scheduler address), shared by every session."""
    with _runners_lock:
        r = _runners.get(address)
        if r is None:
            r = _runners[address] = SweepRunner(cluster=address or None, cache=SWEEP_CACHE)
        return r


def close_runners() -> None:
    """Shut every shared runner's pool down (a later sweep starts a new one); used when no session is open."""
    with _runners_lock:
        runners = list(_runners.values())
        _runners.clear()
    for r in runners:
        r.close(terminate=True)


def sweep_work(runner: SweepRunner, spec, *, progress, should_stop):
    """A sweep in the background protocol (`porefill.explorer.jobs.background`): progress after each pore;
    a stop returns the pores done so far, marked stopped."""
    return runner.run(spec, progress=lambda done, total: progress(done / max(total, 1), f"{done} of {total} pores"),
                      stop=should_stop)


def step_rows(result, x_key: str) -> dict[str, list]:
    """Columns for the plot: x (size or temperature), step pressure, what fills, the wall, the kind, and the
    branch the pressure is on (every step is drawn at its equilibrium pressure)."""
    rows = {"x": [], "p": [], "fills": [], "wall": [], "kind": [], "branch": []}
    for pt in result.done:
        for s, fills in zip(pt.get("steps", ()), pt.get("step_fills", ())):
            rows["x"].append(pt[x_key])
            rows["p"].append(s["pressure_pa"])
            rows["fills"].append(fills)
            rows["wall"].append(np.nan if pt["wall_angstrom"] is None else pt["wall_angstrom"])
            rows["kind"].append(s["kind"])
            rows["branch"].append("equilibrium")
    return rows


_LEG_ENDS = {"adsorption": "adsorption_jump_pressure_pa", "desorption": "desorption_jump_pressure_pa"}


def measured_leg_rows(result, x_key: str) -> dict[str, list]:
    """Where a measurement's leg follows a mean-field branch rather than the equilibrium
    (`porefill.physics.lattice_gas.branches.measured_branches`: helium's adsorption in open pores, both legs with
    ``infinite`` ends), each first-order step's pressure on that leg beside its equilibrium pressure: columns x,
    p (the leg's), p_eq, leg ('adsorption' or 'desorption') and fills."""
    from porefill.physics.lattice_gas.branches import measured_branches

    base = result.spec.base
    legs = [leg for leg, branch in measured_branches(base.pore_ends, base.adsorbate).items() if branch != "equilibrium"]
    rows = {"x": [], "p": [], "p_eq": [], "leg": [], "fills": []}
    for pt in result.done:
        for s, fills in zip(pt.get("steps", ()), pt.get("step_fills", ())):
            if s["kind"] != "first-order":
                continue
            for leg in legs:
                p = s.get(_LEG_ENDS[leg])
                if p is None or abs(np.log(p / s["pressure_pa"])) < 1e-6:
                    continue                          # the loop runs past the range, or there is none
                rows["x"].append(pt[x_key])
                rows["p"].append(p)
                rows["p_eq"].append(s["pressure_pa"])
                rows["leg"].append(leg)
                rows["fills"].append(fills)
    return rows


class SizingView(pn.viewable.Viewer):
    """Step pressures across a sweep, the pressure window, a target and the pores meeting it."""

    state = param.ClassSelector(class_=ExplorerState)

    def __init__(self, **params):
        super().__init__(**params)
        st = self.state
        wall = "8" if st.isolated else f"{st.wall_angstrom:g}"
        t = st.temperature_k
        self.mode = pn.widgets.RadioButtonGroup(name="Across", options=list(MODES), value="side length",
                                                orientation="vertical", width=290)   # no overlap with the status
        self.sizes = pn.widgets.TextInput(name=_sizes_label(st.shape),
                                          value="10:30:11", width=290, css_classes=["porefill-sizing-sizes"])
        self.walls = pn.widgets.TextInput(name="Walls (Å): one, a list or start:stop:count", value=wall, width=290)
        self.temps = pn.widgets.TextInput(name="Temperatures (K): start:stop:count",
                                          value=_temperatures_around(t), width=290)
        self.d100 = pn.widgets.FloatInput(name="X-ray d100 spacing (Å)", value=50.0, start=1.0, step=0.5, width=290,
                                          css_classes=["porefill-sizing-d100"])
        self.model = pn.widgets.Select(name="Site model", options=["as the scenario", "classical", "quantum"],
                                       value="as the scenario", width=290, css_classes=["porefill-sizing-model"])
        self.points = pn.widgets.IntInput(name="Points per isotherm", value=DEFAULT_POINTS, start=SWEEP_POINTS_RANGE[0],
                                          end=SWEEP_POINTS_RANGE[1], step=50, width=290,
                                          css_classes=["porefill-sizing-points"])
        self.low = pn.widgets.FloatInput(name="Apparatus: lowest pressure (Pa)", value=1e-3, start=0.0, width=290,
                                         css_classes=["porefill-sizing-low"])
        self.high = pn.widgets.FloatInput(name="Apparatus: highest pressure (Pa)", value=1e3, start=0.0, width=290,
                                          css_classes=["porefill-sizing-high"])
        self.target = pn.widgets.Select(name="Target", options=[_NO_TARGET] + list(TARGET_KINDS.values()),
                                        value=_NO_TARGET, width=290, css_classes=["porefill-sizing-target"])
        self.layer = pn.widgets.IntInput(name="Layer that must be complete (1: against the wall)", value=2,
                                         start=TARGET_LAYER_RANGE[0], end=TARGET_LAYER_RANGE[1], width=290,
                                         visible=False, css_classes=["porefill-sizing-layer"])
        self.window_unit = pn.widgets.RadioButtonGroup(name="Window in", options=list(_WINDOW_UNITS), value="Pa",
                                                       width=290, css_classes=["porefill-sizing-window-unit"])
        self.scheduler = pn.widgets.TextInput(name="Dask scheduler (empty: this machine)",
                                              placeholder="tcp://host:8786", width=290,
                                              css_classes=["porefill-sizing-scheduler"])
        self.compute_button = pn.widgets.Button(name="Compute the sweep", button_type="primary", width=140,
                                                css_classes=["porefill-sizing-compute"])
        self.stop_button = pn.widgets.Button(name="Stop", button_type="warning", width=140, disabled=True,
                                             css_classes=["porefill-sizing-stop"])
        self.progress = pn.indicators.Progress(value=0, max=1, width=290, bar_color="primary", visible=False)
        self.status = pn.pane.HTML("<p>Choose the sizes and press Compute.</p>", css_classes=["porefill-sizing-status"],
                                   width=_WIDTH, styles={"font-size": "13px"})
        self.meets_list = pn.pane.HTML("", css_classes=["porefill-sizing-meets"], width=300)
        self.bands = pn.pane.HTML("", css_classes=["porefill-sizing-bands"], width=_WIDTH, visible=False,
                                  styles={"font-size": "13px"})
        self._carried = None          # the Measured data tab's carried prediction (layer bands), if any
        self._plot = None
        self._body = pn.Column(css_classes=["porefill-sizing-body"], min_height=40, sizing_mode="stretch_width",
                               styles={"flex": f"1 1 {_WIDTH}px", "min-width": "0", "max-width": f"{_MAX_WIDTH}px"})
        self._result = None
        self._result_status = self._result_for = ""     # the status line of the sweep on show, its inputs
        self._edges: dict = {}            # (x, wall) -> where the target holds, in words (`edge_words`)
        self._mode_shown = "size"
        self._job: ThreadJob | None = None        # the sweep under way (porefill.explorer.jobs.background)
        self.compute_button.on_click(self.compute)
        self.stop_button.on_click(self.stop)
        self.window_unit.param.watch(self._fit_window, "value")
        self.target.param.watch(lambda *_: setattr(self.layer, "visible", self._kind() == "layer"), "value")
        for w in (self.low, self.high, self.target, self.layer):
            w.param.watch(self._redraw, "value")
        self.mode.param.watch(self._fit_inputs, "value")
        st.param.watch(lambda event: setattr(self.sizes, "name", _sizes_label(event.new)), "shape")
        # a new gas brings its own temperatures (the state has already moved its temperature into the gas's range)
        st.param.watch(lambda event: setattr(self.temps, "value", _temperatures_around(st.temperature_k)),
                       "adsorbate")
        for w in (self.mode, self.sizes, self.walls, self.temps, self.d100, self.model, self.points):
            w.param.watch(self._say_estimate, "value")
        st.param.watch(self._say_estimate, ["shape", "adsorbate", "temperature_k", "plating", "plating_layers"])
        self._fit_inputs()
        self._say_estimate()
        self._redraw()

    def _say_estimate(self, *_) -> None:
        """Before a sweep: how many pores the inputs ask for and roughly how long they take here."""
        if self._job is not None and self._job.outcome is None:
            return                                    # a sweep is under way: its status stays
        try:
            spec = self.spec()
        except ValueError:
            spec = None
        if self._result is not None and spec == self._result.spec:
            self.status.object = self._result_status          # back to the inputs of the sweep on show
            return
        if spec is None:
            self.status.object = "<p>Choose the sizes and press Compute.</p>"
            return
        runner = _runner(self.scheduler.value.strip())
        guess = "" if runner.cluster is not None else _duration(estimate_seconds(spec, runner.workers, runner.cache))
        ask = f"Press Compute: {spec.size} pores{guess or ', a moment'} on this machine."
        if self._result is not None:        # the plot stays, and says it belongs to inputs no longer chosen
            ask = (f"The plot shows the last sweep ({html.escape(self._result_for)}); the inputs have changed "
                   f"since. {ask}")
        self.status.object = f"<p class='porefill-sizing-changed'>{ask}</p>" if self._result is not None \
            else f"<p>{ask}</p>"

    # inputs ---------------------------------------------------------------------------------------
    def _fit_inputs(self, *_):
        mode = MODES[self.mode.value]
        self.sizes.visible = mode in ("size", "d100")
        self.walls.visible = mode == "size"
        self.temps.visible = mode == "temperature"
        self.d100.visible = mode == "d100"

    def _fit_window(self, *_):
        """The window's inputs say their unit; a change of unit starts from that unit's whole range."""
        relative = self.window_unit.value != "Pa"
        self.low.name = "Apparatus: lowest relative pressure p/p₀" if relative else "Apparatus: lowest pressure (Pa)"
        self.high.name = ("Apparatus: highest relative pressure p/p₀" if relative
                          else "Apparatus: highest pressure (Pa)")
        self.low.value, self.high.value = (0.0, 1.0) if relative else (1e-3, 1e3)

    def _kind(self) -> str | None:
        return next((k for k, v in TARGET_KINDS.items() if v == self.target.value), None)

    def target_object(self) -> Target | None:
        """The chosen target in the apparatus's window (None: no target, or a window that is not one)."""
        kind = self._kind()
        if kind is None:
            return None
        try:
            return Target(kind, low_pa=float(self.low.value or 0.0), high_pa=float(self.high.value or math.inf),
                          layer=int(self.layer.value or 1), relative=self.window_unit.value != "Pa")
        except ValueError:
            return None

    def spec(self) -> SweepSpec:
        """The sweep the inputs describe; ValueError naming the input that is wrong."""
        base = self.state.scenario()
        if self.model.value != "as the scenario":
            base = base.replace(site_model=self.model.value)
        mode = MODES[self.mode.value]
        if mode == "temperature":
            return SweepSpec(base, temperatures_k=parse_range(self.temps.value, name="temperatures"),
                             n_points=self.points.value)
        sizes = parse_range(self.sizes.value, name="side lengths")
        if mode == "d100":
            return SweepSpec(base.replace(wall_angstrom=8.0), sizes_angstrom=sizes, d100_angstrom=self.d100.value,
                             n_points=self.points.value)
        walls = () if base.wall_angstrom is None else parse_range(self.walls.value, name="walls")
        return SweepSpec(base, sizes_angstrom=sizes, walls_angstrom=walls, n_points=self.points.value)

    # running --------------------------------------------------------------------------------------
    def compute(self, *_) -> None:
        """Run the sweep the inputs describe (in a thread when served; at once otherwise)."""
        try:
            spec = self.spec()
        except ValueError as exc:
            self.status.object = f"<p style='color:#8a4b00'><b>Cannot sweep:</b> {html.escape(str(exc))}</p>"
            return
        runner = _runner(self.scheduler.value.strip())
        mode = MODES[self.mode.value]
        doc = pn.state.curdoc
        if doc is None or doc.session_context is None:           # tests, notebooks
            try:
                self._apply(mode, runner.run(spec))
            except (ClusterError, ValueError) as exc:
                self._fail(exc)
            return
        self.compute_button.disabled, self.stop_button.disabled = True, False
        self.progress.max, self.progress.value, self.progress.visible = spec.size, 0, True
        where = "this machine" if runner.cluster is None else html.escape(runner.cluster)
        guess = "" if runner.cluster is not None else _duration(estimate_seconds(spec, runner.workers, runner.cache))
        self.status.object = f"<p>Computing {spec.size} pores on {where}{guess} …</p>"

        total = spec.size

        def on_event(event):
            # on the sweep's thread: hand it to the session
            if event[0] == "progress":
                update = partial(self._show_progress, round(event[1] * total), total)
            elif event[0] == "done":
                update = partial(self._apply, mode, event[1])
            else:
                update = partial(self._fail, RuntimeError(event[1]))
            on_session(doc, update)

        self._job = ThreadJob(sweep_work, (runner, spec), name="porefill-sweep")
        self._job.watch(on_event)

    def stop(self, *_) -> None:
        """Stop the running sweep: pores not started are cancelled, those done are shown."""
        if self._job is not None and self._job.outcome is None:
            self._job.cancel()
            self.status.object = "<p>Stopping: the pores under way finish, the rest are cancelled …</p>"

    def _show_progress(self, done: int, total: int) -> None:
        self.progress.max, self.progress.value = max(total, 1), done

    def _fail(self, exc: BaseException) -> None:
        self.compute_button.disabled, self.stop_button.disabled = False, True
        self.progress.visible = False
        text = str(exc) if isinstance(exc, (ClusterError, RuntimeError)) else short_error(exc)
        self.status.object = f"<p style='color:#8a4b00'><b>The sweep failed:</b> {html.escape(text)}</p>"

    def _apply(self, mode: str, result) -> None:
        self._result, self._mode_shown = result, mode
        self.compute_button.disabled, self.stop_button.disabled = False, True
        self.progress.visible = False
        errors = [p for p in result.done if "error" in p]
        what = f"{len(result.done)} of {len(result.points)} pores" if result.stopped else f"{len(result.done)} pores"
        notes = [f"Stopped: {what} computed." if result.stopped else f"{what} in {result.seconds:.1f} s"
                 f" ({result.from_cache} from the cache; on {html.escape(result.where)})."]
        if errors:
            notes.append(f"{len(errors)} could not be computed: {html.escape(errors[0]['error'])}")
        base = result.spec.base
        where = describe(base, temperature=mode != "temperature")
        if result.spec.d100_angstrom is not None:
            where = where.replace(f"walls {base.wall_angstrom:g} Å", f"walls from d100 = {result.spec.d100_angstrom:g} Å")
        self._result_for = f"{where}; site model {base.site_model_used}"
        notes.insert(0, f"For {html.escape(self._result_for)}.")
        self.status.object = self._result_status = "<p>" + " ".join(notes) + "</p>"
        if self._carried is not None:
            self.show_layer_bands(self._carried)
            return
        self._redraw()

    def show_layer_bands(self, carried, saved=None) -> None:
        """The carried prediction of a pore-size distribution (None: none): its layer bands listed, and
        shaded over the plot where the sweep is of the same gas and temperature."""
        from porefill.explorer.views.distribution_drawing import layers_html

        self._carried = carried
        self.bands.visible = carried is not None
        self.bands.object = "" if carried is None else (
            "<p><b>Layer bands in the measured sample</b> (the pore-size distribution on the Measured data tab, "
            "carried to another gas):</p>" + layers_html(carried) + f"<p>{html.escape(self._bands_where())}</p>")
        self._redraw()

    def _band_layers(self) -> list:
        """(name, p10 Pa, median Pa, p90 Pa) of each layer band to shade: only over a sweep of the carried gas
        at its temperature, and only layers at least 1 % of the pore volume forms."""
        from porefill.explorer.views.distribution_drawing import layer_rows

        c, r = self._carried, self._result
        if c is None or r is None or self._mode_shown == "temperature":
            return []
        b, s = c.kernel.spec.base, r.spec.base
        if b.adsorbate != s.adsorbate or abs(b.temperature_k - s.temperature_k) > 1e-6:
            return []
        return [(x["name"], x["p10"], x["median"], x["p90"]) for x in layer_rows(c)
                if x["median"] is not None and x["fraction"] >= 0.01]

    def _bands_where(self) -> str:
        c = self._carried
        if c is None:
            return ""
        b = c.kernel.spec.base
        if self._band_layers():
            return "Shaded across the plot (10–90 %, the median as a line)."
        return (f"Shaded across the plot when the sweep is of {b.adsorbate} at {b.temperature_k:g} K "
                "(the carried gas and temperature).")

    # drawing --------------------------------------------------------------------------------------
    def _marks(self):
        """(x, low Pa, high Pa) of every pore meeting the target, and the pores' x values."""
        target, result = self.target_object(), self._result
        if result is None or target is None:
            return target, []
        x_key = "temperature_k" if self._mode_shown == "temperature" else "size_angstrom"
        out = []
        for pt in result.done:
            if "error" in pt:
                continue
            ok, rng = meets(target, pt)
            if ok:
                out.append((pt[x_key], pt["wall_angstrom"], rng[0], rng[1]))
                self._edges[(pt[x_key], pt["wall_angstrom"])] = edge_words(pt, rng, unit="")
        return target, out

    def _redraw(self, *_) -> None:
        target, marks = self._marks()
        self.meets_list.object = self._meets_html(target, marks)
        if self._result is None:
            return
        if self._plot is None:
            self._plot = pn.pane.HoloViews(None, css_classes=["porefill-sizing-plot"], backend="bokeh",
                                           sizing_mode="stretch_width")
            self._body.objects = [self._plot]
        self._plot.object = self._figure(marks)

    def _meets_html(self, target, marks) -> str:
        if target is None:
            if self.target.value != _NO_TARGET:
                return "<p style='color:#8a4b00'>The pressure window needs lowest &lt; highest.</p>"
            return "<p>Choose a target to mark the pores that meet it.</p>"
        if self._result is None:
            return f"<p>Target: {html.escape(target.description)}. Compute a sweep to see which pores meet it.</p>"
        x_name = ("Temperature (K)" if self._mode_shown == "temperature"
                  else f"{_size_words(self._result.spec.base.shape).capitalize()} (Å)")
        head = (f"<p><b>{html.escape(target.description)}</b>, between {target.low_pa:.3g} and "
                f"{target.high_pa:.3g} {target.window_unit}: {len(marks)} of {len(self._result.done)} pores.</p>")
        if not marks:
            return head + "<p>No pore of this sweep meets it.</p>"
        rows = "".join(f"<tr><td>{x:.4g}</td><td>{'—' if w is None else f'{w:.3g}'}</td>"
                       f"<td>{html.escape(self._edges.get((x, w), f'{lo:.3g} – {hi:.3g}'))}</td></tr>"
                       for x, w, lo, hi in marks)
        return (head + f"<table><thead><tr><th>{x_name}</th><th>Wall (Å)</th><th>where it holds (Pa)</th></tr>"
                f"</thead><tbody>{rows}</tbody></table>")

    def _figure(self, marks):
        import holoviews as hv
        import holoviews.plotting.bokeh  # noqa: F401 - registers the Bokeh backend without a notebook

        mode = self._mode_shown
        x_key = "temperature_k" if mode == "temperature" else "size_angstrom"
        x_label = "temperature (K)" if mode == "temperature" else f"{_size_words(self._result.spec.base.shape)} (Å)"
        rows = step_rows(self._result, x_key)
        p = np.array(rows["p"], float)
        low, high = float(self.low.value or 0.0), float(self.high.value or 0.0)
        if self.window_unit.value != "Pa":      # the band in Pa where every pore shares one p0, else none
            p0 = {pt.get("saturation_pressure_pa") for pt in self._result.done if "error" not in pt}
            scale = p0.pop() if len(p0) == 1 else None
            low, high = (low * scale, high * scale) if scale else (0.0, -1.0)
        positive = p[p > 0]
        bands = self._band_layers()
        edges = [v for _, p10, _, p90 in bands for v in (p10, p90) if v > 0]
        y0 = min([positive.min() if positive.size else 1e-6] + ([low] if low > 0 else []) + edges) / 3
        y1 = max([positive.max() if positive.size else 1.0] + ([high] if high > 0 else []) + edges) * 3
        layers = [] if high < 0 else [
            hv.HSpan(max(low, y0), min(high, y1) if high > 0 else y1).opts(color="#999999", alpha=0.18)]
        for i, (_, p10, p50, p90) in enumerate(bands):
            colour = BAND_COLOURS[i % len(BAND_COLOURS)]
            layers += [hv.HSpan(p10, max(p90, p10 * 1.02)).opts(color=colour, alpha=0.3),
                       hv.HLine(p50).opts(color=colour, line_width=2)]
        if marks:
            seg = hv.Segments([(x, lo, x, hi) for x, _, lo, hi in marks], kdims=["x", "p", "x1", "p1"])
            layers.append(seg.opts(color="black", alpha=0.35, line_width=7))
        for fills, colour in FILL_COLOURS.items():
            sel = [i for i, f in enumerate(rows["fills"]) if f == fills]
            data = {k: [v[i] for i in sel] for k, v in rows.items()}
            pts = hv.Scatter(data, kdims=["x"], vdims=["p", "fills", "wall", "kind", "branch"], label=fills)
            layers.append(pts.opts(color=colour, size=7, tools=["hover"]))
        legs = measured_leg_rows(self._result, x_key)
        if legs["x"]:       # the branch a measured leg follows, where it is not the equilibrium: ▲ / ▼ on a stalk
            layers.append(hv.Segments([(x, pe, x, pl) for x, pe, pl in zip(legs["x"], legs["p_eq"], legs["p"])],
                                      kdims=["x", "p", "x1", "p1"]).opts(color="#555555", line_width=1))
            for leg, marker in (("adsorption", "triangle"), ("desorption", "inverted_triangle")):
                sel = [i for i, g in enumerate(legs["leg"]) if g == leg]
                if sel:
                    data = {k: [legs[k][i] for i in sel] for k in ("x", "p", "fills", "leg")}
                    # a short legend entry (the marker says which leg, as the title does): a long one pushes the
                    # legend past a 1024 px screen
                    layers.append(hv.Scatter(data, kdims=["x"], vdims=["p", "fills", "leg"],
                                             label="measured").opts(
                        color="#555555", marker=marker, size=8, tools=["hover"]))
        fig = hv.Overlay(layers).opts(
            logy=True, yticks=decade_ticker(), responsive=True, min_width=_MIN_WIDTH, max_width=_MAX_WIDTH,
            height=380, xlabel=x_label, ylabel="step pressure p (Pa)", ylim=(y0, y1),
            # the legend beside the plot, never over its points; a click on an entry hides that family
            legend_position="right", legend_opts={"click_policy": "hide"},
            # a title no longer than the plain one: Bokeh does not wrap titles, and a longer one widens the plot
            # past a 1024 px screen
            title=("Layer steps: ● equilibrium, ▲▼ measured leg; grey: window; bars: met"
                   if legs["x"] else "Layer steps; grey band: the apparatus's window; black bars: target met")
            + ("; coloured bands: layers in the measured sample" if bands else ""),
            toolbar="above")
        if mode != "d100":
            return fig
        sizes = np.array(sorted({pt["size_angstrom"] for pt in self._result.done}), float)
        line = hv.Curve((sizes, wall_from_d100(sizes, self._result.spec.d100_angstrom)), "side length (Å)",
                        "wall (Å)").opts(color="#444444")
        met = hv.Scatter([(x, w) for x, w, _, _ in marks], "side length (Å)", "wall (Å)").opts(
            color="black", size=9, marker="diamond")
        tied = (line * met).opts(responsive=True, min_width=_MIN_WIDTH, max_width=_MAX_WIDTH, height=220, title=f"Wall tied to side by d100 = "
                                 f"{self._result.spec.d100_angstrom:g} Å; diamonds: target met")
        return (fig + tied).cols(1)

    def __panel__(self):
        controls = pn.Column(self.mode, self.sizes, self.walls, self.temps, self.d100, self.model, self.points,
                             self.window_unit, self.low, self.high, self.target, self.layer, self.scheduler,
                             pn.Row(self.compute_button, self.stop_button), self.progress, width=310,
                             css_classes=["porefill-sizing-controls"])
        # the list of sizes that meet the target wraps under the plot where the window is narrow (1024 px)
        results = pn.FlexBox(self._body, self.meets_list, flex_wrap="wrap", gap="8px 16px",
                             sizing_mode="stretch_width")
        return pn.Row(controls, pn.Column(self.status, results, self.bands, sizing_mode="stretch_width",
                                          styles={"min-width": "0"}),
                      css_classes=["porefill-sizing"], sizing_mode="stretch_width")
