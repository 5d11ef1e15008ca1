"""Sweep results as JSON and CSV (used by `porefill sweep` and the dashboard's sizing view).

The JSON has one entry per pore under ``"pores"``, in the sweep's order (temperature slowest, then wall,
size fastest), each with its size, wall, temperature, site model and its steps exactly as
`porefill isotherm --json` gives them (`porefill.explorer.outputs.isotherm_export.step_json`), plus ``step_fills``: what
fills at each step (corner, face, ring, centre; `porefill.physics.sweep.step_fill_class`). The CSV has one row per
step; a pore with no step, or one the model could not compute, has one row with the step columns empty.
"""
from __future__ import annotations

import csv
import io

from porefill.physics.sweep import Target, meets

from porefill.explorer.jobs.sweep_runner import SweepResult

__all__ = ["sweep_json", "sweep_csv", "CSV_COLUMNS"]

_PORE_KEYS = ("size_angstrom", "wall_angstrom", "temperature_k", "site_model", "n_points",
              "saturation_pressure_pa", "steps", "step_fills", "error")
CSV_COLUMNS = ("size_angstrom", "wall_angstrom", "temperature_K", "site_model", "step", "kind", "fills", "where",
               "mu_K", "pressure_Pa", "relative_pressure", "added_per_nm", "adsorption_jump_pressure_Pa",
               "desorption_jump_pressure_Pa", "identity", "error")


def _pore(point: dict, target: Target | None) -> dict:
    d = {k: point[k] for k in _PORE_KEYS if k in point}
    if target is not None and "error" not in point:
        ok, rng = meets(target, point)
        d["target"] = {"met": ok, "pressure_range_pa": None if rng is None else list(rng)}
        if rng is not None:
            from porefill.physics.sweep import range_edges

            first, last = range_edges(point, rng)
            d["target"]["range_starts_at_computed_start"] = first
            d["target"]["range_ends_at_computed_end"] = last
    return d


def sweep_json(result: SweepResult, *, target: Target | None = None) -> dict:
    """The sweep as plain types; with ``target``, each pore also says whether it meets it and where
    (`porefill.physics.sweep.meets`)."""
    spec = result.spec
    temps, walls, sizes = spec.axes
    out = {
        "units": {"size": "angstrom", "wall": "angstrom", "temperature": "K", "pressure": "Pa", "mu": "K",
                  "coverage": "per nm of pore length (slit: per nm²)"},
        "sweep": {"base": result.spec.base.to_dict(), "sizes_angstrom": list(sizes), "walls_angstrom": list(walls),
                  "temperatures_k": list(temps), "n_points": spec.n_points, "d100_angstrom": spec.d100_angstrom,
                  "order": "temperature slowest, then wall, size fastest"},
        "pores": [_pore(p, target) for p in result.done],
        "complete": result.complete,
        "stopped": result.stopped,
        "pores_requested": len(result.points),
        "pores_from_cache": result.from_cache,
        "ran_on": result.where,
        "seconds": round(result.seconds, 3),
    }
    if target is not None:
        unit = "relative" if target.relative else "pa"        # the window's unit names its keys
        out["target"] = {"kind": target.kind, "description": target.description, f"low_{unit}": target.low_pa,
                         f"high_{unit}": target.high_pa if target.high_pa != float("inf") else None,
                         "threshold": target.threshold, "layer": target.layer}
    return out


def _g(v) -> str:
    return "" if v is None else f"{v:.10g}" if isinstance(v, float) else str(v)


def sweep_csv(result: SweepResult) -> str:
    """One row per step of every computed pore (`CSV_COLUMNS`; units in the names, pressures in Pa). A sweep
    that was stopped says so in a first comment line ('# stopped: …'), so a partial file is never mistaken
    for a whole one."""
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    if result.stopped:
        out.write(f"# stopped: {len(result.done)} of {len(result.points)} pores computed\n")
    w.writerow(CSV_COLUMNS)
    for p in result.done:
        head = [_g(p["size_angstrom"]), _g(p["wall_angstrom"]), _g(p["temperature_k"]), p["site_model"]]
        steps = p.get("steps") or []
        if not steps:
            w.writerow(head + [""] * (len(CSV_COLUMNS) - len(head) - 1) + [p.get("error", "")])
        for i, (s, fills) in enumerate(zip(steps, p.get("step_fills", ())), 1):
            where = "; ".join(f"{f['where']} ({f['sites']:g})" for f in s["filling"])
            w.writerow(head + [str(i), s["kind"], fills, where, _g(s["mu_k"]), _g(s["pressure_pa"]),
                               _g(s["relative_pressure"]), _g(s["added_per_nm"]),
                               _g(s["adsorption_jump_pressure_pa"]), _g(s["desorption_jump_pressure_pa"]),
                               s["identity"], ""])
    return out.getvalue()
