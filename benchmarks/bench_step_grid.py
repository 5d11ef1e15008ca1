"""Do the listed steps depend on the μ grid? (issue 18 point 4; prints a line per pore that differs, then JSON)

For each pore the isotherm is computed at 150, 300 and 600 points (``--points``) and its steps compared: the same
list of (kind, row it fills first) at every point count, and each step's log10 p within ``--decades`` (0.01)
of the finest grid's. Pores: helium-4 at 1.5 K in hexagons with 8 Å walls, 12–40 Å side every 1 Å (classical
sites; ``--site-model quantum`` is much slower), and nitrogen (77.35 K) and argon (87.3 K) in silica cylinders of
15–40 Å radius every 2.5 Å.

Run: .venv/bin/python benchmarks/bench_step_grid.py [--only helium|nitrogen|argon] [--points 150,300,600]
     [--no-blend]
"""
from __future__ import annotations

import argparse
import json
import time

import numpy as np

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.steps import row_key
from porefill.physics.scenario import Scenario


def pores(gas: str, site_model: str) -> list[Scenario]:
    if gas == "helium":
        return [Scenario(size_angstrom=float(s), wall_angstrom=8.0, temperature_k=1.5, site_model=site_model)
                for s in np.arange(12.0, 40.01, 1.0)]
    temperature = {"nitrogen": 77.35, "argon": 87.3}[gas]
    return [Scenario(shape="cylinder", size_angstrom=float(r), adsorbate=gas, temperature_k=temperature)
            for r in np.arange(15.0, 40.01, 2.5)]


def step_list(iso) -> list[tuple[str, str, float]]:
    return [(s.kind, row_key(s), float(np.log10(s.pressure_pa))) for s in iso.steps]


def check(gas: str, site_model: str, points: list[int], decades: float, blend: bool = True) -> dict:
    t0 = time.perf_counter()
    differing = []
    for sc in pores(gas, site_model):
        lists = {n: step_list(compute_isotherm(sc, n_points=n, row_blend=blend)) for n in points}
        finest = lists[max(points)]
        same = all([(k, r) for k, r, _ in v] == [(k, r) for k, r, _ in finest] for v in lists.values())
        close = same and all(abs(a[2] - b[2]) <= decades for v in lists.values() for a, b in zip(v, finest))
        if not close:
            differing.append(sc.size_angstrom)
            everywhere = set.intersection(*(set((k, r, round(p, 2)) for k, r, p in v) for v in lists.values()))
            print(f"{gas} {sc.size_angstrom:5.1f} Å: steps not at every point count: "
                  + "; ".join(f"{n}: " + ", ".join(f"{k[0]} {r} {p:.2f}" for k, r, p in v
                                                    if (k, r, round(p, 2)) not in everywhere)
                              for n, v in lists.items()), flush=True)
    n_pores = len(pores(gas, site_model))
    return {"gas": gas, "site_model": site_model if gas == "helium" else "classical", "points": points,
            "pores": n_pores, "pores_differing": len(differing), "sizes_differing_angstrom": differing,
            "lattices": "row blend" if blend else "one rounded lattice",
            "tolerance_decades": decades, "seconds": round(time.perf_counter() - t0, 1)}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--only", choices=("helium", "nitrogen", "argon"))
    parser.add_argument("--site-model", default="classical", choices=("classical", "quantum"))
    parser.add_argument("--points", default="150,300,600")
    parser.add_argument("--decades", type=float, default=0.01)
    parser.add_argument("--no-blend", action="store_true", help="one rounded lattice per pore: the step finder "
                        "alone, without the pairing of the two lattices' steps")
    args = parser.parse_args()
    points = [int(x) for x in args.points.split(",")]
    for gas in ("helium", "nitrogen", "argon"):
        if args.only in (None, gas):
            print(json.dumps(check(gas, args.site_model, points, args.decades, not args.no_blend)), flush=True)


if __name__ == "__main__":
    main()
