"""The served dashboard in headless Chromium: what a person sees when moving the controls."""
from __future__ import annotations

import re

import pytest

from porefill.physics.limits import SIZE_RANGE_ANGSTROM
from porefill.explorer.server.testing import drag_handle, readout_text, slider_handle, wait_for_readout_change

pytestmark = pytest.mark.browser


def _map_png(page) -> bytes:
    return page.locator(".porefill-map").first.screenshot()


def _deepest(text: str) -> float:
    return float(re.search(r"Deepest minimum:\s*(-?[\d.]+) K", text).group(1))


def test_side_length_slider_redraws_map_and_readout(page):
    page.locator(".porefill-map canvas").first.wait_for(timeout=30_000)
    page.wait_for_timeout(1000)
    before_text = readout_text(page)
    before_png = _map_png(page)
    assert "Deepest minimum" in before_text and " K at x = " in before_text
    title_before = page.locator(".bk-slider-title").first.inner_text()

    drag_handle(page, slider_handle(page, "Side length"), 60)
    wait_for_readout_change(page, before_text)
    page.wait_for_timeout(800)

    title_after = page.locator(".bk-slider-title").first.inner_text()
    assert title_after != title_before
    after_text = readout_text(page)
    # a bigger pore: the minimum moves out with the corner (position read from the text)
    r_before = float(re.search(r"\(([\d.]+) Å from the centre", before_text).group(1))
    r_after = float(re.search(r"\(([\d.]+) Å from the centre", after_text).group(1))
    assert r_after > r_before + 1.0
    assert _deepest(after_text) < 0
    assert _map_png(page) != before_png
    assert page.console_errors == []


def test_about_page_carries_safety_cautions(page):
    page.get_by_text("About & safety").click()
    for words in ("Asphyxiation", "Cold burns", "Pressure build-up", "not safety figures",
                  "institution's safety rules"):
        page.get_by_text(words).first.wait_for(state="visible", timeout=10_000)
    assert page.console_errors == []


STEPS = ".porefill-steps table"
OCCUPANCY = ".porefill-occupancy p"


def test_temperature_slider_changes_isotherm_and_steps(page):
    from porefill.explorer.server.testing import text_of, wait_for_text_change

    page.locator(STEPS).first.wait_for(timeout=30_000)
    page.wait_for_timeout(800)
    before = text_of(page, STEPS)
    assert "corner" in before and "face" in before          # steps labelled by where the sites sit
    iso_png = page.locator(".porefill-isotherm").first.screenshot()
    drag_handle(page, slider_handle(page, "Temperature"), 12)
    wait_for_text_change(page, STEPS, before)
    page.wait_for_timeout(800)
    after = text_of(page, STEPS)
    assert after != before
    assert page.locator(".porefill-isotherm").first.screenshot() != iso_png
    assert page.console_errors == []


def test_picking_a_pressure_changes_the_occupancy_map(page):
    from porefill.explorer.server.testing import text_of, wait_for_text_change

    page.locator(OCCUPANCY).first.wait_for(timeout=30_000)
    page.wait_for_timeout(800)
    before = text_of(page, OCCUPANCY)
    map_png = page.locator(".porefill-occupancy-map").first.screenshot()
    drag_handle(page, slider_handle(page, "Occupancy map"), -150)
    wait_for_text_change(page, OCCUPANCY, before)
    page.wait_for_timeout(800)
    after = text_of(page, OCCUPANCY)
    n_before = float(re.search(r"([\d.]+) atoms per nm;", before).group(1))
    n_after = float(re.search(r"([\d.]+) atoms per nm;", after).group(1))
    assert n_after < n_before                                # lower pressure, fewer atoms
    assert page.locator(".porefill-occupancy-map").first.screenshot() != map_png
    assert page.console_errors == []


# ---- faults a new user hit ------------------------------------------------------------------------
ISOTHERM = ".porefill-isotherm"
STEPS_BOX = ".porefill-steps-box"
OCC_BOX = ".porefill-occupancy-map"
CAPTION = ".porefill-isotherm-caption p"


def _side(text: str) -> str:
    """The side length a caption or readout names ('side length 15 Å' → '15')."""
    return re.search(r"side(?: length)?(?: / radius / width)? ([\d.]+) Å", text).group(1)


