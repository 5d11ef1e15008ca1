"""Scenario files with every table: the writer, round trips to the bit, and messages naming file, line and key.

The reference reader is the standard library's `tomllib` (TOML 1.0); what it reads back is compared with
what was written, float for float (``==`` on the bits via `float.hex`).
"""
from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from porefill.explorer.files.page_choices import MeasuredChoices, SizingChoices
from porefill.explorer.files.saved_fit import FitParameter, SavedFit
from porefill.explorer.files.scenario_file import (ScenarioDocument, ScenarioFileError, ViewChoices, demo_names, dump_document,
                                    dump_scenario, line_of, load_document, parse_document, resolve_scenario)
from porefill.explorer.files.toml_writer import dump_table, toml_value
from porefill.physics.fitting.measured import MeasuredRun, Sample
from porefill.physics.scenario import Scenario

# floats whose shortest text is unusual: subnormal, extremes, 0.1 + 0.2, negative zero (IEEE 754 binary64)
AWKWARD_FLOATS = [0.1 + 0.2, 5e-324, 2.2250738585072014e-308, 1.7976931348623157e308, -0.0, 1e16, 1e-5,
                  123456789.123456789, 2.0 ** -1074 * 3, math.pi, -1e-300]


def _run(name="ads", **extra) -> MeasuredRun:
    values = dict(name=name, source="lab notebook, p.3.csv", pressure=np.array([1.5, np.nan, 3e-5, 101325.0]),
                  pressure_unit="Pa", amount=np.array([0.1, 0.2, 0.30000000000000004, 4.0]), amount_unit="mmol/g",
                  temperature_k=77.35, rows=np.array([4, 5, 7, 9]))
    return MeasuredRun(**{**values, **extra})


def _fit() -> SavedFit:
    return SavedFit(free=("wall-strength", "size"),
                    parameters=(FitParameter("wall-strength", 1.0312, 0.004, "", 0.5, 1.5),
                                FitParameter("size", 15.25, None, "Å", 10.5, 19.5),
                                FitParameter("pore-volume", 0.71, 0.01, "cm³/g")),
                    statistics=(("chi2", 12.5), ("reduced_chi2", 1.0416666666666667), ("points", 15)),
                    correlation=((1.0, float("nan")), (float("nan"), 1.0)),
                    warnings=("size is not determined by the data",),
                    scenario=Scenario(size_angstrom=15.25, wall_angstrom=8.0, pair_epsilon_k=25.1))


def _document() -> ScenarioDocument:
    sc = Scenario(shape="hexagon", size_angstrom=14.5, wall_angstrom=7.5, adsorbate="nitrogen", temperature_k=77.35,
                  pair_epsilon_k=0.1 + 0.2 + 100, title='Invented: quote " back \\ tab \t', notes="two\nlines",
                  pore_volume_cm3_g=0.7)
    sample = Sample(mass_g=0.0123, pore_volume_cm3_g=0.7, d100_angstrom=40.1,
                    sources=(("d100_angstrom", "file"), ("mass_g", "typed")))
    return ScenarioDocument(sc, sample, (_run(), _run("des", leg="desorption", temperature_k=None)), _fit(),
                            ViewChoices(axis="chemical-potential", branch="adsorption", pick_log10_pa=-2.5,
                                        tab="measured", measured=MEASURED_CHOICES, sizing=SIZING_CHOICES))


# every input of the Measured data and Sizing tabs, none at its default
MEASURED_CHOICES = MeasuredChoices(axis="relative-pressure", amounts_in="cm3(STP)/g", free=("size", "a0"),
                                   drop_above_p0=True, kernel_first_angstrom=11.5, kernel_last_angstrom=42.0,
                                   kernel_count=17, carry_gas="argon", carry_temperature_k=87.3,
                                   carry_site_model="classical")
SIZING_CHOICES = SizingChoices(across="d100", sizes="12:30:7", walls="6, 9", temperatures="1.2:1.8:4",
                               d100_angstrom=44.5, site_model="quantum", points=150, window_unit="relative",
                               low=0.05, high=0.8, target="layer", layer=3)


def _same_run(a: MeasuredRun, b: MeasuredRun) -> bool:
    return (a.to_dict().keys() == b.to_dict().keys()
            and all(getattr(a, k) == getattr(b, k) for k in ("name", "source", "leg", "temperature_k",
                                                             "pressure_unit", "amount_unit"))
            and np.array_equal(a.pressure, b.pressure, equal_nan=True) and np.array_equal(a.amount, b.amount)
            and np.array_equal(a.rows, b.rows))


