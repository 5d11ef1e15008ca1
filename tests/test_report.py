"""The HTML report, the slide figures, the notebook entry point and the dashboard's scenario controls
(without a browser)."""
from __future__ import annotations

import re
import struct
import subprocess
import sys
import tomllib
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from porefill.explorer.outputs.figures import FIGURES, SLIDE_WIDTH_PX, figure_job
from porefill.explorer.outputs.report import SECTIONS, build_report
from porefill.explorer.files.scenario_file import ScenarioDocument, load_document, parse_document, resolve_scenario
from porefill.physics.scenario import Scenario

ROOT = Path(__file__).resolve().parents[1]
FAST = Scenario(shape="slit", size_angstrom=12.0, wall_angstrom=10.0, adsorbate="argon", temperature_k=87.3)


def _png_size(data: bytes) -> tuple[int, int]:
    # PNG: 8-byte signature, then the IHDR chunk whose first fields are width and height, big-endian
    # (PNG specification, W3C Recommendation 2003, §11.2.2)
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", data[16:24])


@pytest.fixture(scope="module")
def measured_report() -> str:
    doc = load_document(resolve_scenario("demo-nitrogen-invented-measured"))
    return build_report(doc, sizes=(14.0, 18.0))


def test_every_section_is_there(measured_report):
    for key, title in SECTIONS.items():
        assert f"<section id='{key}'" in measured_report
        assert title in measured_report
    for words in ("Asphyxiation", "not safety figures", "Lorentz–Berthelot", "sites that fill",
                  "invented-nitrogen-77K.csv", "p₀"):
        assert words in measured_report


def test_the_report_links_to_nothing_outside_itself(measured_report):
    assert "<script" not in measured_report.lower()
    # every src/href is a data URI or a fragment of this page
    for attr, value in re.findall(r"(src|href)\s*=\s*['\"]([^'\"]*)", measured_report):
        assert value.startswith(("data:", "#")), (attr, value[:80])
    assert "http://" not in measured_report and "https://" not in measured_report


def test_text_from_the_file_is_escaped():
    sc = FAST.replace(title="<script>alert(1)</script>", notes="<img src=x onerror=alert(2)>")
    text = build_report(ScenarioDocument(sc), sizes=())
    assert "<script>alert" not in text and "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    assert "<img src=x" not in text


DOLLAR_NAMES = ("sample $x_{1$", "$5 and $6", r"a\$b")   # issue 22: broken math, working math, an escape


def _drawn_texts(fig) -> set[str]:
    """The texts a figure draws: SVG kept as <text> (not paths); matplotlib's comments hold the raw string,
    so they are dropped before looking (common practice, no source)."""
    import io

    import matplotlib

    out = io.BytesIO()
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        fig.savefig(out, format="svg")
    svg = re.sub(r"<!--.*?-->", "", out.getvalue().decode(), flags=re.S)
    return set(re.findall(r"<text[^>]*>([^<]*)</text>", svg))


def test_dollar_signs_in_names_and_titles_are_drawn_as_written():
    from porefill.explorer.outputs.figures import isotherm_figure, measured_figure
    from porefill.physics.fitting.measured import MeasuredRun, Sample
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    iso = compute_isotherm(FAST, n_points=40)
    runs = [MeasuredRun(name=name, source="a.csv", pressure=[1.0, 10.0], pressure_unit="Pa",
                        amount=[0.1, 0.2], amount_unit="per nm") for name in DOLLAR_NAMES]
    assert set(DOLLAR_NAMES) <= _drawn_texts(measured_figure(iso, runs, Sample()))
    assert "$5 and $6" in _drawn_texts(isotherm_figure(iso, title="$5 and $6"))
    # the report draws the same runs (a pyparsing error before); its title is HTML text
    doc = ScenarioDocument(FAST.replace(title="$5 and $6"), measured=tuple(runs))
    text = build_report(doc, sizes=())
    assert "porefill report: $5 and $6" in text and "sample $x_{1$" in text


