"""Measured runs on the model isotherm's axes: what the overlay and residual plots draw (no Panel here).

Axes (``AXES``): log pressure (Pa), p/p0 (linear: what nitrogen users read), chemical potential μ (K), and
coverage — amount on x, pressure on y — where dosed points without a usable pressure still have a place (at
the foot of the plot). Amounts are the model's: per nm of pore (slit: per nm²), from the sample description
(`porefill.physics.fitting.measured.amount_to_model`); the view multiplies them by `display_scale` to draw
everything in a file's own unit (cm³(STP)/g, mmol/g, ...) instead. Each leg is compared with the branch it was measured on (adsorption
leg → adsorption branch, desorption leg → desorption branch). Residuals are measured − model in amount on the
pressure axes, and log10(p_measured / p_model) at equal coverage on the coverage axis.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from porefill.physics.choices import AXES as CHOICE_AXES
from porefill.physics.fitting.measured import MeasuredRun, Sample, amount_to_model
from porefill.physics.substances.units import from_atoms_per_angstrom

__all__ = ["AXES", "RunOverlay", "model_curves", "overlay_run", "display_unit", "display_scale", "PER_NM"]

PER_NM = "per nm"

AXES = CHOICE_AXES                 # porefill.physics.choices


@dataclass(frozen=True, eq=False)
class RunOverlay:
    """One run on an axis: points with a place (x, y), the rows they came from, residuals, and a note."""

    run: MeasuredRun
    branch: str
    x: np.ndarray
    y: np.ndarray
    rows: np.ndarray
    residual: np.ndarray
    without_pressure: int
    note: str


def display_unit(runs) -> str:
    """The amount unit the overlay shows by default: the runs' own when they all share one, else
    `PER_NM` (the model's coverage per nm of pore)."""
    units = {r.amount_unit for r in runs}
    return units.pop() if len(units) == 1 else PER_NM


def display_scale(iso, unit: str, sample: Sample) -> float:
    """Amount in ``unit`` per (amount per nm of pore): the factor that draws the model and the overlay in a
    file's own unit (`porefill.physics.fitting.model.unit_factor`: per gram through the sample's pore
    volume, dosed amounts through its mass too). ValueError names the missing sample value."""
    if unit == PER_NM:
        return 1.0
    from porefill.physics.fitting.model import PER_GRAM_UNITS, unit_factor

    probe = MeasuredRun("unit", "unit", [np.nan], "Pa", [1.0], unit)
    volume = sample.pore_volume_cm3_g
    if unit in PER_GRAM_UNITS and volume is None:
        raise ValueError(f"amounts in {unit} need the sample's pore volume (cm³/g)")
    per_angstrom = unit_factor(probe, iso.amount_basis(), sample, volume or 1.0)
    return float(per_angstrom) / 10.0          # per nm = 10 × per Å


def _x_of(iso, pressure_pa: np.ndarray, axis: str) -> np.ndarray:
    scale = iso.stage.scale
    if axis == "pressure":
        return pressure_pa
    if axis == "relative-pressure":
        return pressure_pa / scale.saturation_pressure_pa
    if axis == "chemical-potential":
        with np.errstate(divide="ignore", invalid="ignore"):
            return scale.mu_k(pressure_pa)
    raise ValueError(f"axis must be one of {', '.join(AXES)}; got {axis!r}")


def model_curves(iso, axis: str) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """{branch: (x, y)} of the model on ``axis`` (coverage axis: x amount per nm, y pressure in Pa)."""
    p = iso.pressure_pa
    out = {}
    for leg in ("adsorption", "desorption"):
        n = iso.per_nm(iso.measured_branch(leg))
        out[leg] = (n, p) if axis == "coverage" else (_x_of(iso, p, axis), n)
    return out


def overlay_run(iso, run: MeasuredRun, sample: Sample, axis: str) -> RunOverlay:
    """Place ``run`` on ``axis`` against the model isotherm ``iso``; ValueError names what is missing
    (e.g. the pore volume for amounts per gram)."""
    branch = iso.measured_branch("desorption" if run.leg == "desorption" else "adsorption")
    per_nm = from_atoms_per_angstrom(amount_to_model(run, iso.basis, sample), "per nm", iso.basis)
    p0 = iso.stage.scale.saturation_pressure_pa
    pressure = run.pressure_pa(p0)
    has_p = np.isfinite(pressure)
    model_p, model_n = iso.pressure_pa, iso.per_nm(branch)
    notes = []
    t_model = iso.stage.temperature_k
    if run.temperature_k is not None and abs(run.temperature_k - t_model) > 0.01 * t_model:
        notes.append(f"measured at {run.temperature_k:g} K, model at {t_model:g} K")
    if axis == "coverage":
        # p(N) along the branch: the branch's amount never decreases with μ, so it inverts by interpolation
        n_sorted = np.maximum.accumulate(model_n)
        with np.errstate(divide="ignore"):
            log_model = np.interp(per_nm, n_sorted, np.log10(model_p), left=np.nan, right=np.nan)
            residual = np.where(has_p, np.log10(np.where(has_p, pressure, 1.0)) - log_model, np.nan)
        y = np.where(has_p, pressure, float(model_p.min()))            # no pressure: at the foot of the plot
        return RunOverlay(run, branch, per_nm, y, run.rows, residual, int((~has_p).sum()), "; ".join(notes))
    x = _x_of(iso, np.where(has_p, pressure, np.nan), axis)
    with np.errstate(divide="ignore", invalid="ignore"):
        model_at = np.interp(np.log(np.where(has_p, pressure, 1.0)), np.log(model_p), model_n,
                             left=np.nan, right=np.nan)
    residual = np.where(has_p, per_nm - model_at, np.nan)
    if (~has_p).any():
        notes.append(f"{int((~has_p).sum())} points without a usable pressure: see the coverage axis")
    return RunOverlay(run, branch, x[has_p], per_nm[has_p], run.rows[has_p], residual[has_p],
                      int((~has_p).sum()), "; ".join(notes))
