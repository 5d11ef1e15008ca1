"""Time the offline report and the slide figures; prints one JSON line per measurement.

    .venv/bin/python benchmarks/bench_report.py [--sizes N]
"""
from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from porefill.explorer.outputs.figures import FIGURES, figure_job  # noqa: E402
from porefill.explorer.outputs.report import build_report, default_sizes  # noqa: E402
from porefill.explorer.files.scenario_file import demo_names, load_document, resolve_scenario  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--sizes", type=int, default=5, help="pores in the sizing map (default 5)")
    args = parser.parse_args()
    for name in demo_names():
        doc = load_document(resolve_scenario(name))
        sizes = default_sizes(doc.scenario, args.sizes) if args.sizes else ()
        start = time.perf_counter()
        text = build_report(doc, sizes=sizes)
        print(json.dumps({"bench": "report", "scenario": name, "sizes": len(sizes),
                          "seconds": round(time.perf_counter() - start, 2),
                          "megabytes": round(len(text.encode("utf-8")) / 1e6, 2)}), flush=True)
    doc = load_document(resolve_scenario("demo-slit-argon"))
    for fig in FIGURES:
        for fmt in ("png", "svg"):
            start = time.perf_counter()
            data = figure_job(doc.scenario, fig, fmt)
            print(json.dumps({"bench": "figure", "figure": fig, "format": fmt, "kilobytes": round(len(data) / 1e3),
                              "seconds": round(time.perf_counter() - start, 3)}), flush=True)


if __name__ == "__main__":
    main()
