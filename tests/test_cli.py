"""The `porefill` command line: output format, errors, and agreement with an independent implementation."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

EXE = str(Path(sys.executable).with_name("porefill"))


def run(*args):
    """``porefill ARGS`` in this process (`cli_runs.in_process`): what a separate process would add is checked
    by the tests that start one (`run_process`: the installed command, its exit status, Ctrl-C)."""
    from cli_runs import in_process

    return in_process(*args)


def run_process(*args):
    """``porefill ARGS`` as the installed command, in a process of its own."""
    return subprocess.run([EXE, *args], capture_output=True, text=True, timeout=120)


def naive_polygon_potential(px, py, vertices, eps, sig, rho, sign=1.0):
    """The per-edge closed form exactly as published in docs/REFERENCES.md §1, written independently:
    4ερ[(7π/256)σ^12 d^-9 (S9(φ2) − S9(φ1)) − (π/8)σ^6 d^-3 (S3(φ2) − S3(φ1))] summed over edges,
    each signed by the side of its line the point is on. Fine away from the edges' lines."""
    def s3(s):
        return s - s**3 / 3

    def s9(s):
        return s - 4 / 3 * s**3 + 6 / 5 * s**5 - 4 / 7 * s**7 + s**9 / 9

    total = 0.0
    n = len(vertices)
    for k in range(n):
        a, b = np.asarray(vertices[k], float), np.asarray(vertices[(k + 1) % n], float)
        t = (b - a) / np.linalg.norm(b - a)
        normal = np.array([t[1], -t[0]])
        rel = a - np.array([px, py])
        dist = rel @ normal
        u1, u2 = rel @ t, rel @ t + np.linalg.norm(b - a)
        d = abs(dist)
        sn1, sn2 = u1 / np.hypot(d, u1), u2 / np.hypot(d, u2)
        term = 4 * eps * rho * (7 * np.pi / 256 * sig**12 / d**9 * (s9(sn2) - s9(sn1))
                                - np.pi / 8 * sig**6 / d**3 * (s3(sn2) - s3(sn1)))
        total += np.sign(dist) * term
    return sign * total


def hexagon(t, centre=(0.0, 0.0)):
    ang = np.arange(6) * np.pi / 3
    return np.column_stack([centre[0] + t * np.cos(ang), centre[1] + t * np.sin(ang)])


POINTS = [(0.0, 0.0), (3.5, 1.0), (-7.0, -5.0), (11.0, 2.0)]


def test_isolated_agrees_with_independent_implementation(helium_pair):
    # issue 2: relative 1e-9 against an independent implementation of the same physics
    args = ["potential", "--pore", "hexagon", "--size", "15", "--isolated", "--adsorbate", "helium-4", "--json"]
    for x, y in POINTS:
        args += ["--at", f"{x},{y}"]
    out = run(*args)
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["unit"] == "K"
    p = helium_pair
    for entry, (x, y) in zip(data["points"], POINTS):
        want = naive_polygon_potential(x, y, hexagon(15.0), p.epsilon_k, p.sigma_angstrom, p.density_per_a3)
        assert (entry["x"], entry["y"]) == (x, y)
        assert entry["potential"] == pytest.approx(want, rel=1e-9)


def test_array_agrees_with_independent_lattice_sum(helium_pair):
    # issue 2: 1e-3 K for the array; reference = pore minus every removed prism within 30 spacings,
    # each by the naive closed form (no point here is collinear with a removed edge), no tail
    t, w = 15.0, 8.0
    a = np.sqrt(3) * t + w
    args = ["potential", "--size", str(t), "--wall", str(w), "--json"]
    for x, y in POINTS:
        args += ["--at", f"{x},{y}"]
    data = json.loads(run(*args).stdout)
    p = helium_pair
    a1, a2 = a * np.array([np.cos(np.pi / 6), 0.5]), np.array([0.0, a])
    centres = [i * a1 + j * a2 for i in range(-36, 37) for j in range(-36, 37)]
    centres = [c for c in centres if 0 < np.hypot(*c) <= 30 * a]
    for entry, (x, y) in zip(data["points"], POINTS):
        want = naive_polygon_potential(x, y, hexagon(t), p.epsilon_k, p.sigma_angstrom, p.density_per_a3)
        for c in centres:
            want -= naive_polygon_potential(x, y, hexagon(t, c), p.epsilon_k, p.sigma_angstrom, p.density_per_a3,
                                            sign=-1.0)
        assert entry["potential"] == pytest.approx(want, abs=1e-3)