# the writer -----------------------------------------------------------------------------------------
@pytest.mark.parametrize("value", AWKWARD_FLOATS + [float("inf"), float("-inf")])
def test_floats_read_back_to_the_same_bits(value):
    back = tomllib.loads(f"x = {toml_value(value)}\n")["x"]
    assert back.hex() == value.hex()


def test_nan_reads_back_as_nan():
    assert math.isnan(tomllib.loads(f"x = {toml_value(float('nan'))}\n")["x"])


@pytest.mark.parametrize("text", ['plain', 'quote " and \\ backslash', "tab\tnew\nline\rcr", "bell \x07 del \x7f",
                                  "ünïcødé Å ε σ ρ⁻³", "\u2028 line separator", "'single' \"\"\" triple", ""])
def test_strings_read_back_unchanged(text):
    assert tomllib.loads(f"x = {toml_value(text)}\n")["x"] == text


def test_tables_arrays_of_tables_and_long_arrays():
    body = {"a": 1, "b": [float(i) / 3 for i in range(20)], "sub": {"k": "v"}, "rows": [{"n": 1}, {"n": 2}],
            "skip": None}
    data = tomllib.loads("\n".join(dump_table("top", body)) + "\n")
    assert data == {"top": {"a": 1, "b": [float(i) / 3 for i in range(20)], "sub": {"k": "v"},
                            "rows": [{"n": 1}, {"n": 2}]}}


def test_writer_refuses_what_toml_cannot_hold():
    with pytest.raises(TypeError, match="cannot write a object"):
        toml_value(object())


# round trips ------------------------------------------------------------------------------------------
def test_every_table_round_trips_exactly():
    doc = _document()
    text = dump_document(doc)
    back = parse_document(text, name="x.toml")
    assert back.scenario == doc.scenario
    assert back.sample == doc.sample
    assert back.view == doc.view
    assert len(back.measured) == 2 and all(_same_run(a, b) for a, b in zip(back.measured, doc.measured))
    assert back.fit.free == doc.fit.free and back.fit.parameters == doc.fit.parameters
    assert back.fit.statistics == doc.fit.statistics and back.fit.warnings == doc.fit.warnings
    assert back.fit.scenario == doc.fit.scenario
    assert np.array_equal(np.array(back.fit.correlation), np.array(doc.fit.correlation), equal_nan=True)
    assert dump_document(back) == text                      # writing again gives the same file


def test_a_file_without_the_tabs_inputs_opens_with_the_pages_own():
    # files written before [view.measured] and [view.sizing] existed (the shipped demos among them)
    doc = _document()
    old = dump_document(doc.replace(view=ViewChoices(axis="chemical-potential", tab="measured")))
    assert "[view.measured]" not in old and "[view.sizing]" not in old
    back = parse_document(old, name="old.toml").view
    assert back.measured is None and back.sizing is None and back.axis == "chemical-potential"
    for name in demo_names():
        view = load_document(resolve_scenario(name)).view
        assert view.measured is None and view.sizing is None, name


def test_only_the_inputs_given_are_written_and_read():
    doc = _document().replace(view=ViewChoices(sizing=SizingChoices(points=300), measured=MeasuredChoices()))
    text = dump_document(doc)
    assert "[view.sizing]\npoints = 300\n" in text and "[view.measured]" not in text
    assert parse_document(text).view.sizing == SizingChoices(points=300)


def test_the_file_says_it_is_copied_data_and_has_a_format():
    text = dump_document(_document())
    assert tomllib.loads(text)["format"] == 1
    assert "Data copied from the file 'lab notebook, p.3.csv'" in text
    assert "never executed" in text


def test_isotherm_from_a_loaded_file_equals_the_original_to_the_bit(tmp_path):
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    sc = Scenario(shape="hexagon", size_angstrom=0.1 + 9.2, wall_angstrom=6.0 + 1e-9, adsorbate="argon",
                  temperature_k=87.0 + 1 / 3, site_model="classical")
    f = tmp_path / "s.toml"
    f.write_text(dump_scenario(sc), encoding="utf-8")
    loaded = load_document(f).scenario
    a, b = compute_isotherm(sc, n_points=60), compute_isotherm(loaded, n_points=60)
    for branch in ("adsorption", "desorption"):
        assert np.array_equal(a.per_nm(branch), b.per_nm(branch))
    assert np.array_equal(a.pressure_pa, b.pressure_pa) and np.array_equal(a.mu, b.mu)
    assert [s.pressure_pa for s in a.steps] == [s.pressure_pa for s in b.steps]


