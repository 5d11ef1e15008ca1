"""The rows inside the first one: one-atom states of the region the filled first row leaves.

The first row's sites sit in the wall's well and fill first; their free energies come from the states of
the whole cross-section (`porefill.physics.sites.state_sites`). Every later row fills on top of a full first
row, so an atom there cannot use the first row's cells: the states that matter to it are those of the region
deeper than the first row's cells, with ψ = 0 outside it. The region is exactly where the classical model's
inner cells lie (`porefill.physics.sites.cells`: a row's cells are the band within half a row step of it),
so as ħ → 0 each inner site's sum below tends to its classical cell integral (tests/test_inner_states.py).

Each state's Boltzmann weight is shared among the inner orbits by its probability on each orbit's cells
(p_{n,o}, Σ_o p_{n,o} = 1): Z_o = Σ_n e^{−E_n/kT} p_{n,o} = Tr[P_o e^{−H/kT}], the thermal density matrix
over the orbit's cells. No band is given whole to one orbit and no probability threshold picks an owner, so
the inner rows' free energies move smoothly with the pore's size. The states are computed up to
``INNER_MARGIN_KT`` kT above the higher of the region's ground state and min(V_centre, 0); above them the
sum is taken semiclassically on the same grid points, (a/λ²) Σ_p e^{−max(E_cut, V_p)/kT} per orbit.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.spatial import cKDTree

from porefill.physics.caching import BoundedCache
from porefill.physics.sites.quantum import CrossSectionStates, grid_states, thermal_wavelength_angstrom

__all__ = ["INNER_MARGIN_KT", "InnerStates", "inner_region", "region_grid", "inner_top_k", "solve_inner_states",
           "cached_inner_states", "inner_orbit_sums"]

INNER_MARGIN_KT = 6.0          # the inner states: up to this many kT above the region's floor (see the notes)
_MAX_INNER_STATES = 480
_REUSE_MARGIN_KT = 2.0         # held inner states serve a warmer temperature while their top is this close


@dataclass(frozen=True, eq=False)
class InnerStates:
    """States of the region inside the first row (ψ = 0 outside it), `region_grid`.

    ``energies_k`` (K,) ascending; ``state_potential_k`` (K,) ⟨n|V|n⟩; ``orbit_probability`` (orbits, K) each
    state's probability on each orbit's cells (rows of first-row orbits are zero; columns sum to 1);
    ``point_orbit`` (P,) and ``point_potential_k`` (P,) the region's grid points' orbit and potential (the
    semiclassical tail); ``top_k`` the energy the states were wanted up to; ``capped`` when the count cap
    stopped them short of it.
    """

    energies_k: np.ndarray
    state_potential_k: np.ndarray
    orbit_probability: np.ndarray
    point_orbit: np.ndarray
    point_potential_k: np.ndarray
    point_area_angstrom2: float
    spacing_angstrom: float
    hbar2_over_mk: float
    top_k: float
    capped: bool

    @property
    def tail_cut_k(self) -> float:
        """Half a level spacing (the mean of the top ten) above the highest state, as for the whole problem's."""
        e = self.energies_k
        top = e[-min(len(e), 11):]
        return float(e[-1] + (0.5 * (top[-1] - top[0]) / (len(top) - 1) if len(top) > 1 else 0.0))


def _rows(geometry):
    """(depth of each row from the wall (rows,), Å): row 0 the first, the last the centre's."""
    lat, pore = geometry.candidates, geometry.pore
    ring = np.asarray(lat.ring)
    site_depth = pore.depth_inside(lat.x, lat.y)
    return np.array([site_depth[ring == j].max() for j in range(int(ring.max()) + 1)])