def test_clicking_the_isotherm_picks_a_pressure(page):
    from porefill.explorer.server.testing import slider_title, text_of, wait_for_text_change

    page.locator(OCCUPANCY).first.wait_for(timeout=30_000)
    page.wait_for_timeout(800)
    before, title_before = text_of(page, OCCUPANCY), slider_title(page, "Occupancy map")
    canvas = page.locator(f"{ISOTHERM} canvas").first
    canvas.scroll_into_view_if_needed()
    box = canvas.bounding_box()
    # left of the middle of the frame: a much lower pressure than the map starts at
    page.mouse.click(box["x"] + 0.35 * box["width"], box["y"] + 0.5 * box["height"])
    wait_for_text_change(page, OCCUPANCY, before)
    assert slider_title(page, "Occupancy map") != title_before      # the slider follows the click
    p_before = float(re.search(r"at p = ([-\d.e+]+) Pa", before).group(1))
    p_after = float(re.search(r"at p = ([-\d.e+]+) Pa", text_of(page, OCCUPANCY)).group(1))
    assert p_after < p_before
    assert page.console_errors == []


def _first(records, test, after: float = float("-inf"), clock: str = "t") -> float | None:
    """Browser time (``t``, ms) or painted-frame number (``frame``) of the first record from ``after``
    on that passes ``test``."""
    return next((r[clock] for r in records if r[clock] >= after and test(r)), None)


def test_stale_isotherm_is_marked_loading_until_its_result_arrives(page):
    from porefill.explorer.server.testing import (is_loading, readout_text, record_changes, recorded, text_of, wait_for_loading,
                                  wait_for_text_change)

    page.locator(STEPS).first.wait_for(timeout=30_000)
    page.wait_for_timeout(800)
    steps_before = text_of(page, STEPS)
    assert not is_loading(page, ISOTHERM)
    for selector, key in ((ISOTHERM, "iso"), (STEPS_BOX, "steps_box"), (OCC_BOX, "occ"), (".porefill-steps", "steps")):
        record_changes(page, selector, key)
    drag_handle(page, slider_handle(page, "Side length"), 110)       # a large pore: seconds of work
    wait_for_text_change(page, STEPS, steps_before, timeout_s=90)
    wait_for_loading(page, ISOTHERM, False, timeout_s=10)
    old_text = recorded(page, "steps")[0]["text"]
    # compared by painted frame: what reached the screen together
    new_steps = _first(recorded(page, "steps"), lambda r: r["text"] != old_text, clock="frame")
    for key in ("iso", "steps_box", "occ"):
        log = recorded(page, key)
        stale = _first(log, lambda r: r["loading"], clock="frame")
        assert stale is not None and stale <= new_steps, key          # marked while the old steps showed
        fresh = _first(log, lambda r: not r["loading"], after=stale, clock="frame")
        assert fresh is not None and fresh >= new_steps, key          # cleared when the new ones came
    assert not is_loading(page, STEPS_BOX) and not is_loading(page, OCC_BOX)
    # every part names the inputs it belongs to, and they agree with the controls
    side = _side(readout_text(page))
    assert float(side) > 30
    for selector in (CAPTION, STEPS, OCCUPANCY):
        assert _side(text_of(page, selector)) == side, selector
    assert page.console_errors == []


