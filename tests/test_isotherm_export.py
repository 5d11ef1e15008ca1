"""The isotherm's JSON and CSV (porefill.explorer.outputs.isotherm_export): columns named for the branch they hold,
the branch a measurement follows first, the raw mean-field branches labelled as such, and the pore ends with the
branch rule in the CSV's header lines."""
from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from porefill.explorer.outputs.isotherm_export import isotherm_csv, isotherm_json
from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.branches import PORE_ENDS, measured_branches
from porefill.physics.scenario import Scenario

# a 3 nm nitrogen cylinder at 77.35 K (as in tests/test_branches.py): a mean-field loop, so the raw branches
# and the equilibrium differ; helium-4 at 1.5 K in the demo hexagon fills open pores on the adsorption branch
NITROGEN = Scenario(shape="cylinder", size_angstrom=15.0, adsorbate="nitrogen", temperature_k=77.35)
HELIUM = Scenario(shape="hexagon", size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical")


@pytest.fixture(scope="module")
def isotherms():
    out = {(sc.adsorbate, ends): compute_isotherm(sc.replace(pore_ends=ends), n_points=120)
           for sc in (NITROGEN, HELIUM) for ends in PORE_ENDS}
    return out


def _table(text: str) -> tuple[list[str], dict[str, np.ndarray]]:
    comments = [line for line in text.splitlines() if line.startswith("#")]
    rows = list(csv.reader(io.StringIO("\n".join(line for line in text.splitlines() if not line.startswith("#")))))
    return comments, {name: np.array([float(r[i]) for r in rows[1:]]) for i, name in enumerate(rows[0])}


def test_the_loop_is_there_to_tell_the_branches_apart(isotherms):
    # the check below is only meaningful where the raw branches differ from the equilibrium
    iso = isotherms[("nitrogen", "open")]
    assert np.max(np.abs(iso.per_nm("adsorption") - iso.per_nm("equilibrium"))) > 1.0
    assert np.max(np.abs(iso.per_nm("desorption") - iso.per_nm("equilibrium"))) > 1.0


@pytest.mark.parametrize("gas", ["nitrogen", "helium-4"])
@pytest.mark.parametrize("ends", PORE_ENDS)
def test_json_and_csv_name_the_branch_a_measurement_follows(isotherms, gas, ends):
    # the legs follow porefill.physics.lattice_gas.branches.measured_branches (its module notes give the sources:
    # Cohan 1938, Kruk, Jaroniec & Sayari 1997; common practice for open pores); the raw branches stay as limits
    iso = isotherms[(gas, ends)]
    data = isotherm_json(iso)
    comments, table = _table(isotherm_csv(iso))
    legs = measured_branches(ends, gas)
    expected = {"adsorption_as_measured": legs["adsorption"], "desorption_as_measured": legs["desorption"],
                "equilibrium": "equilibrium", "meanfield_adsorption_spinodal": "adsorption",
                "meanfield_desorption_spinodal": "desorption"}
    assert "adsorption" not in data and "desorption" not in data          # no key that hides what it holds
    for key, branch in expected.items():
        assert data[key]["model_branch"] == branch
        want = iso.per_nm(branch)
        np.testing.assert_allclose(np.array(data[key]["coverage_per_nm"], float), want, rtol=1e-12)
        np.testing.assert_allclose(table[f"{key}_coverage_per_nm"], want, rtol=1e-9)   # 10 digits written
    assert not any(name.startswith(("adsorption_coverage", "desorption_coverage")) for name in table)
    # the grand potential and convergence belong to the raw mean-field branches only
    assert "meanfield_desorption_spinodal_grand_potential_k_per_nm" in table
    assert not any(name.startswith("adsorption_as_measured_grand") for name in table)
    # the header lines say the pore ends and which branch (and rule) each leg's columns hold
    assert f"# pore ends: {ends}" in comments
    for leg in ("adsorption", "desorption"):
        line = next(c for c in comments if c.startswith(f"# {leg}_as_measured_*:"))
        assert f"the model's {legs[leg]} branch" in line and f"pore ends '{ends}'" in line
        assert data[f"{leg}_as_measured"]["rule"] in line
    assert any(c.startswith("# meanfield_adsorption_spinodal_*:") and "not a measurement" in c for c in comments)


def test_open_nitrogen_pores_follow_the_equilibrium_and_helium_the_adsorption_branch(isotherms):
    # the case: the column a user plots as measured desorption must be the drawn curve (equilibrium for
    # open pores), not the mean-field spinodal (porefill.physics.lattice_gas.branches module notes)
    n2 = isotherm_json(isotherms[("nitrogen", "open")])
    assert n2["desorption_as_measured"]["coverage_per_nm"] == n2["equilibrium"]["coverage_per_nm"]
    assert n2["desorption_as_measured"]["coverage_per_nm"] != n2["meanfield_desorption_spinodal"]["coverage_per_nm"]
    assert "equilibrium transition" in n2["adsorption_as_measured"]["rule"]
    he = isotherm_json(isotherms[("helium-4", "open")])
    assert he["adsorption_as_measured"]["coverage_per_nm"] == he["meanfield_adsorption_spinodal"]["coverage_per_nm"]
    assert "adsorption branch" in he["adsorption_as_measured"]["rule"]


def test_a_pore_between_two_row_counts_names_its_lattices():
    # row_blend: the JSON says D/Δ and both lattices with their weights (summing to one), the text summary says
    # how the rows were taken, and each paired step carries its two lattices' pressures
    import json

    from porefill.explorer.outputs.isotherm_export import isotherm_summary

    iso = compute_isotherm(Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5,
                                    site_model="classical"), n_points=120)
    doc = json.loads(json.dumps(isotherm_json(iso)))
    rows = doc["model"]["site_rows"]
    assert rows["row_fraction"] == pytest.approx(iso.stage.geometry.row_fraction)
    assert [lat["row_steps"] for lat in rows["lattices"]] == [3, 4]
    assert sum(lat["weight"] for lat in rows["lattices"]) == pytest.approx(1.0, abs=1e-12)
    assert "lever rule" in rows["note"] and "rows of sites: " + rows["note"] in isotherm_summary(iso)
    paired = [s for s in doc["steps"] if s["spread_pressure_pa"] is not None]
    assert paired and all(s["share"] == 1.0 for s in paired)
    one = compute_isotherm(Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical"),
                           n_points=120, row_blend=False)
    assert [lat["weight"] for lat in isotherm_json(one)["model"]["site_rows"]["lattices"]] == [1.0]
