"""Quantum states and the quantum isotherm: helium-4, 15 Å side, 8 Å walls, 1.5 K; then a new geometry at
15, 30 and 50 Å side, and hydrogen (20 K) and neon (25 K) at 15 Å. Prints JSON lines.

Then the one-atom states alone at 15 and 30 Å side, solved in the mirrors' four blocks (C2v, before) and in
C6v's six (now), side by side in one run, with the largest difference of their energies; and the states for
the first layer only against those for every row (15, 21.5, 30 Å).

Run: .venv/bin/python benchmarks/bench_quantum.py [--quick]   (--quick: leaves out 50 Å, hydrogen and neon)
"""
from __future__ import annotations

import json
import statistics
import sys
import time

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.scenario import Scenario


def main() -> None:
    from porefill.physics.pore import compiled

    compiled.enable()          # as the dashboard's workers, fits and sweeps run (POREFILL_NUMBA=0: the numpy path)
    cold, warm, warmer = [], [], []
    for i in range(3):
        sc = Scenario(size_angstrom=15.0 + 0.01 * i, wall_angstrom=8.0, temperature_k=1.5, site_model="quantum")
        t0 = time.perf_counter()
        iso = compute_isotherm(sc, n_points=300)
        cold.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        compute_isotherm(sc.replace(temperature_k=1.45), n_points=300)        # reuses the states
        warm.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        compute_isotherm(sc.replace(temperature_k=1.7), n_points=300)         # warmer: still covered
        warmer.append(time.perf_counter() - t0)
    print(json.dumps({"benchmark": "quantum_isotherm_hexagon_15A_helium_1.5K_new_geometry",
                      "median_s": round(statistics.median(cold), 3), "reps": len(cold),
                      "note": "wall potential, states, site free energies, both branches, steps"}))
    print(json.dumps({"benchmark": "quantum_isotherm_temperature_change_reusing_states",
                      "median_s": round(statistics.median(warm), 3), "reps": len(warm)}))
    print(json.dumps({"benchmark": "quantum_isotherm_warmer_1.7K_reusing_states",
                      "median_s": round(statistics.median(warmer), 3), "reps": len(warmer)}))
    classical = compute_isotherm(sc.replace(site_model="classical"), n_points=300)
    shifts = {s.identity: s for s in classical.steps}
    for s in iso.steps:
        c = shifts.get(s.identity)
        if c is not None:
            print(json.dumps({"step": s.identity, "mu_shift_k": round(s.mu_k - c.mu_k, 3),
                              "pressure_factor": float(f"{s.pressure_pa / c.pressure_pa:.3g}")}))


def sizes_and_gases(quick: bool) -> None:
    """One new geometry each (nothing cached): the speed issue's rows."""
    cases = [("helium-4", 1.5, 15.0), ("helium-4", 1.5, 30.0)]
    if not quick:
        cases += [("helium-4", 1.5, 50.0), ("hydrogen", 20.0, 15.0), ("neon", 25.0, 15.0)]
    for gas, t, side in cases:
        sc = Scenario(size_angstrom=side + 0.003, wall_angstrom=8.0, adsorbate=gas, temperature_k=t,
                      site_model="quantum")
        t0 = time.perf_counter()
        try:
            iso = compute_isotherm(sc, n_points=300)
        except ValueError as exc:
            print(json.dumps({"benchmark": f"quantum_isotherm_{gas}_{t:g}K_hexagon_{side:g}A", "error": str(exc)}))
            continue
        print(json.dumps({"benchmark": f"quantum_isotherm_{gas}_{t:g}K_hexagon_{side:g}A_new_geometry",
                          "seconds": round(time.perf_counter() - t0, 2), "steps": len(iso.steps)}), flush=True)


def blocks_side_by_side() -> None:
    """States at 15 and 30 Å side with the mirror sectors and with C6v's blocks (one BLAS thread)."""
    import numpy as np
    from threadpoolctl import threadpool_limits

    from porefill.physics.sites import quantum
    from porefill.physics.sites import symmetry_blocks as sb
    from porefill.physics.substances.materials import get_adsorbate

    def mirrors_only(points, v):
        return [sb.Block(b) for b in sb.sector_bases(points.shape[0], sb.mirror_permutations(points, v))]

    with threadpool_limits(1):
        for side in (15.0, 30.0):
            sc = Scenario(size_angstrom=side, wall_angstrom=8.0, temperature_k=1.5)
            pore, pair = sc.pore(), sc.pair()
            hb = get_adsorbate(sc.adsorbate).hbar2_over_mk
            out = {}
            for name, blocks in (("c2v_mirror_sectors", mirrors_only), ("c6v_blocks", sb.symmetry_blocks)):
                quantum.symmetry_blocks = blocks
                t0 = time.perf_counter()
                states = quantum.solve_states(pore, pair, hb, temperature_k=1.5)
                out[name] = (time.perf_counter() - t0, states.energies_k)
            quantum.symmetry_blocks = sb.symmetry_blocks
            print(json.dumps({"benchmark": f"helium_states_hexagon_{side:g}A_blocks",
                              **{f"{k}_s": round(v[0], 3) for k, v in out.items()},
                              "max_energy_difference_k": float(np.abs(out["c2v_mirror_sectors"][1]
                                                                      - out["c6v_blocks"][1]).max())}), flush=True)


def every_row_parts(quick: bool) -> None:
    """States at 15, 21.5 and 30 Å side (1.5 K, 8 Å walls, one BLAS thread): the whole cross-section's (the
    first layer's) and the region inside the first row's for each lattice of the row blend, timed apart,
    with their state counts and the orbits left without states."""
    from threadpoolctl import threadpool_limits

    from porefill.physics.lattice_gas.stages import geometry_stage
    from porefill.physics.sites import inner_states, quantum, state_sites
    from porefill.physics.lattice_gas.row_blend import blend_weights

    with threadpool_limits(1):
        for side in (15.0, 21.5) if quick else (15.0, 21.5, 30.0):
            sc = Scenario(size_angstrom=side, wall_angstrom=8.0, temperature_k=1.5)
            geo = geometry_stage(sc)
            row = {"benchmark": f"helium_states_hexagon_{side:g}A_cross_section_and_inner_regions"}
            for weight, rows in blend_weights(geo.row_fraction):
                lattice = geometry_stage(sc, rows)
                t0 = time.perf_counter()
                # the first layer's states, and more while an orbit of this lattice's first row has none
                states = quantum.model_states(lattice, 1.5)
                row[f"cross_section_{rows}_rows_s"] = round(time.perf_counter() - t0, 3)
                row[f"cross_section_{rows}_rows_states"] = int(states.energies_k.size)
                t0 = time.perf_counter()
                inner = inner_states.solve_inner_states(states, lattice, 1.5)
                row[f"inner_{rows}_rows_s"] = round(time.perf_counter() - t0, 3)
                row[f"inner_{rows}_rows_states"] = 0 if inner is None else int(inner.energies_k.size)
                sources = [o["source"] for o in state_sites.orbit_sources(states, lattice, 1.5)]
                row[f"lattice_{rows}_rows_orbits_without_states"] = sum(not s.startswith("quantum") for s in sources)
            print(json.dumps(row), flush=True)


if __name__ == "__main__":
    main()
    sizes_and_gases("--quick" in sys.argv)
    blocks_side_by_side()
    every_row_parts("--quick" in sys.argv)
