"""What the dashboard's quantum view shows, computed in one worker job: states, bands, maps, both site models,
the shift of every step, and the energies per atom along the isotherm of the model in use.

No Panel or Bokeh here: the job runs in an isotherm worker process, which should not import the GUI.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from porefill.physics.choices import DEFAULT_POINTS
from scipy.spatial import cKDTree

__all__ = ["ComparisonSummary", "comparison_job", "IMAGE_PIXELS"]

IMAGE_PIXELS = 120           # side of the probability maps, pixels
MAP_BANDS = 6                # bands offered as maps besides the thermal density


@dataclass(frozen=True, eq=False)
class ComparisonSummary:
    """Plain results (arrays, floats, dicts) of `comparison_job`."""

    scenario: object
    model_in_use: str
    states: dict                     # the `porefill states` numbers (energies, ZPE, Henry constants, grid)
    bands: tuple                     # porefill.physics.sites.state_bands.Band
    images: dict                     # name -> (IMAGE_PIXELS, IMAGE_PIXELS) density per Å², NaN outside
    extent: tuple                    # x0, x1, y0, y1 of the images, Å
    curves: dict                     # model -> {"p": ..., "n": ...} equilibrium coverage per nm
    shifts: tuple                    # porefill.physics.lattice_gas.model_shift.StepShift, quantum against classical
    unmatched: tuple                 # (only classical, only quantum) step names
    energies: object                 # porefill.physics.lattice_gas.energies.IsothermEnergies of the model in use
    coverage_per_nm: np.ndarray      # along the energies' μ grid


def _image(points: np.ndarray, values: np.ndarray, spacing: float, extent: tuple) -> np.ndarray:
    x0, x1, y0, y1 = extent
    gx, gy = np.meshgrid(np.linspace(x0, x1, IMAGE_PIXELS), np.linspace(y0, y1, IMAGE_PIXELS))
    dist, idx = cKDTree(points).query(np.column_stack([gx.ravel(), gy.ravel()]))
    img = values[idx].astype(float)
    img[dist > 1.5 * spacing] = np.nan                 # outside the grid: inside the wall
    return img.reshape(gx.shape)


def comparison_job(scenario, n_points: int = DEFAULT_POINTS) -> ComparisonSummary:
    """Everything the quantum view draws for ``scenario`` (title and notes do not matter)."""
    from porefill.physics.lattice_gas.adsorption import compute_isotherm
    from porefill.physics.lattice_gas.energies import isotherm_energies
    from porefill.physics.lattice_gas.model_shift import step_shifts
    from porefill.physics.sites.quantum import cached_states
    from porefill.physics.sites.state_sites import states_numbers
    from porefill.physics.sites.state_bands import band_density, site_labels, state_bands

    sc = scenario.replace(title="", notes="")
    isotherms = {m: compute_isotherm(sc.replace(site_model=m), n_points=n_points) for m in ("classical", "quantum")}
    quantum = isotherms["quantum"]
    t = sc.temperature_k
    geo = quantum.stage.geometry
    states = cached_states(geo, t)
    bands = state_bands(states, geo, t, labels=site_labels(quantum.stage))
    x0, x1, y0, y1 = geo.pore.bounding_box()
    half = 0.5 * max(x1 - x0, y1 - y0)
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    extent = (cx - half, cx + half, cy - half, cy + half)
    images = {"thermal density": _image(states.points, states.thermal_density(t), states.spacing_angstrom, extent)}
    for b in bands[:MAP_BANDS]:
        name = f"band at +{b.excitation_k:.2f} K ({b.where}, ×{b.degeneracy})"
        images[name] = _image(states.points, band_density(states, b), states.spacing_angstrom, extent)
    curves = {m: {"p": iso.pressure_pa, "n": iso.per_nm("equilibrium")} for m, iso in isotherms.items()}
    shifts, only_c, only_q = step_shifts(isotherms["classical"], quantum)
    in_use = isotherms[sc.site_model_used]
    return ComparisonSummary(sc, sc.site_model_used, states_numbers(states, geo, t), bands, images, extent, curves,
                             shifts, (only_c, only_q), isotherm_energies(in_use, "equilibrium"),
                             in_use.per_nm("equilibrium"))
