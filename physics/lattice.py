"""Lattice of adsorption sites in the pore cross-section, repeated along the pore axis.

The cross-section carries a triangular lattice of spacing ℓ with a site at the pore centre and rows
parallel to the x axis; for the hexagon (corner on +x) the lattice directions 0°, 60°, 120° run along its
faces, so corners and faces are sampled symmetrically. The same lattice serves the cylinder. For the slit,
which is uniform along x, one site per row stands for the whole row. Layers repeat along z with spacing ℓ,
so every site has 6 in-plane and 2 axial neighbours (z = 8); in mean field with uniform density along z the
axial pair couples a site to itself, which is how it enters the neighbour matrix.

Default spacing: the full lattice holds the bulk liquid's number density n_l, so the cell volume is
v = (√3/2) ℓ³ = 1/n_l.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.special import logsumexp

from .geometry import Pore
from .materials import PairParameters
from .wall_potential import wall_potential

__all__ = ["SiteLattice", "build_lattice", "default_spacing", "cell_free_energies", "cell_samples",
           "boltzmann_cell_average", "shared_operations", "symmetry_orbits", "orbit_problem_matrices",
           "slit_row_sites", "COORDINATION",
           "SITE_KINDS"]

COORDINATION = 8
SITE_KINDS = ("corner", "face", "wall", "ring", "centre")   # face: polygon sides; wall: cylinder, slit


def default_spacing(liquid_density_per_a3: float) -> float:
    """ℓ (Å) such that (√3/2) ℓ³ = 1/n_l."""
    return (2.0 / (np.sqrt(3.0) * liquid_density_per_a3)) ** (1.0 / 3.0)


@dataclass(frozen=True, eq=False)
class SiteLattice:
    """Sites of one cross-section and their couplings.

    Attributes
    ----------
    x, y : (N,) site positions, Å
    neighbours : (N, N) sparse symmetric-weighted matrix; (A n)_i is the number of occupied neighbours
        of site i (axial pair included on the diagonal)
    spacing_angstrom : in-plane and axial spacing ℓ
    cell_area_angstrom2 : cross-section area one site stands for (for the slit: per Å of x)
    kind : (N,) 'corner', 'face' (polygon) or 'wall' (cylinder, slit), 'ring' or 'centre'
    ring : (N,) row index counted from the wall (0 = against the wall)
    weight : (N,) how many sites a site stands for in totals (1, or the row length for the slit)
    """

    x: np.ndarray
    y: np.ndarray
    neighbours: sparse.csr_matrix
    spacing_angstrom: float
    cell_area_angstrom2: float
    kind: np.ndarray
    ring: np.ndarray
    shape: str

    @property
    def size(self) -> int:
        return self.x.size

    @property
    def cell_volume_angstrom3(self) -> float:
        return self.cell_area_angstrom2 * self.spacing_angstrom

    def label(self, i: int) -> str:
        k = self.kind[i]
        return f"ring {self.ring[i]}" if k == "ring" else str(k)

    def subset(self, keep: np.ndarray, pore: Pore) -> "SiteLattice":
        """The kept sites, relabelled: rings are counted from the outermost kept row."""
        idx = np.flatnonzero(keep)
        pts = np.column_stack([self.x[idx], self.y[idx]])
        kind, ring = _classify(pore, pts, self.spacing_angstrom)
        return SiteLattice(self.x[idx], self.y[idx], self.neighbours[idx][:, idx].tocsr(), self.spacing_angstrom,
                           self.cell_area_angstrom2, kind, ring, self.shape)


def _triangular_sites(radius: float, spacing: float) -> np.ndarray:
    """Triangular lattice points (rows along x, one at the origin) within a disk; (N, 2)."""
    n = int(np.ceil(radius / (spacing * np.sqrt(3.0) / 2.0))) + 2
    i, j = np.meshgrid(np.arange(-2 * n, 2 * n + 1), np.arange(-n, n + 1), indexing="ij")
    x = spacing * (i + 0.5 * j)
    y = spacing * (np.sqrt(3.0) / 2.0) * j
    pts = np.column_stack([x.ravel(), y.ravel()])
    return pts[np.hypot(pts[:, 0], pts[:, 1]) <= radius]


def _neighbour_matrix(pts: np.ndarray, spacing: float) -> sparse.csr_matrix:
    from scipy.spatial import cKDTree

    tree = cKDTree(pts)
    pairs = tree.query_pairs(spacing * 1.01, output_type="ndarray")
    n = len(pts)
    rows = np.concatenate([pairs[:, 0], pairs[:, 1], np.arange(n)])
    cols = np.concatenate([pairs[:, 1], pairs[:, 0], np.arange(n)])
    vals = np.concatenate([np.ones(2 * len(pairs)), np.full(n, 2.0)])   # diagonal: the two axial neighbours
    return sparse.csr_matrix((vals, (rows, cols)), shape=(n, n))


def _classify(pore: Pore, pts: np.ndarray, spacing: float) -> tuple[np.ndarray, np.ndarray]:
    """Kind and ring (rows from the wall) of each site, from the pore's own face distances."""
    row = spacing * np.sqrt(3.0) / 2.0
    faces = np.sort(pore.face_distances(pts[:, 0], pts[:, 1]), axis=1)
    depth = faces[:, 0]
    outer = depth.min() if depth.size else 0.0
    ring = np.floor((depth - outer) / row + 0.5).astype(int)
    kind = np.full(len(pts), "ring", dtype=object)
    kind[ring == 0] = pore.wall_label
    if pore.has_corners:
        kind[(ring == 0) & (faces[:, 1] - faces[:, 0] < 0.5 * row)] = "corner"   # two faces equally near
    kind[ring == ring.max()] = "centre"
    if ring.max() == 0:
        kind[np.hypot(pts[:, 0], pts[:, 1]) < 0.5 * spacing] = "centre"
    return kind.astype(str), ring


