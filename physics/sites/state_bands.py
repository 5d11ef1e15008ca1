"""Where the one-atom states live: bands of near-degenerate states, their sites, degeneracies and splittings.

A band is a run of states closer than the clustering gap of `porefill.physics.sites.quantum` (0.02 kT, at least 0.02 K);
it is named after the lattice orbit that holds most of its probability (`porefill.physics.sites.state_sites.state_homes`) —
the same rule that gives the band's Boltzmann weight to those sites in the quantum site model.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from porefill.physics.sites.quantum import _clusters
from porefill.physics.sites.state_sites import state_homes

__all__ = ["Band", "state_bands", "band_density", "site_labels"]


@dataclass(frozen=True)
class Band:
    """One band: states ``first``..``first + degeneracy − 1``; energies in K."""

    first: int
    degeneracy: int
    energy_k: float                  # mean of the band's levels
    excitation_k: float              # above the ground state
    splitting_k: float               # highest minus lowest level of the band
    where: str                       # the sites that hold it (lattice orbit label)
    weight: float                    # share of the one-atom Boltzmann weight at the temperature

    def to_dict(self) -> dict:
        return asdict(self)


def site_labels(stage) -> list[str]:
    """Names of a geometry stage's candidate sites as the thermal stage ``stage`` calls them (corner, face,
    ring k, centre; rings counted from the outermost kept row); sites it does not keep are "unfilled"."""
    from scipy.spatial import cKDTree

    cand = stage.geometry.candidates
    dist, index = cKDTree(np.column_stack([stage.lattice.x, stage.lattice.y])).query(np.column_stack([cand.x, cand.y]))
    return [stage.lattice.label(int(j)) if d < 1e-9 else "unfilled" for d, j in zip(dist, index)]


def state_bands(states, geometry, temperature_k: float, *, labels: list[str] | None = None) -> tuple[Band, ...]:
    """The bands of ``states`` (a `porefill.physics.sites.quantum.CrossSectionStates`) on a geometry stage's lattice;
    ``labels`` names its candidate sites (default: the geometry's own labels; see `site_labels`)."""
    kt = float(temperature_k)
    lat = geometry.candidates
    home = state_homes(states, lat.x, lat.y, geometry.orbit, kt)
    band = _clusters(states.energies_k, kt)
    w = states.weights(kt)
    first_of_orbit = {}
    for i, o in enumerate(geometry.orbit):
        first_of_orbit.setdefault(int(o), i)
    def name(i: int) -> str:
        return lat.label(i) if labels is None else labels[i]

    out = []
    e0 = float(states.energies_k[0])
    for b in range(int(band[-1]) + 1):
        idx = np.flatnonzero(band == b)
        e = states.energies_k[idx]
        out.append(Band(int(idx[0]), int(idx.size), float(e.mean()), float(e.mean() - e0),
                        float(e.max() - e.min()), name(first_of_orbit[int(home[idx[0]])]),
                        float(w[idx].sum())))
    return tuple(out)


def band_density(states, band: Band) -> np.ndarray:
    """(P,) probability density of a band (its states summed, normalised to one state), per Å²: a
    degenerate band summed over its members has the pore's full symmetry."""
    if band.first + band.degeneracy > states.vectors.shape[1]:
        raise ValueError(f"the band at +{band.excitation_k:.2f} K lies above the states whose vectors are kept "
                         f"({states.vectors.shape[1]})")
    prob = np.abs(states.vectors[:, band.first:band.first + band.degeneracy]) ** 2
    return prob.sum(axis=1) / band.degeneracy / states.point_area_angstrom2
