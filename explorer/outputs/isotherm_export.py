"""Isotherm results as JSON, CSV and a text summary (used by the command line and the dashboard).

The JSON and the CSV carry the same columns: one table of branch columns, built once here. Each set of
columns is named for what it holds (``EXPORTED_BRANCHES``): the legs a measurement follows first
(``adsorption_as_measured``, ``desorption_as_measured``: the model branch chosen for the scenario's pore ends
by `porefill.physics.lattice_gas.branches`, the curves the figures draw as measured), then the equilibrium,
then the raw mean-field branches (``meanfield_adsorption_spinodal``, ``meanfield_desorption_spinodal``: the
metastable branches up to their spinodals, limits rather than predictions). The CSV's ``#`` header lines
name the pore ends and the branch rule applied to each leg.
"""
from __future__ import annotations

import csv
import io
import math

import numpy as np

from porefill.physics.lattice_gas.wall_spread import spread_description
from porefill.physics.lattice_gas.adsorption import Isotherm
from porefill.physics.lattice_gas.bond import calibration_facts, default_bond_rule
from porefill.physics.lattice_gas.branches import branch_notes, branch_rule, measured_branches
from porefill.physics.substances.units import particle_word

__all__ = ["calibration", "calibration_note", "site_rows", "isotherm_json", "step_json", "isotherm_csv", "isotherm_summary", "model_description", "amount_labels",
           "branch_columns", "EXPORTED_BRANCHES", "exported_branches", "csv_header_lines"]

# export key: (leg a measurement follows, or None for a model branch named outright; the raw branch; meaning)
EXPORTED_BRANCHES = {
    "adsorption_as_measured": ("adsorption", None, "the branch a measured adsorption follows"),
    "desorption_as_measured": ("desorption", None, "the branch a measured desorption follows"),
    "equilibrium": (None, "equilibrium", "the lowest grand potential among the mean-field states found at each μ (both branches and layered starts)"),
    "meanfield_adsorption_spinodal": (None, "adsorption", "the raw mean-field adsorption branch: the metastable "
                                      "film up to its spinodal (a limit, not a measurement)"),
    "meanfield_desorption_spinodal": (None, "desorption", "the raw mean-field desorption branch: the metastable "
                                      "full pore down to its spinodal (a limit, not a measurement)"),
}


def _finite(values) -> list:
    return [float(v) if math.isfinite(v) else None for v in np.asarray(values, float)]


def amount_labels(iso: Isotherm) -> dict:
    """Words for the amounts of this isotherm: atoms or molecules; per nm of pore, or per nm² for the slit."""
    word = particle_word(iso.stage.scenario.adsorbate)
    line = "per nm²" if iso.basis.per_area else "per nm of pore length"
    return {"particles": word, "coverage": f"{word} {line}", "wall": f"{word} per nm² of wall",
            "grand_potential": "K " + ("per nm²" if iso.basis.per_area else "per nm of pore length"),
            "short": f"{word}/nm²" if iso.basis.per_area else f"{word}/nm"}


def model_description(iso: Isotherm) -> dict:
    s = iso.stage
    sc = s.scenario
    return {
        "scenario": sc.to_dict(),
        "site_model": sc.site_model_used,
        "site_model_chosen": sc.site_model is not None,
        "saturation_pressure_pa": s.saturation_pressure_pa,
        "saturation_pressure_extrapolated": s.scale.p0_extrapolated,
        "mu_coexistence_k": s.mu_coexistence_k,
        "bond_energy_k": s.bond_k,
        "bond_calibration": s.bond_note,
        "lattice_spacing_angstrom": s.spacing_angstrom,
        "lattice_spacing_rule": s.spacing_note,
        "sites_per_slice": float(s.problem.weights.sum()),
        "site_rows": site_rows(iso),
        "pore_volume_basis": pore_volume_basis(iso),
        "pair": s.geometry.pair.to_dict(),
        "wall_spread": spread_description(sc.adsorbate, sc.solid),
        "pressure_mapping": "p = p0(T) exp[(mu - mu_coex)/kT], mu_coex = -z eps_b / 2, z = 8",
        "calibration": calibration(iso),
        "pore_ends": sc.pore_ends,
        "measured_branches": measured_branches(sc.pore_ends, sc.adsorbate),
        "branch_notes": branch_notes(iso),
    }


def site_rows(iso: Isotherm) -> dict:
    """The rows of sites: D/Δ (row steps of the fluid's spacing between the first row and the centre) and
    the lattice(s) computed, with their weights (`porefill.physics.lattice_gas.row_blend`). Sites and their
    free energies in this file are the first (heavier) lattice's."""
    g = iso.stage.geometry
    return {"row_fraction": g.row_fraction, "note": iso.row_note,
            "lattices": [{"row_steps": part.stage.geometry.rows, "weight": w,
                          "sites_per_slice": float(part.stage.problem.weights.sum())} for w, part in iso.lattices]}


