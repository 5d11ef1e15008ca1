"""One set of limits on what a calculation may ask for, checked once here and used by the scenario (so by
scenario files, the command line and the dashboard alike).

The limits keep every request to something a laptop finishes in reasonable time and something the model
means physically; each message names the quantity, the value asked for and what is accepted.
"""
from __future__ import annotations

import math

import numpy as np

from porefill.physics.choices import SIZE_NAMES

__all__ = ["SIZE_RANGE_ANGSTROM", "MAX_WALL_ANGSTROM", "SPACING_RANGE_ANGSTROM", "MAX_SITES", "POINTS_RANGE",
           "GRID_RANGE", "check_number", "minimum_wall_angstrom", "check_geometry", "check_points",
           "check_grid", "check_pressure_range", "estimated_sites"]

# pore size (hexagon side, cylinder radius, slit width), Å: from one atom's room to what the site budget allows
SIZE_RANGE_ANGSTROM = {"hexagon": (2.0, 200.0), "cylinder": (2.0, 300.0), "slit": (2.0, 1000.0)}
MAX_WALL_ANGSTROM = 200.0
SPACING_RANGE_ANGSTROM = (2.0, 10.0)
MAX_SITES = 15_000            # lattice sites in one cross-section (slit: rows); ~30 s of solving at most
# Physical bounds on a scenario's numbers (common practice, no source): wide enough for any gas and solid a
# user could mean, narrow enough that nothing absurd reaches the solvers (1e300 K once ran for minutes).
# (low, high, low is open, unit)
SCENARIO_NUMBER_RANGES = {
    "temperature_k": (0.0, 1000.0, True, "K"),
    "pair_epsilon_k": (0.0, 10_000.0, True, "K"),
    "pair_sigma_angstrom": (0.5, 20.0, False, "Å"),
    "solid_density_per_a3": (0.0, 1.0, True, "Å⁻³"),
    "pore_volume_cm3_g": (0.0, 20.0, True, "cm³/g"),
    "bond_energy_k": (0.0, 10_000.0, False, "K"),
}
POINTS_RANGE = (3, 5000)      # chemical potentials along an isotherm
GRID_RANGE = (3, 2000)        # potential map n x n (an odd n >= 3 holds the centre)


def check_number(name: str, value, *, low: float | None = None, high: float | None = None,
                 low_open: bool = False, unit: str = "") -> float:
    """``value`` as a float if it is a finite real number (not a bool) within [low, high]; else ValueError."""
    unit_text = f" {unit}" if unit else ""
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise ValueError(f"{name} must be a number{unit_text}; got {value!r}")
    try:
        v = float(value)
    except OverflowError:                 # a whole number with hundreds of digits
        v = math.inf if value > 0 else -math.inf
    if not math.isfinite(v):
        shown = repr(value) if len(repr(value)) <= 40 else f"a number of {len(str(value))} characters"
        raise ValueError(f"{name} must be finite; got {shown}")
    below = low is not None and (v <= low if low_open else v < low)
    if below or (high is not None and v > high):
        lo = "" if low is None else (f"> {low:g}" if low_open else f">= {low:g}")
        hi = "" if high is None else f"<= {high:g}"
        accepted = " and ".join(t for t in (lo, hi) if t)
        raise ValueError(f"{name} must be {accepted}{unit_text}; got {value!r}")
    return v


def minimum_wall_angstrom(solid_density_per_a3: float) -> float:
    """Thinnest wall the solid can physically form: one mean spacing of its force centres, ρ^(−1/3) (Å)."""
    return float(solid_density_per_a3) ** (-1.0 / 3.0)


def estimated_sites(shape: str, size_angstrom: float, spacing_angstrom: float) -> float:
    """Sites of the cross-section (slit: rows) before they are built, from area over cell area."""
    row = spacing_angstrom * math.sqrt(3.0) / 2.0
    if shape == "slit":
        return size_angstrom / row
    area = 1.5 * math.sqrt(3.0) * size_angstrom**2 if shape == "hexagon" else math.pi * size_angstrom**2
    return area / (row * spacing_angstrom)


def check_geometry(shape: str, size_angstrom, wall_angstrom, *, solid_density_per_a3: float,
                   spacing_angstrom: float | None) -> None:
    """Size, wall and lattice spacing within the limits above; ValueError naming the one that is not."""
    lo, hi = SIZE_RANGE_ANGSTROM[shape]
    what = SIZE_NAMES[shape]
    size = check_number(f"{shape} {what} (size_angstrom)", size_angstrom, low=lo, high=hi, unit="Å")
    if wall_angstrom is not None and shape != "cylinder":
        w_min = minimum_wall_angstrom(solid_density_per_a3)
        check_number("wall thickness (wall_angstrom)", wall_angstrom, unit="Å")
        if not (w_min <= wall_angstrom <= MAX_WALL_ANGSTROM):
            raise ValueError(f"wall thickness (wall_angstrom) must be between {w_min:.2f} Å (one spacing of the "
                             f"solid's force centres, ρ^(−1/3)) and {MAX_WALL_ANGSTROM:g} Å; got {wall_angstrom!r}; "
                             "for a pore in an unbounded solid leave the wall out (isolated)")
    if spacing_angstrom is not None:
        lo_s, hi_s = SPACING_RANGE_ANGSTROM
        spacing = check_number("lattice spacing (lattice_spacing_angstrom)", spacing_angstrom, low=lo_s,
                               high=hi_s, unit="Å")
        sites = estimated_sites(shape, size, spacing)
        if sites > MAX_SITES:
            raise ValueError(f"a {shape} of {what} {size:g} Å at lattice spacing {spacing:g} Å needs about "
                             f"{sites:,.0f} sites; the limit is {MAX_SITES:,} (choose a smaller pore or a "
                             "larger spacing)")


def check_points(n_points) -> int:
    lo, hi = POINTS_RANGE
    if isinstance(n_points, bool) or not isinstance(n_points, (int, np.integer)) or not lo <= n_points <= hi:
        raise ValueError(f"number of points must be a whole number from {lo} to {hi}; got {n_points!r}")
    return int(n_points)


def check_grid(n) -> int:
    lo, hi = GRID_RANGE
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not lo <= n <= hi:
        raise ValueError(f"grid size must be a whole number from {lo} to {hi}; got {n!r}")
    return int(n)


def check_pressure_range(low_pa, high_pa, *, saturation_pressure_pa: float,
                         allow_above_p0: bool = False) -> tuple[float, float]:
    """0 < low < high, finite, and high <= p0 unless ``allow_above_p0`` (the bulk would condense)."""
    low = check_number("low end of the pressure range", low_pa, low=0.0, low_open=True, unit="Pa")
    high = check_number("high end of the pressure range", high_pa, low=0.0, low_open=True, unit="Pa")
    if not low < high:
        raise ValueError(f"pressure range must have low < high; got {low_pa!r} to {high_pa!r} Pa")
    if high > saturation_pressure_pa * (1.0 + 1e-12) and not allow_above_p0:
        raise ValueError(f"pressure range reaches {high:.4g} Pa, above the saturated vapour pressure "
                         f"p0 = {saturation_pressure_pa:.4g} Pa where the bulk gas condenses; "
                         "lower it or allow pressures above p0 explicitly")
    return low, high
