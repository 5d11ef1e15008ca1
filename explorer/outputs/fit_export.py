"""A fit as CSV files a spreadsheet opens as one table each (used by `porefill fit --csv` and the dashboard).

- ``NAME.csv`` (`points_csv`): one row per measured point with every term of its residual, so each residual
  can be recomputed from the row alone; ``#`` lines above the table give the residual's definition and name the
  other two files.
- ``NAME-parameters.csv`` (`parameters_csv`): the fitted parameters (value, standard error, unit, bounds) and
  the goodness-of-fit statistics, one row each, with a label that says what each is.
- ``NAME-model.csv`` (`model_csv`): the fitted model along each run's pressure range, for drawing.

Residuals are measured − model everywhere (the residual plot's sign; `porefill.physics.fitting.solve.RunResidual`).
"""
from __future__ import annotations

import csv
import io
import math
from pathlib import Path

from porefill.explorer.outputs.formatting import spreadsheet_safe

__all__ = ["STATISTIC_LABELS", "statistic_label", "PARAMETER_LABELS", "parameter_label", "POINT_COLUMNS", "RESIDUAL_DEFINITION", "points_csv",
           "parameters_csv", "model_csv", "companion_paths"]

# statistic key (`FitResult.statistics`): (label shown to people, what it means)
STATISTIC_LABELS = {
    "chi2": ("χ²", "sum of the squared weighted residuals"),
    "reduced_chi2": ("reduced χ²", "χ² per degree of freedom: about 1 when the scatter matches the assumed noise"),
    "rms_normalised": ("RMS weighted residual", "root-mean-square of the weighted residuals of the points with "
                       "pressure"),
    "r_squared": ("R²", "coefficient of determination of the weighted fit (points with pressure)"),
    "points": ("points with pressure", "measured points compared at their recorded pressure"),
    "coverage_points": ("points at equal coverage", "points without pressure compared at equal coverage"),
    "parameters": ("free parameters", "number of fitted parameters"),
    "degrees_of_freedom": ("degrees of freedom", "points with pressure minus free parameters"),
    "evaluations": ("model evaluations", "isotherms computed by the search"),
    "noise_relative_assumed": ("assumed relative noise", "σ of an amount as a fraction of the amount"),
    "noise_relative_estimated": ("estimated relative noise", "assumed relative noise × √(reduced χ²)"),
}


def statistic_label(key: str) -> str:
    """The label a person reads for a fit statistic's machine name (``reduced_chi2`` → "reduced χ²")."""
    return STATISTIC_LABELS.get(key, (key.replace("_", " "), ""))[0]


# fitted parameter (`porefill.physics.fitting.params.FREE_PARAMETERS`): (label shown to people, what it means);
# the size's words depend on the pore's shape (`parameter_label`)
PARAMETER_LABELS = {
    "wall-strength": ("wall-strength factor", "multiplies the built-in adsorbate–wall ε (the catalog pair's, with "
                      "its calibrated factor if it has one): 1 keeps it, 1.2 makes the wall 20 % stronger"),
    "size": ("pore size", "hexagon side, cylinder radius or slit width"),
    "pore-volume": ("pore volume", "specific pore volume of the sample, per gram"),
    "wall": ("wall thickness", "wall between neighbouring pores"),
    "a0": ("array spacing a₀", "spacing of the hexagonal array: a₀ = 2·d₁₀₀/√3 = √3·side + wall"),
}
_SIZE_WORDS = {"hexagon": ("side length", "side of the hexagonal pore (centre to corner)"),
               "cylinder": ("radius", "radius of the cylindrical pore (the diameter is twice it)"),
               "slit": ("width", "width of the slit pore")}


def parameter_label(name: str, shape: str | None = None) -> tuple[str, str]:
    """(label, meaning) a person reads for a fitted parameter's machine name; the size is called what it is
    for ``shape`` (hexagon: side length, cylinder: radius, slit: width)."""
    if name == "size" and shape in _SIZE_WORDS:
        return _SIZE_WORDS[shape]
    return PARAMETER_LABELS.get(name, (name.replace("-", " "), ""))


# CSV column: (`porefill.physics.fitting.solve.residual_table` key, what it holds)
POINT_COLUMNS = {
    "run": ("run", "run name"),
    "source": ("source", "file the run came from"),
    "row": ("row", "row in that file"),
    "leg": ("leg", "adsorption or desorption"),
    "model_branch": ("branch", "model branch the leg is compared with"),
    "temperature_K": ("temperature_k", "temperature, K"),
    "compared": ("compared", "at pressure, or at equal coverage (no pressure recorded)"),
    "pressure": ("pressure", "recorded pressure in pressure_unit"),
    "pressure_unit": ("pressure_unit", "unit of pressure"),
    "pressure_Pa": ("pressure_pa", "recorded pressure, Pa"),
    "measured_amount": ("amount", "measured amount in amount_unit"),
    "model_amount": ("model", "model amount at the recorded pressure (equal coverage: the amount the model "
                     "reaches between the neighbouring pressures)"),
    "amount_unit": ("amount_unit", "unit of the amounts"),
    "sigma_amount": ("sigma", "noise σ of the amount used, in amount_unit"),
    "sigma_ln_pressure": ("sigma_ln_pressure", "noise σ of ln p used (0: amounts compared only)"),
    "nearest_model_pressure_Pa": ("nearest_pressure_pa", "pressure of the model point nearest the measured one, Pa"),
    "nearest_model_amount": ("nearest_model", "amount of that model point, in amount_unit"),
    "pressure_term": ("pressure_term", "ln(pressure_Pa / nearest_model_pressure_Pa) / sigma_ln_pressure"),
    "amount_term": ("amount_term", "(measured_amount − nearest_model_amount) / sigma_amount"),
    "residual": ("residual", "weighted residual, measured − model"),
}