def inner_region(points: np.ndarray, geometry) -> tuple[np.ndarray, np.ndarray]:
    """Which points lie inside the first row's cells, and the symmetry orbit of the cell holding each.

    A row's cells are the band within half a row step of it (depth from the wall, the classical cells'
    bands); within its band a point belongs to the nearest site of that row. Returns (mask (P,), orbit (R,)
    of the R points in the region); the mask is empty where the lattice has a single row.
    """
    lat = geometry.candidates
    ring = np.asarray(lat.ring)
    row_depth = _rows(geometry)
    n_rows = row_depth.size
    if n_rows < 2:
        return np.zeros(points.shape[0], bool), np.empty(0, int)
    first, step = row_depth[0], row_depth[1] - row_depth[0]
    depth = geometry.pore.depth_inside(points[:, 0], points[:, 1])
    mask = depth > first + 0.5 * step + 1e-9 * step          # the edge itself is the wall's (ψ = 0 there)
    row = np.clip(np.rint((depth - first) / step), 1, n_rows - 1).astype(int)
    row[depth >= row_depth[-1]] = n_rows - 1                  # the centre's cell reaches the middle
    at, row_at = points[mask], row[mask]
    orbit = np.empty(at.shape[0], int)
    for j in range(1, n_rows):
        sites = np.flatnonzero(ring == j)
        here = np.flatnonzero(row_at == j)
        if here.size:
            nearest = cKDTree(np.column_stack([lat.x[sites], lat.y[sites]])).query(at[here])[1]
            orbit[here] = geometry.orbit[sites[nearest]]
    return mask, orbit


def region_grid(geometry, h: float):
    """The triangular grid of the region inside the first row at a spacing of at most ``h``: the spacing is
    set so that the region's edge falls on a row of the grid (for the hexagon, whose faces run along the
    grid's rows), where ψ = 0. The edge then moves with the pore's size continuously; on a fixed grid it
    would step a row (h√3/2) at a time, and with it the inner states, by up to 0.6 K per 0.125 Å of side
    where the edge lies on the well's slope. Returns the spacing, points (P, 2), their potential (P,), the
    mask's orbits (P,) — or None where the lattice has a single row."""
    from porefill.physics.pore.wall_potential import wall_potential
    from porefill.physics.sites.lattice import _triangular_sites

    row_depth = _rows(geometry)
    if row_depth.size < 2:
        return None
    edge = row_depth[-1] - (row_depth[0] + 0.5 * (row_depth[1] - row_depth[0]))   # the edge's distance from the centre
    row_spacing = h * np.sqrt(3.0) / 2.0
    n = max(int(np.ceil(edge / row_spacing - 1e-9)), 2)
    h = float(edge / (n * np.sqrt(3.0) / 2.0))
    pts = _triangular_sites(edge / np.cos(np.pi / 6.0) + 2.0 * h, h)
    mask, orbit = inner_region(pts, geometry)
    pts = pts[mask]
    v = np.asarray(wall_potential(pts[:, 0], pts[:, 1], pore=geometry.pore, pair=geometry.pair), float)
    return h, pts, v, orbit


def _region_pairs(points: np.ndarray, h: float):
    pairs = cKDTree(points).query_pairs(h * 2.001, output_type="ndarray")
    d = np.hypot(*(points[pairs[:, 0]] - points[pairs[:, 1]]).T)
    return pairs[d < 1.01 * h], pairs[d > 1.99 * h]


def inner_top_k(ground_k: float, centre_potential_k: float, temperature_k: float,
                margin_kt: float | None = None) -> float:
    """The energy (K) up to which the inner states are wanted: ``margin_kt`` kT above the higher of the
    region's ground state and min(V_centre, 0). A state above it weighs at most e^{−margin} of an inner
    site's own states (the centre's cell, the highest, has its floor near V_centre). ``margin_kt``: None,
    `INNER_MARGIN_KT`."""
    margin_kt = INNER_MARGIN_KT if margin_kt is None else float(margin_kt)
    return float(max(ground_k, min(centre_potential_k, 0.0)) + margin_kt * float(temperature_k))


