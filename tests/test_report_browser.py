"""In headless Chromium: the report opens with every request outside the file refused; the dashboard's
Save / Open / link / report / figure controls as a person uses them; keyboard reach; laptop and projector
screens."""
from __future__ import annotations

import re
import struct
from pathlib import Path

import pytest

from porefill.explorer.outputs.report import SECTIONS, build_report
from porefill.explorer.files.scenario_file import load_document, parse_document, resolve_scenario
from porefill.explorer.server.testing import slider_title, wait_for_loading

pytestmark = pytest.mark.browser
ROOT = Path(__file__).resolve().parents[1]
STEPS = ".porefill-steps table"
MESSAGE = ".porefill-scenario-message p"


@pytest.fixture()
def argon(browser, argon_url):
    context = browser.new_context(viewport={"width": 1366, "height": 900}, accept_downloads=True)
    pg = context.new_page()
    errors: list[str] = []
    pg.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    pg.on("pageerror", lambda exc: errors.append(str(exc)))
    pg.console_errors = errors
    pg.goto(argon_url)
    pg.locator(STEPS).first.wait_for(timeout=60_000)
    yield pg
    context.close()


def _offline_check(browser, path: Path) -> None:
    """Open ``path`` with every request that is not file:// aborted; every section shows, every image draws."""
    context = browser.new_context(viewport={"width": 1366, "height": 900})
    page = context.new_page()
    refused, failed, errors = [], [], []
    page.route("**/*", lambda route: route.continue_() if route.request.url.startswith(("file://", "data:"))
               else (refused.append(route.request.url), route.abort()))
    page.on("requestfailed", lambda r: failed.append(r.url))
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda exc: errors.append(str(exc)))
    page.goto(path.as_uri())
    page.wait_for_load_state("load")
    for key, title in SECTIONS.items():
        section = page.locator(f"section#{key}")
        assert section.count() == 1, key
        assert section.locator("h2").inner_text() == title
    images = page.locator("img.figure")
    assert images.count() >= 4
    widths = images.evaluate_all("imgs => imgs.map(i => i.complete ? i.naturalWidth : 0)")
    assert all(w > 100 for w in widths), widths
    page.get_by_text("Asphyxiation").first.wait_for(state="visible")
    assert refused == [] and failed == [] and errors == []
    context.close()


def test_report_opens_offline_with_every_section(browser, tmp_path):
    doc = load_document(resolve_scenario("demo-nitrogen-invented-measured"))
    out = tmp_path / "report.html"
    out.write_text(build_report(doc, sizes=(14.0, 18.0)), encoding="utf-8")
    _offline_check(browser, out)


def test_report_button_downloads_an_offline_report(argon, browser, tmp_path):
    button = argon.locator(".porefill-report-button button").first
    with argon.expect_download(timeout=180_000) as info:
        button.click()
        wait_for_loading(argon, ".porefill-report-button", True, timeout_s=10)     # busy while it builds
    path = tmp_path / "from-the-page.html"
    info.value.save_as(path)
    wait_for_loading(argon, ".porefill-report-button", False)
    assert "argon" in path.read_text(encoding="utf-8")
    _offline_check(browser, path)
    assert argon.console_errors == []


def test_figure_downloads_png_at_slide_width_and_svg(argon):
    with argon.expect_download(timeout=120_000) as info:
        argon.locator(".porefill-figure-png button").first.click()
    png = Path(info.value.path()).read_bytes()
    assert struct.unpack(">II", png[16:24])[0] == 1920        # IHDR width (PNG specification §11.2.2)
    with argon.expect_download(timeout=120_000) as info:
        argon.locator(".porefill-figure-svg button").first.click()
    assert b"<svg" in Path(info.value.path()).read_bytes()[:2000]
    assert info.value.suggested_filename == "porefill-isotherm.svg"


def _save(page) -> str:
    with page.expect_download(timeout=60_000) as info:
        page.locator(".porefill-save-scenario button").first.click()
    return Path(info.value.path()).read_text(encoding="utf-8")


