"""Tests of `porefill fit`, run in-process through porefill.explorer.cli.main.main: JSON shape and units, the text table,
CSV output, and plain exit-2 messages for files and options that cannot be used."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from porefill.explorer.cli.main import main
from porefill.physics.fitting.model import simulated_run
from porefill.physics.substances.materials import pair_parameters
from porefill.physics.scenario import Scenario

TRUE = Scenario(shape="hexagon", size_angstrom=17.3, wall_angstrom=8.0, adsorbate="nitrogen", temperature_k=77.35,
                pair_epsilon_k=1.08 * pair_parameters("nitrogen", "silica").epsilon_k, site_model="classical",
                pore_volume_cm3_g=0.62)
BASE_ARGS = ["--pore", "hexagon", "--size", "16.5", "--wall", "8", "--adsorbate", "nitrogen", "--temperature",
             "77.35", "--site-model", "classical", "--pair-epsilon", f"{TRUE.pair_epsilon_k:.6f}"]


@pytest.fixture(scope="module")
def data_file(tmp_path_factory) -> Path:
    """Model-made nitrogen data with 1 % seeded noise, in kPa and mmol/g (invented, for the test)."""
    rng = np.random.default_rng(3)
    p = np.r_[np.geomspace(300, 1e4, 6), np.linspace(1.5e4, 9.5e4, 10)]
    run = simulated_run(TRUE, pressure_pa=p, pressure_unit="kPa", amount_unit="mmol/g", n_points=500)
    amount = run.amount * (1 + 0.01 * rng.standard_normal(p.size))
    path = tmp_path_factory.mktemp("fit") / "n2.csv"
    path.write_text("# invented by porefill's model for a test\npressure (kPa),amount (mmol/g)\n"
                    + "".join(f"{x:.8g},{y:.8g}\n" for x, y in zip(run.pressure, amount)))
    return path


def _fast(monkeypatch):
    """Small search budgets: the command's output is under test, not the search."""
    import porefill.physics.fitting.solve as fitting
    real = fitting.FitRequest

    def small(*args, **kw):
        kw.update(global_points=32, local_points=60, population=4, global_iterations=3, local_evaluations=8,
                  local_starts=1)
        return real(*args, **kw)
    monkeypatch.setattr(fitting, "FitRequest", small)


def test_fit_json_reports_values_errors_and_statistics(data_file, capsys, monkeypatch, tmp_path):
    _fast(monkeypatch)
    out_csv = tmp_path / "fit.csv"
    code = main(["fit", str(data_file), *BASE_ARGS, "--free", "size,pore-volume", "--bounds", "size=14:20",
                 "--json", "--csv", str(out_csv)])
    assert code == 0
    data = json.loads(capsys.readouterr().out)
    assert set(data["parameters"]) == {"size", "pore-volume"}
    size = data["parameters"]["size"]
    assert size["unit"] == "Å" and size["bounds"] == [14.0, 20.0] and 14.0 <= size["value"] <= 20.0
    assert data["parameters"]["pore-volume"]["unit"] == "cm³/g" and data["parameters"]["pore-volume"]["stderr"] > 0
    assert data["statistics"]["points"] == 16 and data["statistics"]["parameters"] == 2
    assert data["site_model"] == "classical"
    assert data["runs"][0]["amount_unit"] == "mmol/g" and data["runs"][0]["pressure_unit"] == "kPa"
    # one table per file (issue 21): the points, then the parameters and the model curves beside them
    table = [line for line in out_csv.read_text().splitlines() if not line.startswith("#")]
    assert table[0].startswith("run,source,row,leg,model_branch") and len(table) == 1 + 16
    assert "residual" in table[0].split(",") and "sigma_ln_pressure" in table[0].split(",")
    params = (tmp_path / "fit-parameters.csv").read_text().splitlines()
    assert params[0].startswith("quantity,label,value,standard_error,unit")
    assert any(line.startswith("reduced_chi2,reduced χ²,") for line in params)
    model = (tmp_path / "fit-model.csv").read_text().splitlines()
    assert model[0].startswith("run,source,leg,model_branch") and len(model) > 16


def test_fit_csv_companions_are_never_overwritten_without_force(data_file, capsys, monkeypatch, tmp_path):
    # the output rules of porefill.explorer.outputs.writing hold for every file --csv writes (common practice,
    # no source): an existing companion stops the command before any fitting
    _fast(monkeypatch)
    (tmp_path / "fit-model.csv").write_text("keep me\n")
    code = main(["fit", str(data_file), *BASE_ARGS, "--free", "pore-volume", "--csv", str(tmp_path / "fit.csv")])
    assert code == 2 and "fit-model.csv exists" in capsys.readouterr().err
    assert (tmp_path / "fit-model.csv").read_text() == "keep me\n" and not (tmp_path / "fit.csv").exists()
    assert main(["fit", str(data_file), *BASE_ARGS, "--free", "pore-volume", "--csv", str(tmp_path / "fit.csv"),
                 "--force"]) == 0
    assert (tmp_path / "fit-model.csv").read_text().startswith("run,source,leg")


def test_fit_text_output_is_a_table(data_file, capsys, monkeypatch):
    _fast(monkeypatch)
    assert main(["fit", str(data_file), *BASE_ARGS, "--free", "pore-volume"]) == 0
    out = capsys.readouterr().out
    assert out.splitlines()[0].split()[:3] == ["parameter", "value", "stderr"]
    assert "pore-volume" in out and "reduced χ²" in out
    # each parameter says what it is (issue 21): here the pore volume of the sample
    row = next(x for x in out.splitlines() if x.startswith("pore-volume"))
    assert row.endswith("pore volume"), row