def test_saved_fit_from_a_real_fit_result():
    """A fit with the pore volume alone free (solved in closed form) gives a result quickly; its record
    keeps values, stderr, bounds, statistics and the fitted scenario through a file."""
    from porefill.physics.lattice_gas.adsorption import compute_isotherm
    from porefill.physics.fitting.solve import FitRequest, fit
    from porefill.physics.substances.units import AmountBasis, from_atoms_per_angstrom

    sc = Scenario(shape="cylinder", size_angstrom=12.0, adsorbate="argon", temperature_k=87.0,
                  site_model="classical", pore_volume_cm3_g=0.5)
    iso = compute_isotherm(sc, n_points=60)
    pick = slice(5, 55, 5)
    p = iso.pressure_pa[pick]
    n = iso.per_nm("adsorption")[pick] / 10.0                  # atoms per Å
    amount = from_atoms_per_angstrom(n, "mmol/g", AmountBasis.of(iso.stage.geometry, 0.5)) * 1.01
    run = MeasuredRun("model", "invented.csv", p, "Pa", amount, "mmol/g", temperature_k=87.0)
    result = fit(FitRequest(sc, (run,), Sample(pore_volume_cm3_g=0.5), free=("pore-volume",), local_points=60))
    saved = SavedFit.from_result(result)
    assert saved.free == ("pore-volume",)
    value, stderr = result.parameters["pore-volume"]
    assert saved.parameter("pore-volume").value == value and saved.parameter("pore-volume").unit == "cm³/g"
    doc = ScenarioDocument(sc, Sample(pore_volume_cm3_g=0.5), (run,), saved)
    back = parse_document(dump_document(doc)).fit
    assert back.parameters == saved.parameters and back.statistics == saved.statistics
    assert dict(back.statistics)["chi2"] == result.chi2


# messages -----------------------------------------------------------------------------------------------
GOOD = dump_document(_document())


def _break(old: str, new: str) -> str:
    assert GOOD.count(old) >= 1, old
    return GOOD.replace(old, new, 1)


@pytest.mark.parametrize("text, key, words", [
    (_break("size_angstrom = 14.5", "size_angstrom = -3.0"), "size_angstrom", "side length"),
    (_break("size_angstrom = 14.5", 'size_angstrom = "big"'), "size_angstrom", "must be a number"),
    (_break("adsorbate = \"nitrogen\"", "adsorbate = \"xenon\""), "adsorbate", "xenon"),
    (_break("temperature_k = 77.35\npair", "colour = 'red'\ntemperature_k = 77.35\npair"), "colour", "unknown"),
    (_break("mass_g = 0.0123", "mass_g = -1.0"), "mass_g", "positive"),
    (_break('d100_angstrom = "file"', 'd100_angstrom = "guessed"'), "d100_angstrom", "guessed"),
    (_break('amount_unit = "mmol/g"', 'amount_unit = "buckets"'), "amount_unit", "buckets"),
    (_break("0.30000000000000004", '"lots"'), "amount", "item 3"),
    (_break('leg = "adsorption"', 'leg = "sideways"'), "leg", "sideways"),
    (_break("rows = [4, 5, 7, 9]", "rows = [4, 5, 7.5, 9]"), "rows", "whole numbers"),
    (_break('axis = "chemical-potential"', 'axis = "sideways"'), "axis", "sideways"),
    (_break("pick_log10_pa = -2.5", "pick_log10_pa = 99.0"), "pick_log10_pa", "<= 10"),
    (_break("chi2 = 12.5", "chi2 = \"small\""), "chi2", "number"),
    (_break("stderr = 0.004", "stderr = -0.004"), "stderr", "negative"),
    (_break("format = 1", "format = 2"), "format", "format 1"),
    # the Measured data and Sizing tabs' inputs ([view.measured], [view.sizing])
    (_break('axis = "relative-pressure"', 'axis = "upside-down"'), "axis", "upside-down"),
    (_break('amounts_in = "cm3(STP)/g"', 'amounts_in = "buckets"'), "amounts_in", "buckets"),
    (_break('free = ["size", "a0"]', 'free = ["size", "colour"]'), "free", "colour"),
    (_break("drop_above_p0 = true", 'drop_above_p0 = "yes"'), "drop_above_p0", "true or false"),
    (_break("kernel_count = 17", "kernel_count = 2"), "kernel_count", "from 3 to 200"),
    (_break("kernel_last_angstrom = 42.0", "kernel_last_angstrom = -4.0"), "kernel_last_angstrom", ">= 0"),
    (_break('carry_gas = "argon"', 'carry_gas = "xenon"'), "carry_gas", "xenon"),
    (_break("carry_temperature_k = 87.3", "carry_temperature_k = 0.0"), "carry_temperature_k", "> 0"),
    (_break('across = "d100"', 'across = "width"'), "across", "width"),
    (_break('sizes = "12:30:7"', "sizes = 12"), "sizes", "text"),
    (_break("d100_angstrom = 44.5", "d100_angstrom = 0.5"), "d100_angstrom", ">= 1"),
    (_break('site_model = "quantum"\npoints', 'site_model = "exact"\npoints'), "site_model", "exact"),
    (_break("points = 150", "points = 5"), "points", "from 20 to 2000"),
    (_break('window_unit = "relative"', 'window_unit = "psi"'), "window_unit", "psi"),
    (_break("high = 0.8", "high = -0.8"), "high", ">= 0"),
    (_break('target = "layer"', 'target = "everything"'), "target", "everything"),
    (_break("layer = 3", "layer = 0"), "layer", "from 1 to 200"),
    (_break("layer = 3", "layer = 3\nscheduler = 'tcp://elsewhere:8786'"), "scheduler", "unknown"),
    (_break("format = 1", "format = 1\ncolour = 1"), "colour", "unknown"),
])
def test_a_bad_file_names_file_line_and_key(text, key, words):
    with pytest.raises(ScenarioFileError) as info:
        parse_document(text, name="bad.toml")
    err = info.value
    assert err.key == key and err.line is not None
    assert text.splitlines()[err.line - 1].lstrip().startswith(key)      # the line really holds the key
    message = str(err)
    assert message.startswith(f"bad.toml, line {err.line}: ") and key in message and words in message


