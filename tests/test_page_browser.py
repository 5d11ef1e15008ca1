"""The page as a whole in headless Chromium: tabs a keyboard and a screen reader can use, slider keys that
compute only where they stop, plots that use a large screen, a frame that shows at once."""
from __future__ import annotations

import re

import pytest

from porefill.explorer.server.testing import (press_keys, readout_text, slider_handle, slider_title,
                                              wait_for_readout_change)

pytestmark = pytest.mark.browser

CAPTION = ".porefill-isotherm-caption p"
FOCUSED_TEXT = """() => { let a = document.activeElement;
  while (a && a.shadowRoot && a.shadowRoot.activeElement) a = a.shadowRoot.activeElement;
  return a ? [a.getAttribute('role'), a.textContent] : [null, null]; }"""


def _tab_states(page) -> dict[str, str]:
    return {t.inner_text(): t.get_attribute("aria-selected") for t in page.get_by_role("tab").all()}


def test_tabs_have_roles_and_work_from_the_keyboard(page):
    # the WAI-ARIA tabs pattern (common practice, no source): a tablist of tabs, the shown one selected and
    # alone in the Tab order, arrow keys move along the strip, Enter shows the focused tab's panel
    page.get_by_role("tab", name="Pore").wait_for(timeout=60_000)
    assert page.get_by_role("tablist").count() >= 1
    states = _tab_states(page)
    assert list(states) == ["Pore", "Quantum states", "Measured data", "Sizing", "About & safety"]
    assert states["Pore"] == "true" and list(states.values()).count("true") == 1
    assert page.get_by_role("tabpanel", name="Pore").is_visible()
    # Tab from the top of the page reaches the strip, on the shown tab
    page.locator("body").focus()
    for _ in range(6):
        page.keyboard.press("Tab")
        if page.evaluate(FOCUSED_TEXT)[0] == "tab":
            break
    assert page.evaluate(FOCUSED_TEXT) == ["tab", "Pore"]
    for _ in range(3):
        page.keyboard.press("ArrowRight")
    assert page.evaluate(FOCUSED_TEXT) == ["tab", "Sizing"]
    assert _tab_states(page)["Pore"] == "true"           # moving along the strip shows nothing yet
    page.keyboard.press("ArrowLeft")
    page.keyboard.press("Enter")
    page.get_by_role("tabpanel", name="Measured data").wait_for(state="visible", timeout=10_000)
    states = _tab_states(page)
    assert states["Measured data"] == "true" and states["Pore"] == "false"
    assert not page.get_by_role("tabpanel", name="Pore").is_visible()
    page.keyboard.press("End")
    page.keyboard.press(" ")
    page.get_by_text("Asphyxiation").first.wait_for(state="visible", timeout=10_000)
    assert _tab_states(page)["About & safety"] == "true"
    # a click keeps the roles in step too
    page.get_by_role("tab", name="Pore").click()
    page.get_by_role("tabpanel", name="Pore").wait_for(state="visible", timeout=10_000)
    assert _tab_states(page)["Pore"] == "true" and _tab_states(page)["About & safety"] == "false"
    assert page.console_errors == []


def _counts(caption) -> dict[str, int]:
    """The isotherm caption's counts: inputs the page was asked to show (``asked``: one per position the
    server received, whether this server had its isotherm already or not) and isotherms it computed."""
    return {k: int(caption.get_attribute(f"data-{k}")) for k in ("asked", "computed")}


def _settled_count(page, caption, size_after: float, before: dict, *, readout_too: bool = False) -> dict:
    """Wait until the isotherm (and with ``readout_too`` the readout) shows ``size_after`` and anything still
    queued has had time to start; check the isotherm and the readout show it; the positions asked for and the
    isotherms computed since ``before`` (`_counts`)."""
    for _ in range(600):
        if f"side length {size_after:g} Å" in caption.inner_text() and (
                not readout_too or f"{size_after:g} Å, " in readout_text(page)):
            break
        page.wait_for_timeout(100)
    page.wait_for_timeout(1500)             # anything still queued would have started by now
    assert f"side length {size_after:g} Å" in caption.inner_text()
    assert re.search(rf"side / radius / width {size_after:g} Å", readout_text(page))
    return {k: n - before[k] for k, n in _counts(caption).items()}