@pytest.mark.parametrize("content, extra, message", [
    (b"", [], "empty"),
    (b"\x00\x01\x02binary\xff\xfe" * 50, [], "n2.csv"),
    (None, ["--free", "size,depth"], "free parameters must be"),
    (None, ["--bounds", "size=ten"], "NAME=LOW:HIGH"),
    (None, ["--free", "wall,a0"], "not both"),
])
def test_unusable_input_exits_2_with_plain_lines(tmp_path, data_file, capsys, content, extra, message):
    path = data_file
    if content is not None:
        path = tmp_path / "n2.csv"
        path.write_bytes(content)
    code = main(["fit", str(path), *BASE_ARGS, *extra])
    err = capsys.readouterr().err
    assert code == 2
    assert message in err and "Traceback" not in err
    assert 1 <= len(err.strip().splitlines()) <= 7


def test_missing_file_exits_2(tmp_path, capsys):
    assert main(["fit", str(tmp_path / "none.csv"), *BASE_ARGS]) == 2
    assert "no such file" in capsys.readouterr().err


@pytest.mark.parametrize("text, cell", [("=2+3.csv", "'=2+3.csv"), ("+1", "'+1"), ("-x", "'-x"), ("@SUM(A1)", "'@SUM(A1)"),
                                        ("run 1", "run 1"), (-1.5, -1.5), (None, None)])
def test_csv_cells_from_user_text_never_start_like_a_formula(text, cell):
    # OWASP's CSV injection advice: prefix = + - @ (tab, CR) with an apostrophe (common practice, no source)
    from porefill.explorer.outputs.formatting import spreadsheet_safe

    assert spreadsheet_safe(text) == cell


def test_fit_text_warns_when_the_scatter_is_far_above_the_assumed_noise(data_file, capsys, monkeypatch):
    """The file's 1 % noise against an assumed 0.2 %: reduced χ² about 25, above the warning's 4 (scatter twice
    the assumed noise; common practice, no source, porefill.physics.fitting.report). Only the pore volume is free
    (solved in closed form), so no search runs."""
    _fast(monkeypatch)
    code = main(["fit", str(data_file), *BASE_ARGS, "--size", "17.3", "--free", "pore-volume", "--noise", "0.002"])
    assert code == 0
    out = capsys.readouterr().out
    line = next(x for x in out.splitlines() if "much larger than the assumed noise" in x)
    assert line.startswith("warning: ") and "assumed 0.002" in line and "standard errors are scaled" in line


def test_points_above_p0_are_named_and_can_be_left_out(data_file, tmp_path, capsys, monkeypatch):
    # common practice, no source: the refusal names the row and says how to go on; --drop-above-p0 fits the rest
    _fast(monkeypatch)
    text = data_file.read_text().rstrip("\n") + "\n120,30\n"
    path = tmp_path / "with-high.csv"
    path.write_text(text)
    assert main(["fit", str(path), *BASE_ARGS, "--free", "pore-volume", "--json"]) == 2
    err = capsys.readouterr().err
    assert "above the model's p0" in err and "leave out the points above p0" in err
    assert main(["fit", str(path), *BASE_ARGS, "--free", "pore-volume", "--json", "--drop-above-p0"]) == 0
    captured = capsys.readouterr()
    assert json.loads(captured.out)["statistics"]["points"] == 16
    assert "1 point(s) above p0 left out" in captured.err


def test_amounts_per_square_metre_need_and_take_the_surface_area(data_file, tmp_path, capsys, monkeypatch):
    # the same data per m² of a 400 m²/g sample (mmol/g ÷ 400 × 1000 = µmol/m²) fit to the same pore volume
    _fast(monkeypatch)
    lines = data_file.read_text().splitlines()
    rows = [line.split(",") for line in lines[2:]]
    path = tmp_path / "per-area.csv"
    path.write_text("pressure (kPa),amount (umol/m2)\n"
                    + "".join(f"{p},{float(a) / 400 * 1000:.10g}\n" for p, a in rows))
    assert main(["fit", str(path), *BASE_ARGS, "--free", "pore-volume", "--json"]) == 2
    assert "specific surface area" in capsys.readouterr().err
    assert main(["fit", str(path), *BASE_ARGS, "--free", "pore-volume", "--json", "--surface-area", "400"]) == 0
    per_area = json.loads(capsys.readouterr().out)["parameters"]["pore-volume"]["value"]
    assert main(["fit", str(data_file), *BASE_ARGS, "--free", "pore-volume", "--json"]) == 0
    per_gram = json.loads(capsys.readouterr().out)["parameters"]["pore-volume"]["value"]
    assert per_area == pytest.approx(per_gram, rel=1e-6)


def test_the_readmes_example_fit_finds_the_size_its_file_was_made_with(capsys, monkeypatch):
    # the invented file's first lines say it was made at side 17.3 Å and 0.62 cm³/g (scenarios/make_invented_data.py)
    import shlex

    root = Path(__file__).resolve().parents[1]
    line = next(t for t in (root / "README.md").read_text().splitlines()
                if t.startswith(".venv/bin/porefill fit scenarios/invented-nitrogen-77K.csv") and "--distribution" not in t)
    args = shlex.split(line.split("#")[0])[1:]
    args[1] = str(root / args[1])
    monkeypatch.chdir(root)
    assert main(args) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["parameters"]["size"]["value"] == pytest.approx(17.3, abs=0.1)
    assert data["parameters"]["pore-volume"]["value"] == pytest.approx(0.62, rel=0.01)