def test_grid_output_shape_and_nulls():
    out = run("potential", "--pore", "cylinder", "--size", "10", "--grid", "9", "--json")
    data = json.loads(out.stdout)
    assert len(data["x"]) == 9 and len(data["potential"]) == 9 and len(data["potential"][0]) == 9
    assert data["potential"][0][0] is None            # box corner lies in the solid
    assert isinstance(data["potential"][4][4], float)  # centre


def test_point_in_solid_is_null():
    data = json.loads(run("potential", "--size", "10", "--at", "20,0", "--json").stdout)
    assert data["points"][0]["potential"] is None


@pytest.mark.parametrize("args, word", [
    (["--size", "-15", "--at", "0,0"], "side length"),
    (["--adsorbate", "xenon", "--at", "0,0"], "xenon"),
    (["--at", "0;0"], "0;0"),
    (["--at", "1,2,3"], "1,2,3"),
    (["--pair-epsilon", "-3", "--at", "0,0"], "epsilon"),
    (["--grid", "1"], "--grid"),
    (["--pore", "prism", "--at", "0,0"], "prism"),
])
def test_bad_input_exits_2_with_one_line(args, word):
    out = run_process("potential", *args)           # the installed command's exit status
    assert out.returncode == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and word in lines[0] and "Traceback" not in out.stderr


def test_serve_rejects_missing_scenario_file(tmp_path):
    out = run_process("serve", "--scenario", str(tmp_path / "none.toml"))
    assert out.returncode == 2 and "none.toml" in out.stderr


def test_vapour_pressure_command():
    # ITS-90: p(2.0 K) = 3129.7 Pa (docs/REFERENCES.md §3, recomputed)
    out = run("vapour-pressure", "--adsorbate", "helium-4", "--temperature", "2.0", "--json")
    assert out.returncode == 0
    assert json.loads(out.stdout)["pressure_pa"] == pytest.approx(3129.7, rel=1e-4)


@pytest.mark.parametrize("args, word", [
    (["--adsorbate", "helium-4", "--temperature", "6"], "outside"),
    (["--adsorbate", "nitrogen", "--temperature", "20"], "outside"),
    (["--adsorbate", "xenon", "--temperature", "20"], "xenon"),
])
def test_vapour_pressure_refuses_clearly(args, word):
    out = run("vapour-pressure", *args)
    assert out.returncode == 2 and word in out.stderr and len(out.stderr.strip().splitlines()) == 1


