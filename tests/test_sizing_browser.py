"""The Sizing tab in headless Chromium: set a target, sweep, see the sizes that meet it listed and marked."""
from __future__ import annotations

import re
from pathlib import Path

import pytest


ROOT = Path(__file__).resolve().parents[1]

pytestmark = pytest.mark.browser

MEETS = ".porefill-sizing-meets"
POINTS = 60
SIZES = (8.0, 10.0, 14.0)
FULL = "pore filled (every site)"
FIRST = "complete first layer (every wall-contact site filled)"
WALLS = "walls full (first layer), central channel still empty"


def _expected(kind: str, low: float, high: float, relative: bool = False) -> list[float]:
    """The sizes meeting the target, computed here through the physics (not through the page)."""
    from porefill.explorer.files.scenario_file import load_scenario
    from porefill.explorer.jobs.sweep_runner import point_job
    from porefill.physics.sweep import Target, meets

    base = load_scenario(ROOT / "scenarios" / "demo-hexagon-helium.toml").replace(site_model="classical",
                                                                                  title="", notes="")
    target = Target(kind, low_pa=low, high_pa=high, relative=relative)
    return [s for s in SIZES if meets(target, point_job(base.replace(size_angstrom=s), POINTS))[0]]


def _listed_sizes(page) -> list[float]:
    """Side lengths in the table of the list beside the plot (first column)."""
    return [float(v) for v in page.locator(f"{MEETS} tbody tr td:first-child").all_inner_texts()]


def _text(page, selector: str) -> str:
    """The paragraphs of an HTML pane (its text sits in a shadow root, which CSS locators pierce)."""
    return " ".join(page.locator(f"{selector} p").all_inner_texts())


