"""The page and the command line give the same answers (they call the same physics)."""
from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

from porefill.explorer.server.testing import readout_text

pytestmark = pytest.mark.browser

PORFILL = Path(sys.executable).with_name("porefill")


def test_page_and_command_line_agree_on_the_deepest_minimum(page):
    # the demo scenario: hexagon of side 15 Å in an array with 8 Å walls, helium-4 on silica
    page.locator(".porefill-readout p").first.wait_for(timeout=90_000)     # a fresh server's first page
    shown = readout_text(page)
    out = subprocess.run([str(PORFILL), "potential", "--pore", "hexagon", "--size", "15", "--wall", "8",
                          "--adsorbate", "helium-4", "--grid", "200"], capture_output=True, text=True, check=True)
    cli = re.search(r"deepest minimum (.*? from the nearest wall\))", out.stdout).group(1)
    page_text = re.search(r"Deepest minimum:\s*(.*? from the nearest wall\))", shown).group(1)
    assert page_text == cli