def test_other_sessions_stay_responsive_and_isolated(browser, served_app):
    from porefill.explorer.server.testing import readout_text, record_changes, recorded, slider_title, text_of, wait_for_text_change

    pages = []
    for _ in range(2):
        context = browser.new_context(viewport={"width": 1400, "height": 900})
        pg = context.new_page()
        pg.goto(served_app)
        pg.locator(STEPS).first.wait_for(timeout=60_000)
        pages.append(pg)
    a, b = pages
    try:
        a.wait_for_timeout(800)
        steps_a = text_of(a, STEPS)
        record_changes(a, ISOTHERM, "iso")
        record_changes(b, ".porefill-readout", "readout")
        drag_handle(a, slider_handle(a, "Side length"), 600)          # to the end of the range (limits.py)
        for _ in range(600):
            if _first(recorded(a, "iso"), lambda r: r["loading"]) is not None:
                break
            a.wait_for_timeout(50)
        before_b = readout_text(b)
        drag_handle(b, slider_handle(b, "Side length"), 30)
        wait_for_readout_change(b, before_b)
        wait_for_text_change(a, STEPS, steps_a, timeout_s=120)
        # B's readout was redrawn while A's isotherm was still being computed
        log_a = recorded(a, "iso")
        t_a_stale = _first(log_a, lambda r: r["loading"])
        t_a_done = _first(log_a, lambda r: not r["loading"], after=t_a_stale)
        first_b = recorded(b, "readout")[0]["text"]
        t_b = _first(recorded(b, "readout"), lambda r: r["text"] != first_b)
        assert t_a_stale is not None and t_a_done is not None and t_b is not None
        assert t_b < t_a_done
        side_a, side_b = _side(text_of(a, CAPTION)), _side(readout_text(b))
        assert side_a == f"{SIZE_RANGE_ANGSTROM['hexagon'][1]:g}" and side_b != side_a
        # nothing of A's state shows up in B
        b.locator(STEPS).first.wait_for(timeout=30_000)
        wait_for_text_change(b, CAPTION, "", timeout_s=60)
        for _ in range(600):
            if _side(text_of(b, CAPTION)) == side_b:
                break
            b.wait_for_timeout(50)
        assert slider_title(b, "Side length").endswith(side_b)
        for selector in (".porefill-readout p", STEPS, CAPTION, OCCUPANCY):
            assert _side(text_of(b, selector)) == side_b, selector
    finally:
        for pg in pages:
            pg.context.close()


def test_occupancy_pressure_follows_the_new_gas(page):
    from porefill.explorer.server.testing import handle_fraction, slider_title, text_of, wait_for_text_change

    page.locator(OCCUPANCY).first.wait_for(timeout=30_000)
    page.wait_for_timeout(800)
    before = text_of(page, OCCUPANCY)
    assert "helium-4" in before
    page.locator("select").first.select_option("nitrogen")
    wait_for_text_change(page, OCCUPANCY, before, timeout_s=60)
    deadline_text = text_of(page, OCCUPANCY)
    for _ in range(600):
        if "nitrogen" in deadline_text:
            break
        page.wait_for_timeout(100)
        deadline_text = text_of(page, OCCUPANCY)
    assert "nitrogen" in deadline_text
    page.wait_for_timeout(500)
    # the slider starts afresh in nitrogen's range, near its top (the upper layers), not at helium's value
    fraction = handle_fraction(page, "Occupancy map")
    assert 0.7 < fraction < 0.9, fraction
    relative = float(re.search(r"p/p₀ = ([-\d.e+]+)", deadline_text).group(1))
    assert 0 < relative < 1
    assert float(slider_title(page, "Temperature").split(":")[-1]) > 60     # nitrogen's range, K
    assert page.console_errors == []


def _wall_disabled(page) -> bool:
    from porefill.explorer.server.testing import slider_track

    return slider_track(page, "Wall thickness").get_attribute("disabled") == "true"


def test_wall_slider_is_disabled_where_it_does_nothing(page):
    page.locator(STEPS).first.wait_for(timeout=30_000)
    assert not _wall_disabled(page)
    page.get_by_role("button", name="cylinder").click()
    page.locator(".porefill-wall-note p").first.wait_for(timeout=10_000)
    assert _wall_disabled(page)
    assert "cylinder" in page.locator(".porefill-wall-note p").first.inner_text()
    page.get_by_role("button", name="hexagon").click()
    page.locator(".porefill-wall-note p").first.wait_for(state="detached", timeout=10_000)
    assert not _wall_disabled(page)
    page.get_by_role("checkbox").first.check()
    page.locator(".porefill-wall-note p").first.wait_for(timeout=10_000)
    assert _wall_disabled(page)
    assert page.console_errors == []


def test_one_header_helpful_tooltips_and_subscripts(page):
    page.locator(STEPS).first.wait_for(timeout=30_000)
    headers = page.locator("h1")
    assert headers.count() == 1
    text = headers.first.inner_text()
    assert text.count("porefill") == 1 and text.count("helium-4 in a hexagonal silica pore array") == 1
    # each description icon says more than the label beside it
    icons = page.locator(".bk-description:visible")      # the Measured tab repeats the controls, hidden here
    assert icons.count() >= 1
    for i in range(icons.count()):
        icons.nth(i).hover()
        tip = page.locator(".bk-tooltip-content").last
        tip.wait_for(timeout=5_000)
        assert len(tip.inner_text()) > 40 and "p₀" in tip.inner_text()
    page.get_by_text("About & safety").click()
    page.get_by_text("The adsorption model").first.wait_for(timeout=10_000)
    pressures = page.locator("p", has_text="Pressures: p = ").first.inner_text()
    assert "coex" in pressures and "μ_coex" not in pressures
    assert page.locator("p", has_text="Pressures: p = ").first.locator("sub", has_text="coex").count() >= 1
    assert page.console_errors == []