def _wait_for(page, selector: str, pattern: str, timeout_ms: int = 60_000) -> str:
    """Poll the paragraphs under ``selector`` until they match ``pattern``; return them."""
    text = ""
    for _ in range(timeout_ms // 100):
        text = _text(page, selector)
        if re.search(pattern, text):
            return text
        page.wait_for_timeout(100)
    raise AssertionError(f"{selector} never matched {pattern!r}; it reads {text!r}")


def _fill(page, css: str, value: str) -> None:
    box = page.locator(f".{css} input").first
    box.fill(value)
    box.press("Enter")


def test_a_target_marks_the_sizes_that_meet_it(page):
    page.get_by_text("Sizing", exact=True).first.click()
    page.locator(".porefill-sizing-compute button").first.wait_for(timeout=30_000)
    _wait_for(page, MEETS, "Choose a target")

    _fill(page, "porefill-sizing-sizes", ",".join(f"{s:g}" for s in SIZES))
    _fill(page, "porefill-sizing-points", str(POINTS))
    page.locator(".porefill-sizing-model select").first.select_option("classical")
    _fill(page, "porefill-sizing-low", "0.001")
    _fill(page, "porefill-sizing-high", "1")
    page.locator(".porefill-sizing-target select").first.select_option(label=FULL)
    _wait_for(page, MEETS, "Compute a sweep")

    page.locator(".porefill-sizing-compute button").first.click()
    text = _wait_for(page, MEETS, r"of 3 pores", timeout_ms=120_000)
    want = _expected("full-pore", 1e-3, 1.0)
    assert 0 < len(want) < len(SIZES), "the window splits the sizes (checked through the physics)"
    assert f"{len(want)} of {len(SIZES)} pores" in text
    assert _listed_sizes(page) == want
    page.locator(".porefill-sizing-plot canvas").first.wait_for(timeout=30_000)
    assert "3 pores" in _text(page, ".porefill-sizing-status")
    # which branch each plotted pressure is on: the steps at equilibrium, and helium's measured adsorption (its
    # own branch in open pores) beside each first-order step with a loop, as the legend and title say
    drawn = page.evaluate(LEGEND_LABELS)
    assert drawn is not None and "measured" in drawn["labels"], drawn
    assert "● equilibrium" in drawn["title"]

    # another target: the list follows at once, from the results already there
    page.locator(".porefill-sizing-target select").first.select_option(label=FIRST)
    _wait_for(page, MEETS, "complete first layer")
    assert _listed_sizes(page) == _expected("first-layer", 1e-3, 1.0)

    # the question as users ask it, with the window in p/p0: walls full, the central channel still empty
    page.locator(".porefill-sizing-window-unit button", has_text="p/p₀").first.click()
    page.locator(".porefill-sizing-target select").first.select_option(label=WALLS)
    text = _wait_for(page, MEETS, r"central channel still empty, between 0 and 1 p/p₀")
    want = _expected("walls-full-centre-empty", 0.0, 1.0, relative=True)
    assert want and f"{len(want)} of {len(SIZES)} pores" in text and _listed_sizes(page) == want

    # the same sweep again comes from the cache
    _fill(page, "porefill-sizing-sizes", "8,10")
    page.locator(".porefill-sizing-compute button").first.click()
    _wait_for(page, ".porefill-sizing-status", r"2 pores in [\d.]+ s \(2 from the cache")
    assert page.console_errors == []


LEGEND_LABELS = """() => {
  for (const v of Bokeh.index.query((v) => v.model.type == "Legend")) {
    const plot = v.parent;
    if (!plot || !plot.model.title || !plot.model.title.text.startsWith("Layer steps")) continue;
    return {title: plot.model.title.text, labels: v.model.items.map((i) => i.label && i.label.value)};
  }
  return null;
}"""


LEGEND_AND_FRAME = """() => {
  for (const v of Bokeh.index.query((v) => v.model.type == "Legend")) {
    const plot = v.parent;
    if (!plot || !plot.frame || !plot.model.title || !plot.model.title.text.startsWith("Layer steps")) continue;
    const l = v.bbox, f = plot.frame.bbox;
    return {legend: [l.left, l.top, l.right, l.bottom], frame: [f.left, f.top, f.right, f.bottom],
            click_policy: v.model.click_policy};
  }
  return null;
}"""


def test_the_legend_leaves_the_points_free_and_the_status_follows_the_inputs(page):
    page.get_by_text("Sizing", exact=True).first.click()
    page.locator(".porefill-sizing-compute button").first.wait_for(timeout=30_000)
    _fill(page, "porefill-sizing-sizes", "8,10")
    _fill(page, "porefill-sizing-points", str(POINTS))
    page.locator(".porefill-sizing-model select").first.select_option("classical")
    page.locator(".porefill-sizing-compute button").first.click()
    done = _wait_for(page, ".porefill-sizing-status", r"2 pores in [\d.]+ s", timeout_ms=120_000)
    page.locator(".porefill-sizing-plot canvas").first.wait_for(timeout=30_000)
    page.wait_for_timeout(800)
    # the legend sits beside the plot's frame, not over it, and a click on an entry hides that family
    box = page.evaluate(LEGEND_AND_FRAME)
    assert box is not None
    assert box["legend"][0] >= box["frame"][2] - 1, box
    assert box["click_policy"] == "hide"
    # other sizes: the status no longer gives the last sweep's line as if it were for them
    _fill(page, "porefill-sizing-sizes", "8,10,12")
    changed = _wait_for(page, ".porefill-sizing-status", r"inputs have changed")
    assert "Press Compute: 3 pores" in changed and not re.search(r"2 pores in [\d.]+ s", changed)
    # back to the swept sizes: the sweep's own line again
    _fill(page, "porefill-sizing-sizes", "8,10")
    assert _wait_for(page, ".porefill-sizing-status", r"2 pores in [\d.]+ s") == done
    # on a 1024 × 768 projector the list of sizes goes under the plot: no sideways scroll with a result shown
    page.set_viewport_size({"width": 1024, "height": 768})
    page.wait_for_timeout(1000)
    assert page.evaluate("() => document.documentElement.scrollWidth") <= 1024
    assert page.console_errors == []
