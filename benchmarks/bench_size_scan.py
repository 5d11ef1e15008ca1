"""Step pressures over fine size scans: are they smooth in pore size? (prints a table and JSON summaries)

- helium-4 at 1.5 K in a hexagonal array with 8 Å walls, side 12–40 Å in 0.25 Å steps: every step listed for
  the whole pore, followed from size to size by the row it fills first and its place among that row's steps
  (issue 19 point 4: each moves ≤ 0.15 decades per 0.25 Å), and the face and centre steps per size;
- nitrogen at 77.35 K in silica cylinders of 3–8 nm diameter, radius in 0.25 Å steps: the equilibrium
  condensation p/p0 (`porefill.physics.lattice_gas.steps.condensation_step`) and the Kelvin–KJS reference
  (issue 18 point 6: monotonic, ≤ 0.01 per 0.05 nm of diameter).

A pore between two row counts is the mixture of the lattices either side (`porefill.physics.lattice_gas.row_blend`);
``--no-blend`` computes one rounded lattice instead, as porefill did before, for the comparison. Classical site
model (``--site-model quantum`` for helium-4's default, much slower).
Run: .venv/bin/python benchmarks/bench_size_scan.py [--site-model quantum] [--no-blend] [--only helium|nitrogen]
     [--sides 12:22]
"""
from __future__ import annotations

import argparse
import json
import time

import numpy as np

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.substances.kelvin import kjs_condensation_relative_pressure
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.steps import condensation_step
from porefill.physics.lattice_gas.steps import steps_by_row as row_steps


def _filling(step, name: str) -> bool:
    return any(where == name for where, _ in step.filling)


def steps_by_row(iso) -> dict:
    """{(row it fills first, n-th step into that row): log10 p (Pa)} of the whole pore's steps
    (`porefill.physics.lattice_gas.steps.steps_by_row`)."""
    return {key: float(np.log10(s.pressure_pa)) for key, s in row_steps(iso.steps).items()}


def largest_moves(scans) -> dict:
    """Largest |Δ log10 p| between neighbouring sizes of every step followed (`steps_by_row`)."""
    moves: dict = {}
    for before, after in zip(scans, scans[1:]):
        for key in before.keys() & after.keys():
            label = f"{key[0]} #{key[1]}"
            moves[label] = max(moves.get(label, 0.0), abs(after[key] - before[key]))
    return {k: round(v, 3) for k, v in sorted(moves.items(), key=lambda kv: -kv[1])}


def helium(site_model: str, blend: bool, sides: tuple[float, float] = (12.0, 40.0)) -> None:
    sizes = np.arange(sides[0], sides[1] + 0.001, 0.25)
    face, centre, scans = [], [], []
    t0 = time.perf_counter()
    print(f"{'side (Å)':>9} {'face step (Pa)':>15} {'centre step (Pa)':>17}  steps listed")
    for size in sizes:
        sc = Scenario(size_angstrom=float(size), wall_angstrom=8.0, temperature_k=1.5, site_model=site_model)
        iso = compute_isotherm(sc, n_points=200, row_blend=blend)
        whole = [s for s in iso.steps if s.share == 1.0]          # steps of the whole pore, as `steps_by_row`
        f = next((s.pressure_pa for s in whole if _filling(s, "face")), np.nan)
        c = next((s.pressure_pa for s in whole if _filling(s, "centre")), np.nan)
        face.append(f)
        centre.append(c)
        scans.append(steps_by_row(iso))
        print(f"{size:9.2f} {f:15.4g} {c:17.4g}  {len(iso.steps)}", flush=True)
    moves = largest_moves(scans)
    print(json.dumps({"scan": f"helium-4 1.5 K hexagon, 8 Å walls, {sides[0]:g}–{sides[1]:g} Å / 0.25 Å, {site_model}, "
                              f"{'row blend' if blend else 'one rounded lattice'}",
                      "sizes": int(sizes.size), "seconds": round(time.perf_counter() - t0, 1),
                      "largest_move_decades_per_0.25_angstrom": max(moves.values()) if moves else None,
                      "steps_over_0.15": {k: v for k, v in moves.items() if v > 0.15},
                      "face_step_max_move": round(float(np.nanmax(np.abs(np.diff(np.log10(face))))), 3),
                      "centre_step_max_move": round(float(np.nanmax(np.abs(np.diff(np.log10(centre))))), 3),
                      "moves": moves}))


def nitrogen(blend: bool) -> None:
    radii = np.arange(15.0, 40.001, 0.25)
    rel, ref = [], []
    t0 = time.perf_counter()
    print(f"\n{'d (nm)':>7} {'condensation p/p0':>18} {'KJS p/p0':>9}")
    for r in radii:
        sc = Scenario(shape="cylinder", size_angstrom=float(r), adsorbate="nitrogen", temperature_k=77.35)
        iso = compute_isotherm(sc, n_points=200, row_blend=blend)
        rel.append(condensation_step(iso.steps).relative_pressure)
        ref.append(kjs_condensation_relative_pressure(r / 5.0))
        print(f"{r / 5.0:7.2f} {rel[-1]:18.4f} {ref[-1]:9.4f}", flush=True)
    rel, ref = np.array(rel), np.array(ref)
    d = np.diff(rel)
    print(json.dumps({"scan": "nitrogen 77.35 K cylinders, d 3–8 nm, radius / 0.25 Å (0.05 nm of diameter), "
                              f"{'row blend' if blend else 'one rounded lattice'}",
                      "sizes": int(radii.size), "seconds": round(time.perf_counter() - t0, 1),
                      "rises_with_size": bool(np.all(d > 0)),
                      "max_change_p_p0": round(float(np.abs(d).max()), 4),
                      "max_change_from_3.5_nm": round(float(np.abs(d)[radii[1:] > 17.5].max()), 4),
                      "kjs_max_change": round(float(np.abs(np.diff(ref)).max()), 4),
                      "max_miss_vs_kjs": round(float(np.abs(rel - ref).max()), 4),
                      "max_miss_vs_kjs_from_4_nm": round(float(np.abs(rel - ref)[radii >= 20.0].max()), 4)}))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--site-model", default="classical", choices=("classical", "quantum"))
    parser.add_argument("--no-blend", action="store_true", help="one rounded lattice per pore (the old model)")
    parser.add_argument("--only", choices=("helium", "nitrogen"))
    parser.add_argument("--sides", default="12:40", help="helium's side lengths, FROM:TO in Å (default 12:40)")
    args = parser.parse_args()
    if args.only != "nitrogen":
        lo, hi = (float(x) for x in args.sides.split(":"))
        helium(args.site_model, not args.no_blend, (lo, hi))
    if args.only != "helium":
        nitrogen(not args.no_blend)


if __name__ == "__main__":
    main()