def test_isotherm_json_and_csv(tmp_path):
    csv_path = tmp_path / "iso.csv"
    out = run("isotherm", "--pore", "hexagon", "--size", "15", "--wall", "8", "--adsorbate", "helium-4",
              "--temperature", "1.5", "--points", "120", "--json", "--csv", str(csv_path), "--pore-volume", "0.7")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    for branch in ("meanfield_adsorption_spinodal", "meanfield_desorption_spinodal"):
        b = data[branch]
        assert len(b["mu_k"]) == len(b["pressure_pa"]) == len(b["coverage_per_nm"]) == 120
        assert len(b["grand_potential_k_per_nm"]) == 120 and "amount_mmol_per_g" in b
    assert "amount_mmol_per_g" in data["adsorption_as_measured"]
    assert data["model"]["saturation_pressure_pa"] == pytest.approx(471.5, rel=1e-3)   # ITS-90 at 1.5 K
    steps = data["steps"]
    assert steps and steps[0]["filling"][0]["where"] == "corner"
    # after the corner step the corner channels hold about 1/ℓ atoms per Å, the centre is empty
    sites = data["sites"]
    corner = [i for i, w in enumerate(sites["where"]) if w == "corner"]
    ell = data["model"]["lattice_spacing_angstrom"]
    after = steps[0]["channel_per_nm_after"]
    assert all(after[i] > 0.5 * 10 / ell for i in corner)
    assert steps[0]["central_channel_occupancy_after"] < 1e-3
    assert data["adsorption_as_measured"]["central_channel_occupancy"][-1] > 0.9
    assert all(s["pressure_pa"] > 0 and 0 < s["relative_pressure"] <= 1 for s in steps)
    lines = [line for line in csv_path.read_text().splitlines() if not line.startswith("#")]
    assert lines[0].startswith("mu_K,pressure_Pa") and len(lines) == 121
    # the CSV carries every column of the JSON's branches (issue: --csv had only seven)
    header = lines[0].split(",")
    for branch in ("adsorption_as_measured", "desorption_as_measured", "meanfield_adsorption_spinodal",
                   "meanfield_desorption_spinodal"):
        for key, value in data[branch].items():
            if isinstance(value, list) and key not in ("mu_k", "pressure_pa", "relative_pressure"):
                assert f"{branch}_{key}" in header, key
    assert "adsorption_as_measured_amount_cm3_stp_per_g" in header


@pytest.mark.parametrize("args, word", [
    (["--temperature", "-1"], "temperature"),
    (["--temperature", "1.5", "--points", "2"], "--points"),
    (["--temperature", "1.5", "--pressure-range", "10", "1"], "pressure range"),
    (["--temperature", "1.5", "--bond", "-2"], "bond_energy_k"),
    (["--temperature", "1.5", "--spacing", "0"], "lattice_spacing"),
    (["--temperature", "9"], "outside"),
])
def test_isotherm_bad_values(args, word):
    out = run("isotherm", *args)
    assert out.returncode == 2 and word in out.stderr and "Traceback" not in out.stderr