HOSTILE = "<img src=x onerror=alert(1)><script>alert(2)</script>"


def test_hostile_scenario_title_is_shown_as_text(browser, tmp_path):
    import socket

    from porefill.explorer.server.testing import serve_scenario

    scenario = tmp_path / "hostile.toml"
    scenario.write_text(f'[scenario]\ntitle = "{HOSTILE}"\nshape = "hexagon"\nsize_angstrom = 12.0\n'
                        'wall_angstrom = 6.0\nadsorbate = "helium-4"\ntemperature_k = 1.5\n'
                        'site_model = "classical"\n', encoding="utf-8")     # fast first page: the test is on the title
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = serve_scenario(scenario, port)
    context = browser.new_context(viewport={"width": 1400, "height": 900})
    try:
        pg = context.new_page()
        dialogs = []
        pg.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
        pg.goto(f"http://127.0.0.1:{port}/")
        pg.locator(STEPS).first.wait_for(timeout=60_000)
        pg.wait_for_timeout(1000)
        assert HOSTILE in pg.locator("h1").first.inner_text()
        assert pg.locator("h1 img, h1 script").count() == 0
        assert dialogs == []
    finally:
        context.close()
        proc.terminate()
        proc.wait(timeout=10)


def test_tabs_closed_while_they_update_leave_no_traceback_in_the_log(browser, tmp_path):
    # issue 22: a tab closed while the server wrote to it logged WebSocketClosedError tracebacks (asyncio's
    # "Task exception was never retrieved") and Bokeh's warning; a closed tab is no fault (common practice,
    # no source)
    import socket
    from pathlib import Path

    from porefill.explorer.server.testing import READOUT, serve_scenario

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    log_path = tmp_path / "serve.log"
    scenario = Path(__file__).resolve().parents[1] / "scenarios" / "demo-hexagon-helium.toml"
    with log_path.open("w") as log:
        proc = serve_scenario(scenario, port, output=log)
        try:
            for k in range(4):
                context = browser.new_context(viewport={"width": 1400, "height": 900})
                pg = context.new_page()
                pg.goto(f"http://127.0.0.1:{port}/", timeout=90_000)
                handle = slider_handle(pg, "Side length")
                pg.wait_for_timeout(250 * k)             # closed at a different moment of the page's work
                drag_handle(pg, handle, 40)
                context.close()                          # the new map and isotherm are on their way
            context = browser.new_context(viewport={"width": 1400, "height": 900})
            pg = context.new_page()                      # one page seen through: the server has moved on
            pg.goto(f"http://127.0.0.1:{port}/", timeout=90_000)
            pg.locator(READOUT).first.wait_for(timeout=60_000)
            context.close()
        finally:
            proc.terminate()
            proc.wait(timeout=10)
    text = log_path.read_text()
    assert not re.search(r"Traceback|WebSocketClosedError|StreamClosedError|Failed sending", text), text[-3000:]