def test_classical_gas_says_why_no_quantum_states():
    text = build_report(ScenarioDocument(FAST), sizes=())
    assert "Not computed: argon is treated with classical sites" in text
    assert "Not computed (asked for no sizes)" in text
    assert "The scenario holds no measured runs" in text


def test_step_table_matches_the_isotherm():
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    iso = compute_isotherm(FAST, n_points=300)
    text = build_report(ScenarioDocument(FAST), sizes=())
    table = text[text.index("porefill-step-table"):]
    for s in iso.steps:
        assert f"<td>{s.pressure_pa:.4g}</td>" in table


def test_saved_fit_appears_with_its_numbers():
    from porefill.explorer.files.saved_fit import FitParameter, SavedFit

    fit = SavedFit(free=("size",), parameters=(FitParameter("size", 12.345, 0.067, "Å", 9.0, 15.0),),
                   statistics=(("chi2", 3.25), ("points", 12)), warnings=("size sits near a bound",))
    text = build_report(ScenarioDocument(FAST, fit=fit), sizes=())
    assert "<td>12.345</td>" in text and "<td>0.067</td>" in text and "size sits near a bound" in text


def test_saved_fit_statistics_are_labelled_with_their_meaning():
    # what a reader sees is "reduced χ²", not the machine key (issue 21); the keys stay in the TOML and JSON
    from porefill.explorer.files.saved_fit import FitParameter, SavedFit

    fit = SavedFit(free=("size",), parameters=(FitParameter("size", 12.345, 0.067, "Å", 9.0, 15.0),),
                   statistics=(("chi2", 3.25), ("reduced_chi2", 1.25), ("r_squared", 0.99),
                               ("noise_relative_estimated", 0.0224)))
    text = build_report(ScenarioDocument(FAST, fit=fit), sizes=())
    section = text[text.index("<h3>Saved fit</h3>"):]
    assert "<td>reduced χ²</td><td>1.25</td><td>χ² per degree of freedom" in section
    assert "<td>R²</td>" in section and "<td>estimated relative noise</td>" in section
    assert "reduced_chi2" not in section and "r_squared" not in section and "noise_relative" not in section


# the command ----------------------------------------------------------------------------------------------
def _porefill(*args):
    exe = Path(sys.executable).with_name("porefill")
    return subprocess.run([str(exe), *args], capture_output=True, text=True, timeout=300)


def test_report_command_writes_the_file(tmp_path):
    out = tmp_path / "r.html"
    done = _porefill("report", str(ROOT / "scenarios" / "demo-slit-argon.toml"), "--out", str(out), "--sizes",
                     "12,20")
    assert done.returncode == 0, done.stderr
    text = out.read_text(encoding="utf-8")
    assert all(f"<section id='{k}'" in text for k in SECTIONS)
    assert "sizing map: pore 2 of 2" in done.stderr and "opens offline" in done.stderr


@pytest.mark.parametrize("args, words", [
    (["no-such-demo", "--out", "x.html"], "no shipped scenario of that name"),
    (["demo-slit-argon", "--out", " "], "--out needs a file name"),
    (["demo-slit-argon", "--out", "x.html", "--sizes", "1:2"], "--sizes"),
    (["demo-slit-argon", "--out", "/no/such/dir/x.html", "--sizes", "none"], "cannot write"),
])
def test_report_command_errors_are_one_line(args, words):
    done = _porefill("report", *args)
    assert done.returncode == 2
    assert words in done.stderr and len(done.stderr.strip().splitlines()) == 1


# figures --------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", list(FIGURES))
def test_every_figure_as_slide_png_and_svg(name):
    png = figure_job(FAST, name, "png", pick_pa=1e4)
    width, height = _png_size(png)
    assert width == SLIDE_WIDTH_PX and 900 <= height <= 1700
    svg = figure_job(FAST, name, "svg", pick_pa=1e4)
    root = ET.fromstring(svg)
    assert root.tag == "{http://www.w3.org/2000/svg}svg"      # SVG 1.1 namespace (W3C)