RESIDUAL_DEFINITION = (
    "residual = s × √(pressure_term² + amount_term²) with s the sign of (measured_amount − model_amount): "
    "measured − model as the residual plot shows it",
    "amount_term = (measured_amount − nearest_model_amount) / sigma_amount",
    "pressure_term = ln(pressure_Pa / nearest_model_pressure_Pa) / sigma_ln_pressure; 0 where sigma_ln_pressure "
    "is 0 (then the nearest model point is the one at the recorded pressure) or the point is compared at equal "
    "coverage",
    "the nearest model point is the point of the model curve closest to the measured one in "
    "(ln p / sigma_ln_pressure; amount / sigma_amount): a point beside a step is compared across it",
    "χ² = the sum of residual² over every row",
)


def companion_paths(path) -> tuple[Path, Path]:
    """The parameters and model files written beside the points file ``path``: NAME-parameters.csv and
    NAME-model.csv (same folder, same suffix)."""
    path = Path(path)
    suffix = path.suffix or ".csv"
    return (path.with_name(f"{path.stem}-parameters{suffix}"), path.with_name(f"{path.stem}-model{suffix}"))


def _cell(value):
    """Numbers to the last bit (repr), None and non-finite numbers as empty cells, text spreadsheet-safe."""
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return spreadsheet_safe(value)


def _no_commas(text: str) -> str:
    return text.replace(",", ";")          # a # line stays one cell when a spreadsheet opens the file


def points_csv(result, *, name: str = "porefill-fit.csv") -> str:
    """The measured points against the fitted model, one row each (``POINT_COLUMNS``), under ``#`` lines
    with the residual's definition; ``name`` is the points file's name, from which the other two files'
    names follow (`companion_paths`)."""
    from porefill.physics.fitting.solve import residual_table

    params, model = companion_paths(name)
    out = io.StringIO()
    lines = ["porefill fit: measured points against the fitted model; one row per point",
             *RESIDUAL_DEFINITION,
             f"fitted parameters and statistics: {params.name}; the fitted model curves: {model.name}"]
    out.writelines(f"# {_no_commas(line)}\n" for line in lines)
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(POINT_COLUMNS)
    for row in residual_table(result):
        writer.writerow([_cell(row[key]) for key, _ in POINT_COLUMNS.values()])
    return out.getvalue()


def parameters_csv(result) -> str:
    """One row per fitted parameter, then one per statistic: machine name, label, value, standard error,
    unit, bounds, role (free / statistic) and what it means."""
    from porefill.physics.fitting.solve import PARAMETER_UNITS

    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["quantity", "label", "value", "standard_error", "unit", "lower_bound", "upper_bound", "role",
                     "meaning"])
    for name, (value, err) in result.parameters.items():
        lo, hi = result.bounds[name]
        label, meaning = parameter_label(name, result.scenario.shape)
        writer.writerow([name, label, _cell(float(value)), _cell(float(err)), PARAMETER_UNITS.get(name, ""),
                         _cell(float(lo)), _cell(float(hi)), "fitted parameter", meaning])
    for key, value in result.statistics().items():
        label, meaning = STATISTIC_LABELS.get(key, (statistic_label(key), ""))
        writer.writerow([key, label, _cell(float(value) if isinstance(value, float) else value), "", "", "", "",
                         "statistic", meaning])
    return out.getvalue()


def model_csv(result) -> str:
    """The fitted model along each run's pressure range (`porefill.physics.fitting.solve.fitted_curves`)."""
    from porefill.physics.fitting.solve import fitted_curves

    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["run", "source", "leg", "model_branch", "temperature_K", "pressure", "pressure_unit",
                     "pressure_Pa", "model_amount", "amount_unit"])
    for curve in fitted_curves(result):
        run = curve.run
        for p, pa, a in zip(curve.pressure, curve.pressure_pa, curve.amount):
            writer.writerow([_cell(run.name), _cell(run.source), run.leg, curve.branch, _cell(run.temperature_k),
                             _cell(float(p)), run.pressure_unit, _cell(float(pa)), _cell(float(a)), run.amount_unit])
    return out.getvalue()
