"""porefill's physics: wall potentials, lattice sites and the mean-field lattice-gas model of adsorption in
one pore, substances and units, measured data and fits, sweeps.

The public face is this module: ``from porefill.physics import Scenario, compute_isotherm``. Names load
on first use (PEP 562), so importing one room never pays for the others. The rooms behind it (`pore`,
`sites`, `lattice_gas`, `substances`, `fitting`) are the implementation.
"""
from __future__ import annotations

import importlib

# name -> module that defines it
_FACE = {
    # inputs, limits and choices
    "Scenario": "scenario", "clear_caches": "caching",
    "SHAPES": "choices", "PORE_ENDS": "choices", "SITE_MODELS": "choices", "BRANCHES": "choices",
    "DEFAULT_POINTS": "choices",
    # the pore and its wall
    "make_pore": "pore.geometry", "HexagonPore": "pore.geometry", "CylinderPore": "pore.geometry",
    "SlitPore": "pore.geometry", "wall_potential": "pore.wall_potential", "potential_map": "pore.wall_potential",
    "deepest_minimum": "pore.wall_potential", "line_cuts": "pore.line_cuts",
    # sites and the lattice gas
    "solve_states": "sites.quantum", "cached_states": "sites.quantum", "states_numbers": "sites.state_sites",
    "geometry_stage": "lattice_gas.stages", "thermal_stage": "lattice_gas.stages",
    "compute_isotherm": "lattice_gas.adsorption", "Isotherm": "lattice_gas.adsorption",
    "measured_branches": "lattice_gas.branches",
    # substances and units
    "ADSORBATES": "substances.materials", "SOLIDS": "substances.materials",
    "saturated_vapour_pressure": "substances.vapour_pressure",
    # measured data and fits
    "MeasuredRun": "fitting.measured", "Sample": "fitting.measured", "FitRequest": "fitting.solve",
    "FitResult": "fitting.solve", "fit": "fitting.solve",
    # sweeps
    "SweepSpec": "sweep", "Target": "sweep", "sweep_point": "sweep",
}

__all__ = sorted(_FACE)


def __getattr__(name: str):
    try:
        module = _FACE[name]
    except KeyError:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}") from None
    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
