"""Every control changed, saved (TOML and link), reopened in a fresh page: the same controls, the same screen."""
from __future__ import annotations

import pytest

from porefill.explorer.server.testing import (drag_handle, slider_handle, text_of,
                                              wait_for_text_change)

pytestmark = pytest.mark.browser

STEPS = ".porefill-steps table"
TAB_INPUTS = (".porefill-sizing-controls", ".porefill-measured")      # the Sizing and Measured data tabs' inputs
CONTROLS = ".porefill-controls"
# every control's value as a person reads it, in page order, on every tab: slider titles (with their values),
# menus, pressed buttons of each button group, ticked boxes, typed text and numbers
READ_CONTROLS = """(root) => {
  const all = (sel) => { const out = [], stack = [root];
    while (stack.length) { const r = stack.pop(); out.push(...r.querySelectorAll(sel));
      for (const el of r.querySelectorAll("*")) if (el.shadowRoot) stack.push(el.shadowRoot);
      if (r.shadowRoot) stack.push(r.shadowRoot); }
    return out; };
  return {sliders: all(".bk-slider-title").map((e) => e.textContent.trim()),
          menus: all("select").map((e) => e.value),
          pressed: all(".bk-btn-group .bk-btn.bk-active").map((e) => e.textContent.trim()),
          ticked: all("input[type=checkbox]").map((e) => e.checked),
          typed: all("input.bk-input[type=text]").map((e) => e.value)};
}"""


def _controls(page, selector: str = "body") -> dict:
    return page.locator(selector).first.evaluate(READ_CONTROLS)


def _settle(page, before: str) -> str:
    """Wait for the steps table to change from ``before`` and stay put; return it."""
    wait_for_text_change(page, STEPS, before, timeout_s=120)
    text = text_of(page, STEPS)
    for _ in range(60):
        page.wait_for_timeout(500)
        now = text_of(page, STEPS)
        if now == text:
            return now
        text = now
    return text


def _still(page) -> None:
    """No focus ring or hover left on a control before a screenshot."""
    page.mouse.move(1, 1)
    page.evaluate("() => document.activeElement && document.activeElement.blur()")
    page.locator(".porefill-header").first.click(position={"x": 2, "y": 2})
    page.wait_for_timeout(600)


def test_every_control_round_trips_through_the_file_and_the_link(browser, argon_url, tmp_path):
    context = browser.new_context(viewport={"width": 1366, "height": 900}, accept_downloads=True)
    page = context.new_page()
    page.goto(argon_url)
    page.locator(STEPS).first.wait_for(timeout=60_000)
    start = _controls(page)

    # every control of the Pore tab changed, one after the other, each waited for: helium on classical sites
    # first (its own default is quantum, so a reopened page that lost the site model would show quantum)
    steps = text_of(page, STEPS)
    page.locator(f"{CONTROLS} select").first.select_option("helium-4")
    steps = _settle(page, steps)
    page.locator(".porefill-site-model").get_by_role("button", name="classical").first.click()
    steps = _settle(page, steps)
    page.get_by_role("button", name="hexagon").first.click()
    steps = _settle(page, steps)
    for label, dx in (("Side length", 30), ("Wall thickness", 20)):
        drag_handle(page, slider_handle(page, label), dx)
        steps = _settle(page, steps)
    drag_handle(page, slider_handle(page, "Temperature"), 15)
    steps = _settle(page, steps)
    page.locator(".porefill-plating select").first.select_option("krypton")
    steps = _settle(page, steps)
    drag_handle(page, slider_handle(page, "Plating layers"), 200)
    steps = _settle(page, steps)
    page.get_by_role("button", name="closed-end").first.click()
    page.wait_for_timeout(1500)
    page.get_by_role("button", name="p/p₀ (linear)").first.click()
    page.get_by_role("button", name="desorption").first.click()
    occupancy = text_of(page, ".porefill-occupancy p")
    drag_handle(page, slider_handle(page, "Occupancy map"), -60)
    wait_for_text_change(page, ".porefill-occupancy p", occupancy)
    page.wait_for_timeout(1500)
    _change_the_tabs(page)
    page.get_by_role("tab", name="Pore").click()
    page.wait_for_timeout(1000)
    changed, changed_pore = _controls(page), _controls(page, CONTROLS)
    for key in ("sliders", "menus", "pressed", "ticked", "typed"):
        assert changed[key] != start[key], key          # the test is about changed controls
    assert "closed-end" in changed["pressed"] and "krypton" in changed["menus"]
    assert "classical" in _controls(page, ".porefill-site-model")["pressed"]
    tabs_png = _tab_screenshots(page)
    changed_tabs = {sel: _controls(page, sel) for sel in TAB_INPUTS}
    header = page.locator(".porefill-header h1").first.inner_text()
    steps = text_of(page, STEPS)
    _still(page)
    controls_png = page.locator(CONTROLS).first.screenshot()
    with page.expect_download(timeout=60_000) as info:
        page.locator(".porefill-save-scenario button").first.click()
    saved = tmp_path / "everything.toml"
    saved.write_text(open(info.value.path(), encoding="utf-8").read(), encoding="utf-8")
    link = page.url
    context.close()

    for how in ("file", "link"):
        context = browser.new_context(viewport={"width": 1366, "height": 900})
        fresh = context.new_page()
        errors = []
        fresh.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
        fresh.goto(argon_url if how == "file" else link)
        fresh.locator(STEPS).first.wait_for(timeout=60_000)
        if how == "file":
            first = text_of(fresh, STEPS)
            fresh.locator(".porefill-open-scenario input[type=file]").set_input_files(str(saved))
            _settle(fresh, first)
        else:
            fresh.wait_for_timeout(3000)
        fresh.wait_for_timeout(1500)
        reopened = _controls(fresh)
        if how == "file":
            # the whole page's controls: the pore's, the isotherm's axis, branch and picked pressure, the tabs'
            assert _differences(reopened, changed) == [], how
            assert text_of(fresh, STEPS) == steps, how
        else:
            # a link carries the pore and gas and the Measured data and Sizing tabs' inputs; the isotherm
            # view's own choices (axis, branch, picked pressure) stay the file's
            assert _differences(_controls(fresh, CONTROLS), changed_pore) == [], how
            for sel in TAB_INPUTS:
                assert _differences(_controls(fresh, sel), changed_tabs[sel]) == [], (how, sel)
            assert "measured_" in link and "sizing_" in link
        assert fresh.locator(".porefill-header h1").first.inner_text() == header, how
        _still(fresh)
        shown = fresh.locator(CONTROLS).first.screenshot()
        if shown != controls_png:           # kept beside the test's files, to be looked at
            (tmp_path / "controls-saved.png").write_bytes(controls_png)
            (tmp_path / f"controls-{how}.png").write_bytes(shown)
        assert _looks_the_same(shown, controls_png), (how, str(tmp_path))
        if how == "file":                   # the Sizing and Measured data tabs' inputs, region by region
            for name, png in _tab_screenshots(fresh).items():
                (tmp_path / f"{name}-saved.png").write_bytes(tabs_png[name])
                (tmp_path / f"{name}-{how}.png").write_bytes(png)
                assert _looks_the_same(png, tabs_png[name]), (how, name, str(tmp_path))
        assert errors == [], how
        context.close()



