"""BLAS threads in worker processes: the same work with the default threads and with one
(`porefill.explorer.jobs.threads`). Each case runs in a fresh spawned process, two at once to stand for the
dashboard's two isotherm workers, so the threads of one compete with the other's as they do in the server.

Prints one JSON line per case. Run: .venv/bin/python benchmarks/bench_threads.py [--quick]
(--quick: 50 Å classical isotherm and 20 Å quantum states instead of 70 Å and 30 Å.)
"""
from __future__ import annotations

import json
import multiprocessing
import sys
import time


def _isotherm(side: float) -> float:
    from porefill.physics.lattice_gas.adsorption import compute_isotherm
    from porefill.physics.scenario import Scenario

    t0 = time.perf_counter()
    compute_isotherm(Scenario(size_angstrom=side, wall_angstrom=8.0, temperature_k=1.5, site_model="classical"))
    return time.perf_counter() - t0


def _states(side: float) -> float:
    from porefill.physics.lattice_gas.stages import geometry_stage
    from porefill.physics.scenario import Scenario
    from porefill.physics.sites.quantum import solve_states

    geo = geometry_stage(Scenario(size_angstrom=side, wall_angstrom=8.0, temperature_k=1.5))
    t0 = time.perf_counter()
    solve_states(geo.pore, geo.pair, geo.adsorbate.hbar2_over_mk, temperature_k=1.5)
    return time.perf_counter() - t0


def _worker(args) -> float:
    kind, side, one_thread = args
    from porefill.physics.pore import compiled

    compiled.enable()
    if one_thread:
        from porefill.explorer.jobs.threads import one_blas_thread
        one_blas_thread()
    return {"isotherm": _isotherm, "states": _states}[kind](side)


def main() -> None:
    quick = "--quick" in sys.argv
    cases = [("isotherm", 50.0 if quick else 70.0), ("states", 20.0 if quick else 30.0)]
    ctx = multiprocessing.get_context("spawn")
    for kind, side in cases:
        for one_thread in (False, True):
            with ctx.Pool(2) as pool:
                t = pool.map(_worker, [(kind, side, one_thread), (kind, side + 0.01, one_thread)])
            print(json.dumps({"benchmark": f"{kind}_{side:g}A_two_workers",
                              "blas_threads": "one" if one_thread else "default",
                              "seconds_each": [round(v, 2) for v in t], "max_s": round(max(t), 2)}), flush=True)


if __name__ == "__main__":
    main()
