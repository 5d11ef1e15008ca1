"""The one-atom states given to the lattice's sites: the quantum site model's free energies.

The states of `porefill.physics.sites.quantum` belong to the whole cross-section; the lattice gas needs a free
energy per site. The states bound in the first layer (their band homed on the first row) go to the first row's
orbits, each shared by its probability there, tails excepted (`state_shares`); each first-row site's share of
the semiclassical tail above them is taken over its own cell (`_site_tails`). The rows inside the first take
the states of the region the first row leaves (`porefill.physics.sites.inner_states`). `orbit_sources` says,
per orbit, where its free energy came from; `states_numbers` is the whole readout.
"""
from __future__ import annotations

import numpy as np
from scipy import sparse

from porefill.physics.sites.inner_states import cached_inner_states, inner_orbit_sums
from porefill.physics.sites.lattice import boundary_shares
from porefill.physics.sites.quantum import (_WEIGHT_FRACTION, CrossSectionStates, _clusters, cached_states,
                                            classical_boltzmann_area, henry_constant, states_wanted_top_k,
                                            thermal_wavelength_angstrom)

__all__ = ["state_homes", "state_shares", "geometry_shares", "assign_states", "first_row_orbits",
           "quantum_site_free_energy", "orbit_sources", "states_numbers"]


def _orbit_probability(states: CrossSectionStates, site_x, site_y, orbit: np.ndarray) -> np.ndarray:
    """(orbits, K) each state's probability on each orbit's sites: its grid points summed by the site nearest
    them, point by point for the states whose whole vectors are kept (the first layer's), by blocks of four
    points for the others. A point by the boundary of two orbits' cells is shared between them: given whole
    to the nearest, a first-row site's free energy moved 0.032 kT between h and h/2 (15 Å, 1.5 K), 0.0055 kT
    shared (tests/test_quantum_tail.py)."""
    n_orbits = int(orbit.max()) + 1
    width = states.spacing_angstrom * np.sqrt(3.0) / 2.0

    def summed(points, values, strip):
        o1, o2, other = boundary_shares(points, site_x, site_y, orbit, strip)
        n = points.shape[0]
        by_orbit = sparse.csr_matrix((np.concatenate([1.0 - other, other]),
                                      (np.concatenate([o1, o2]), np.concatenate([np.arange(n), np.arange(n)]))),
                                     shape=(n_orbits, n))
        return np.asarray(by_orbit @ values, dtype=float)

    out = summed(states.home_points, states.home_density, 2.0 * width)     # a block of four points
    n_whole = states.vectors.shape[1]
    if n_whole:
        out[:, :n_whole] = summed(states.points, states.vectors ** 2, width)
    return out


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


_TAIL_FRACTION = 0.1     # a first-row band's share of an orbit counts nothing below this fraction of it there,
_OWN_FRACTION = 0.4      # and in full from this one (a ramp between: no threshold flips a band whole)


def state_shares(states: CrossSectionStates, site_x, site_y, orbit: np.ndarray, first_row: np.ndarray,
                 temperature_k: float) -> np.ndarray:
    """(orbits, K) how each computed state of the whole cross-section is given to the orbits.

    A band whose home (`state_homes`) is an orbit of the first row (``first_row``: (orbits,) bool, the sites
    in the wall's well) goes to the first row: the first layer's states reach into the next row only by their
    evanescent tails, and those carry far more weight there than the next row's own states, so a share by
    probability would bind the next row by the first layer's states. Within the first row it is shared by its
    probability on each orbit, weighed by a ramp in the fraction of the band the orbit holds (nothing below
    ``_TAIL_FRACTION``, in full from ``_OWN_FRACTION``): a band between a corner and the face sites beside it
    goes to both, so no majority flips it whole from one to the other as the pore grows, while the corner's
    ground band, about 1 % of which lies on the faces beside it as an evanescent tail, stays the corner's (its
    tail carries far more weight than the faces' own states). The other bands go to no
    orbit here (column of zeros): the rows inside the first fill on a full first row, and take their states
    from the region it leaves (`porefill.physics.sites.inner_states`).
    """
    kt = float(temperature_k)
    band = _clusters(states.energies_k, kt)
    per_state = _orbit_probability(states, site_x, site_y, orbit)                     # (orbits, K)
    home = np.argmax(_band_probability(per_state, band), axis=0)[band]                # (K,) its band's home
    first = np.asarray(first_row, bool)
    outer = first[home]
    # within the first row: by probability, each orbit's part weighed by a ramp in the fraction of the state it
    # holds (none below _TAIL_FRACTION, whole from _OWN_FRACTION): a state's evanescent tail on an orbit (the
    # corner's ground states hold about 1 % on the faces beside them) binds no site there. State by state, so
    # that how near-degenerate states are grouped into bands does not matter
    fraction = per_state / per_state.sum(axis=0, keepdims=True)
    ramp = np.clip((fraction - _TAIL_FRACTION) / (_OWN_FRACTION - _TAIL_FRACTION), 0.0, 1.0)
    part = per_state * ramp * (first[:, None] & outer[None, :])
    lone = outer & (part.sum(axis=0) <= 0.0)
    part[home[lone], np.flatnonzero(lone)] = 1.0                   # spread too thin for the ramp: its home's
    return part / np.where(outer, part.sum(axis=0), 1.0)[None, :]


