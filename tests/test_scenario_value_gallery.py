"""A generated gallery of bad values in a scenario file: every field of [scenario] given the wrong type, an
absurd size or an out-of-range number is refused in one line that names the file and the key, and the command
line exits 2 without a traceback (common practice, no source: a user's file never crashes the program)."""
from __future__ import annotations

import dataclasses

import pytest

from porefill.explorer.cli.main import main
from porefill.explorer.files.scenario_file import ScenarioFileError, load_document
from porefill.physics.scenario import Scenario

FIELDS = [f.name for f in dataclasses.fields(Scenario)]
NUMERIC = [f.name for f in dataclasses.fields(Scenario) if "float" in str(f.type) or "int" in str(f.type)]
TEXT = [name for name in FIELDS if name not in NUMERIC]

WRONG_TYPES = {"a string": '"twelve"', "a boolean": "true", "an array": "[1, 2]", "a table": "{ a = 1 }"}
ABSURD_NUMBERS = {"1e300": "1e300", "-1e300": "-1e300", "a 400-digit integer": "1" + "0" * 399,
                  "negative": "-5.0", "zero": "0.0", "nan": "nan", "inf": "inf"}

BASE = {"shape": '"hexagon"', "size_angstrom": "15.0", "wall_angstrom": "8.0", "adsorbate": '"helium-4"',
        "temperature_k": "1.5", "site_model": '"classical"'}


ACCEPTED = {("bond_energy_k", "zero")}       # no attraction between neighbours: the Langmuir limit, allowed


def _cases():
    for name in NUMERIC:
        for what, value in {**WRONG_TYPES, **ABSURD_NUMBERS}.items():
            if (name, what) not in ACCEPTED:
                yield pytest.param(name, value, id=f"{name}={what}")
    for name in TEXT:
        for what, value in {"a number": "5", "an array": '["a"]', "a table": "{ a = 1 }"}.items():
            yield pytest.param(name, value, id=f"{name}={what}")


def _file(tmp_path, name, value):
    fields = {**BASE, name: value}
    if name == "plating_layers":
        fields["plating"] = '"argon"'
    text = "[scenario]\n" + "".join(f"{k} = {v}\n" for k, v in fields.items())
    path = tmp_path / "gallery.toml"
    path.write_text(text)
    return path


@pytest.mark.parametrize("name, value", list(_cases()))
def test_every_bad_value_is_one_line_naming_file_and_key(tmp_path, capsys, name, value):
    path = _file(tmp_path, name, value)
    try:
        load_document(path)
    except ScenarioFileError as exc:
        message = str(exc)
        assert "\n" not in message.strip()
        assert "gallery.toml" in message and name in message, message
        assert len(message) < 600
    else:
        pytest.fail(f"{name} = {value[:40]} was accepted")
    code = main(["isotherm", str(path), "--points", "20"])
    out = capsys.readouterr()
    assert code == 2
    assert "Traceback" not in out.err + out.out
    assert out.err.strip().count("\n") == 0, out.err
