"""The one-atom states given to the lattice's sites: the quantum site model's free energies.

The states of `porefill.physics.sites.quantum` belong to the whole cross-section; the lattice gas needs a free
energy per site. Each band of near-degenerate states is given to the symmetry orbits of sites: whole to the
wall orbit that holds most of it when it is bound in the first layer, shared by probability among the inner
orbits when it lies above (`state_shares`); each site's share of the semiclassical tail above the computed
states is taken over its own cell (`_site_tails`); `orbit_sources` says, per orbit, where its free energy came
from.
"""
from __future__ import annotations

import numpy as np
from scipy import sparse
from scipy.spatial import cKDTree

from porefill.physics.sites.quantum import CrossSectionStates, _clusters, cached_states, thermal_wavelength_angstrom

__all__ = ["state_homes", "state_shares", "geometry_shares", "assign_states", "first_row_orbits", "orbit_floors",
           "quantum_site_free_energy", "orbit_sources"]


def _orbit_probability(states: CrossSectionStates, site_x, site_y, orbit: np.ndarray) -> np.ndarray:
    """(orbits, K) each state's probability on each orbit's sites: its blocks of grid points summed by the
    site nearest them."""
    sites = np.column_stack([site_x, site_y])
    nearest = cKDTree(sites).query(states.home_points)[1]                   # (B,) site of each block of points
    n_orbits, n_blocks = int(orbit.max()) + 1, states.home_points.shape[0]
    by_orbit = sparse.csr_matrix((np.ones(n_blocks), (orbit[nearest], np.arange(n_blocks))),
                                 shape=(n_orbits, n_blocks))
    return np.asarray(by_orbit @ states.home_density, dtype=float)


def _band_probability(per_orbit: np.ndarray, band: np.ndarray) -> np.ndarray:
    """(orbits, bands) the probability of each band's states summed."""
    members = sparse.csr_matrix((np.ones(band.size), (np.arange(band.size), band)), shape=(band.size, band[-1] + 1))
    return np.asarray(per_orbit @ members)


def state_homes(states: CrossSectionStates, site_x, site_y, orbit: np.ndarray, temperature_k: float) -> np.ndarray:
    """(K,) the symmetry orbit each computed state is given to.

    Each band of near-degenerate states goes, whole, to the orbit of sites that holds most of its
    probability (the band's probability summed over the blocks of grid points nearest each site).
    """
    band = _clusters(states.energies_k, float(temperature_k))
    return np.argmax(_band_probability(_orbit_probability(states, site_x, site_y, orbit), band), axis=0)[band]


def state_shares(states: CrossSectionStates, site_x, site_y, orbit: np.ndarray, first_row: np.ndarray,
                 temperature_k: float, floor_k: np.ndarray | None = None) -> np.ndarray:
    """(orbits, K) how each computed state's Boltzmann weight is split among the orbits (columns sum to 1).

    A band whose home (`state_homes`) is an orbit of the first row (``first_row``: (orbits,) bool, the
    sites in the wall's well) goes to it whole: the first layer's states reach into the next row only by
    their evanescent tails, and those carry far more weight there than the next row's own states, so a
    share by probability would bind the next row by the first layer's states. A band homed on an inner
    row is shared among the inner orbits in proportion to its probability on each, among those whose cell
    the band can classically reach (``floor_k``: (orbits,) the lowest wall potential in each orbit's cells,
    K; the band's mean energy must lie above it): above the first layer the states spread over several
    rows, and a whole-band rule would give nothing to a small orbit (the centre's single site) that every
    band overlaps but none is mostly on, while a tail under a barrier binds no site, in any row.
    """
    band = _clusters(states.energies_k, float(temperature_k))
    prob = _band_probability(_orbit_probability(states, site_x, site_y, orbit), band)   # (orbits, bands)
    home = np.argmax(prob, axis=0)
    first = np.asarray(first_row, bool)
    shares = np.zeros_like(prob)
    outer = first[home]
    shares[home[outer], np.flatnonzero(outer)] = 1.0
    inner = prob[:, ~outer] * (~first)[:, None]
    if floor_k is not None:
        energy = np.bincount(band, weights=states.energies_k) / np.bincount(band)
        reach = np.asarray(floor_k)[:, None] < energy[None, ~outer]
        reach[home[~outer], np.arange(reach.shape[1])] = True          # the home orbit always takes its band
        inner = inner * reach
    shares[:, ~outer] = inner / inner.sum(axis=0, keepdims=True)
    return shares[:, band]


def geometry_shares(states: CrossSectionStates, geometry, temperature_k: float) -> np.ndarray:
    """`state_shares` on a geometry stage's candidate sites, with its first row and its cells' floors."""
    lat = geometry.candidates
    return state_shares(states, lat.x, lat.y, geometry.orbit, first_row_orbits(geometry), temperature_k,
                        orbit_floors(geometry))


def orbit_floors(geometry) -> np.ndarray:
    """(orbits,) the lowest wall potential (K) over each symmetry orbit's cells (`SiteCells`' nodes)."""
    cells = geometry.cells
    n_orbits = int(geometry.orbit.max()) + 1
    floor = np.full(n_orbits, np.inf)
    finite = np.isfinite(cells.potential_k)
    # a cell group is one orbit's cells (`porefill.physics.sites.cells.site_cells`)
    group_orbit = np.zeros(cells.area_angstrom2.size, int)
    group_orbit[cells.site_group] = geometry.orbit
    np.minimum.at(floor, group_orbit[cells.group[finite]], cells.potential_k[finite])
    return floor