def solve_inner_states(states: CrossSectionStates, geometry, temperature_k: float, *,
                       margin_kt: float | None = None, max_states: int = _MAX_INNER_STATES) -> InnerStates | None:
    """The states of the region inside ``geometry``'s first row (`region_grid`) on a grid at most as coarse as
    ``states``' final one (its spacing was converged for the first layer's states; the region's potential is
    far smoother), or None where the lattice has no row inside the first. ``states`` gives the spacing, the
    pore centre's potential and ħ²/mk."""
    grid = region_grid(geometry, states.spacing_angstrom)
    if grid is None or grid[1].shape[0] < 8:
        return None
    h, pts, v, orbit = grid
    kt, hb = float(temperature_k), states.hbar2_over_mk
    pairs = _region_pairs(pts, h)
    n_orbits = int(geometry.orbit.max()) + 1
    summary = sparse.vstack([sparse.csr_matrix((np.ones(orbit.size), (orbit, np.arange(orbit.size))),
                                               shape=(n_orbits, orbit.size)),
                             sparse.csr_matrix(v[None, :])]).tocsr()
    area = float(np.sqrt(3.0) / 2.0 * h * h)
    centre = states.centre_potential_k
    # a first count by Weyl's law, N(E) = (m/2πħ²) ∫(E − V)₊ dA, from the region's lowest potential
    top = inner_top_k(float(v.min()), centre, kt, margin_kt)
    k = int(min(max(12, 1.15 * np.clip(top - v, 0.0, None).sum() * area / (2.0 * np.pi * hb) + 8), max_states,
                v.size - 2))
    while True:
        e, _, reduced = grid_states(v, pairs, h, hb, k=k, shift=float(v.min()) - 1.0, points=pts, vectors=0,
                                    reduce=summary)
        top = inner_top_k(float(e[0]), centre, kt, margin_kt)
        if e[-1] >= top or k >= max_states or k >= v.size - 2 or e.size < k:
            break
        k = int(min(2 * k, max_states, v.size - 2))
    keep = int(np.searchsorted(e, top, side="right"))
    keep = max(keep + (1 if keep < e.size else 0), 1)         # one past the top: the tail's cut sits above it
    while keep < e.size and e[keep] - e[keep - 1] < 1e-6:     # and never half of a degenerate pair
        keep += 1
    prob = reduced[:-1, :keep]
    prob = prob / prob.sum(axis=0, keepdims=True)
    return InnerStates(e[:keep].copy(), reduced[-1, :keep].copy(), prob, orbit, v, area, h, hb, top,
                       bool(e[-1] < top))


_INNER = BoundedCache(32)     # (scenario key, rows, the states' grid and E₀) -> (temperature solved for, InnerStates | None)


def cached_inner_states(states: CrossSectionStates, geometry, temperature_k: float) -> InnerStates | None:
    """`solve_inner_states`, computed once per lattice and set of states, and reused for a lower temperature or
    a warmer one while the highest state held lies no more than ``_REUSE_MARGIN_KT`` kT below the wanted top."""
    key = (geometry.scenario_key, int(geometry.rows), states.spacing_angstrom, float(states.energies_k[0]),
           int(states.points.shape[0]))
    kt = float(temperature_k)
    held = _INNER.get(key)
    if held is not None:
        inner = held[1]
        covered = held[0] >= kt or inner is None or (
            not inner.capped and inner.energies_k[-1] >= inner_top_k(float(inner.energies_k[0]),
                                                                   states.centre_potential_k, kt) - _REUSE_MARGIN_KT * kt)
        if covered:
            return inner
    inner = solve_inner_states(states, geometry, kt)
    _INNER.put(key, (kt, inner))
    return inner


def inner_orbit_sums(inner: InnerStates, ground_k: float, temperature_k: float, n_orbits: int):
    """Per orbit (orbits,), relative to e^{−E₀/kT} of the whole problem's ground state ``ground_k``: the sum over
    the inner states Σ_n e^{−(E_n − E₀)/kT} p_{n,o}, and the semiclassical sum above them over the orbit's
    grid points, (a/λ²) Σ_p e^{−(max(E_cut, V_p) − E₀)/kT}."""
    kt = float(temperature_k)
    boltz = np.exp(-(inner.energies_k - ground_k) / kt)
    states_part = inner.orbit_probability @ boltz
    lam = thermal_wavelength_angstrom(inner.hbar2_over_mk, kt)
    point = inner.point_area_angstrom2 / (lam * lam) * np.exp(
        -(np.maximum(inner.point_potential_k, inner.tail_cut_k) - ground_k) / kt)
    tail = np.bincount(inner.point_orbit, weights=point, minlength=n_orbits)
    return states_part[:n_orbits], tail
