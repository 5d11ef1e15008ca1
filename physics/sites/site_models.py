"""Site models: how a lattice site's free energy f_i comes from the geometry stage at a temperature.

Energy frame (every model states its values in it): f_i = −kT ln[Z_i / (v/λ³)], with Z_i the one-atom
partition function of site i's cell (one lattice slice of thickness ℓ along the axis), v = A_cell·ℓ the cell
volume and λ the thermal wavelength — the free energy of an atom held in the cell *relative to a free ideal-gas
atom in the same volume*. The pressure scale of `porefill.physics.lattice_gas.bond` is written in the same frame, so
N/L → (p/kT) Σ_i A_cell e^{−f_i/kT} at low pressure whatever the model.

- ``classical``: Z_i = (ℓ/λ³)∫_cell e^{−V/kT} dA, so f_i = −kT ln[(1/A_cell)∫_cell e^{−V/kT} dA], the integral
  over the site's own cell (`porefill.physics.sites.cells`, converged), A_cell the lattice's nominal cell area.
- ``quantum``: the exact one-atom states of the cross-section (`porefill.physics.sites.quantum`) for the first
  row's sites, and those of the region inside it for the others (`porefill.physics.sites.inner_states`), each
  state shared among the sites by its probability there (`porefill.physics.sites.state_sites`):
  Z_i = (ℓ/λ) Σ_n s_{n,i} e^{−E_n/kT}, so f_i = −kT ln(λ² Σ_n s_{n,i} e^{−E_n/kT}/A_cell).

A model is a function ``model(geometry, *, temperature_k) -> (N,) K`` over the geometry stage's candidate
sites (+inf for a site that cannot hold an atom); it gets the adsorbate (mass, ħ²/mk) from
``geometry.adsorbate``.
"""
from __future__ import annotations

from typing import Callable

import numpy as np

from porefill.physics.choices import SITE_MODELS

__all__ = ["SITE_MODEL_NAMES", "QUANTUM_BY_DEFAULT", "default_site_model", "site_model",
           "classical_site_free_energy"]

# The light adsorbates whose thermal wavelength at their working temperatures is comparable to a lattice
# cell (helium-4 at 1.5 K: λ = 7.1 Å against 3.75 Å cells): classical cell averages put their first layers
# decades too low in pressure, so the exact one-atom states are the default.
QUANTUM_BY_DEFAULT = ("helium-4", "hydrogen", "neon")


def classical_site_free_energy(geometry, *, temperature_k: float) -> np.ndarray:
    """f_i = −kT ln[(1/A_cell)∫_cell exp(−V/kT) dA] (K), over each site's own cell (`porefill.physics.sites.cells`)."""
    return geometry.cells.free_energies(temperature_k, geometry.candidates.cell_area_angstrom2)


def _quantum(geometry, *, temperature_k: float) -> np.ndarray:
    from porefill.physics.sites.state_sites import quantum_site_free_energy      # sparse eigensolver: imported when asked for
    return quantum_site_free_energy(geometry, temperature_k=temperature_k)


_MODELS: dict[str, Callable] = {"classical": classical_site_free_energy, "quantum": _quantum}
SITE_MODEL_NAMES = SITE_MODELS       # porefill.physics.choices: the one list every edge shows
assert set(_MODELS) == set(SITE_MODELS)


def default_site_model(adsorbate: str) -> str:
    """The site model a scenario uses when it names none: "quantum" for `QUANTUM_BY_DEFAULT`, else "classical"."""
    return "quantum" if adsorbate in QUANTUM_BY_DEFAULT else "classical"


def site_model(name: str) -> Callable:
    try:
        return _MODELS[name]
    except KeyError:
        raise ValueError(f"unknown site model {name!r}; known: {', '.join(_MODELS)}") from None