def test_states_command_json():
    # issue figures (independent finite-difference check): ZPE 40.9 K, quantum Henry 1.3e-9 of classical
    out = run("states", "--pore", "hexagon", "--size", "15", "--wall", "8", "--adsorbate", "helium-4",
              "--temperature", "1.5", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["zero_point_energy_k"] == pytest.approx(40.9, abs=0.1)
    assert data["henry_quantum"] / data["henry_classical"] == pytest.approx(1.3e-9, rel=0.1)
    assert data["grid"]["spacing_angstrom"] > 0 and data["states_used"] == len(data["energies_k"])
    assert data["energies_k"] == sorted(data["energies_k"])
    # every orbit says where its free energy comes from (issue: the states readout names the source per orbit)
    # and since every row takes states (issue: helium's layers, quantum all the way), the centre's too: those of
    # the region inside the first row
    sources = {o["label"]: o["source"] for o in data["orbits"]}
    assert sources["corner"] == "quantum states" and sources["centre"] == "quantum states inside the first row"
    assert data["energies_k"][-1] >= data["states_wanted"]["top_k"]
    inner = data["inner_states"]
    assert inner["states_used"] > 0 and inner["margin_kt"] > 0 and not inner["capped"]
    text = run("states", "--pore", "hexagon", "--size", "15", "--wall", "8", "--adsorbate", "helium-4",
               "--temperature", "1.5")
    assert "per orbit" in text.stdout and "rows inside the first" in text.stdout
    # a cap at the corners' six states leaves the face orbit to the semiclassical integral, said so
    capped = run("states", "--pore", "hexagon", "--size", "15", "--wall", "8", "--adsorbate", "helium-4",
                 "--temperature", "1.5", "--max-states", "6")
    assert capped.returncode == 0 and "reached its cap (6)" in capped.stderr
    assert "no computed state reaches it" in capped.stdout


def test_isotherm_site_model_is_reported():
    # helium-4 uses the exact one-atom states unless told otherwise (issue: quantum is the default for the light gases)
    out = run("isotherm", "--size", "12", "--wall", "6", "--temperature", "1.5", "--points", "60", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["model"]["site_model"] == "quantum" and not data["model"]["site_model_chosen"]
    quantum_first = data["steps"][0]["pressure_pa"]
    classical = json.loads(run("isotherm", "--size", "12", "--wall", "6", "--temperature", "1.5", "--points",
                               "60", "--site-model", "classical", "--json").stdout)
    assert classical["model"]["site_model"] == "classical" and classical["model"]["site_model_chosen"]
    nitrogen = json.loads(run("isotherm", "--pore", "cylinder", "--size", "15", "--adsorbate", "nitrogen",
                              "--temperature", "77.35", "--points", "40", "--json").stdout)
    assert nitrogen["model"]["site_model"] == "classical"
    assert quantum_first > 100 * classical["steps"][0]["pressure_pa"]     # zero-point energy lifts the first layer


def test_extrapolated_p0_note_names_the_gas_and_the_extrapolation():
    # argon at 77.35 K lies below its 83.81 K triple point (CoolProp): p0 is a supercooled liquid's, and the
    # note says so rather than speak of helium's ITS-90 range
    out = run("isotherm", "--pore", "cylinder", "--size", "20", "--adsorbate", "argon", "--temperature", "77.35",
              "--points", "20", "--json")
    assert out.returncode == 0
    assert "argon" in out.stderr and "supercooled" in out.stderr and "ITS-90" not in out.stderr
    assert json.loads(out.stdout)["model"]["saturation_pressure_extrapolated"] is True


def test_sweep_targets_walls_full_centre_empty_and_a_relative_window():
    # the sizing question as users ask it (issue: walls full with the central channel empty; a window in p/p0)
    out = run("sweep", "--pore", "hexagon", "--sizes", "14,16", "--wall", "8", "--adsorbate", "helium-4",
              "--temperature", "1.5", "--site-model", "classical", "--target", "walls-full-centre-empty",
              "--window", "0", "1", "--relative", "--json", "--workers", "1", "--quiet")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["target"]["kind"] == "walls-full-centre-empty" and data["target"]["high_relative"] == 1.0
    assert any(p["target"]["met"] for p in data["pores"])
    bad = run("sweep", "--pore", "hexagon", "--sizes", "14", "--temperature", "1.5", "--target", "layer",
              "--layer", "0", "--quiet")
    assert bad.returncode == 2 and "layer must be a whole number" in bad.stderr and "Traceback" not in bad.stderr


def test_ctrl_c_is_one_line_and_exit_130(tmp_path):
    # Ctrl-C during a computation (a 5000-point quantum helium isotherm at 50 Å side takes tens of seconds): one line on stderr,
    # exit status 130 (128 + SIGINT, the shells' convention; common practice, no source), no traceback
    import signal
    import subprocess
    import sys
    import time
    from pathlib import Path

    exe = Path(sys.executable).with_name("porefill")
    # a shell starts a background job with SIGINT ignored, and a child inherits that: give it the default back,
    # as a terminal's foreground command has it
    proc = subprocess.Popen([str(exe), "isotherm", "--temperature", "1.5", "--size", "50", "--points", "5000"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    time.sleep(4.0)                      # past the imports, inside the computation
    assert proc.poll() is None, proc.communicate()
    proc.send_signal(signal.SIGINT)
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, (out, err)
    assert "Traceback" not in err
    assert err.strip() == "porefill: stopped (Ctrl-C)"
