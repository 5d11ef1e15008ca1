"""The site cells' quadrature (`porefill.physics.sites.cells`): potential points evaluated against points kept,
and the wall time of one geometry's cells, for the gases and pores the model meets. One JSON line per case.

Each potential point should be evaluated once and most of them kept (issue 17, point 3). Run with one BLAS
thread, as the workers do:

    OPENBLAS_NUM_THREADS=1 .venv/bin/python benchmarks/bench_cells.py
"""
from __future__ import annotations

import json
import statistics
import time

import porefill.physics.sites.cells as cells_module
from porefill.physics.pore import compiled
from porefill.physics.scenario import Scenario
from porefill.physics.sites.lattice import default_spacing, lattice_of, symmetry_orbits
from porefill.physics.sites.placement import first_row_distance, place_sites
from porefill.physics.substances.vapour_pressure import liquid_number_density, temperature_range

CASES = [
    ("helium-4 hexagon 15 Å, 8 Å walls", Scenario(size_angstrom=15.0, wall_angstrom=8.0, site_model="classical")),
    ("helium-4 hexagon 33.3 Å, 6 Å walls", Scenario(size_angstrom=33.3, wall_angstrom=6.0, site_model="classical")),
    ("nitrogen hexagon 20 Å, 8 Å walls", Scenario(size_angstrom=20.0, wall_angstrom=8.0, adsorbate="nitrogen",
                                                 temperature_k=77.35)),
    ("nitrogen hexagon 50 Å, 8 Å walls", Scenario(size_angstrom=50.0, wall_angstrom=8.0, adsorbate="nitrogen",
                                                 temperature_k=77.35)),
    ("hydrogen hexagon 25 Å, 8 Å walls", Scenario(size_angstrom=25.0, wall_angstrom=8.0, adsorbate="hydrogen",
                                                 temperature_k=20.0, site_model="classical")),
    ("argon cylinder radius 21.5 Å", Scenario(shape="cylinder", size_angstrom=21.5, adsorbate="argon",
                                              temperature_k=87.3)),
]


def one(sc: Scenario, reps: int = 5) -> dict:
    pore, pair = sc.pore(), sc.pair()
    density, _ = liquid_number_density(sc.adsorbate)
    spacing = default_spacing(density)
    placement = place_sites(pore, spacing, first_row_distance(pore, pair))
    orbit = symmetry_orbits(lattice_of(pore, placement, spacing), pore)
    t_min, t_max, _ = temperature_range(sc.adsorbate)
    real = cells_module._adaptive
    counted = [0]

    def counting(evaluate, *args):
        def ev(pc, unit):
            counted[0] += unit.shape[0] * unit.shape[1]
            return evaluate(pc, unit)
        return real(ev, *args)

    cells_module._adaptive = counting
    try:
        cells = cells_module.site_cells(pore, pair, placement, orbit, temperature_range_k=(t_min, t_max))
    finally:
        cells_module._adaptive = real
    times = []
    for _ in range(reps):
        t = time.perf_counter()
        cells_module.site_cells(pore, pair, placement, orbit, temperature_range_k=(t_min, t_max))
        times.append(time.perf_counter() - t)
    return {"evaluated": counted[0], "kept": cells.n_nodes, "kept_fraction": round(cells.n_nodes / counted[0], 3),
            "median_s": round(statistics.median(times), 4)}


def main() -> None:
    compiled.enable()          # as the dashboard's workers, fits and sweeps run
    one(CASES[0][1], reps=1)   # compile and import first
    for label, sc in CASES:
        print(json.dumps({"benchmark": f"site cells, {label}", **one(sc)}), flush=True)


if __name__ == "__main__":
    main()
