"""A pore-size distribution as JSON and CSV (used by `porefill fit --distribution` and the dashboard).

JSON (`distribution_json`): ``distribution`` holds one list per quantity, one entry per kernel size
(``size_angstrom``, ``diameter_angstrom``, ``pore_volume_cm3_g``, ``stderr_cm3_g``, ``cumulative_cm3_g``,
``density_cm3_g_per_angstrom``); ``summary`` the total pore volume and the mean, median, mode and width of the
size (Å) with their bootstrap errors; ``regularisation`` the rule and strength; ``statistics``; ``single_size``
(the best one size, to compare); ``kernel`` its specification; ``notes``; ``runs``; and, when asked,
``carried`` (the prediction for another gas: its isotherm and the pressure band of each layer).

CSV (`distribution_csv`): the per-size table, ``#`` lines above it saying what the kernel was and what each
column holds.
"""
from __future__ import annotations

import csv
import io
import math

import numpy as np

__all__ = ["distribution_json", "carried_json", "distribution_csv", "DISTRIBUTION_COLUMNS"]

DISTRIBUTION_COLUMNS = {
    "size_angstrom": "kernel pore size, Å (the shape's own size: hexagon side, cylinder radius, slit width)",
    "diameter_angstrom": "equivalent diameter, Å (cylinder 2r; hexagon: circle of equal area; slit: width)",
    "pore_volume_cm3_g": "specific pore volume held by pores of this size, cm³/g",
    "stderr_cm3_g": "bootstrap standard deviation of that volume, cm³/g",
    "cumulative_cm3_g": "pore volume in this size and all smaller, cm³/g",
    "density_cm3_g_per_angstrom": "pore volume per Å of size (volume over the bin's width), cm³/g/Å",
}


def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None


def _g(v) -> str:
    return "n/a" if v is None else f"{v:.6g}"


def _list(values) -> list:
    return [_num(v) for v in np.asarray(values, float)]


def distribution_json(dist, carried=None) -> dict:
    """Plain JSON types (module docstring)."""
    k = dist.kernel
    table = {"size_angstrom": _list(dist.sizes_angstrom), "diameter_angstrom": _list(dist.diameters_angstrom),
             "pore_volume_cm3_g": _list(dist.pore_volume_cm3_g), "stderr_cm3_g": _list(dist.stderr_cm3_g),
             "cumulative_cm3_g": _list(dist.cumulative_cm3_g),
             "density_cm3_g_per_angstrom": _list(dist.density_cm3_g_per_angstrom())}
    out = {
        "distribution": table,
        "summary": {key: {"value": _num(v), "stderr": _num(dist.summary_stderr.get(key, float("nan"))),
                          "unit": "cm3/g" if key == "total_cm3_g" else "Å"} for key, v in dist.summary.items()},
        "regularisation": {"rule": "generalised cross-validation (GCV) over a log grid of λ",
                           "penalty": "second differences of the pore volume over the size grid",
                           "lambda": _num(dist.lam), "lambdas": _list(dist.lambdas), "gcv": _list(dist.gcv)},
        "statistics": {"chi2": _num(dist.chi2), "points": int(dist.points), "effective_parameters": _num(dist.dof),
                       "reduced_chi2": _num(dist.reduced_chi2), "points_left_out": int(dist.left_out)},
        "single_size": {key: _num(v) for key, v in dist.single_size.items()},
        "kernel": {**k.spec.to_dict(), "spacing_angstrom": _num(k.spec.spacing_angstrom),
                   "unusable_sizes": k.errors()},
        "runs": [{"name": f["run"].name, "source": f["run"].source, "leg": f["run"].leg, "branch": f["branch"],
                  "points": int(len(f["points"])), "amount_unit": f["run"].amount_unit,
                  "rms_weighted_residual": _num(np.sqrt(np.mean(f["residual"] ** 2))) if len(f["points"]) else None}
                 for f in dist.fitted],
        "notes": list(dist.notes),
    }
    if carried is not None:
        out["carried"] = carried_json(carried)
    return out


def carried_json(carried) -> dict:
    base = carried.kernel.spec.base
    return {"adsorbate": base.adsorbate, "temperature_k": base.temperature_k, "site_model": base.site_model_used,
            "saturation_pressure_pa": _num(carried.saturation_pressure_pa),
            "pressure_pa": _list(carried.pressure_pa),
            "amount_mmol_g": {b: _list(v) for b, v in carried.amount_mmol_g.items()},
            "layers": [dict(entry) for entry in carried.layers],
            "unusable_sizes": carried.kernel.errors()}


def distribution_csv(dist) -> str:
    """The per-size table as CSV text, with ``#`` lines saying what it is."""
    data = distribution_json(dist)
    k = dist.kernel.spec
    buf = io.StringIO()
    buf.write(f"# pore-size distribution of {k.base.adsorbate} at {k.base.temperature_k:g} K in {k.base.shape} "
              f"pores ({k.base.site_model_used} sites), {len(k.sizes_angstrom)} kernel sizes\n")
    for name, meaning in DISTRIBUTION_COLUMNS.items():
        buf.write(f"# {name}: {meaning}\n")
    s = data["summary"]
    buf.write(f"# total pore volume {_g(s['total_cm3_g']['value'])} cm3/g; mode {_g(s['mode']['value'])} Å; "
              f"mean {_g(s['mean']['value'])} Å; width (standard deviation) {_g(s['width']['value'])} Å\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(list(DISTRIBUTION_COLUMNS))
    table = data["distribution"]
    for row in zip(*(table[c] for c in DISTRIBUTION_COLUMNS)):
        w.writerow(["" if v is None else f"{v:.9g}" for v in row])
    return buf.getvalue()