def test_quantum_tab_shows_states_both_models_and_step_shifts(page):
    # helium-4 at 1.5 K, 15 Å side, 8 Å walls (the demo scenario): the independent check gives a
    # zero-point energy of 40.9 K and first-layer steps 10–31 K deeper in μ classically than with the states
    from porefill.explorer.server.testing import text_of

    page.locator(STEPS).first.wait_for(timeout=60_000)
    page.get_by_text("Quantum states", exact=True).first.click()
    page.locator(".porefill-shift-table").first.wait_for(timeout=120_000)
    numbers = text_of(page, ".porefill-quantum-numbers")
    zpe = float(re.search(r"zero-point energy ([\d.]+) K", numbers).group(1))
    assert zpe == pytest.approx(40.9, abs=0.3)
    bands = text_of(page, ".porefill-band-table")
    assert "corner" in bands and "face" in bands
    # each orbit says where its free energy comes from: every row from states, the centre too (issue: helium's
    # layers, quantum all the way)
    orbits = text_of(page, ".porefill-orbit-table")
    assert re.search(r"corner\s+6\s+quantum states", orbits) and re.search(r"centre\s+1\s+quantum states", orbits)
    shifts = text_of(page, ".porefill-shift-table")
    corner = re.search(r"corner\s+(-?[\d.]+)\s+(-?[\d.]+)\s+\+([\d.]+)", shifts)
    assert corner and 10.0 <= float(corner.group(3)) <= 31.0
    # the maps and the energy plot are drawn (a canvas each), and choosing another band redraws the map
    page.locator(".porefill-quantum-body canvas").first.wait_for(state="visible", timeout=10_000)
    body = page.locator(".porefill-quantum-body").first
    before = body.screenshot()
    page.locator(".porefill-quantum-body select").first.select_option(index=2)
    page.wait_for_timeout(1500)
    assert body.screenshot() != before
    # the comparison's coverage axis names the unit of the pore shown (a hexagon: per nm of pore), as the
    # isotherm's does; plot text is drawn on the canvas, so it is read from Bokeh's model
    labels = page.evaluate("""() => Array.from(Bokeh.index.query((v) => v.model.type == "Figure"
        && v.model.title != null)).map((v) => [v.model.title.text, v.model.left.map((a) => a.axis_label)])""")
    assert ["Equilibrium isotherm, both site models", ["coverage (atoms per nm of pore)"]] in labels, labels
    # back on the pore tab, the isotherm is still drawn and the page answers
    page.get_by_text("Pore", exact=True).first.click()
    page.locator(STEPS).first.wait_for(state="visible", timeout=10_000)
    assert page.console_errors == []


def test_pore_ends_and_the_relative_pressure_axis(page):
    """Choosing how the pores end changes what the caption says is drawn as measured (porefill.physics.lattice_gas.branches); the
    p/p0 axis shows a linear relative-pressure plot, what nitrogen users read isotherms on."""
    from porefill.explorer.server.testing import text_of, wait_for_text_change

    notes = ".porefill-branch-notes"
    page.locator(notes).first.wait_for(timeout=60_000)
    before = text_of(page, notes)
    assert "Pore ends: open" in before and "equilibrium branch" in before
    page.get_by_role("button", name="closed-end").click()
    wait_for_text_change(page, notes, before)
    after = text_of(page, notes)
    assert "Pore ends: closed-end" in after and "Adsorption follows the model's equilibrium branch" in after
    box = page.locator(ISOTHERM).first
    page.wait_for_timeout(800)
    log_png = box.screenshot()
    page.get_by_role("button", name="p/p₀ (linear)").click()
    page.wait_for_timeout(1200)
    assert box.screenshot() != log_png          # another plot is on show (its text is drawn on the canvas)
    assert page.console_errors == []


def test_the_site_model_control_switches_the_main_view(page):
    # the demo opens classical; the control on the main view says so and switches to the exact one-atom states,
    # which move helium's steps by orders of magnitude (issue: a visible site-model control on the main view)
    from porefill.explorer.server.testing import text_of, wait_for_text_change

    page.locator(STEPS).first.wait_for(timeout=60_000)
    control = page.locator(".porefill-site-model")
    assert "active" in (control.get_by_role("button", name="classical").first.get_attribute("class") or "")
    before = text_of(page, STEPS)
    control.get_by_role("button", name="quantum").first.click()
    wait_for_text_change(page, STEPS, before, timeout_s=120)
    assert "site model classical → quantum" not in text_of(page, STEPS)     # words live in the notes, not the table
    assert "changed on the page" in page.locator(".porefill-header h1").first.inner_text()
    assert "site_model=quantum" in page.url
    assert page.console_errors == []


def test_wall_plating_is_chosen_on_the_main_view(page):
    # an argon layer on the wall moves the deepest well inwards by the layer's distance (porefill.physics.pore.plating)
    page.locator(".porefill-map canvas").first.wait_for(timeout=30_000)
    page.wait_for_timeout(1000)
    before = readout_text(page)
    page.locator(".porefill-plating select").first.select_option("argon")
    wait_for_readout_change(page, before)
    page.wait_for_timeout(800)
    after = readout_text(page)
    r_before = float(re.search(r"\(([\d.]+) Å from the centre", before).group(1))
    r_after = float(re.search(r"\(([\d.]+) Å from the centre", after).group(1))
    assert r_after < r_before - 2.0
    assert "plating=argon" in page.url
    assert page.console_errors == []
