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

Two things keep these sums second order (or better) in the grid spacing, so the default grid is converged to
0.01 kT: ψ is odd across the region's straight edge (`edge_mirrors`: the fourth-order stencil's reach beyond a
hard edge otherwise makes the energies first order), and a grid point near a cell boundary is shared between
the cells on either side (`region_shares`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.spatial import cKDTree

from porefill.physics.caching import BoundedCache
from porefill.physics.sites.lattice import boundary_shares
from porefill.physics.sites.quantum import CrossSectionStates, grid_states, thermal_wavelength_angstrom

__all__ = ["INNER_MARGIN_KT", "InnerStates", "inner_region", "region_shares", "edge_mirrors", "region_grid",
           "inner_top_k", "solve_inner_states", "cached_inner_states", "inner_orbit_sums"]

INNER_MARGIN_KT = 6.0          # the inner states: up to this many kT above the region's floor (see the notes)
_MAX_INNER_STATES = 480
_REUSE_MARGIN_KT = 2.0         # held inner states serve a warmer temperature while their top is this close


@dataclass(frozen=True, eq=False)
class InnerStates:
    """States of the region inside the first row (ψ = 0 outside it), `region_grid`.

    ``energies_k`` (K,) ascending; ``state_potential_k`` (K,) ⟨n|V|n⟩; ``orbit_probability`` (orbits, K) each
    state's probability on each orbit's cells (rows of first-row orbits are zero; columns sum to 1);
    ``point_orbit`` (P,) and ``point_potential_k`` (P,) the region's grid points' orbit and potential, and
    ``point_share`` (orbits, P) each point's share of each orbit's cells (`region_shares`; the semiclassical
    tail); ``top_k`` the energy the states were wanted up to; ``capped`` when the count cap stopped them short
    of it.
    """

    energies_k: np.ndarray
    state_potential_k: np.ndarray
    orbit_probability: np.ndarray
    point_orbit: np.ndarray
    point_potential_k: np.ndarray
    point_share: sparse.csr_matrix
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


def _region_edge(row_depth: np.ndarray) -> float:
    """The region's edge (Å from the centre): half a row step inside the first row."""
    return float(row_depth[-1] - (row_depth[0] + 0.5 * (row_depth[1] - row_depth[0])))


def region_shares(points: np.ndarray, geometry, h: float) -> sparse.csr_matrix:
    """(orbits, R): each region point's share of each inner orbit's cells (`inner_region`), rows summing to 1
    over orbits for every point.

    A grid point stands for a strip of the grid's row spacing w = h√3/2 across any cell boundary near it, so a
    point within w/2 of a boundary (half a row step between rows; the bisector between neighbouring sites of
    one row, where their orbits differ) gives the cell beyond it the part of its strip that lies there,
    ½ − s/w at a distance s. A whole point to its nearest cell instead makes every orbit's sum of |ψ|² first
    order in h: the inner free energies moved 0.035–0.064 kT between h = 0.125 and 0.0625 Å (15 Å hexagon,
    1.5 K; measured), against 0.01 kT asked (common practice for a cell-boundary quadrature, no source)."""
    lat = geometry.candidates
    ring = np.asarray(lat.ring)
    row_depth = _rows(geometry)
    n_rows = row_depth.size
    n_orbits = int(geometry.orbit.max()) + 1
    first, step = row_depth[0], row_depth[1] - row_depth[0]
    depth = geometry.pore.depth_inside(points[:, 0], points[:, 1])
    width = h * np.sqrt(3.0) / 2.0
    u = (depth - first) / step
    row = np.clip(np.rint(u), 1, n_rows - 1).astype(int)
    centre = depth >= row_depth[-1]
    row[centre] = n_rows - 1                                   # the centre's cell reaches the middle
    s_in = (row + 0.5 - u) * step                               # to the boundary with the next row inwards
    s_out = (u - (row - 0.5)) * step                            # to the boundary with the row outside
    f_in = np.where((row < n_rows - 1) & ~centre & (s_in < 0.5 * width), 0.5 - s_in / width, 0.0)
    f_out = np.where((row > 1) & (s_out < 0.5 * width), 0.5 - s_out / width, 0.0)
    parts = ((row, 1.0 - f_in - f_out), (np.minimum(row + 1, n_rows - 1), f_in), (np.maximum(row - 1, 1), f_out))
    rows, cols, vals = [], [], []
    for r_of_point, weight in parts:
        for r in np.unique(r_of_point[weight > 0]):
            sel = np.flatnonzero((r_of_point == r) & (weight > 0))
            sites = ring == r
            o1, o2, other = boundary_shares(points[sel], lat.x[sites], lat.y[sites], geometry.orbit[sites], width)
            rows += [o1, o2]
            cols += [sel, sel]
            vals += [weight[sel] * (1.0 - other), weight[sel] * other]
    return sparse.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                             shape=(n_orbits, points.shape[0]))


def edge_mirrors(points: np.ndarray, h: float, edge: float):
    """(i, m, kind) for `porefill.physics.sites.quantum._hamiltonian`: where a stencil neighbour of region
    point i, at h (kind 1) or 2h (kind 2), lies beyond the hexagonal region's edge (its faces at ``edge`` from
    the centre, along the pore's faces and so along the grid's rows), its mirror image across that face is the
    region point m (ψ is odd across the edge). A mirror image that is not a region point (at a corner) stays a
    node."""
    tree = cKDTree(points)
    angle = np.pi / 3.0 * np.arange(6)
    steps = np.column_stack([np.cos(angle), np.sin(angle)])
    normal = 2.0 * np.pi * (np.arange(6) + 0.5) / 6.0
    normals = np.column_stack([np.cos(normal), np.sin(normal)])
    out_i, out_m, out_k = [], [], []
    for kind in (1, 2):
        for d in steps:
            q = points + kind * h * d
            beyond = q @ normals.T - edge
            face = np.argmax(beyond, axis=1)
            ghost = np.flatnonzero(beyond[np.arange(q.shape[0]), face] > 1e-9 * h)
            image = q[ghost] - 2.0 * beyond[ghost, face[ghost]][:, None] * normals[face[ghost]]
            dist, m = tree.query(image)
            ok = dist < 1e-6 * h
            out_i.append(ghost[ok])
            out_m.append(m[ok])
            out_k.append(np.full(int(ok.sum()), kind))
    return np.concatenate(out_i), np.concatenate(out_m), np.concatenate(out_k)


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
    edge = _region_edge(row_depth)
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
    if geometry.pore.shape == "hexagon":
        pairs = pairs + (edge_mirrors(pts, h, _region_edge(_rows(geometry))),)
    share = region_shares(pts, geometry, h)
    summary = sparse.vstack([share, sparse.csr_matrix(v[None, :])]).tocsr()
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
    return InnerStates(e[:keep].copy(), reduced[-1, :keep].copy(), prob, orbit, v, share, area, h, hb, top,
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
    return states_part[:n_orbits], (inner.point_share @ point)[:n_orbits]