# the page's own times (ms) of the key presses that reach it from now on (trusted or not)
RECORD_KEYDOWNS = """() => { window.__porefillKeys = [];
  document.addEventListener("keydown", (e) => window.__porefillKeys.push(performance.now()), true); }"""


def _bursts(pressed: list[float]) -> int:
    """How many bursts the presses at these page times (ms) make: a gap of at least the settle time starts
    a new one (explorer/views/slider_keys.py)."""
    from porefill.explorer.jobs.compute import SLIDER_SETTLE_S

    return 1 + sum(b - a >= 1e3 * SLIDER_SETTLE_S for a, b in zip(pressed, pressed[1:]))


def test_arrow_keys_from_the_keyboard_send_the_last_size_of_each_burst(page):
    # a slider's arrow key pressed six times, as real key events ~150 ms apart: the handle moves six steps,
    # and the page sends the server the last position of the burst only (explorer/views/slider_keys.py),
    # which it computes at most once (this server may have it from an earlier test). Playwright sends the
    # keys from here, one round trip each: where a gap reached the settle time on a busy machine, the presses
    # made more than one burst, each sending its own last position (the server may merge what arrives while
    # it is busy: at most one per burst)
    caption = page.locator(CAPTION).first
    caption.wait_for(timeout=60_000)
    page.wait_for_timeout(1000)
    before = _counts(caption)
    readout_before = readout_text(page)
    size_before = float(slider_title(page, "Side length").split(":")[-1])
    slider_handle(page, "Side length").focus()
    page.evaluate(RECORD_KEYDOWNS)
    for i in range(6):
        if i:
            page.wait_for_timeout(150)
        page.keyboard.press("ArrowRight")
    size_after = float(slider_title(page, "Side length").split(":")[-1])
    assert size_after == pytest.approx(size_before + 6 * 0.5)
    wait_for_readout_change(page, readout_before, timeout_s=60)
    counts = _settled_count(page, caption, size_after, before, readout_too=True)
    pressed = page.evaluate("() => window.__porefillKeys")
    print(f"gaps between presses (ms): {[round(b - a) for a, b in zip(pressed, pressed[1:])]}; {counts}")
    assert len(pressed) == 6
    assert 1 <= counts["asked"] <= _bursts(pressed), (counts, pressed)
    assert counts["computed"] <= counts["asked"], counts
    assert page.console_errors == []


def test_arrow_keys_at_a_persons_pace_compute_only_where_they_stop(page):
    # a person presses an arrow key every 100–250 ms (common practice, no source), not all at once: the title
    # follows every press, and the server is asked for the last position only, so it computes that one alone
    # (explorer/views/slider_keys.py: the page sends a key burst's value once no key has come for 0.3 s).
    # Each press is due on the page's clock before the previous press's send is: timers run in the order they
    # fall due, so a page slowed by a loaded machine runs the presses late, never the send between them
    caption = page.locator(CAPTION).first
    caption.wait_for(timeout=60_000)
    page.wait_for_timeout(1000)
    before = _counts(caption)
    size_before = float(slider_title(page, "Side length").split(":")[-1])
    # the presses are timed by the page's own clock (explorer/server/testing.py: press_keys); down, to sizes
    # the other tests leave alone, so that the last one is computed here
    pressed, titles = press_keys(slider_handle(page, "Side length"), "ArrowLeft", [200, 100, 250, 150, 180])
    sizes = [float(t.split(":")[-1]) for t in titles]
    assert sizes == pytest.approx([size_before - 0.5 * k for k in range(1, 7)]), titles
    size_after = sizes[-1]
    counts = _settled_count(page, caption, size_after, before)
    print(f"gaps between presses (ms): {[round(b - a) for a, b in zip(pressed, pressed[1:])]}; {counts}")
    assert counts["asked"] == 1 and counts["computed"] <= 1, counts
    assert page.console_errors == []


LOG_TICKS = """() => {
  const out = [];
  for (const v of Bokeh.index.query((v) => v.model.type == "LogAxis")) {
    const plot = v.parent;
    if (!plot || !plot.el || plot.el.offsetParent === null || !v.tick_coords) continue;
    const dim = v.dimension;
    const range = dim == 0 ? plot.frame.x_range : plot.frame.y_range;
    out.push({title: plot.model.title ? plot.model.title.text : "", start: range.start, end: range.end,
              ticks: Array.from(v.tick_coords.major[dim])});
  }
  return out;
}"""


