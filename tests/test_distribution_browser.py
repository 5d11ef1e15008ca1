"""The pore-size distribution on the Measured data tab in a real browser: find it for the invented nitrogen demo
with a small kernel, see its plots and summary, save the scenario and reopen it in a fresh page, where the
distribution is shown again without inverting."""
from __future__ import annotations

import re
import time
from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "scenarios" / "demo-nitrogen-invented-measured.toml"
SHOTS = Path("/tmp")


def _text(page, host: str) -> str:
    """The text of an HTML pane: what it holds sits in its shadow root, which Playwright's CSS pierces."""
    return "\n".join(page.locator(f"{host} p, {host} table, {host} li").all_inner_texts())


def _wait_for_text(page, host, words, timeout_s=30.0):
    deadline = time.time() + timeout_s
    while True:
        text = _text(page, host)
        if words in text or time.time() > deadline:
            return text
        page.wait_for_timeout(250)


def _measured_tab(page):
    page.get_by_text("Measured data", exact=True).first.click()
    page.locator(".porefill-psd-find button").first.wait_for(state="visible", timeout=30_000)


def _type(page, selector, value):
    box = page.locator(f"{selector} input").first
    box.fill(str(value))
    box.press("Enter")


def _values(summary: str) -> list[str]:
    """The numbers of the summary table, in order (common practice, no source)."""
    return re.findall(r"\d[\d.]*(?:e[-+]?\d+)?", summary.split("quantity")[1].split("Reduced")[0])


@pytest.fixture(scope="module")
def served(tmp_path_factory):
    """The nitrogen demo served with its kernels kept in a folder of this module, never in ~/.cache."""
    import os

    from conftest import _free_port
    from porefill.explorer.server.testing import serve_scenario

    port = _free_port()
    env = {**os.environ, "POREFILL_CACHE_DIR": str(tmp_path_factory.mktemp("kernels"))}
    proc = serve_scenario(DEMO, port, env=env)
    yield f"http://127.0.0.1:{port}/"
    proc.terminate()
    proc.wait(timeout=10)


def _page(browser, url):
    context = browser.new_context(viewport={"width": 1500, "height": 1100}, accept_downloads=True)
    page = context.new_page()
    errors: list[str] = []
    page.on("console", lambda msg: errors.append(msg.text) if msg.type == "error" else None)
    page.on("pageerror", lambda exc: errors.append(str(exc)))
    page.goto(url)
    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    return context, page, errors


def test_find_save_and_reopen_a_distribution(browser, served, tmp_path):
    context, page, errors = _page(browser, served)
    _measured_tab(page)
    # the file's runs are on the tab (invented data: scenarios/invented-nitrogen-77K.csv)
    _wait_for_text(page, ".porefill-overlay-caption", "invented-nitrogen-77K.csv")
    _type(page, ".porefill-psd-first", 12)
    _type(page, ".porefill-psd-last", 30)
    _type(page, ".porefill-psd-count", 12)
    note = _wait_for_text(page, ".porefill-psd-sizes", "12 sizes 12–30 Å")
    page.locator(".porefill-psd-find button").first.click()
    page.locator(".porefill-psd-summary table").first.wait_for(state="attached", timeout=300_000)
    summary = _text(page, ".porefill-psd-summary")
    for words in ("Computed on this page", "total pore volume", "most pore volume at side length", "diameter",
                  "Reduced χ²", "one side length alone"):
        assert words in summary, (words, summary)
    assert "kernel covers side lengths 12–30 Å" in _text(page, ".porefill-psd-notes")
    page.locator(".porefill-psd-plots canvas").first.wait_for(state="attached", timeout=30_000)
    assert page.locator(".porefill-psd-plots .bk-Figure").count() == 4, note
    page.wait_for_timeout(800)
    page.locator(".porefill-psd").first.screenshot(path=str(SHOTS / "porefill-psd-found.png"))

    # save from the Pore tab's scenario column: the file holds the distribution
    page.get_by_text("Pore", exact=True).first.click()
    with page.expect_download(timeout=60_000) as info:
        page.locator(".porefill-save-scenario button").first.click()
    saved = Path(info.value.path()).read_text(encoding="utf-8")
    assert "[distribution]" in saved and "[distribution.kernel]" in saved and "[distribution.summary_stderr]" in saved
    file = tmp_path / "with-distribution.toml"
    file.write_text(saved, encoding="utf-8")
    assert errors == []
    context.close()

    # a fresh page opens the file: the distribution is shown again, the same numbers, not inverted again
    context, page, errors = _page(browser, served)
    page.locator(".porefill-open-scenario input[type=file]").set_input_files(str(file))
    # the file is applied (and its own tab, the Pore tab it was saved from, shown) before the tab is changed
    again = _wait_for_text(page, ".porefill-psd-summary", "Reopened from the scenario file", timeout_s=60)
    page.wait_for_timeout(500)
    _measured_tab(page)
    assert "Reopened from the scenario file" in again, again
    assert _values(again) == _values(summary)
    assert "not inverted again" in _text(page, ".porefill-psd-status")
    page.locator(".porefill-psd-plots canvas").first.wait_for(state="attached", timeout=30_000)
    assert page.locator(".porefill-psd-plots .bk-Figure").count() == 2     # a file keeps no fitted isotherm
    assert not page.locator(".porefill-psd-carry button").first.is_disabled()
    page.wait_for_timeout(800)
    page.locator(".porefill-psd").first.screenshot(path=str(SHOTS / "porefill-psd-reopened.png"))
    assert errors == []
    context.close()
