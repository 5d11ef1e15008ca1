"""A pore-size distribution in a scenario file's [distribution] table: written and read back to equal values,
and a malformed table refused with its line and key. Common practice, no source (the file format is
porefill's own)."""
from __future__ import annotations

import math

import pytest

from porefill.explorer.files.saved_distribution import SavedDistribution
from porefill.explorer.files.scenario_file import (ScenarioDocument, ScenarioFileError, dump_document,
                                                   parse_document)
from porefill.physics.scenario import Scenario

KERNEL = Scenario(shape="cylinder", size_angstrom=20.0, adsorbate="nitrogen", temperature_k=77.35,
                  site_model="classical")


def _saved(**changes) -> SavedDistribution:
    values = dict(kernel=KERNEL, sizes_angstrom=(10.0, 12.5, 15.0, 17.5), pore_volume_cm3_g=(0.0, 0.2, 0.35, 0.01),
                  stderr_cm3_g=(0.0, 0.01, float("nan"), 0.002), n_points=120, relative_pressure_range=(1e-7, 1.0),
                  summary=(("total_cm3_g", 0.56), ("mode", 15.0), ("width", float("nan"))), lam=0.01,
                  reduced_chi2=1.3, notes=("a note with \"quotes\" and é",), parts=3)
    values.update(changes)
    return SavedDistribution(**values)


def test_round_trip_float_for_float():
    doc = ScenarioDocument(KERNEL.replace(size_angstrom=15.0), distribution=_saved())
    back = parse_document(dump_document(doc)).distribution
    saved = _saved()
    assert back.sizes_angstrom == saved.sizes_angstrom and back.pore_volume_cm3_g == saved.pore_volume_cm3_g
    assert back.stderr_cm3_g[:2] == saved.stderr_cm3_g[:2] and math.isnan(back.stderr_cm3_g[2])
    assert back.kernel == KERNEL and back.parts == 3 and back.notes == saved.notes
    assert back.spec().key() == saved.spec().key()


@pytest.mark.parametrize("changes, message", [
    (dict(pore_volume_cm3_g=(0.0, -0.2, 0.35, 0.01)), r"pore_volume_cm3_g\[1\] must not be negative"),
    (dict(pore_volume_cm3_g=(0.1, 0.2)), "holds 2 values; sizes_angstrom holds 4"),
    (dict(sizes_angstrom=(10.0, 9.0, 15.0, 17.5)), "ascending"),
    (dict(parts=0), "parts must be a whole number"),
    (dict(relative_pressure_range=(0.5, 0.1)), "relative_pressure_range"),
])
def test_bad_values_are_refused(changes, message):
    with pytest.raises(ValueError, match=message):
        _saved(**changes)


def test_a_bad_table_in_a_file_names_its_line_and_key():
    text = dump_document(ScenarioDocument(KERNEL, distribution=_saved()))
    text = text.replace("n_points = 120", "n_points = 120\nshade = 3")
    with pytest.raises(ScenarioFileError, match=r"line \d+.*unknown distribution key\(s\) shade") as err:
        parse_document(text, name="s.toml")
    assert "s.toml" in str(err.value)
    text2 = dump_document(ScenarioDocument(KERNEL, distribution=_saved()))
    head, _, tail = text2.partition("[distribution.kernel]")
    tail = tail.replace('adsorbate = "nitrogen"', 'adsorbate = "xenon"')
    with pytest.raises(ScenarioFileError, match="xenon"):
        parse_document(head + "[distribution.kernel]" + tail, name="k.toml")


# the summary's bootstrap errors and the best single size (optional tables) ---------------------------
ERRORS = (("total_cm3_g", 0.003), ("mode", float("nan")))
ONE_SIZE = (("size_angstrom", 13.1), ("pore_volume_cm3_g", 1 / 7), ("chi2", 12.5), ("reduced_chi2", 2.0 / 3))


def test_summary_errors_and_single_size_read_back_float_for_float():
    saved = _saved(summary_stderr=ERRORS, single_size=ONE_SIZE)
    back = parse_document(dump_document(ScenarioDocument(KERNEL, distribution=saved))).distribution
    assert back.single_size == ONE_SIZE
    assert [k for k, _ in back.summary_stderr] == ["total_cm3_g", "mode"]
    assert back.summary_stderr[0] == ERRORS[0] and math.isnan(back.summary_stderr[1][1])


def test_a_file_without_them_still_reads():
    data = _saved(summary_stderr=ERRORS, single_size=ONE_SIZE).to_dict()
    for key in ("summary_stderr", "single_size"):
        data.pop(key)
    old = SavedDistribution.from_dict(data)
    assert old.summary_stderr == () and old.single_size == () and old.summary[:2] == _saved().summary[:2]


@pytest.mark.parametrize("table, key", [("summary_stderr", "colour"), ("single_size", "width")])
def test_an_unknown_key_in_them_is_named(table, key):
    text = dump_document(ScenarioDocument(KERNEL, distribution=_saved(summary_stderr=ERRORS, single_size=ONE_SIZE)))
    text = text.replace(f"[distribution.{table}]\n", f"[distribution.{table}]\n{key} = 1.0\n")
    with pytest.raises(ScenarioFileError) as info:
        parse_document(text)
    assert key in str(info.value) and table in str(info.value)