def test_helium_log_pressure_axis_labels_every_kth_decade(page):
    # the demo's helium isotherm spans ~30 decades of pressure; Bokeh's LogTicker labelled every ⌈span/9⌉-th
    # decade (up to ten crowded labels in 290 px); explorer/views/ticks.py keeps at most six, evenly spaced
    import math

    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    page.wait_for_timeout(1000)
    axes = [a for a in page.evaluate(LOG_TICKS) if a["title"].startswith("Isotherm")]
    assert axes, page.evaluate(LOG_TICKS)
    axis = axes[0]
    span = math.log10(axis["end"]) - math.log10(axis["start"])
    assert span > 25, axis                           # the test is about a long axis
    exponents = [math.log10(t) for t in axis["ticks"]]
    assert 3 <= len(exponents) <= 6, exponents
    assert all(abs(e - round(e)) < 1e-9 for e in exponents)          # powers of ten
    steps = {round(b - a) for a, b in zip(exponents, exponents[1:])}
    assert len(steps) == 1 and steps.pop() in (5, 10), exponents     # every k-th decade, one k
    assert page.console_errors == []


def test_the_frame_shows_before_the_plots_fill_in(browser, served_app):
    # the header, the tab strip and the controls are drawn at once, with a loading place where the plots
    # will be; the map and the isotherm follow (explorer/views/dashboard.py: fill_in at pn.state.onload)
    from porefill.explorer.server.testing import first_seen, record_first_seen

    context = browser.new_context(viewport={"width": 1440, "height": 900})
    try:
        page = context.new_page()
        errors = []
        page.on("console", lambda msg: errors.append(msg.text) if msg.type == "error" else None)
        record_first_seen(page, {"header": ".porefill-header >>> h1", "tab": ".bk-tab",
                                 "controls": ".porefill-controls >>> .noUi-handle",
                                 "filling": ".porefill-filling-in", "map": ".porefill-map >>> canvas",
                                 "isotherm": ".porefill-isotherm >>> canvas"})
        page.goto(served_app, timeout=90_000)
        page.locator(".porefill-isotherm canvas").first.wait_for(timeout=60_000)
        page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
        seen = first_seen(page)
        assert set(seen) == {"header", "tab", "controls", "filling", "map", "isotherm"}, seen
        frame = max(seen["header"], seen["tab"], seen["controls"])
        assert seen["filling"] <= frame + 100, seen           # the loading place is there with the frame
        assert frame < seen["map"] and frame < seen["isotherm"], seen
        assert page.locator(".porefill-filling-in").count() == 0          # every place filled in
        assert errors == []
    finally:
        context.close()


def _canvas_width(page, selector: str) -> float:
    box = page.locator(f"{selector} canvas").first.bounding_box()
    return box["width"]


def _page_wider_than_window(page) -> int:
    return page.evaluate("() => document.scrollingElement.scrollWidth - window.innerWidth")


def test_plots_grow_on_a_large_screen_and_fit_a_projector(page):
    # at 1920 × 1080 the line cuts, isotherm, compressibility and the measured overlay use the width there is
    # (each was a fixed ~300–410 px frame in empty space); at 1024 × 768 they shrink back and nothing scrolls
    # sideways (explorer/views/potential.py: growing_box)
    from pathlib import Path

    plots = (".porefill-cuts", ".porefill-isotherm", ".porefill-compressibility")
    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    widths = {}
    for width, height in ((1920, 1080), (1024, 768)):
        page.set_viewport_size({"width": width, "height": height})
        page.wait_for_timeout(1500)
        widths[width] = {s: _canvas_width(page, s) for s in plots}
        assert _page_wider_than_window(page) <= 1, width
        for s in plots:
            box = page.locator(s).first.bounding_box()
            assert box["x"] + box["width"] <= width + 1, (width, s)
    assert all(widths[1920][s] >= 600 for s in plots), widths
    assert all(widths[1024][s] <= 1024 - 230 for s in plots), widths
    # the Measured data tab's overlay and residuals, with a file dropped
    page.get_by_role("tab", name="Measured data").click()
    data = Path(__file__).resolve().parents[1] / "scenarios" / "invented-nitrogen-77K.csv"
    page.locator(".porefill-dropper input[type=file]").first.set_input_files(str(data))
    page.locator(".porefill-overlay canvas").first.wait_for(timeout=60_000)
    overlay = {}
    for width, height in ((1920, 1080), (1024, 768)):
        page.set_viewport_size({"width": width, "height": height})
        page.wait_for_timeout(1500)
        overlay[width] = _canvas_width(page, ".porefill-overlay")
        assert _page_wider_than_window(page) <= 1, width
    assert overlay[1920] >= 1000 and overlay[1024] <= 1024 - 230, overlay
    assert page.console_errors == []