def test_second_measured_run_is_named_by_its_number():
    text = GOOD.replace('leg = "desorption"', 'leg = "upwards"')
    with pytest.raises(ScenarioFileError, match=r"\[\[measured\]\] number 2 leg") as info:
        parse_document(text, name="bad.toml")
    assert "upwards" in text.splitlines()[info.value.line - 1]


@pytest.mark.parametrize("text, line", [("[scenario\n", 1), ("[scenario]\nshape = 'hexagon'\nsize = \n", 3),
                                        ("[scenario]\nshape = 'a\n", 2)])
def test_syntax_errors_carry_tomllib_line(text, line):
    with pytest.raises(ScenarioFileError, match="not valid TOML") as info:
        parse_document(text, name="bad.toml")
    assert info.value.line == line and f"line {line}" in str(info.value)


def test_a_byte_order_mark_is_read_past(tmp_path):
    # issue 22: a UTF-8 BOM gave "line 1, column 1: Invalid statement" (TOML 1.0 allows none; the BOM is
    # U+FEFF encoded as EF BB BF, Unicode Standard §23.8)
    text = "[scenario]\nshape = 'slit'\nsize_angstrom = 12.0\nwall_angstrom = 10.0\n"
    assert parse_document("\ufeff" + text).scenario == parse_document(text).scenario
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + text.encode())
    assert load_document(path).scenario.size_angstrom == 12.0
    with pytest.raises(ScenarioFileError, match="line 2, column") as info:     # lines and columns as before
        parse_document("\ufeff[scenario]\nshape = \n", name="bad.toml")
    assert info.value.line == 2


def test_missing_scenario_table_and_missing_file(tmp_path):
    with pytest.raises(ScenarioFileError, match="no \\[scenario\\] table"):
        parse_document("format = 1\n", name="x.toml")
    with pytest.raises(ScenarioFileError, match="no such scenario file"):
        load_document(tmp_path / "absent.toml")


def test_line_of_finds_keys_in_arrays_of_tables():
    text = "[[measured]]\nname = 'a'\n[[measured]]\n# c\nname = 'b'\n[view]\naxis = 'pressure'\n"
    assert line_of(text, "measured", "name", 0) == 2
    assert line_of(text, "measured", "name", 1) == 5
    assert line_of(text, "view", "branch") == 6            # not written: the table's header
    assert line_of(text, "sample", "mass_g") is None


