"""Start-up of the command line: `porefill --help`, `porefill potential --at 0,0` and a classical helium
isotherm, each a whole process (median of 5). Run: .venv/bin/python benchmarks/bench_cli_start.py"""
from __future__ import annotations

import json
import shutil
import statistics
import subprocess
import sys
import time
from pathlib import Path

PORFILL = shutil.which("porefill") or str(Path(sys.executable).with_name("porefill"))
COMMANDS = {
    "help": ["--help"],
    "potential_at_0_0": ["potential", "--at", "0,0"],
    "isotherm_helium_classical": ["isotherm", "--temperature", "1.5", "--site-model", "classical"],
}


def main() -> None:
    for name, args in COMMANDS.items():
        times = []
        for _ in range(5):
            t0 = time.perf_counter()
            subprocess.run([PORFILL, *args], check=True, capture_output=True)
            times.append(time.perf_counter() - t0)
        print(json.dumps({"benchmark": f"cli_{name}", "median_s": round(statistics.median(times), 3),
                          "max_s": round(max(times), 3)}), flush=True)


if __name__ == "__main__":
    main()