def test_unknown_figure_or_format_is_refused():
    with pytest.raises(ValueError, match="figure must be one of"):
        figure_job(FAST, "pie-chart", "png")
    with pytest.raises(ValueError, match="format must be 'png' or 'svg'"):
        figure_job(FAST, "line-cuts", "gif")


# notebooks and the dashboard's controls ---------------------------------------------------------------------
def test_importing_explorer_is_cheap():
    code = "import sys, porefill.explorer as e; print('panel' in sys.modules, 'numpy' in sys.modules, callable(e.app))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60).stdout
    assert out.split() == ["False", "False", "True"]


def test_explorer_app_returns_a_viewable_without_a_server():
    import panel as pn

    from porefill.explorer import app

    page = app(FAST)
    assert isinstance(page, pn.viewable.Viewable)
    root = page.get_root()                        # the Bokeh model a notebook displays
    assert root is not None
    import porefill.explorer

    assert porefill.explorer.app is app            # importing the page's module does not shadow the function


def _io(scenario=FAST):
    from porefill.explorer.views.state import ExplorerState
    from porefill.explorer.views.isotherm import IsothermView
    from porefill.explorer.views.scenario_io import ScenarioIO

    state = ExplorerState.from_scenario(scenario)
    return ScenarioIO(state=state, isotherm=IsothermView(state=state)), state


def test_save_writes_what_the_controls_hold():
    io_view, state = _io()
    state.temperature_k = 90.0
    io_view.isotherm.x_axis.value = "chemical-potential"
    doc = parse_document(io_view.toml_file().getvalue().decode("utf-8"))
    assert doc.scenario == state.scenario()
    assert doc.view.axis == "chemical-potential"
    assert tomllib.loads(io_view.toml_text())["format"] == 1


def test_open_applies_a_good_file_and_refuses_a_bad_one():
    # Open's callback is async (the file is parsed in a worker): param runs it at once where no event loop
    # runs, so the test runs in a thread of its own (Playwright may have left one running in the main thread)
    from run_apart import in_a_thread

    in_a_thread(_open_applies_a_good_file_and_refuses_a_bad_one)


def _open_applies_a_good_file_and_refuses_a_bad_one():
    io_view, state = _io()
    good = (ROOT / "scenarios" / "demo-cylinder-nitrogen.toml").read_bytes()
    io_view.open.param.update(filename="n.toml", value=good)
    assert state.scenario().model_key() == load_document(ROOT / "scenarios" / "demo-cylinder-nitrogen.toml").scenario.model_key()
    before = state.scenario()
    io_view.open.param.update(filename="bad.toml", value=b"[scenario]\nshape = 'hexagon'\nsize_angstrom = -2.0\n")
    assert state.scenario() == before
    assert io_view.message.visible and "bad.toml, line 3" in io_view.message.object
    assert "size_angstrom" in io_view.message.object and "Nothing was changed" in io_view.message.object
    io_view.open.param.update(filename="big.toml", value=b"[scenario]\nsize_angstrom = 250.0\n")
    assert state.scenario() == before and "must be &gt;= 2 and &lt;= 200 Å" in io_view.message.object
    io_view.open.param.update(filename="bin.toml", value=b"\xff\xfe\x00")
    assert "not UTF-8" in io_view.message.object


def test_a_link_refuses_bad_values_by_name_and_keeps_the_good():
    io_view, state = _io()
    refused = io_view._apply_link({"size_angstrom": 1500,   # past the slit's 1000 Å (physics/limits.py)
                                   "temperature_k": 88.0, "shape": "triangle",
                                   "isolated": "perhaps"})
    assert set(refused) == {"size_angstrom", "shape", "isolated"}
    assert state.temperature_k == 88.0 and state.size_angstrom == FAST.size_angstrom and state.shape == "slit"
    assert io_view._apply_link({"temperature_k": float("nan")}) and state.temperature_k == 88.0


