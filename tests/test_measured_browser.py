"""The measured-data tab in a real browser: upload, overlay, fit, and bad files that leave the page alive."""
from __future__ import annotations

import re
from pathlib import Path

import pytest

from explorer.testing import text_of

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "scenarios" / "invented-nitrogen-77K.csv"


def _open_tab(page):
    page.locator(".porefill-steps table").first.wait_for(timeout=60_000)
    page.get_by_text("Measured data", exact=True).first.click()
    page.locator(".porefill-dropper input[type=file]").first.wait_for(state="attached", timeout=10_000)


def _wait_for_text(page, selector, words, timeout_s=20.0):
    import time
    deadline = time.time() + timeout_s
    while True:
        text = text_of(page, selector)
        if words in text or time.time() > deadline:
            return text
        page.wait_for_timeout(200)


def _upload(page, path):
    page.locator(".porefill-dropper input[type=file]").first.set_input_files(str(path))


def test_demo_file_overlay_and_fit(page):
    _open_tab(page)
    _upload(page, DEMO)
    page.locator(".porefill-overlay canvas").first.wait_for(state="attached", timeout=30_000)
    caption = text_of(page, ".porefill-overlay-caption p")
    assert DEMO.name in caption and "Model for" in caption
    page.get_by_role("button", name="Fit", exact=True).first.click()
    page.locator(".porefill-fit-table").first.wait_for(state="attached", timeout=180_000)
    table = text_of(page, ".porefill-fit-table")
    for name in ("wall-strength", "size", "pore-volume"):
        assert name in table
    size = float(re.search(r"size\s+([\d.]+)", table).group(1))
    assert 5.0 < size < 300.0                       # a size in Å, within the fit's bounds
    assert page.console_errors == []


BAD_FILES = {
    # name: (content, words the message must contain)
    "empty.csv": (b"\n\n", "empty"),           # a 0-byte file is refused by the upload widget itself
    "junk.csv": (bytes(range(256)) * 8, "junk.csv"),
    "header-only.csv": (b"pressure (Pa),amount (mmol/g)\n", "header-only.csv"),
    "words.csv": (b"pressure (Pa),amount (mmol/g)\nabc,def\nghi,jkl\n", "words.csv"),
    "fake.xlsx": (b"PK\x03\x04 this is not a workbook", "fake.xlsx"),
}


def test_bad_files_get_their_own_message_and_the_page_stays_alive(page, tmp_path):
    _open_tab(page)
    for name, (content, words) in BAD_FILES.items():
        path = tmp_path / name
        path.write_bytes(content)
        _upload(page, path)
        problems = _wait_for_text(page, ".porefill-file-problems p", name)
        assert words in problems and "Traceback" not in problems
    # the page still answers: the quantum tab opens and the pore tab's steps table is still there
    page.get_by_text("Pore", exact=True).first.click()
    page.locator(".porefill-steps table").first.wait_for(state="visible", timeout=10_000)
    assert page.console_errors == []