# the potential map's frame in px and its ranges in Å, from Bokeh's own view of the plot
MAP_FRAME = """() => {
  for (const v of Bokeh.index.query((v) => v.model.type == "Figure")) {
    if (!v.model.title || !v.model.title.text.startsWith("Wall potential") || v.el.offsetParent === null) continue;
    const f = v.frame;
    return {width: f.bbox.width, height: f.bbox.height, x: f.x_range.end - f.x_range.start,
            y: f.y_range.end - f.y_range.start};
  }
  return null;
}"""


def test_the_map_grows_on_a_large_screen_and_keeps_its_scale(page, tmp_path):
    # issue 21: the map stayed a fixed 290 px frame while the other plots grew; it grows with the window now,
    # with one scale on both axes (a pore drawn stretched would mislead), and at 1024 × 768 nothing scrolls
    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    page.locator(".porefill-map canvas").first.wait_for(timeout=60_000)
    widths, frames = {}, {}
    for width, height in ((1024, 768), (1920, 1080)):
        page.set_viewport_size({"width": width, "height": height})
        page.wait_for_timeout(1500)
        widths[width] = _canvas_width(page, ".porefill-map")
        frames[width] = page.evaluate(MAP_FRAME)
        page.locator(".porefill-map").first.screenshot(path=str(tmp_path / f"map-{width}.png"))
        box = page.locator(".porefill-map").first.bounding_box()
        assert box["x"] + box["width"] <= width + 1, width
        if width == 1024:
            assert page.evaluate("() => document.scrollingElement.scrollWidth <= document.scrollingElement.clientWidth")
    print(f"map canvas width (px): {widths}; frames: {frames}; screenshots in {tmp_path}")
    assert widths[1920] > widths[1024] + 100, widths
    for width, f in frames.items():
        # px per Å along x and along y: equal within a pixel's worth of the frame (an honest map)
        per_x, per_y = f["width"] / f["x"], f["height"] / f["y"]
        assert abs(per_x - per_y) <= 0.01 * per_x, (width, f)
    # the other tabs fit a 1024 px screen as well (a map on the Quantum states tab among them)
    page.set_viewport_size({"width": 1024, "height": 768})
    for tab in ("Quantum states", "Measured data", "Sizing", "About & safety", "Pore"):
        page.get_by_role("tab", name=tab).click()
        page.wait_for_timeout(1000)
        assert page.evaluate("() => document.scrollingElement.scrollWidth <= document.scrollingElement.clientWidth"), tab
    assert page.console_errors == []


# a map's frame in px and its ranges in Å, from Bokeh's own view of the plot (found by the start of its title)
FRAME_OF = """(title) => {
  for (const v of Bokeh.index.query((v) => v.model.type == "Figure")) {
    if (!v.model.title || !v.model.title.text.startsWith(title) || v.el.offsetParent === null) continue;
    const f = v.frame;
    return {width: f.bbox.width, height: f.bbox.height, x: f.x_range.end - f.x_range.start,
            y: f.y_range.end - f.y_range.start};
  }
  return null;
}"""
FIGURE_EL = """(title) => Array.from(Bokeh.index.query((v) => v.model.type == "Figure" && v.model.title != null
    && v.model.title.text.startsWith(title) && v.el.offsetParent !== null)).map((v) => v.el)[0]"""


def _one_scale(frame: dict) -> bool:
    """px per Å along x and along y equal within 1 % (a map drawn stretched would mislead)."""
    per_x, per_y = frame["width"] / frame["x"], frame["height"] / frame["y"]
    return abs(per_x - per_y) <= 0.01 * per_x


