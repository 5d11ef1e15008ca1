"""Time to compute the 200 x 200 potential map (prints JSON lines).

Each repetition uses a new side length, so the cached far-field fit is rebuilt as after a slider move.
Run: .venv/bin/python benchmarks/bench_potential_map.py
"""
from __future__ import annotations

import json
import statistics
import time

import numpy as np

from porefill.physics.pore import wall_potential as wp
from porefill.physics.pore.geometry import HexagonPore
from porefill.physics.substances.materials import pair_parameters


def timed(fn, reps):
    times = []
    for i in range(reps):
        t0 = time.perf_counter()
        fn(i)
        times.append(time.perf_counter() - t0)
    return times


def main(reps: int = 15) -> None:
    pair = pair_parameters("helium-4")
    wp.potential_map(pore=HexagonPore(15.0, 8.0), pair=pair, n=50)   # warm-up (imports, allocation)

    fresh = timed(lambda i: wp.potential_map(pore=HexagonPore(15.0 + 0.01 * i, 8.0), pair=pair, n=200), reps)
    print(json.dumps({"benchmark": "map_200x200_hexagon_array_new_geometry", "side_angstrom": 15, "wall_angstrom": 8,
                      "median_ms": round(1e3 * statistics.median(fresh), 1), "max_ms": round(1e3 * max(fresh), 1),
                      "reps": reps}))
    cached = timed(lambda i: wp.potential_map(pore=HexagonPore(15.0, 8.0), pair=pair, n=200), reps)
    print(json.dumps({"benchmark": "map_200x200_hexagon_array_cached_far_field",
                      "median_ms": round(1e3 * statistics.median(cached), 1), "reps": reps}))
    big = timed(lambda i: wp.potential_map(pore=HexagonPore(50.0 + 0.01 * i, 2.0), pair=pair, n=200), 5)
    print(json.dumps({"benchmark": "map_200x200_hexagon_array_50A_side", "median_ms": round(1e3 * statistics.median(big), 1),
                      "reps": 5}))
    iso = timed(lambda i: wp.potential_map(pore=HexagonPore(15.0 + 0.01 * i), pair=pair, n=200), reps)
    print(json.dumps({"benchmark": "map_200x200_hexagon_isolated", "median_ms": round(1e3 * statistics.median(iso), 1),
                      "reps": reps}))

    # For scale: the plain route, every prism of three neighbour shells edge by edge at every grid point
    pore = HexagonPore(15.0, 8.0)
    x0, x1, y0, y1 = pore.bounding_box()
    gx, gy = np.meshgrid(np.linspace(x0, x1, 200), np.linspace(y0, y1, 200))
    inside = pore.contains(gx, gy)
    t0 = time.perf_counter()
    wp.wall_potential(gx[inside], gy[inside], pore=pore.isolated(), pair=pair)
    wp.array_correction(gx[inside], gy[inside], pore, pair=pair, cutoff_spacings=2.01, tail=False)
    print(json.dumps({"benchmark": "map_200x200_plain_three_shells_for_scale",
                      "ms": round(1e3 * (time.perf_counter() - t0), 1)}))


if __name__ == "__main__":
    main()