def _type(page, selector: str, text: str) -> None:
    """Type into a text or number box as a person does: select what is there, type, press Enter."""
    box = page.locator(f"{selector} input").first
    box.fill(text)
    box.press("Enter")
    page.wait_for_timeout(300)


def _change_the_tabs(page) -> None:
    """Every input of the Sizing and Measured data tabs changed (the Dask address aside: not saved)."""
    page.get_by_role("tab", name="Sizing").click()
    page.locator(".porefill-sizing-controls").first.wait_for(timeout=30_000)
    page.get_by_role("button", name="side length at a known d100").first.click()
    _type(page, ".porefill-sizing-sizes", "12:24:5")
    _type(page, ".porefill-sizing-d100", "45.5")
    page.locator(".porefill-sizing-model select").first.select_option("classical")
    _type(page, ".porefill-sizing-points", "150")
    page.locator(".porefill-sizing-window-unit").get_by_role("button", name="p/p₀", exact=True).click()
    page.wait_for_timeout(300)
    _type(page, ".porefill-sizing-low", "0.05")
    _type(page, ".porefill-sizing-high", "0.8")
    page.locator(".porefill-sizing-target select").first.select_option(index=4)      # a given layer complete
    page.locator(".porefill-sizing-layer input").first.wait_for(timeout=10_000)
    _type(page, ".porefill-sizing-layer", "3")
    page.get_by_role("tab", name="Measured data").click()
    page.locator(".porefill-overlay-axis").first.wait_for(timeout=30_000)
    page.locator(".porefill-overlay-axis").get_by_role("button", name="chemical potential").click()
    free = page.locator(".porefill-fit-free")
    free.get_by_text("wall", exact=True).click()
    free.get_by_text("pore-volume", exact=True).click()
    page.locator(".porefill-drop-above-p0 input").first.check()
    _type(page, ".porefill-psd-count", "14")
    page.locator(".porefill-psd-gas select").first.select_option("neon")
    page.wait_for_timeout(300)
    _type(page, ".porefill-psd-temperature", "27.5")
    page.wait_for_timeout(1000)


def _tab_screenshots(page) -> dict[str, bytes]:
    """The Sizing tab's inputs and the Measured data tab's fit inputs, each as a picture."""
    out = {}
    for tab, name, selector in (("Sizing", "sizing", ".porefill-sizing-controls"),
                                ("Measured data", "measured", ".porefill-fit")):
        page.get_by_role("tab", name=tab).click()
        page.locator(selector).first.wait_for(timeout=30_000)
        _still(page)
        out[name] = page.locator(selector).first.screenshot()
    page.get_by_role("tab", name="Pore").click()
    page.wait_for_timeout(500)
    return out


def _differences(reopened: dict, saved: dict) -> list[tuple]:
    """(kind, position, reopened, saved) of every control that differs (or that one page lacks)."""
    out = []
    for kind in saved:
        a, b = reopened[kind], saved[kind]
        out += [(kind, i, x, y) for i, (x, y) in enumerate(zip(a, b)) if x != y]
        if len(a) != len(b):
            out.append((kind, "count", len(a), len(b)))
    return out


def _looks_the_same(png_a: bytes, png_b: bytes) -> bool:
    """Same size, and no pixel off by more than 8 of 255 in any channel: a slider's rounded track end drawn at
    another sub-pixel offset differs by 1–2 levels (common practice, no source); a control showing another
    value differs by far more."""
    import io

    import numpy as np
    from PIL import Image

    a, b = (np.asarray(Image.open(io.BytesIO(p)).convert("RGB"), dtype=int) for p in (png_a, png_b))
    return a.shape == b.shape and int(np.abs(a - b).max()) <= 8