def build_lattice(pore: Pore, spacing_angstrom: float) -> SiteLattice:
    """All sites whose cell reaches into the pore (their free energies decide which are kept, see
    `SiteLattice.subset`)."""
    ell = float(spacing_angstrom)
    if not (np.isfinite(ell) and ell > 0):
        raise ValueError(f"lattice spacing must be a positive length in Å, got {spacing_angstrom!r}")
    if pore.lattice_kind == "rows":
        row = ell * np.sqrt(3.0) / 2.0
        k = np.arange(-int(np.ceil(pore.width_angstrom / row)) - 1, int(np.ceil(pore.width_angstrom / row)) + 2)
        y = k * row
        y = y[np.abs(y) < 0.5 * pore.width_angstrom + 0.5 * row]
        pts = np.column_stack([np.zeros_like(y), y])
        n = len(y)
        # per site: 2 in-row + 2 axial on the diagonal, 2 in each adjacent row
        a = sparse.diags([np.full(n - 1, 2.0), np.full(n, 4.0), np.full(n - 1, 2.0)], [-1, 0, 1]).tocsr()
        kind, ring = _classify(pore, pts, ell)
        return SiteLattice(pts[:, 0], pts[:, 1], a, ell, row, kind, ring, "slit")
    x0, x1, y0, y1 = pore.bounding_box()
    radius = np.hypot(max(abs(x0), abs(x1)), max(abs(y0), abs(y1))) + ell
    pts = _triangular_sites(radius, ell)
    cell_radius = ell / np.sqrt(3.0)          # circumradius of the hexagonal Wigner–Seitz cell
    pts = pts[pore.depth_inside(pts[:, 0], pts[:, 1]) > -cell_radius]
    kind, ring = _classify(pore, pts, ell)
    return SiteLattice(pts[:, 0], pts[:, 1], _neighbour_matrix(pts, ell), ell, np.sqrt(3.0) / 2.0 * ell * ell,
                       kind, ring, pore.shape)


def _cell_offsets(spacing: float, subdivisions: int, slit: bool) -> tuple[np.ndarray, np.ndarray]:
    """Sample points of one cell and their weights (sum 1), symmetric under the cell's point group.

    Triangular lattice: the points of the finer lattice (spacing ℓ/m) in the hexagonal Wigner–Seitz cell,
    weighted 1, 1/2 on its edges and 1/3 at its corners (m² in total). Slit: m points across the row.
    """
    m = int(subdivisions)
    if slit:
        row = spacing * np.sqrt(3.0) / 2.0
        y = (np.arange(m) + 0.5) / m * row - 0.5 * row
        return np.column_stack([np.zeros(m), y]), np.full(m, 1.0 / m)
    fine = _triangular_sites(spacing * 1.2, spacing / m)
    centre = np.zeros((1, 2))
    nbrs = spacing * np.column_stack([np.cos(np.arange(6) * np.pi / 3), np.sin(np.arange(6) * np.pi / 3)])
    d0 = np.hypot(*(fine - centre).T)
    dn = np.hypot(fine[:, None, 0] - nbrs[None, :, 0], fine[:, None, 1] - nbrs[None, :, 1])
    tol = 1e-9 * spacing
    closer = dn < d0[:, None] - tol
    ties = np.abs(dn - d0[:, None]) <= tol
    keep = ~closer.any(axis=1)
    w = 1.0 / (1.0 + ties.sum(axis=1))
    return fine[keep], w[keep] / w[keep].sum()