def test_a_refused_link_is_told_in_plain_words():
    # issue 22: the message showed param's own text ("Selector parameter 'ExplorerState.adsorbate' ...");
    # it names the query key, the value and what is allowed (common practice, no source)
    from porefill.explorer.views.scenario_io import refused_link_message

    io_view, state = _io()
    wanted = {"adsorbate": "xenon", "shape": "triangle", "isolated": "perhaps", "size_angstrom": 1500,
              "wall_angstrom": "thick", "temperature_k": float("nan")}
    refused = io_view._apply_link(wanted)
    assert set(refused) == set(wanted)
    assert refused["adsorbate"] == "must be one of helium-4, hydrogen, neon, argon, nitrogen"
    assert refused["shape"] == "must be one of hexagon, cylinder, slit"
    assert refused["isolated"] == "must be true or false"
    assert refused["size_angstrom"] == "must be between 2 and 1000 Å for a slit"   # physics/limits.py
    assert refused["wall_angstrom"] == "must be a number"
    assert refused["temperature_k"] == "must be a finite number"
    message = refused_link_message(wanted, refused)
    assert "adsorbate = 'xenon' (must be one of helium-4" in message and "size_angstrom = 1500 (" in message
    assert "parameter" not in message and "ExplorerState" not in message and len(message.splitlines()) == 1
    io_view._apply_link({"adsorbate": "argon"})
    lo, hi = state.param.temperature_k.bounds
    why = io_view._apply_link({"temperature_k": 500.0})["temperature_k"]
    assert why == f"must be between {lo:g} and {hi:g} K for argon"


def test_a_saved_distribution_is_reported_with_its_figure_and_escaped_notes():
    # common practice, no source: the report shows what the file holds, text from the file escaped
    from porefill.explorer.files.saved_distribution import SavedDistribution

    kernel = Scenario(shape="hexagon", size_angstrom=17.0, wall_angstrom=8.0, adsorbate="nitrogen",
                      temperature_k=77.35, site_model="classical")
    saved = SavedDistribution(kernel, (15.0, 16.0, 17.0, 18.0), (0.0, 0.25, 0.31, 0.02),
                              (0.0, 0.01, 0.02, 0.005), summary=(("total_cm3_g", 0.58), ("mode", 17.0)),
                              reduced_chi2=1.4, notes=("warning: <b>edge</b> reached",))
    doc = ScenarioDocument(FAST, distribution=saved)
    text = build_report(doc, sizes=())
    section = text[text.index("<section id='distribution'"):]
    section = section[:section.index("</section>")]
    assert "total pore volume" in section and "0.58" in section and "mode side length" in section
    assert "&lt;b&gt;edge&lt;/b&gt;" in section and "<b>edge" not in section
    assert section.count("data:image/svg+xml;base64,") == 1
    # the per-size table lists the three sizes holding volume; the diameter column holds 1.819 × side / 10
    assert section.count("<td>15</td>") == 0 and section.count("<td>16</td>") == 1
    assert "3.092" in section          # 17 Å side → √(6√3/π)·17 = 30.92 Å (plane geometry)
    empty = build_report(ScenarioDocument(FAST), sizes=())
    assert "holds no pore-size distribution" in empty


def test_slide_figures_say_what_they_show_in_text_a_drawing_program_edits():
    # SVG 1.1 <text> elements (W3C): the caption and axis labels stay text, not outlines
    svg = figure_job(FAST, "isotherm-relative", "svg").decode()
    texts = " ".join(re.findall(r"<text[^>]*>(.*?)</text>", svg, flags=re.S))
    assert "argon at 87.3 K in a slit pore" in texts and "width 12 Å" in texts and "10 Å walls" in texts
    assert "relative pressure p/p₀" in texts
    assert "classical sites" in texts
