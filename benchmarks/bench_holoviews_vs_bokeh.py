"""Server-side cost of redrawing the potential map: Bokeh data source updated in place against a HoloViews
element re-rendered through Panel. Prints JSON lines (median milliseconds over repeats).

Run: .venv/bin/python benchmarks/bench_holoviews_vs_bokeh.py
"""
from __future__ import annotations

import json
import statistics
import time

import numpy as np


def main() -> None:
    import holoviews as hv
    import panel as pn
    from bokeh.document import Document
    from bokeh.models import ColumnDataSource
    from bokeh.plotting import figure

    from porefill.physics.scenario import Scenario
    from porefill.physics.pore.wall_potential import potential_map

    hv.extension("bokeh")
    maps = []
    for i in range(12):
        sc = Scenario(size_angstrom=15.0 + 0.5 * i, wall_angstrom=8.0)
        m = potential_map(pore=sc.pore(), pair=sc.pair(), n=200)
        maps.append(np.where(np.isfinite(m.values), m.values, np.nan))

    # Bokeh: one figure, one source; each redraw replaces the source's data (what PotentialView does)
    doc = Document()
    src = ColumnDataSource({"image": [maps[0]], "x": [0], "y": [0], "dw": [1], "dh": [1]})
    fig = figure()
    fig.image(image="image", x="x", y="y", dw="dw", dh="dh", source=src, palette="Viridis256")
    doc.add_root(fig)
    times = []
    for v in maps:
        t0 = time.perf_counter()
        src.data = {"image": [v], "x": [0], "y": [0], "dw": [1], "dh": [1]}
        times.append(time.perf_counter() - t0)
    print(json.dumps({"benchmark": "map_redraw_bokeh_source_in_place", "median_ms": round(
        1e3 * statistics.median(times), 2), "reps": len(times)}))

    # HoloViews: a DynamicMap fed by a Pipe, rendered by a Panel pane into a document
    pipe = hv.streams.Pipe(data=maps[0])
    dmap = hv.DynamicMap(lambda data: hv.Image(data, bounds=(0, 0, 1, 1)).opts(cmap="viridis"), streams=[pipe])
    pane = pn.pane.HoloViews(dmap)
    doc2 = Document()
    model = pane.get_root(doc2)
    doc2.add_root(model)
    times = []
    for v in maps:
        t0 = time.perf_counter()
        pipe.send(v)
        times.append(time.perf_counter() - t0)
    print(json.dumps({"benchmark": "map_redraw_holoviews_dynamicmap_pipe", "median_ms": round(
        1e3 * statistics.median(times), 2), "reps": len(times)}))


if __name__ == "__main__":
    main()
