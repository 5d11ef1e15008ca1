"""Step pressures over fine size scans: are they smooth in pore size? (prints a table and JSON summaries)

- helium-4 at 1.5 K in a hexagonal array with 8 Å walls, side 12–40 Å in 0.25 Å steps: the pressure of the
  first-layer (face) step and of the step that fills the centre, per size;
- nitrogen at 77.35 K in silica cylinders of 3–8 nm diameter, radius in 0.25 Å steps: the equilibrium
  condensation p/p0 (`porefill.physics.lattice_gas.steps.condensation_step`) and the Kelvin–KJS reference.

For each curve it prints the largest change between neighbouring sizes away from where a new row of sites
enters (a real step in the sizing, `porefill.physics.sites.placement`) and at those sizes, and for nitrogen
whether the condensation p/p0 rises with size. Classical site model (`--site-model quantum` for helium-4's
default, much slower). Run: .venv/bin/python benchmarks/bench_size_scan.py [--site-model quantum]
"""
from __future__ import annotations

import argparse
import json
import time

import numpy as np

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.substances.kelvin import kjs_condensation_relative_pressure
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.stages import geometry_stage
from porefill.physics.lattice_gas.steps import condensation_step


def _filling(step, name: str) -> bool:
    return any(where == name for where, _ in step.filling)


def _rows(sc: Scenario) -> int:
    """How many rows of sites the pore holds, from the wall to the centre (`porefill.physics.sites.placement`)."""
    return int(geometry_stage(sc).candidates.ring.max()) + 1


def _jumps(sizes, log_values, rows) -> dict:
    """Largest |Δ log10| between neighbouring sizes, away from and across a change in the number of rows."""
    d = np.abs(np.diff(log_values))
    crosses = np.diff(rows) != 0
    changes = 0.5 * (sizes[1:] + sizes[:-1])[crosses]
    ok = np.isfinite(d)
    smooth = d[ok & ~crosses]
    across = d[ok & crosses]
    return {"max_decades_between_rows": round(float(smooth.max()), 4) if smooth.size else None,
            "max_decades_at_row_changes": round(float(across.max()), 4) if across.size else None,
            "row_changes_angstrom": [round(float(c), 3) for c in changes]}


def helium(site_model: str) -> None:
    sizes = np.arange(12.0, 40.001, 0.25)
    face, centre, rows = [], [], []
    t0 = time.perf_counter()
    print(f"{'side (Å)':>9} {'face step (Pa)':>15} {'centre step (Pa)':>17}")
    for size in sizes:
        sc = Scenario(size_angstrom=float(size), wall_angstrom=8.0, temperature_k=1.5, site_model=site_model)
        iso = compute_isotherm(sc, n_points=200)
        f = next((s.pressure_pa for s in iso.steps if _filling(s, "face")), np.nan)
        c = next((s.pressure_pa for s in iso.steps if _filling(s, "centre")), np.nan)
        face.append(f)
        centre.append(c)
        rows.append(_rows(sc))
        print(f"{size:9.2f} {f:15.4g} {c:17.4g}", flush=True)
    print(json.dumps({"scan": f"helium-4 1.5 K hexagon, 8 Å walls, 12–40 Å / 0.25 Å, {site_model}",
                      "sizes": int(sizes.size), "seconds": round(time.perf_counter() - t0, 1),
                      "face_step": _jumps(sizes, np.log10(face), rows),
                      "centre_step": _jumps(sizes, np.log10(centre), rows)}))


def nitrogen() -> None:
    radii = np.arange(15.0, 40.001, 0.25)
    rel, ref, rows = [], [], []
    t0 = time.perf_counter()
    print(f"\n{'d (nm)':>7} {'condensation p/p0':>18} {'KJS p/p0':>9}")
    for r in radii:
        sc = Scenario(shape="cylinder", size_angstrom=float(r), adsorbate="nitrogen", temperature_k=77.35)
        iso = compute_isotherm(sc, n_points=200)
        rows.append(_rows(sc))
        rel.append(condensation_step(iso.steps).relative_pressure)
        ref.append(kjs_condensation_relative_pressure(r / 5.0))
        print(f"{r / 5.0:7.2f} {rel[-1]:18.4f} {ref[-1]:9.4f}", flush=True)
    rel, ref = np.array(rel), np.array(ref)
    print(json.dumps({"scan": "nitrogen 77.35 K cylinders, d 3–8 nm, radius / 0.25 Å", "sizes": int(radii.size),
                      "seconds": round(time.perf_counter() - t0, 1),
                      "rises_with_size": bool(np.all(np.diff(rel) > 0)),
                      "rises_between_row_changes": bool(np.all(np.diff(rel)[np.diff(rows) == 0] > 0)),
                      "max_change_p_p0": round(float(np.abs(np.diff(rel)).max()), 4),
                      "max_miss_vs_kjs": round(float(np.abs(rel - ref).max()), 4),
                      "max_miss_vs_kjs_from_4_nm": round(float(np.abs(rel - ref)[radii >= 20.0].max()), 4),
                      "condensation": _jumps(radii, np.log10(rel), rows)}))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--site-model", default="classical", choices=("classical", "quantum"))
    args = parser.parse_args()
    helium(args.site_model)
    nitrogen()


if __name__ == "__main__":
    main()
