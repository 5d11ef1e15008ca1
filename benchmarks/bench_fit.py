"""Wall and CPU time of the issue's example fit: helium-4 at 1.5 K in a 15 Å hexagon (wall 8 Å), classical
sites, three free parameters (wall-strength, size, pore-volume), on the invented dosing file. One JSON line.

    .venv/bin/python benchmarks/bench_fit.py [--site-model quantum]
"""
from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from porefill.explorer.files.measured import read_measured_path  # noqa: E402
from porefill.physics.fitting.solve import FitRequest, fit  # noqa: E402
from porefill.physics.fitting.measured import Sample  # noqa: E402
from porefill.physics.scenario import Scenario  # noqa: E402


def main() -> None:
    from porefill.physics.pore import compiled

    compiled.enable()          # as the dashboard's workers, fits and sweeps run (POREFILL_NUMBA=0: the numpy path)
    parser = argparse.ArgumentParser()
    parser.add_argument("--site-model", default="classical")
    args = parser.parse_args()
    runs = read_measured_path(ROOT / "scenarios" / "invented-helium-dosing.csv").runs
    scenario = Scenario(shape="hexagon", size_angstrom=15.0, wall_angstrom=8.0, adsorbate="helium-4",
                        temperature_k=1.5, site_model=args.site_model)
    request = FitRequest(scenario, runs, Sample(mass_g=0.05), free=("wall-strength", "size", "pore-volume"))
    wall, cpu = time.perf_counter(), time.process_time()
    result = fit(request)
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    print(json.dumps({"benchmark": "fit helium-4 1.5 K hexagon 15 Å, 3 free", "site_model": args.site_model,
                      "wall_s": round(wall, 2), "cpu_s": round(cpu, 2), "evaluations": result.evaluations,
                      "parameters": {k: [round(v, 5), round(e, 5)] for k, (v, e) in result.parameters.items()},
                      "reduced_chi2": round(result.reduced_chi2, 4)}))


if __name__ == "__main__":
    main()
