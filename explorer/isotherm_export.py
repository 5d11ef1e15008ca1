"""Isotherm results as JSON, CSV and a text summary (used by the command line and the dashboard)."""
from __future__ import annotations

import csv
import io
import math

import numpy as np

from physics.adsorption import Isotherm
from physics.units import amount_cm3_stp_per_g, amount_mmol_per_g

__all__ = ["isotherm_json", "isotherm_csv", "isotherm_summary", "model_description"]


def _finite(values) -> list:
    return [float(v) if math.isfinite(v) else None for v in np.asarray(values, float)]


def model_description(iso: Isotherm) -> dict:
    s = iso.setup
    sc = s.scenario
    return {
        "scenario": sc.to_dict(),
        "saturation_pressure_pa": s.saturation_pressure_pa,
        "mu_coexistence_k": s.mu_coexistence_k,
        "bond_energy_k": s.bond_k,
        "bond_calibration": s.bond_note,
        "lattice_spacing_angstrom": s.spacing_angstrom,
        "lattice_spacing_rule": s.spacing_note,
        "sites_per_slice": float(s.problem.weights.sum()),
        "pair": sc.pair().to_dict(),
        "pressure_mapping": "p = p0(T) exp[(mu - mu_coex)/kT], mu_coex = -z eps_b / 2, z = 8",
    }


def _branch(iso: Isotherm, branch) -> dict:
    d = {
        "mu_k": _finite(iso.mu),
        "pressure_pa": _finite(iso.pressure_pa),
        "relative_pressure": _finite(iso.relative_pressure),
        "coverage_atoms_per_nm": _finite(iso.per_nm(branch)),
        "coverage_atoms_per_nm2_wall": _finite(iso.per_nm2_wall(branch)),
        "fraction_of_full_pore": _finite(iso.fraction(branch)),
        "grand_potential_k_per_nm": _finite(iso.grand_potential_per_nm(branch)),
        "converged": [bool(c) for c in branch.converged],
        "central_channel_occupancy": _finite(iso.central_channel_occupancy(
            "adsorption" if branch is iso.adsorption else "desorption")),
    }
    vp = iso.setup.scenario.pore_volume_cm3_g
    area = _cross_section(iso)
    if vp is not None and area is not None:
        per_a = iso.per_nm(branch) / 10.0
        d["amount_mmol_per_g"] = _finite(amount_mmol_per_g(per_a, cross_section_angstrom2=area, pore_volume_cm3_g=vp))
        d["amount_cm3_stp_per_g"] = _finite(amount_cm3_stp_per_g(per_a, cross_section_angstrom2=area,
                                                                 pore_volume_cm3_g=vp))
    return d


def _cross_section(iso: Isotherm):
    pore = iso.setup.scenario.pore()
    return getattr(pore, "area_angstrom2", None)


def isotherm_json(iso: Isotherm) -> dict:
    return {
        "units": {"mu": "K", "pressure": "Pa", "coverage": "atoms per nm of pore length",
                  "grand_potential": "K per nm of pore length"},
        "model": model_description(iso),
        "adsorption": _branch(iso, iso.adsorption),
        "desorption": _branch(iso, iso.desorption),
        "sites": _sites(iso),
        "steps": [_step(iso, s) for s in iso.steps],
    }


def _sites(iso: Isotherm) -> dict:
    lat = iso.setup.lattice
    return {"x_angstrom": _finite(lat.x), "y_angstrom": _finite(lat.y),
            "where": [lat.label(i) for i in range(lat.size)],
            "free_energy_k": _finite(iso.setup.site_free_energy)}


def _step(iso: Isotherm, step) -> dict:
    """A step, with the linear density along every site's channel just after it (equilibrium)."""
    d = step.to_dict()
    k = int(min(np.searchsorted(iso.mu, step.mu_k) + 1, iso.mu.size - 1))
    d["channel_atoms_per_nm_after"] = _finite(iso.channel_density_per_nm(k))
    d["central_channel_occupancy_after"] = float(iso.central_channel_occupancy()[k])
    return d


def isotherm_csv(iso: Isotherm) -> str:
    out = io.StringIO()
    w = csv.writer(out)
    cols = ["mu_K", "pressure_Pa", "relative_pressure", "adsorption_atoms_per_nm", "desorption_atoms_per_nm",
            "adsorption_grand_potential_K_per_nm", "desorption_grand_potential_K_per_nm"]
    w.writerow(cols)
    rows = zip(iso.mu, iso.pressure_pa, iso.relative_pressure, iso.per_nm(iso.adsorption),
               iso.per_nm(iso.desorption), iso.grand_potential_per_nm(iso.adsorption),
               iso.grand_potential_per_nm(iso.desorption))
    for row in rows:
        w.writerow([f"{v:.10g}" for v in row])
    return out.getvalue()


def isotherm_summary(iso: Isotherm) -> str:
    s = iso.setup
    sc = s.scenario
    lines = [f"{sc.adsorbate} at {sc.temperature_k:g} K in a {sc.shape} pore of size {sc.size_angstrom:g} Å"
             + ("" if sc.wall_angstrom is None or sc.shape == "cylinder" else f", walls {sc.wall_angstrom:g} Å"),
             f"p0 = {s.saturation_pressure_pa:.6g} Pa; {s.bond_note}; lattice spacing {s.spacing_angstrom:.4g} Å "
             f"({s.problem.weights.sum():g} sites per slice)",
             "", f"{'step':>4}  {'kind':<11} {'mu (K)':>9} {'p (Pa)':>11} {'p/p0':>10} {'adds (1/nm)':>11}  where"]
    for i, st in enumerate(iso.steps, 1):
        where = ", ".join(f"{n} ({c:g})" for n, c in st.filling) or "spread"
        lines.append(f"{i:>4}  {st.kind:<11} {st.mu_k:9.3f} {st.pressure_pa:11.4g} {st.relative_pressure:10.4g} "
                     f"{st.added_per_nm:11.3f}  {where}")
    if not iso.steps:
        lines.append("      no steps in this range")
    return "\n".join(lines)