def _drawn_spread(page, title: str, path) -> float:
    """The spread (standard deviation, 0–255) of the grey levels in the middle half of a figure as a
    screenshot shows it: a plot whose layout never got its size leaves that part of its canvas blank (0)."""
    import io

    import numpy as np
    from PIL import Image

    element = page.evaluate_handle(FIGURE_EL, title).as_element()
    assert element is not None, title
    png = element.screenshot(path=str(path))
    grey = np.asarray(Image.open(io.BytesIO(png)).convert("L"), dtype=float)
    h, w = grey.shape
    return float(grey[h // 4: 3 * h // 4, w // 4: 3 * w // 4].std())


def test_the_occupancy_map_grows_on_a_row_of_its_own_and_keeps_its_scale(page, tmp_path):
    # issue 21: the occupancy map kept a fixed 290 px frame; it grows now at one scale on both axes, on a row
    # of its own beside the steps table, so that the isotherm and dN/dμ keep their width at 1920 px (sharing
    # their row with the grown map left them 556 px), and at 1024 × 768 nothing scrolls sideways
    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    page.locator(".porefill-occupancy-map canvas").first.wait_for(timeout=60_000)
    widths, frames = {}, {}
    for width, height in ((1024, 768), (1400, 900), (1920, 1080)):
        page.set_viewport_size({"width": width, "height": height})
        page.wait_for_timeout(1500)
        widths[width] = {s: _canvas_width(page, s) for s in (".porefill-occupancy-map", ".porefill-isotherm",
                                                              ".porefill-compressibility")}
        frames[width] = page.evaluate(FRAME_OF, "Site occupancy")
        page.locator(".porefill-occupancy-map").first.screenshot(path=str(tmp_path / f"occupancy-{width}.png"))
        box = page.locator(".porefill-occupancy-map").first.bounding_box()
        assert box["x"] + box["width"] <= width + 1, width
        assert _page_wider_than_window(page) <= 1, width
    print(f"canvas widths (px): {widths}; occupancy frames: {frames}; screenshots in {tmp_path}")
    assert widths[1920][".porefill-occupancy-map"] > widths[1024][".porefill-occupancy-map"] + 100, widths
    assert all(_one_scale(f) for f in frames.values()), frames
    assert widths[1920][".porefill-isotherm"] >= 600 and widths[1920][".porefill-compressibility"] >= 600, widths
    assert page.console_errors == []


def test_the_quantum_map_grows_is_drawn_and_keeps_its_scale(page, tmp_path):
    # issue 21: the Quantum states tab's probability map kept a fixed frame; grown in a layout added to the
    # page with the first result, the map and the comparison drew as empty canvases, so this test looks at
    # what is painted inside each, not only at the size of its box
    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    page.get_by_role("tab", name="Quantum states").click()
    page.locator(".porefill-shift-table").first.wait_for(timeout=180_000)
    titles = ("One-atom probability density", "Equilibrium isotherm, both site models")
    widths, frames, spread = {}, {}, {}
    for width, height in ((1024, 768), (1400, 900), (1920, 1080)):
        page.set_viewport_size({"width": width, "height": height})
        page.wait_for_timeout(1500)
        widths[width] = page.evaluate_handle(FIGURE_EL, titles[0]).as_element().bounding_box()["width"]
        frames[width] = {t: page.evaluate(FRAME_OF, t) for t in titles}
        spread[width] = {t: _drawn_spread(page, t, tmp_path / f"quantum-{t[:8]}-{width}.png") for t in titles}
        assert _page_wider_than_window(page) <= 1, width
    print(f"quantum map canvas widths (px): {widths}; frames: {frames}; grey-level spread: {spread}; "
          f"screenshots in {tmp_path}")
    assert widths[1920] > widths[1024] + 100, widths
    for width in frames:
        for title in titles:
            assert frames[width][title]["width"] > 200 and frames[width][title]["height"] > 100, frames
            # a drawn map or curve: far from the blank canvas's 0 (common practice, no source)
            assert spread[width][title] > 10, spread
        assert _one_scale(frames[width][titles[0]]), frames
    assert page.console_errors == []
