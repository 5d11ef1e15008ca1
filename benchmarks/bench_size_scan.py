"""Step pressures over fine size scans: are they smooth in pore size? (prints a table and JSON summaries)

- helium-4 at 1.5 K in a hexagonal array with 8 Å walls, side 12–40 Å in 0.25 Å steps: the pressure of the
  first-layer (face) step and of the step that fills the centre, per size;
- nitrogen at 77.35 K in silica cylinders of 3–8 nm diameter, radius in 0.25 Å steps: the equilibrium
  condensation p/p0 (`physics.steps.condensation_step`) and the Kelvin–KJS reference.

For each curve it prints the largest change between neighbouring sizes away from where a new row of sites
enters (`physics.placement.row_change_sizes`, a real step in the sizing) and at those sizes, and for nitrogen
whether the condensation p/p0 rises with size. Classical site model (`--site-model quantum` for helium-4's
default, much slower). Run: .venv/bin/python benchmarks/bench_size_scan.py [--site-model quantum]
"""
from __future__ import annotations

import argparse
import json
import time

import numpy as np

from physics.adsorption import compute_isotherm
from physics.kelvin import kjs_condensation_relative_pressure
from physics.placement import first_row_distance, row_change_sizes
from physics.scenario import Scenario
from physics.stages import geometry_stage
from physics.steps import condensation_step


def _filling(step, name: str) -> bool:
    return any(where == name for where, _ in step.filling)


def _row_changes(sc: Scenario) -> np.ndarray:
    """Sizes where a row of sites enters, with d1 of a mid-scan pore (it varies by hundredths of an Å)."""
    return row_change_sizes(sc.shape, geometry_stage(sc).spacing_angstrom, first_row_distance(sc.pore(), sc.pair()),
                            up_to=41.0, wall_angstrom=sc.effective_wall_angstrom)


def _jumps(sizes, log_values, changes) -> dict:
    """Largest |Δ log10| between neighbouring sizes, away from and across a row change."""
    d = np.abs(np.diff(log_values))
    crosses = np.array([np.any((changes > a - 0.05) & (changes < b + 0.05)) for a, b in zip(sizes, sizes[1:])])
    ok = np.isfinite(d)
    smooth = d[ok & ~crosses]
    across = d[ok & crosses]
    return {"max_decades_between_rows": round(float(smooth.max()), 4) if smooth.size else None,
            "max_decades_at_row_changes": round(float(across.max()), 4) if across.size else None,
            "row_changes_angstrom": [round(float(c), 2) for c in changes if sizes[0] <= c <= sizes[-1]]}


def helium(site_model: str) -> None:
    sizes = np.arange(12.0, 40.001, 0.25)
    face, centre = [], []
    t0 = time.perf_counter()
    print(f"{'side (Å)':>9} {'face step (Pa)':>15} {'centre step (Pa)':>17}")
    for size in sizes:
        sc = Scenario(size_angstrom=float(size), wall_angstrom=8.0, temperature_k=1.5, site_model=site_model)
        iso = compute_isotherm(sc, n_points=200)
        f = next((s.pressure_pa for s in iso.steps if _filling(s, "face")), np.nan)
        c = next((s.pressure_pa for s in iso.steps if _filling(s, "centre")), np.nan)
        face.append(f)
        centre.append(c)
        print(f"{size:9.2f} {f:15.4g} {c:17.4g}", flush=True)
    changes = _row_changes(Scenario(size_angstrom=30.0, wall_angstrom=8.0, site_model=site_model))
    print(json.dumps({"scan": f"helium-4 1.5 K hexagon, 8 Å walls, 12–40 Å / 0.25 Å, {site_model}",
                      "sizes": int(sizes.size), "seconds": round(time.perf_counter() - t0, 1),
                      "face_step": _jumps(sizes, np.log10(face), changes),
                      "centre_step": _jumps(sizes, np.log10(centre), changes)}))


def nitrogen() -> None:
    radii = np.arange(15.0, 40.001, 0.25)
    rel, ref = [], []
    t0 = time.perf_counter()
    print(f"\n{'d (nm)':>7} {'condensation p/p0':>18} {'KJS p/p0':>9}")
    for r in radii:
        iso = compute_isotherm(Scenario(shape="cylinder", size_angstrom=float(r), adsorbate="nitrogen",
                                        temperature_k=77.35), n_points=200)
        rel.append(condensation_step(iso.steps).relative_pressure)
        ref.append(kjs_condensation_relative_pressure(r / 5.0))
        print(f"{r / 5.0:7.2f} {rel[-1]:18.4f} {ref[-1]:9.4f}", flush=True)
    rel, ref = np.array(rel), np.array(ref)
    changes = _row_changes(Scenario(shape="cylinder", size_angstrom=25.0, adsorbate="nitrogen", temperature_k=77.35))
    print(json.dumps({"scan": "nitrogen 77.35 K cylinders, d 3–8 nm, radius / 0.25 Å", "sizes": int(radii.size),
                      "seconds": round(time.perf_counter() - t0, 1),
                      "rises_with_size": bool(np.all(np.diff(rel) > 0)),
                      "max_change_p_p0": round(float(np.abs(np.diff(rel)).max()), 4),
                      "max_miss_vs_kjs": round(float(np.abs(rel - ref).max()), 4),
                      "max_miss_vs_kjs_from_4_nm": round(float(np.abs(rel - ref)[radii >= 20.0].max()), 4),
                      "condensation": _jumps(radii, np.log10(rel), changes)}))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--site-model", default="classical", choices=("classical", "quantum"))
    args = parser.parse_args()
    helium(args.site_model)
    nitrogen()


if __name__ == "__main__":
    main()
