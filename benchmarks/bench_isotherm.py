"""Isotherm timings (300 chemical potentials, both branches) and the nitrogen/Kelvin comparison table.

Prints JSON lines, then the table. Run: .venv/bin/python benchmarks/bench_isotherm.py
"""
from __future__ import annotations

import json
import statistics
import time

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.scenario import Scenario



def time_isotherm(side: float, reps: int, blend: bool = True) -> list[float]:
    times = []
    for i in range(reps):
        # sizes of their own per setting: a geometry cached by the other setting's run would not be timed
        sc = Scenario(shape="hexagon", size_angstrom=side + 0.01 * i + (0.0 if blend else 0.005), wall_angstrom=8.0,
                      adsorbate="helium-4",
                      temperature_k=1.5, site_model="classical")   # the quantum one: bench_quantum.py
        t0 = time.perf_counter()
        iso = compute_isotherm(sc, n_points=300, row_blend=blend)
        times.append(time.perf_counter() - t0)
        assert iso.adsorption.converged.all() and iso.desorption.converged.all()
    return times


def main() -> None:
    from porefill.physics.pore import compiled

    compiled.enable()          # as the dashboard's workers, fits and sweeps run (POREFILL_NUMBA=0: the numpy path)
    compute_isotherm(Scenario(size_angstrom=10.0, wall_angstrom=8.0, site_model="classical"), n_points=30)   # imports, caches
    for side, reps in ((15.0, 10), (50.0, 5), (100.0, 3)):
        for blend in (True, False):
            t = time_isotherm(side, reps, blend)
            print(json.dumps({"benchmark": f"isotherm_hexagon_{side:g}A_helium_1.5K_classical_300mu_both_branches",
                              "lattices": "row blend (two where the rows do not fit)" if blend else "one, rounded",
                              "median_s": round(statistics.median(t), 3), "max_s": round(max(t), 3), "reps": reps,
                              "note": "new geometry each rep: wall potential, sites, both branches, steps"}))
    from porefill.physics.substances.kelvin import kjs_condensation_relative_pressure
    from porefill.physics.lattice_gas.steps import condensation_step

    print("\nN2 at 77.35 K in silica cylinders: equilibrium condensation step vs Kruk–Jaroniec–Sayari (1997)")
    print(f"{'d (nm)':>7} {'model p/p0':>11} {'KJS p/p0':>9}  kind")
    for d in (3, 4, 5, 6, 7, 8):
        iso = compute_isotherm(Scenario(shape="cylinder", size_angstrom=5.0 * d, adsorbate="nitrogen",
                                        temperature_k=77.35))
        step = condensation_step(iso.steps)
        print(f"{d:>7} {step.relative_pressure:>11.3f} {kjs_condensation_relative_pressure(d):>9.3f}  {step.kind}")


if __name__ == "__main__":
    main()