def pore_volume_basis(iso: Isotherm) -> dict:
    """What a pore volume means for the per-gram amounts: the Gurvich volume, the liquid a full pore holds
    (`porefill.physics.substances.units`), and how it compares with the geometric cross-section."""
    liquid, geometric = iso.basis.area_angstrom2, iso.stage.geometry.pore.area_angstrom2
    unit = "Å" if iso.basis.per_area else "Å²"
    return {"meaning": "Gurvich: the volume of bulk liquid a full pore holds (IUPAC 2015)",
            "liquid_cross_section": liquid, "geometric_cross_section": geometric, "unit": unit,
            "liquid_fraction_of_geometric": liquid / geometric}


def calibration(iso: Isotherm) -> list[dict]:
    """The bulk facts the lattice fluid keeps and how far it misses the others (`porefill.physics.lattice_gas.bond`)."""
    s = iso.stage
    sc = s.scenario
    rule = None if sc.bond_energy_k is not None else (sc.bond_calibration or default_bond_rule(sc.adsorbate))
    return calibration_facts(adsorbate=sc.adsorbate, temperature_k=sc.temperature_k, bond_k=s.bond_k, rule=rule,
                             cell_volume_angstrom3=s.lattice.cell_volume_angstrom3,
                             atom_volume_angstrom3=s.lattice.atom_volume_angstrom3)


def calibration_note(iso: Isotherm) -> str:
    """HTML paragraph: which bulk facts the lattice fluid keeps, and by how much it misses the others."""
    import html

    kept, missed = [], []
    for f in calibration(iso):
        if f["kept"]:
            kept.append(html.escape(f["fact"]))
        elif f["miss"] is not None:
            missed.append(f"{html.escape(f['fact'])} {f['model']:.4g} {html.escape(f['unit'])} against "
                          f"{f['reference']:.4g} ({f['miss']:+.0%}; {html.escape(f['source'])})")
        else:
            missed.append(html.escape(f["fact"]))
    text = f"Lattice fluid keeps: {', '.join(kept) or 'none'}."
    if missed:
        text += f" Misses: {'; '.join(missed)}."
    return f"<p class='porefill-calibration' style='font-size:90%'>{text}</p>"


def exported_branches(iso: Isotherm) -> dict[str, dict]:
    """{export key: {"model_branch": the raw branch it holds, "meaning": ..., "rule": why (legs only)}} in
    the order of ``EXPORTED_BRANCHES``, for this isotherm's pore ends and gas."""
    sc = iso.stage.scenario
    legs, rules = measured_branches(sc.pore_ends, sc.adsorbate), branch_rule(sc.pore_ends, sc.adsorbate)
    out = {}
    for key, (leg, branch, meaning) in EXPORTED_BRANCHES.items():
        entry = {"model_branch": legs[leg] if leg else branch, "meaning": meaning}
        if leg:
            entry["rule"] = f"pore ends '{sc.pore_ends}' — {rules[leg]}"
        out[key] = entry
    return out


def branch_columns(iso: Isotherm, branch: str, *, amounts_only: bool = False) -> dict[str, np.ndarray]:
    """Every per-point quantity of one branch ('adsorption', 'desorption' or 'equilibrium'), by JSON key;
    ``amounts_only`` leaves out the grand potential and the convergence flags (which only the raw
    mean-field branches have), so the as-measured columns are the same for every choice of pore ends."""
    cols = {
        "coverage_per_nm": iso.amount(branch, "per nm"),
        "coverage_per_nm2_wall": iso.amount(branch, "per nm2 wall"),
        "fraction_of_full_pore": iso.fraction(branch),
        "central_channel_occupancy": iso.central_channel_occupancy(branch),
    }
    if branch != "equilibrium" and not amounts_only:
        b = getattr(iso, branch)
        cols["grand_potential_k_per_nm"] = iso.grand_potential_per_nm(b)
        cols["converged"] = b.converged.astype(float)
    if iso.stage.scenario.pore_volume_cm3_g is not None:
        cols["amount_mmol_per_g"] = iso.amount(branch, "mmol/g")
        cols["amount_cm3_stp_per_g"] = iso.amount(branch, "cm3(STP)/g")
    return cols


def _export_columns(iso: Isotherm, key: str, model_branch: str) -> dict[str, np.ndarray]:
    return branch_columns(iso, model_branch, amounts_only=not key.startswith("meanfield_"))


