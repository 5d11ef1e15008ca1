"""Isotherm timings (300 chemical potentials, both branches) and the nitrogen/Kelvin comparison table.

Prints JSON lines, then the table. Run: .venv/bin/python benchmarks/bench_isotherm.py
"""
from __future__ import annotations

import json
import statistics
import sys
import time
from pathlib import Path

from physics.adsorption import compute_isotherm
from physics.scenario import Scenario

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))


def time_isotherm(side: float, reps: int) -> list[float]:
    times = []
    for i in range(reps):
        sc = Scenario(shape="hexagon", size_angstrom=side + 0.01 * i, wall_angstrom=8.0, adsorbate="helium-4",
                      temperature_k=1.5, site_model="classical")   # the quantum one: bench_quantum.py
        t0 = time.perf_counter()
        iso = compute_isotherm(sc, n_points=300)
        times.append(time.perf_counter() - t0)
        assert iso.adsorption.converged.all() and iso.desorption.converged.all()
    return times


def main() -> None:
    compute_isotherm(Scenario(size_angstrom=10.0, wall_angstrom=8.0, site_model="classical"), n_points=30)   # imports, caches
    for side, reps in ((15.0, 10), (50.0, 5)):
        t = time_isotherm(side, reps)
        print(json.dumps({"benchmark": f"isotherm_hexagon_{side:g}A_helium_1.5K_classical_300mu_both_branches",
                          "median_s": round(statistics.median(t), 3), "max_s": round(max(t), 3), "reps": reps,
                          "note": "new geometry each rep: wall potential, sites, both branches, steps"}))
    from test_adsorption import nitrogen_condensation_table

    print("\nN2 at 77.35 K in silica cylinders: equilibrium condensation step vs Kruk–Jaroniec–Sayari (1997)")
    print(f"{'d (nm)':>7} {'model p/p0':>11} {'KJS p/p0':>9}  kind")
    for d, model, kjs, kind in nitrogen_condensation_table():
        print(f"{d:>7} {model:>11.3f} {kjs:>9.3f}  {kind}")


if __name__ == "__main__":
    main()