def geometry_shares(states: CrossSectionStates, geometry, temperature_k: float) -> np.ndarray:
    """`state_shares` on a geometry stage's candidate sites, with its first row."""
    lat = geometry.candidates
    return state_shares(states, lat.x, lat.y, geometry.orbit, first_row_orbits(geometry), temperature_k)


def _orbit_sums(states: CrossSectionStates, geometry, kt: float):
    """Per orbit (orbits,), relative to e^{−E₀/kT}: the Boltzmann sum of the states it is given (the whole
    cross-section's for the first row, `state_shares`; the inner region's for the rows inside,
    `porefill.physics.sites.inner_states`), the inner rows' semiclassical sum above their states, and the
    inner states (None where the lattice has no row inside the first)."""
    n_orbits = int(geometry.orbit.max()) + 1
    boltz = np.exp(-(states.energies_k - states.energies_k[0]) / kt)      # relative to the ground state
    per_orbit = geometry_shares(states, geometry, kt) @ boltz
    inner_tail = np.zeros(n_orbits)
    inner = cached_inner_states(states, geometry, kt)
    if inner is not None:
        inside, inner_tail = inner_orbit_sums(inner, float(states.energies_k[0]), kt, n_orbits)
        per_orbit = np.where(first_row_orbits(geometry), per_orbit, inside)
    return per_orbit, inner_tail, inner


