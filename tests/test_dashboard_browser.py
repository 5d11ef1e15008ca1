"""The served dashboard in headless Chromium: what a person sees when moving the controls."""
from __future__ import annotations

import re

import pytest

from explorer.testing import drag_handle, readout_text, slider_handle, wait_for_readout_change

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
    from explorer.testing import text_of, wait_for_text_change

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
    from explorer.testing import text_of, wait_for_text_change

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