def assign_states(states: CrossSectionStates, geometry, temperature_k: float):
    """Σ_n exp(−E_n/kT) of the states given to each candidate site of a geometry stage (N,), and which sites
    got any.

    Each state's weight is split among the orbits by `state_shares` (`geometry_shares`), and an orbit's part
    shared evenly by its sites. Σ_sites equals the Boltzmann sum of the computed states exactly.
    """
    kt = float(temperature_k)
    orbit = geometry.orbit
    boltz = np.exp(-(states.energies_k - states.energies_k[0]) / kt)      # relative to the ground state
    per_orbit = geometry_shares(states, geometry, kt) @ boltz
    size = np.bincount(orbit, minlength=int(orbit.max()) + 1).astype(float)
    z = per_orbit[orbit] / size[orbit]
    return z, z > 0


def first_row_orbits(geometry) -> np.ndarray:
    """(orbits,) whether each symmetry orbit of a geometry stage's candidate sites lies in the first row."""
    orbit = geometry.orbit
    return np.bincount(orbit, weights=(geometry.candidates.ring == 0).astype(float),
                       minlength=int(orbit.max()) + 1) > 0


def quantum_site_free_energy(geometry, *, temperature_k: float) -> np.ndarray:
    """Site free energies (K) from the exact one-atom states, in the frame of `porefill.physics.sites.site_models`.

    A site holding states of total Boltzmann sum S_i has Z_i = (ℓ/λ) S_i per slice, so
    f_i = −kT ln(λ² S_i / A_cell). Sites that no computed state reaches (high in the spectrum) keep their
    classical value. Σ_i exp(−f_i/kT) A_cell is then λ² Σ_n exp(−E_n/kT) plus those sites' classical share:
    the low-pressure limit is the quantum Henry constant. `orbit_sources` says which sites got which.
    """
    kt = float(temperature_k)
    return _site_free_energies(cached_states(geometry, kt), geometry, kt)[0]


def _site_tails(states: CrossSectionStates, geometry, kt: float):
    """(N,) each site's share of the semiclassical tail (relative to the ground state, like `assign_states`'
    sums): (1/λ²) ∫_cell exp(−(max(E_cut, V) − E₀)/kT) dA over its own cell (`SiteCells.floored_integrals`),
    evened over its orbit, and (N,) whether the site's cell reaches below the tail's cut (where the floor
    changes its classical integral). Taken over the cells, as the classical integrals are, a site's floored
    integral never exceeds its classical one."""
    lam = thermal_wavelength_angstrom(states.hbar2_over_mk, kt)
    cut = states.tail_cut_k
    integral, below = geometry.cells.floored_integrals(kt, cut)
    per_site = integral / (lam * lam) * np.exp(-(cut - states.energies_k[0]) / kt)
    orbit = geometry.orbit
    n_orbits = int(orbit.max()) + 1
    size = np.bincount(orbit, minlength=n_orbits).astype(float)
    tail = (np.bincount(orbit, weights=per_site, minlength=n_orbits) / size)[orbit]
    floored = (np.bincount(orbit, weights=below.astype(float), minlength=n_orbits) > 0)[orbit]
    return tail, floored


def _site_free_energies(states: CrossSectionStates, geometry, kt: float):
    """Site free energies: f_i = E₀ − kT ln(λ²(S_i + T_i)/A_cell), S_i the Boltzmann sum of the states given to
    site i (`assign_states`) and T_i its share of the semiclassical tail above them (`_site_tails`). A site no
    state reaches whose region stays above the tail's cut keeps its classical cell integral (the floor does
    not touch it); where its region dips below the cut, the part below is the computed states' (homed
    elsewhere) and only the floored integral T_i counts."""
    lat = geometry.candidates
    z_rel, reached = assign_states(states, geometry, kt)
    tail, floored = _site_tails(states, geometry, kt)
    lam = thermal_wavelength_angstrom(states.hbar2_over_mk, kt)
    f = geometry.cells.free_energies(kt, lat.cell_area_angstrom2)
    with np.errstate(divide="ignore"):
        f_q = states.energies_k[0] - kt * np.log(lam * lam * (z_rel + tail) / lat.cell_area_angstrom2)
    return np.where(reached | floored, f_q, f), reached, f, floored


def orbit_sources(states: CrossSectionStates, geometry, temperature_k: float) -> list[dict]:
    """Where each symmetry orbit's free energy comes from, for the readout: per orbit its label, site count,
    the computed states homed on it (`state_homes`), its share of the Boltzmann sum (`state_shares`), the free energy the
    quantum site model uses (K) and the orbit's classical value beside it. An orbit no computed state reaches
    keeps its classical cell integral (source "classical"), or where its region dips below the states' cut the
    semiclassical integral above it ("semiclassical above the states"); the others are "quantum states"."""
    kt = float(temperature_k)
    lat = geometry.candidates
    f, reached, f_classical, floored = _site_free_energies(states, geometry, kt)
    home = state_homes(states, lat.x, lat.y, geometry.orbit, kt)
    shares = geometry_shares(states, geometry, kt)
    boltz = np.exp(-(states.energies_k - states.energies_k[0]) / kt)
    out = []
    for o in range(int(geometry.orbit.max()) + 1):
        members = np.flatnonzero(geometry.orbit == o)
        rep = int(members[0])
        out.append({"orbit": o, "label": lat.label(rep), "sites": int(members.size),
                    "source": ("quantum states" if reached[rep] else
                               "semiclassical above the states" if floored[rep] else "classical"),
                    "states": int((home == o).sum()), "boltzmann_share": float(shares[o] @ boltz / boltz.sum()),
                    "free_energy_k": float(f[rep]), "classical_free_energy_k": float(f_classical[rep])})
    return out
