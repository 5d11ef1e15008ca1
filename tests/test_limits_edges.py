"""One set of limits for every edge (physics/limits.py): a scenario at each limit opens in the command line,
the dashboard's state and the report; one just outside is refused by each with the same words."""
from __future__ import annotations

import pytest

from porefill.explorer.cli.main import main
from porefill.explorer.files.scenario_file import ScenarioFileError, load_document
from porefill.explorer.views.state import ExplorerState
from porefill.physics.limits import MAX_WALL_ANGSTROM, SIZE_RANGE_ANGSTROM


def _write(tmp_path, name, shape, size, wall=None):
    text = f'[scenario]\nshape = "{shape}"\nsize_angstrom = {size!r}\nadsorbate = "argon"\ntemperature_k = 87.3\n'
    if wall is not None:
        text += f"wall_angstrom = {wall!r}\n"
    path = tmp_path / name
    path.write_text(text)
    return path


@pytest.mark.parametrize("shape", sorted(SIZE_RANGE_ANGSTROM))
@pytest.mark.parametrize("end", [0, 1])
def test_a_size_at_the_limit_opens_in_the_command_line_and_the_page(tmp_path, capsys, shape, end):
    size = SIZE_RANGE_ANGSTROM[shape][end]
    path = _write(tmp_path, "edge.toml", shape, size)
    scenario = load_document(path).scenario
    assert scenario.size_angstrom == size
    state = ExplorerState.from_scenario(scenario)               # the page's controls (no computation)
    assert state.size_angstrom == size and state.scenario().size_angstrom == size
    at = "0,0" if shape != "slit" else f"0,{0.25 * size:g}"
    assert main(["potential", str(path), "--at", at]) == 0      # the command line reads the same file
    assert "x = 0" in capsys.readouterr().out


@pytest.mark.parametrize("shape", sorted(SIZE_RANGE_ANGSTROM))
def test_a_size_just_outside_is_refused_with_the_same_words_everywhere(tmp_path, capsys, shape):
    hi = SIZE_RANGE_ANGSTROM[shape][1]
    path = _write(tmp_path, "outside.toml", shape, hi + 0.5)
    with pytest.raises(ScenarioFileError) as file_error:
        load_document(path)
    words = f"must be >= {SIZE_RANGE_ANGSTROM[shape][0]:g} and <= {hi:g} Å"
    assert words in str(file_error.value)
    assert main(["potential", str(path), "--at", "0,0"]) == 2
    assert words in capsys.readouterr().err
    assert main(["report", str(path), "--out", str(tmp_path / "r.html"), "--quiet"]) == 2
    assert words in capsys.readouterr().err
    with pytest.raises(ValueError, match=words.replace("(", r"\(")):
        # the page's slider bounds are the same numbers, so the state refuses the value too
        ExplorerState(shape=shape, size_angstrom=hi + 0.5)
    assert not (tmp_path / "r.html").exists()


def test_the_thickest_wall_opens_everywhere_and_one_past_it_is_refused(tmp_path, capsys):
    path = _write(tmp_path, "wall.toml", "hexagon", 15.0, wall=MAX_WALL_ANGSTROM)
    scenario = load_document(path).scenario
    assert ExplorerState.from_scenario(scenario).scenario().wall_angstrom == MAX_WALL_ANGSTROM
    assert main(["potential", str(path), "--at", "0,0"]) == 0
    capsys.readouterr()
    out = tmp_path / "wall.html"
    assert main(["report", str(path), "--out", str(out), "--sizes", "none", "--quiet"]) == 0
    assert out.read_text().count("<h2") >= 3                    # the report of the thickest wall was written
    outside = _write(tmp_path, "wall2.toml", "hexagon", 15.0, wall=MAX_WALL_ANGSTROM + 0.5)
    with pytest.raises(ScenarioFileError, match="wall thickness"):
        load_document(outside)
    assert main(["potential", str(outside), "--at", "0,0"]) == 2
    assert f"and {MAX_WALL_ANGSTROM:g} Å" in capsys.readouterr().err
    with pytest.raises(ValueError):
        ExplorerState(wall_angstrom=MAX_WALL_ANGSTROM + 0.5)
