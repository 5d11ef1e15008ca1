"""`porefill fit FILE --distribution`, run in-process: the JSON keys issue 20 names, the CSV, the carried
prediction and plain exit-2 messages. The data are invented by porefill's model for the test."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from porefill.explorer.cli.main import main
from porefill.physics.fitting.measured import Sample
from porefill.physics.fitting.model import simulated_run
from porefill.physics.scenario import Scenario

TRUE = Scenario(shape="hexagon", size_angstrom=17.3, wall_angstrom=8.0, adsorbate="nitrogen", temperature_k=77.35,
                site_model="classical")
ARGS = ["--distribution", "--pore", "hexagon", "--wall", "8", "--adsorbate", "nitrogen", "--temperature", "77.35",
        "--site-model", "classical", "--sizes", "13:22:10", "--kernel-points", "120", "--bootstrap", "20"]


@pytest.fixture(scope="module")
def data_file(tmp_path_factory) -> Path:
    """One pore size, 0.62 cm³/g, 1 % seeded noise, in p/p0 and cm³(STP)/g."""
    rng = np.random.default_rng(7)
    x = np.r_[np.geomspace(1e-4, 0.08, 8), np.linspace(0.1, 0.9, 30)]
    p0 = 101_325.0
    run = simulated_run(TRUE, pressure_pa=x * p0, pressure_unit="Pa", amount_unit="cm3(STP)/g",
                        sample=Sample(pore_volume_cm3_g=0.62), n_points=500)
    amount = run.amount * (1 + 0.01 * rng.standard_normal(x.size))
    path = tmp_path_factory.mktemp("psd") / "n2.csv"
    path.write_text("# invented by porefill's model for a test\npressure (Pa),amount (cm3(STP)/g)\n"
                    + "".join(f"{p:.8g},{y:.8g}\n" for p, y in zip(run.pressure, amount)))
    return path


def test_distribution_json_and_csv(data_file, capsys, tmp_path):
    out_csv = tmp_path / "psd.csv"
    assert main(["fit", str(data_file), *ARGS, "--json", "--csv", str(out_csv)]) == 0
    data = json.loads(capsys.readouterr().out)
    table = data["distribution"]
    assert len(table["size_angstrom"]) == len(table["pore_volume_cm3_g"]) == 10
    assert table["size_angstrom"][0] == 13.0 and table["size_angstrom"][-1] == 22.0
    w = np.array(table["pore_volume_cm3_g"])
    s = np.array(table["size_angstrom"])
    # one size in, one size out: the volume sits within one kernel step of 17.3 Å and sums to 0.62 cm³/g
    assert w[np.abs(s - 17.3) <= 1.0].sum() / w.sum() > 0.9
    assert data["summary"]["total_cm3_g"]["value"] == pytest.approx(0.62, rel=0.03)
    assert data["regularisation"]["lambda"] > 0
    assert data["kernel"]["n_points"] == 120 and data["kernel"]["site_model"] == "classical"
    text = out_csv.read_text()
    header = [line for line in text.splitlines() if not line.startswith("#")][0]
    assert header.split(",")[:3] == ["size_angstrom", "diameter_angstrom", "pore_volume_cm3_g"]
    rows = [line for line in text.splitlines() if not line.startswith("#")][1:]
    assert len(rows) == 10
    assert sum(float(r.split(",")[2]) for r in rows) == pytest.approx(data["summary"]["total_cm3_g"]["value"])


def test_distribution_text_and_carried_prediction(data_file, capsys):
    assert main(["fit", str(data_file), *ARGS, "--carry", "argon:87.3"]) == 0
    out = capsys.readouterr().out
    assert "pore-size distribution of nitrogen at 77.35 K" in out
    assert "carried to argon at 87.3 K" in out and "pore full" in out
    assert "one size alone" in out


@pytest.mark.parametrize("extra, message", [
    (["--carry", "argon:87.3"], "--carry needs --distribution"),
])
def test_carry_alone_is_refused(data_file, capsys, extra, message):
    assert main(["fit", str(data_file), "--adsorbate", "nitrogen", "--temperature", "77.35", *extra]) == 2
    assert message in capsys.readouterr().err


@pytest.mark.parametrize("extra, message", [
    (["--carry", "xenon:160"], "give GAS:K or GAS:K:MODEL"),
    (["--carry", "argon:cold"], "is not a number of kelvin"),
    (["--sizes", "20:10:1"], "--sizes"),
])
def test_bad_distribution_options_exit_2(data_file, capsys, extra, message):
    assert main(["fit", str(data_file), *ARGS, *extra]) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err


def test_amounts_per_pore_are_refused(tmp_path, capsys):
    path = tmp_path / "per-nm.csv"
    path.write_text("p/p0,amount (per nm)\n0.1,1\n0.2,2\n0.3,3\n0.4,4\n")
    assert main(["fit", str(path), *ARGS, "--amount-unit", "per nm"]) == 2
    assert "needs amounts per gram" in capsys.readouterr().err