def _branch(iso: Isotherm, key: str, entry: dict) -> dict:
    d = {**entry, "mu_k": _finite(iso.mu), "pressure_pa": _finite(iso.pressure_pa),
         "relative_pressure": _finite(iso.relative_pressure)}
    for name, values in _export_columns(iso, key, entry["model_branch"]).items():
        d[name] = [bool(v) for v in values] if name == "converged" else _finite(values)
    return d


def isotherm_json(iso: Isotherm) -> dict:
    labels = amount_labels(iso)
    return {
        "units": {"mu": "K", "pressure": "Pa", "coverage": labels["coverage"], "wall_coverage": labels["wall"],
                  "grand_potential": labels["grand_potential"],
                  "amount_per_gram": "mmol/g and cm3(STP)/g, STP = 273.15 K and 101.325 kPa"},
        "model": model_description(iso),
        **{key: _branch(iso, key, entry) for key, entry in exported_branches(iso).items()},
        "sites": _sites(iso),
        "steps": [step_json(iso, s) for s in iso.steps],
    }


def _sites(iso: Isotherm) -> dict:
    lat = iso.stage.lattice
    return {"x_angstrom": _finite(lat.x), "y_angstrom": _finite(lat.y),
            "where": [lat.label(i) for i in range(lat.size)],
            "free_energy_k": _finite(iso.stage.site_free_energy)}


def step_json(iso: Isotherm, step) -> dict:
    """A step as the JSON holds it (`porefill.physics.lattice_gas.adsorption.Isotherm.step_dict`)."""
    return iso.step_dict(step)


def csv_header_lines(iso: Isotherm) -> list[str]:
    """The ``#`` lines above the CSV's table: what was computed, the pore ends, and what each column
    prefix holds (the branch rule applied to each leg)."""
    sc = iso.stage.scenario
    lines = [f"# porefill isotherm: {sc.adsorbate} at {sc.temperature_k:g} K in a {sc.shape} pore of size "
             f"{sc.size_angstrom:g} Å; site model {sc.site_model_used}",
             f"# pore ends: {sc.pore_ends}"]
    for key, entry in exported_branches(iso).items():
        rule = f"; {entry['rule']}" if "rule" in entry else ""
        lines.append(f"# {key}_*: the model's {entry['model_branch']} branch — {entry['meaning']}{rule}")
    return lines


def isotherm_csv(iso: Isotherm) -> str:
    """Every column of the JSON's branches, one row per chemical potential, under ``#`` lines naming the pore
    ends and the branch each column prefix holds (`csv_header_lines`); units in the column names (coverage
    per nm of pore, or per nm² for the slit)."""
    out = io.StringIO()
    for line in csv_header_lines(iso):
        out.write(line + "\n")
    columns = {"mu_K": iso.mu, "pressure_Pa": iso.pressure_pa, "relative_pressure": iso.relative_pressure}
    for key, entry in exported_branches(iso).items():
        for name, values in _export_columns(iso, key, entry["model_branch"]).items():
            columns[f"{key}_{name}"] = values
    w = csv.writer(out, lineterminator="\n")
    w.writerow(columns)
    for row in zip(*columns.values()):
        w.writerow([f"{v:.10g}" for v in row])
    return out.getvalue()


def isotherm_summary(iso: Isotherm) -> str:
    s = iso.stage
    sc = s.scenario
    labels = amount_labels(iso)
    p0_note = " (extrapolated below the equation's range)" if s.scale.p0_extrapolated else ""
    lines = [f"{sc.adsorbate} at {sc.temperature_k:g} K in a {sc.shape} pore of size {sc.size_angstrom:g} Å"
             + ("" if sc.effective_wall_angstrom is None else f", walls {sc.wall_angstrom:g} Å"),
             f"p0 = {s.saturation_pressure_pa:.6g} Pa{p0_note}; {s.bond_note}; lattice spacing "
             f"{s.spacing_angstrom:.4g} Å ({s.problem.weights.sum():g} sites per slice); site model {sc.site_model_used}",
             f"rows of sites: {iso.row_note}",
             "", f"{'step':>4}  {'kind':<11} {'mu (K)':>9} {'p (Pa)':>11} {'p/p0':>10} "
                 f"{'adds (' + labels['short'] + ')':>16}  {'hysteresis (Pa)':<21}  where"]
    for i, st in enumerate(iso.steps, 1):
        where = st.where
        loop = ""
        if st.kind == "first-order":
            loop = f"{st.desorption_jump_pressure_pa:.3g} – {st.adsorption_jump_pressure_pa:.3g}"
        lines.append(f"{i:>4}  {st.kind:<11} {st.mu_k:9.3f} {st.pressure_pa:11.4g} {st.relative_pressure:10.4g} "
                     f"{st.added_per_nm:16.3f}  {loop:<21}  {where}")
    if not iso.steps:
        lines.append("      no steps in this range")
    lines += ["", *branch_notes(iso)]
    return "\n".join(lines)