def test_saved_scenario_reopens_the_same_screen_from_file_and_link(argon, browser, argon_url, tmp_path):
    from porefill.explorer.server.testing import drag_handle, slider_handle, text_of, wait_for_text_change

    before = text_of(argon, STEPS)
    drag_handle(argon, slider_handle(argon, "Temperature"), 25)
    wait_for_text_change(argon, STEPS, before)
    notes = text_of(argon, ".porefill-branch-notes")
    argon.get_by_role("button", name="closed-end").first.click()       # the pore ends travel too (issue)
    wait_for_text_change(argon, ".porefill-branch-notes", notes)
    argon.wait_for_timeout(1500)
    steps, title = text_of(argon, STEPS), slider_title(argon, "Temperature")
    header = argon.locator(".porefill-header h1").first.inner_text()
    assert "changed on the page" in header          # no longer the file's scenario: a title that says so
    saved = _save(argon)
    doc = parse_document(saved)
    assert doc.scenario.pore_ends == "closed-end" and doc.scenario.title in header
    assert "pore_ends=closed-end" in argon.url
    shown = float(re.search(r"([\d.]+)\s*$", title).group(1))     # the slider drops trailing zeros (96, 96.05)
    assert shown == pytest.approx(doc.scenario.temperature_k, abs=0.005)
    in_link = float(re.search(r"[?&]temperature_k=([\d.]+)", argon.url).group(1))    # the link carries it
    assert in_link == doc.scenario.temperature_k
    link = argon.url
    file = tmp_path / "saved.toml"
    file.write_text(saved, encoding="utf-8")

    for how in ("file", "link"):
        context = browser.new_context(viewport={"width": 1366, "height": 900})
        page = context.new_page()
        page.goto(argon_url if how == "file" else link)
        page.locator(STEPS).first.wait_for(timeout=60_000)
        if how == "file":
            start = text_of(page, STEPS)
            page.locator(".porefill-open-scenario input[type=file]").set_input_files(str(file))
            wait_for_text_change(page, STEPS, start, timeout_s=60)
        page.wait_for_timeout(1500)
        assert slider_title(page, "Temperature") == title, how
        assert text_of(page, STEPS) == steps, how
        assert "Pore ends: closed-end" in text_of(page, ".porefill-branch-notes"), how
        assert "argon at 87.3 K" in page.locator(".porefill-header h1").first.inner_text(), how
        context.close()


@pytest.mark.parametrize("body, words", [
    (b"[scenario]\nshape = 'hexagon'\nsize_angstrom = -2.0\n", "line 3"),
    (b"[scenario\n", "not valid TOML"),
    (b"[scenario]\ncolour = 'red'\n", "colour"),
])
def test_a_bad_file_is_named_and_the_page_stays(argon, tmp_path, body, words):
    bad = tmp_path / "bad.toml"
    bad.write_bytes(body)
    title = slider_title(argon, "Side length")
    argon.locator(".porefill-open-scenario input[type=file]").set_input_files(str(bad))
    argon.locator(MESSAGE).first.wait_for(timeout=20_000)
    text = argon.locator(MESSAGE).first.inner_text()
    assert "bad.toml" in text and words in text and "Nothing was changed" in text
    assert slider_title(argon, "Side length") == title
    assert argon.console_errors == []


def test_a_link_with_bad_values_says_so_and_keeps_the_scenario(browser, argon_url):
    context = browser.new_context(viewport={"width": 1366, "height": 900})
    page = context.new_page()
    page.goto(argon_url + "?size_angstrom=abc&temperature_k=88.5&shape=triangle")
    page.locator(STEPS).first.wait_for(timeout=60_000)
    text = page.locator(MESSAGE).first.inner_text()
    assert "size_angstrom" in text and "shape" in text and "scenario's values are shown" in text
    assert slider_title(page, "Side length").endswith(": 20")            # the demo's 20 Å
    assert slider_title(page, "Temperature").endswith("88.50")           # the good value is taken
    page.wait_for_timeout(1000)
    assert "size_angstrom=20.0" in page.url and "triangle" not in page.url
    context.close()


def _focused(page) -> str:
    return page.evaluate("""() => {
      let e = document.activeElement;
      while (e && e.shadowRoot && e.shadowRoot.activeElement) e = e.shadowRoot.activeElement;
      return e ? (e.className + ' ' + (e.textContent || '').trim().slice(0, 40)) : '';
    }""")


