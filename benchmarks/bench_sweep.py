"""Sizing sweep: 40 side lengths 10–50 Å, helium-4 at 1.5 K, 8 Å walls, full isotherms (300 points).
Prints JSON lines. The target (issue 9) is under 20 s on the development machine.

- the classical site model: the whole sweep through `porefill.explorer.jobs.sweep_runner.SweepRunner` (worker processes,
  one per core; pool start-up included), then the same sweep again from the cache;
- the quantum site model (helium-4's default): by default a sample of sizes, one pore at a time in this
  process, split into the one-atom states (`porefill.physics.sites.quantum.cached_states`) and the rest of the isotherm,
  with the number of states and grid points per pore, and an estimate of the whole sweep (per-pore times
  interpolated over the 40 sizes, divided among the workers); ``--quantum-full`` runs the whole sweep.

Run: .venv/bin/python benchmarks/bench_sweep.py [--quantum-sizes 10,20,30] [--quantum-full] [--workers N]
"""
from __future__ import annotations

import argparse
import json
import os
import time

import numpy as np

from porefill.explorer.jobs.sweep_runner import SweepRunner
from porefill.physics.scenario import Scenario
from porefill.physics.sweep import SweepSpec, parse_range

SIZES = parse_range("10:50:40")


def _spec(model: str) -> SweepSpec:
    base = Scenario(shape="hexagon", size_angstrom=10.0, wall_angstrom=8.0, adsorbate="helium-4",
                    temperature_k=1.5, site_model=model)
    return SweepSpec(base, sizes_angstrom=SIZES, n_points=300)


def full_sweep(model: str, workers: int) -> None:
    runner = SweepRunner(workers=workers)
    spec = _spec(model)
    try:
        cold = runner.run(spec)
        warm = runner.run(spec)
    finally:
        runner.close()
    steps = [len(p.get("steps", ())) for p in cold.done]
    print(json.dumps({"benchmark": f"sweep_40_sizes_10_50A_helium_1.5K_{model}", "wall_s": round(cold.seconds, 2),
                      "workers": workers, "pores": len(cold.done), "errors": sum("error" in p for p in cold.done),
                      "steps_per_pore": [min(steps), max(steps)], "target_s": 20.0,
                      "load_average_1min": round(os.getloadavg()[0], 2)}))
    print(json.dumps({"benchmark": f"sweep_40_sizes_{model}_again_from_cache", "wall_s": round(warm.seconds, 4),
                      "from_cache": warm.from_cache}))


def quantum_sample(sizes: tuple[float, ...], workers: int) -> None:
    from porefill.physics.lattice_gas.adsorption import compute_isotherm
    from porefill.physics.sites.quantum import cached_states
    from porefill.physics.lattice_gas.stages import geometry_stage

    base = _spec("quantum").base
    times = []
    for size in sizes:
        sc = base.replace(size_angstrom=size)
        t0 = time.perf_counter()
        geo = geometry_stage(sc)
        t1 = time.perf_counter()
        states = cached_states(geo, 1.5)
        t2 = time.perf_counter()
        iso = compute_isotherm(sc, n_points=300)          # reuses the cached states
        t3 = time.perf_counter()
        times.append(t3 - t0)
        print(json.dumps({"benchmark": "quantum_pore_helium_1.5K_8A_walls", "size_angstrom": size,
                          "total_s": round(t3 - t0, 2), "geometry_s": round(t1 - t0, 2),
                          "states_s": round(t2 - t1, 2), "rest_of_isotherm_s": round(t3 - t2, 2),
                          "states": int(states.energies_k.size), "states_capped": bool(states.capped),
                          "grid_points": int(states.points.shape[0]), "grid_spacing_angstrom": states.spacing_angstrom,
                          "sites": int(iso.stage.lattice.size), "steps": len(iso.steps)}))
    if len(sizes) >= 2:
        per_pore = np.interp(SIZES, sizes, times) if max(sizes) >= max(SIZES) else \
            np.exp(np.polyval(np.polyfit(np.log(sizes), np.log(times), 1), np.log(SIZES)))
        print(json.dumps({"benchmark": "sweep_40_sizes_quantum_estimate", "estimated_wall_s": round(
            float(per_pore.sum()) / workers, 1), "workers": workers, "sampled_sizes": list(sizes),
            "how": "per-pore times interpolated (power law beyond the sample) over the 40 sizes, divided by "
                   "the workers", "target_s": 20.0}))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--quantum-sizes", default="10,20,30", help="sizes (Å) of the quantum sample")
    ap.add_argument("--quantum-full", action="store_true", help="run the whole quantum sweep (slow)")
    args = ap.parse_args()
    full_sweep("classical", args.workers)
    if args.quantum_full:
        full_sweep("quantum", args.workers)
    else:
        quantum_sample(parse_range(args.quantum_sizes, name="--quantum-sizes"), args.workers)


if __name__ == "__main__":
    main()