# names --------------------------------------------------------------------------------------------------
def test_shipped_scenarios_open_by_name():
    names = demo_names()
    assert "demo-hexagon-helium" in names and len(names) >= 4   # helium, nitrogen (two), argon
    for name in names:
        assert resolve_scenario(name).name == f"{name}.toml"
        doc = load_document(resolve_scenario(name))
        assert "invented" in doc.scenario.title.lower()


def test_unknown_name_lists_the_shipped_ones():
    with pytest.raises(ScenarioFileError, match="shipped: .*demo-hexagon-helium"):
        resolve_scenario("no-such-demo")


_RUN = ('[[measured]]\nname = "a"\nsource = "f.csv"\nleg = "adsorption"\npressure_unit = "Pa"\n'
        'amount_unit = "per nm"\npressure = [1.0]\namount = [1.0]\n')


@pytest.mark.parametrize("text, words", [
    ("[scenario]\nx = " + "[" * 1000 + "1" + "]" * 1000 + "\n", "nested too deeply"),
    ("measured = [1, 2]\n[scenario]\nsize_angstrom = 15.0\n", "array of tables"),
    ("[scenario]\nsize_angstrom = 15.0\n[sample]\nsources = 5\n", "wrong type"),
    ("[scenario]\nsize_angstrom = 15.0\n" + _RUN + "rows = [99999999999999999999]\n", "row numbers"),
    ("[scenario]\nsize_angstrom = 1" + "0" * 400 + "\n", "must be finite; got a number of 401 characters"),
    ("[scenario]\nsize_angstrom = 1" + "0" * 5000 + "\n", "cannot be read"),
    ("[scenario]\nsize_angstrom = 15.0\n[fit]\nfree = 5\n", "[fit]"),
    ("[scenario]\nsize_angstrom = 15.0\n" + _RUN.replace('name = "a"', "name = 5"), "must be text"),
])
def test_a_bad_file_is_one_line_naming_the_problem(text, words):
    # every bad value answered by a ScenarioFileError (one line, the file named), never a traceback
    with pytest.raises(ScenarioFileError) as info:
        parse_document(text, name="bad.toml")
    message = str(info.value)
    assert message.startswith("bad.toml") and words in message and "\n" not in message


# --- long lines and long values (issue 22, point 3): a clean refusal or a correct read, in one pass ----------

_BASE = '[scenario]\nshape = "hexagon"\nsize_angstrom = 15.0\nwall_angstrom = 8.0\nadsorbate = "helium-4"\n'


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(length=st.integers(min_value=0, max_value=60_000), char=st.sampled_from([" ", "[", "x", "]", "#", "\t", '"']),
       where=st.sampled_from(["title", "notes line", "key line", "comment"]), bad_key=st.booleans())
def test_long_lines_and_values_are_refused_cleanly_or_read_correctly(length, char, where, bad_key):
    # common practice, no source: a long value, a long line inside a multi-line string (where a table header
    # "[" followed by spaces once made the line search cubic: 2 kB took seconds, 8 000 spaces minutes) or a
    # long comment gives a refusal naming the file and a line, or the value read back exactly
    long = char * length
    tail = "bogus_key = 1\n" if bad_key else ""
    if where == "title":
        value = f"t{long}".replace("\\", "")
        text = _BASE + f"title = {toml_value(value)}\n" + tail
    elif where == "notes line":
        value = f"[{long}x"
        text = _BASE + 'title = """\n' + value.replace('"', "'") + '\n"""\n' + tail
        value = value.replace('"', "'") + "\n"
    elif where == "key line":
        value = None
        text = _BASE + f"temperature_k{long} = 1.5\n" + tail
    else:
        value = None
        text = _BASE + f"# {long}\n" + tail
    try:
        doc = parse_document(text, name="long.toml")
    except ScenarioFileError as exc:
        message = str(exc)
        assert message.startswith("long.toml") and "Traceback" not in message and "\n" not in message
        if bad_key and where != "key line":
            assert "bogus_key" in message and ", line " in message
        return
    assert not bad_key
    if value is not None:
        assert doc.scenario.title == value


def test_a_device_is_read_only_up_to_the_limit():
    # issue 22: a pipe or device was read whole before the size check (common practice, no source)
    with pytest.raises(ScenarioFileError, match="more than the 4 MB a scenario file holds"):
        load_document("/dev/zero")