def test_tab_reaches_sliders_and_the_scenario_buttons(argon):
    seen = []
    argon.locator("body").click(position={"x": 5, "y": 5})
    for _ in range(80):
        argon.keyboard.press("Tab")
        seen.append(_focused(argon))
    joined = "\n".join(seen)
    assert "noUi-handle" in joined                             # the sliders
    for label in ("Save scenario", "Report (HTML", "PNG, 1920 px"):
        assert label in joined, label
    # a slider moves with the arrow keys once it has the focus
    handle = next(i for i, s in enumerate(seen) if "noUi-handle" in s)
    argon.locator("body").click(position={"x": 5, "y": 5})
    for _ in range(handle + 1):
        argon.keyboard.press("Tab")
    before = slider_title(argon, "Side length")
    argon.keyboard.press("ArrowRight")
    argon.wait_for_timeout(800)
    assert slider_title(argon, "Side length") != before


@pytest.mark.parametrize("width, height", [(1366, 768), (1024, 768)])
def test_laptop_and_projector_screens(browser, argon_url, width, height, tmp_path):
    context = browser.new_context(viewport={"width": width, "height": height})
    page = context.new_page()
    page.goto(argon_url)
    page.locator(STEPS).first.wait_for(timeout=60_000)
    page.wait_for_timeout(1500)
    page.screenshot(path=str(tmp_path / f"pore-{width}x{height}.png"))
    # what the pore page shows fits across the screen (the plots wrap below each other)
    for selector in (".porefill-controls", ".porefill-scenario-io", ".porefill-map", ".porefill-cuts",
                     ".porefill-isotherm"):
        box = page.locator(selector).first.bounding_box()
        assert box is not None and box["x"] >= 0 and box["x"] + box["width"] <= width + 1, selector
    # the scenario buttons stay inside the column of controls
    column = page.locator(".porefill-scenario-io").first.bounding_box()
    for selector in (".porefill-save-scenario", ".porefill-report-button", ".porefill-figure-png",
                     ".porefill-figure-svg"):
        box = page.locator(selector).first.bounding_box()
        assert box["x"] + box["width"] <= column["x"] + column["width"] + 1, selector
        assert box["y"] + box["height"] <= height, f"{selector} is below the first screen"
    assert page.get_by_text("Save scenario (TOML)").first.is_visible()
    context.close()


@pytest.mark.parametrize("width", [1366, 1024])
def test_no_sideways_scrolling(browser, argon_url, width):
    context = browser.new_context(viewport={"width": width, "height": 768})
    page = context.new_page()
    page.goto(argon_url)
    page.locator(STEPS).first.wait_for(timeout=60_000)
    page.wait_for_timeout(1000)
    try:
        assert page.evaluate("() => document.scrollingElement.scrollWidth - window.innerWidth") <= 1
        for selector in (".porefill-readout", ".porefill-steps"):
            box = page.locator(selector).first.bounding_box()
            assert box["x"] + box["width"] <= width + 1, selector
        # every tab fits across the screen (issue: no sideways scroll at 1024×768 on any tab)
        for tab in ("Quantum states", "Measured data", "Sizing", "About & safety", "Pore"):
            page.get_by_text(tab, exact=True).first.click()
            page.wait_for_timeout(800)
            wider = page.evaluate("() => document.scrollingElement.scrollWidth - window.innerWidth")
            assert wider <= 1, (tab, wider)
    finally:
        context.close()


def test_opening_another_scenario_changes_controls_and_title(argon):
    start = argon.locator(".porefill-header h1").first.inner_text()
    argon.locator(".porefill-open-scenario input[type=file]").set_input_files(
        str(ROOT / "scenarios" / "demo-cylinder-nitrogen.toml"))
    argon.get_by_text("6 nm cylindrical silica pore").first.wait_for(timeout=30_000)
    assert argon.locator(".porefill-header h1").first.inner_text() != start
    assert slider_title(argon, "Side length").endswith(": 30")
    assert slider_title(argon, "Temperature").endswith("77.35")
    assert argon.console_errors == []