def cell_samples(lattice: SiteLattice, subdivisions: int = 4) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sample points of every site's cell: x (N, S), y (N, S) in Å and weights (S,) summing to 1."""
    offsets, weights = _cell_offsets(lattice.spacing_angstrom, subdivisions, lattice.shape == "slit")
    return (lattice.x[:, None] + offsets[None, :, 0], lattice.y[:, None] + offsets[None, :, 1], weights)


def boltzmann_cell_average(potential_k: np.ndarray, weights: np.ndarray, temperature_k: float) -> np.ndarray:
    """f_i = −kT ln Σ_s w_s exp(−V_is/kT) (K) from the potential at the cells' sample points; +inf where the
    whole cell is solid."""
    kt = float(temperature_k)
    with np.errstate(invalid="ignore"):
        log_mean = logsumexp(-potential_k / kt, axis=1, b=np.broadcast_to(weights, potential_k.shape))
    return np.where(np.isfinite(log_mean), -kt * log_mean, np.inf)


def cell_free_energies(lattice: SiteLattice, *, pore: Pore, pair: PairParameters, temperature_k: float,
                       subdivisions: int = 4) -> np.ndarray:
    """Classical site free energy f_i = −kT ln⟨exp(−V/kT)⟩_cell (K); +inf where the cell is all solid.

    The average runs over a symmetric set of points of the site's cell, so sites against the wall
    (partly in the solid, where V = +inf) get a finite, smooth value.
    """
    px, py, weights = cell_samples(lattice, subdivisions)
    v = wall_potential(px.ravel(), py.ravel(), pore=pore, pair=pair).reshape(px.shape)
    return boltzmann_cell_average(v, weights, temperature_k)


def _lattice_operations(lattice_kind: str) -> list[np.ndarray]:
    """Point group of the site lattice: C6v for the triangular lattice, the y-mirror for rows."""
    from .geometry import _dihedral
    return _dihedral(6) if lattice_kind == "triangular" else [np.eye(2), np.array([[1.0, 0.0], [0.0, -1.0]])]


def shared_operations(pore: Pore) -> list[np.ndarray]:
    """Operations shared by the pore and its lattice (the group the orbits are taken under)."""
    lattice_ops = _lattice_operations(pore.lattice_kind)
    return [op for op in pore.symmetry_operations() if any(np.allclose(op, q, atol=1e-12) for q in lattice_ops)]


def symmetry_orbits(lattice: SiteLattice, pore: Pore) -> np.ndarray:
    """Orbit index (0..M−1) of every site under the group shared by the pore and its lattice.

    Raises ValueError if the site set is not symmetric (a site's image is not a site).
    """
    from scipy.spatial import cKDTree

    pts = np.column_stack([lattice.x, lattice.y])
    tree = cKDTree(pts)
    least = np.arange(lattice.size)
    for op in shared_operations(pore):
        dist, idx = tree.query(pts @ op.T)
        if np.any(dist > 1e-6 * lattice.spacing_angstrom):
            raise ValueError("site set is not symmetric under the pore's point group")
        least = np.minimum(least, idx)
    # a site's orbit is labelled by its least member; members' images are all in the orbit, so the
    # least image of every member is the same
    _, orbit = np.unique(least, return_inverse=True)
    return orbit


def orbit_problem_matrices(lattice: SiteLattice, orbit: np.ndarray):
    """Representative site of each orbit, orbit sizes w, and B with B_oo' = Σ_{j∈o'} A_{rep(o), j}."""
    n_orbits = int(orbit.max()) + 1
    rep = np.zeros(n_orbits, int)
    rep[orbit[::-1]] = np.arange(lattice.size)[::-1]     # first member of each orbit
    weights = np.bincount(orbit, minlength=n_orbits).astype(float)
    member = sparse.csr_matrix((np.ones(lattice.size), (np.arange(lattice.size), orbit)),
                               shape=(lattice.size, n_orbits))
    coupling = (lattice.neighbours[rep] @ member).tocsr()
    return rep, weights, coupling


def slit_row_sites(lattice: SiteLattice, width_angstrom: float):
    """Sites drawn across a slit: each row's one site repeated along x at the lattice spacing (staggered
    by half a spacing on odd rows), within |x| <= width/2. Returns x, y (Å) and the index of the row's site."""
    half = 0.5 * width_angstrom
    ell = lattice.spacing_angstrom
    rows = np.rint(lattice.y / (ell * np.sqrt(3.0) / 2.0)).astype(int)
    ks = np.arange(-int(half / ell) - 1, int(half / ell) + 2)
    x = np.concatenate([ell * (ks + 0.5 * (r % 2)) for r in rows])
    site = np.repeat(np.arange(lattice.size), len(ks))
    keep = np.abs(x) <= half
    return x[keep], lattice.y[site[keep]], site[keep]