def assign_states(states: CrossSectionStates, geometry, temperature_k: float):
    """Σ_n exp(−(E_n − E₀)/kT) of the states given to each candidate site of a geometry stage (N,), and which
    sites got any: an orbit's sum (`_orbit_sums`) shared evenly by its sites."""
    orbit = geometry.orbit
    per_orbit = _orbit_sums(states, geometry, float(temperature_k))[0]
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

    A site holding states of total Boltzmann sum S_i (its shares of them) has Z_i = (ℓ/λ) S_i per slice, so
    f_i = −kT ln(λ² S_i / A_cell). The first row's sites share the cross-section's states bound in the first
    layer, which carry the one-atom Boltzmann sum, so Σ_i exp(−f_i/kT) A_cell is λ² Σ_n exp(−E_n/kT) up to
    the inner rows' part (below 1e-15 of it for helium at 1.5 K in the demo pore): the low-pressure limit is
    the quantum Henry constant. `orbit_sources` says which sites got which.
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
    site i (`assign_states`) and T_i its share of the semiclassical sum above them: over its own cell for the
    first row (`_site_tails`), over its cells' grid points inside the first row for the others
    (`porefill.physics.sites.inner_states`). Where a lattice has rows inside the first but no inner states
    (a region too small for a grid), a site no state reaches keeps its classical cell integral, or where its
    cell dips below the tail's cut, the floored integral T_i alone.

    Returns f (N,), whether each site got states of the whole cross-section or of the inner region (N,), the
    classical f (N,), whether the floored integral alone was used (N,), and the inner states (or None)."""
    lat, orbit = geometry.candidates, geometry.orbit
    n_orbits = int(orbit.max()) + 1
    size = np.bincount(orbit, minlength=n_orbits).astype(float)
    per_orbit, inner_tail, inner = _orbit_sums(states, geometry, kt)
    z_rel = per_orbit[orbit] / size[orbit]
    tail, floored = _site_tails(states, geometry, kt)
    inside = np.zeros(orbit.size, bool) if inner is None else ~first_row_orbits(geometry)[orbit]
    tail = np.where(inside, (inner_tail / size)[orbit], tail)
    reached = (z_rel > 0) | inside
    floored = floored & ~reached
    lam = thermal_wavelength_angstrom(states.hbar2_over_mk, kt)
    f = geometry.cells.free_energies(kt, lat.cell_area_angstrom2)
    with np.errstate(divide="ignore"):
        f_q = states.energies_k[0] - kt * np.log(lam * lam * (z_rel + tail) / lat.cell_area_angstrom2)
    return np.where(reached | floored, f_q, f), reached, f, floored, inner


def orbit_sources(states: CrossSectionStates, geometry, temperature_k: float) -> list[dict]:
    """Where each symmetry orbit's free energy comes from, for the readout: per orbit its label, site count,
    its source, the states counted as its own (the whole cross-section's bands homed on it, `state_homes`,
    for the first row; the inner region's states with most of their probability on it for the rows inside),
    its share of the orbits' Boltzmann sums, the free energy the quantum site model uses (K) and the orbit's
    classical value beside it. Sources: "quantum states" (the first row), "quantum states inside the first
    row" (`porefill.physics.sites.inner_states`), and where no state reaches an orbit "semiclassical above the
    states" or "classical"."""
    kt = float(temperature_k)
    lat = geometry.candidates
    f, reached, f_classical, floored, inner = _site_free_energies(states, geometry, kt)
    home = state_homes(states, lat.x, lat.y, geometry.orbit, kt)
    first = first_row_orbits(geometry)
    per_orbit = _orbit_sums(states, geometry, kt)[0]
    inner_home = (np.argmax(inner.orbit_probability, axis=0) if inner is not None else np.empty(0, int))
    out = []
    for o in range(int(geometry.orbit.max()) + 1):
        members = np.flatnonzero(geometry.orbit == o)
        rep = int(members[0])
        inside = inner is not None and not first[o]
        out.append({"orbit": o, "label": lat.label(rep), "sites": int(members.size),
                    "source": ("quantum states inside the first row" if inside else
                               "quantum states" if reached[rep] else
                               "semiclassical above the states" if floored[rep] else "classical"),
                    "states": int((inner_home == o).sum() if inside else (home == o).sum() if first[o] else 0),
                    "boltzmann_share": float(per_orbit[o] / per_orbit.sum()),
                    "free_energy_k": float(f[rep]), "classical_free_energy_k": float(f_classical[rep])})
    return out


def states_numbers(states, geometry, temperature_k: float) -> dict:
    """The states readout: what `porefill states --json` prints and the Quantum states tab shows, for one set of
    states (K, Å, atoms per nm per Pa)."""
    from porefill.physics.sites.inner_states import INNER_MARGIN_KT

    t = float(temperature_k)
    classical = classical_boltzmann_area(geometry.pore, geometry.pair, t)
    inner = cached_inner_states(states, geometry, t)
    return {
        "energies_k": [float(e) for e in states.energies_k],
        "ground_state_k": states.ground_state_k,
        "potential_minimum_k": states.potential_minimum_k,
        "zero_point_energy_k": states.zero_point_energy_k,
        "excitation_energies_k": [float(e - states.energies_k[0]) for e in states.energies_k],
        "henry_quantum": states.henry_per_nm_pa(t),
        "henry_classical": henry_constant(classical, t),
        "mean_kinetic_energy_k": states.mean_kinetic_k(t),
        "mean_potential_energy_k": states.mean_potential_k(t),
        "grid": {"spacing_angstrom": states.spacing_angstrom, "points": int(states.points.shape[0]),
                 "energy_error_estimate_k": states.error_k},
        "states_used": int(states.energies_k.size),
        "states_wanted": {"top_k": states_wanted_top_k(float(states.energies_k[0]), t),
                          "weight_fraction": _WEIGHT_FRACTION},
        "inner_states": None if inner is None else {
            "states_used": int(inner.energies_k.size), "top_k": inner.top_k, "margin_kt": INNER_MARGIN_KT,
            "centre_potential_k": states.centre_potential_k, "capped": inner.capped,
            "ground_state_k": float(inner.energies_k[0]), "points": int(inner.point_orbit.size)},
        "states_capped": bool(states.capped),
        "boltzmann_tail_fraction": states.tail_fraction(t),
        "orbits": orbit_sources(states, geometry, t),
    }
