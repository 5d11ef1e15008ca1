"""Pore-size distributions (issue 20's benchmark rows): prints JSON lines.

- a 60-size nitrogen kernel (hexagon, 8 Å walls, 77.35 K, classical sites, 200 points, 3 pores per size)
  built cold in worker processes (target ≤ 10 s), then again from the disk cache;
- the inversion of an invented 60-point isotherm with it, GCV and 200 bootstrap resamples (target ≤ 0.5 s);
- the carried helium-4 prediction at 1.5 K on the same sizes: the quantum site model's kernel (target ≤ 30 s
  for 60 sizes; by default a sample of ``--helium-sizes`` sizes up to ``--helium-max`` Å side, timed, and the
  sizes up to there estimated from it; ``--helium-full`` builds all 60), then the carry from the cached kernel.

The kernels go to a temporary cache folder (the user's cache is not touched).

Run: .venv/bin/python benchmarks/bench_distribution.py [--workers N] [--helium-sizes 8] [--helium-full]
"""
from __future__ import annotations

import argparse
import json
import os
import tempfile
import time

import numpy as np


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    parser.add_argument("--helium-sizes", type=int, default=8, help="sizes of the helium sample (default 8)")
    parser.add_argument("--helium-max", type=float, default=30.0,
                        help="largest hexagon side (Å) of the helium sample (default 30: the quantum states of "
                             "larger pores take minutes each today)")
    parser.add_argument("--helium-full", action="store_true", help="build the whole 60-size helium kernel")
    args = parser.parse_args()
    os.environ["POREFILL_CACHE_DIR"] = tempfile.mkdtemp(prefix="porefill-bench-")

    from porefill.explorer.jobs import kernels
    from porefill.physics.distribution.carry import carry
    from porefill.physics.distribution.inversion import invert
    from porefill.physics.distribution.kernel import KernelSpec, default_sizes
    from porefill.physics.fitting.measured import MeasuredRun
    from porefill.physics.scenario import Scenario

    base = Scenario(shape="hexagon", size_angstrom=20.0, wall_angstrom=8.0, adsorbate="nitrogen", temperature_k=77.35,
                    site_model="classical")
    sizes = default_sizes("hexagon", 60)
    spec = KernelSpec(base, sizes)
    t = time.perf_counter()
    kernel = kernels.kernel_for(spec, workers=args.workers)
    cold = time.perf_counter() - t
    kernels.MEMORY.clear()
    t = time.perf_counter()
    kernels.kernel_for(spec, workers=args.workers)
    warm = time.perf_counter() - t
    print(flush=True, *[json.dumps({"benchmark": "nitrogen_kernel_60_sizes", "cold_s": round(cold, 2), "from_disk_s": round(warm, 3),
                      "workers": args.workers, "isotherms": 60 * spec.parts, "target_s": 10.0,
                      "load_average_1min": round(os.getloadavg()[0], 2)})])

    # an invented sample: a Gaussian of sides around 20 Å, 1 % noise
    w = np.exp(-0.5 * ((np.asarray(sizes) - 20.0) / 1.5) ** 2)
    w *= 0.7 / w.sum()
    x = np.concatenate([np.logspace(-5, -1, 15), np.linspace(0.12, 0.95, 45)])
    p0 = kernel.saturation_pressure_pa
    density = kernel.per_pore_volume(np.log(x * p0), "equilibrium") @ w       # atoms per Å³ × cm³/g
    amount = density * 1e24 / 6.02214076e23 * 1e3                               # mmol/g
    amount *= 1 + 0.01 * np.random.default_rng(1).standard_normal(x.size)
    run = MeasuredRun("invented", "invented", x, "p/p0", amount, "mmol/g", "adsorption", 77.35)
    t = time.perf_counter()
    dist = invert(kernel, [run])
    first = time.perf_counter() - t              # with the first import of scipy.optimize
    t = time.perf_counter()
    dist = invert(kernel, [run])
    inv = time.perf_counter() - t
    print(flush=True, *[json.dumps({"benchmark": "inversion_60_points_60_sizes_gcv_bootstrap_200", "wall_s": round(inv, 3),
                      "first_call_s": round(first, 3), "target_s": 0.5, "mode_angstrom": dist.summary["mode"],
                      "total_cm3_g": round(dist.summary["total_cm3_g"], 4)})])

    he = base.replace(adsorbate="helium-4", temperature_k=1.5, site_model=None)
    chosen = [s for s in sizes if s <= args.helium_max] if not args.helium_full else list(sizes)
    pick = (np.arange(len(chosen)) if args.helium_full
            else np.unique(np.linspace(0, len(chosen) - 1, min(args.helium_sizes, len(chosen))).round().astype(int)))
    he_spec = KernelSpec(he, tuple(chosen[i] for i in pick), relative_pressure_range=None)
    t = time.perf_counter()
    he_kernel = kernels.kernel_for(he_spec, workers=args.workers)
    built = time.perf_counter() - t
    print(flush=True, *[json.dumps({
        "benchmark": "helium_quantum_kernel_1.5K", "wall_s": round(built, 1), "sizes": len(pick),
        "largest_side_angstrom": round(max(he_spec.sizes_angstrom), 2), "site_model": he.site_model_used,
        "estimate_for_sizes_up_to_that_side_s": round(built * len(chosen) / len(pick), 1),
        "sizes_not_timed": len(sizes) - len(chosen), "target_s_60_sizes": 30.0,
        "load_average_1min": round(os.getloadavg()[0], 2)})])
    weights = np.interp(he_spec.sizes_angstrom, sizes, dist.pore_volume_cm3_g) + 1e-6
    t = time.perf_counter()
    carried = carry(he_spec.sizes_angstrom, weights, he_kernel)
    print(flush=True, *[json.dumps({"benchmark": "carry_from_cached_kernel", "wall_s": round(time.perf_counter() - t, 3),
                                    "layers": len(carried.layers)})])


if __name__ == "__main__":
    main()
