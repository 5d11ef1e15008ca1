"""Lattice of adsorption sites in the pore cross-section, repeated along the pore axis.

The sites sit in rows that follow the wall, the first row in the potential well (`porefill.physics.sites.placement`):
for the hexagon a triangular lattice scaled to fit, for the cylinder the same graph on circles, for the
slit rows across it (one site per row stands for the whole row along x). Every site has the triangular
lattice's 6 in-plane neighbours (a slit row: 2 along it, 2 in each adjacent row) and 2 along the axis,
z = 8; in mean field with uniform density along z the axial pair couples a site to itself, which is how it
enters the neighbour matrix. Layers repeat along z with the fluid spacing ℓ.

Default spacing: the full lattice holds the bulk liquid's number density n_l, so the nominal cell volume is
v = (√3/2) ℓ³ = 1/n_l; a site's free energy is stated against that nominal cell (`porefill.physics.sites.site_models`),
its Boltzmann integral runs over its own cell (`porefill.physics.sites.cells`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.spatial import cKDTree

from porefill.physics.pore.geometry import Pore
from porefill.physics.sites.placement import Placement, place_sites

__all__ = ["SiteLattice", "build_lattice", "lattice_of", "default_spacing", "shared_operations", "boundary_shares",
           "symmetry_orbits", "orbit_problem_matrices", "slit_row_sites", "COORDINATION", "SITE_KINDS"]

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
    spacing_angstrom : axial spacing, ℓ/s² (ℓ the fluid's spacing, s the in-plane scale of the rows)
    cell_area_angstrom2 : mean cross-section area one site stands for, s²(√3/2)ℓ² (slit: per Å of x);
        cell area × axial spacing = (√3/2)ℓ³, the fluid's volume per atom
    kind : (N,) 'corner', 'face' (polygon) or 'wall' (cylinder, slit), 'ring' or 'centre'
    ring : (N,) row index counted from the wall (0 = the first row, in the well)
    shape : the pore's shape name
    vertex : (N,) the site is a corner of its ring (a hexagon's corner sites)
    """

    x: np.ndarray
    y: np.ndarray
    neighbours: sparse.csr_matrix
    spacing_angstrom: float
    cell_area_angstrom2: float
    kind: np.ndarray
    ring: np.ndarray
    shape: str
    vertex: np.ndarray | None = None

    @property
    def size(self) -> int:
        return self.x.size

    @property
    def cell_volume_angstrom3(self) -> float:
        """Cell area × axial spacing: the volume of one site in the lattice gas's own units (the bond rules'
        v; for the slit a site is per Å of x, see ``cell_area_angstrom2``)."""
        return self.cell_area_angstrom2 * self.spacing_angstrom

    @property
    def atom_volume_angstrom3(self) -> float:
        """Volume one atom of the full lattice stands for, Å³ (its liquid density is the inverse): the cell
        volume, and for the slit, whose site stands for a whole row along x with atoms at the lattice spacing
        (`slit_row_sites`), that volume times the spacing."""
        volume = self.cell_volume_angstrom3
        return volume * self.spacing_angstrom if self.shape == "slit" else volume

    def label(self, i: int) -> str:
        k = self.kind[i]
        return f"ring {self.ring[i]}" if k == "ring" else str(k)

    def subset(self, keep: np.ndarray, pore: Pore) -> "SiteLattice":
        """The kept sites, relabelled: rings are counted from the outermost kept row."""
        idx = np.flatnonzero(keep)
        vertex = None if self.vertex is None else self.vertex[idx]
        kind, ring = _classify(pore, self.x[idx], self.y[idx], self.ring[idx], vertex, self.spacing_angstrom)
        return SiteLattice(self.x[idx], self.y[idx], self.neighbours[idx][:, idx].tocsr(), self.spacing_angstrom,
                           self.cell_area_angstrom2, kind, ring, self.shape, vertex)


def _triangular_sites(radius: float, spacing: float) -> np.ndarray:
    """Triangular lattice points (rows along x, one at the origin) within a disk; (N, 2)."""
    n = int(np.ceil(radius / (spacing * np.sqrt(3.0) / 2.0))) + 2
    i, j = np.meshgrid(np.arange(-2 * n, 2 * n + 1), np.arange(-n, n + 1), indexing="ij")
    x = spacing * (i + 0.5 * j)
    y = spacing * (np.sqrt(3.0) / 2.0) * j
    pts = np.column_stack([x.ravel(), y.ravel()])
    return pts[np.hypot(pts[:, 0], pts[:, 1]) <= radius]


def _neighbour_matrix(pairs: np.ndarray, n: int, *, in_plane: float, axial: float) -> sparse.csr_matrix:
    """A with ``in_plane`` on every neighbour pair and ``axial`` on the diagonal (the two axial neighbours)."""
    rows = np.concatenate([pairs[:, 0], pairs[:, 1], np.arange(n)])
    cols = np.concatenate([pairs[:, 1], pairs[:, 0], np.arange(n)])
    vals = np.concatenate([np.full(2 * len(pairs), in_plane), np.full(n, axial)])
    return sparse.csr_matrix((vals, (rows, cols)), shape=(n, n))


def _classify(pore: Pore, x, y, ring, vertex, spacing: float) -> tuple[np.ndarray, np.ndarray]:
    """Kind and ring (rows from the outermost kept row) of each site."""
    ring = np.asarray(ring, int) - (int(np.min(ring)) if len(ring) else 0)
    kind = np.full(ring.size, "ring", dtype=object)
    kind[ring == 0] = pore.wall_label
    if pore.has_corners and vertex is not None:
        kind[(ring == 0) & vertex] = "corner"
    if ring.size:
        kind[ring == ring.max()] = "centre"
        if ring.max() == 0:
            kind[:] = pore.wall_label
            kind[np.hypot(x, y) < 0.5 * spacing] = "centre"
    return kind.astype(str), ring


def lattice_of(pore: Pore, placement: Placement, spacing_angstrom: float) -> SiteLattice:
    """The site lattice of a placement: neighbours, nominal cell area and labels."""
    ell = float(spacing_angstrom)
    n = placement.x.size
    if pore.lattice_kind == "rows":
        # per site: 2 in-row + 2 axial on the diagonal, 2 in each adjacent row
        a = _neighbour_matrix(placement.pairs, n, in_plane=2.0, axial=4.0)
        area = ell * np.sqrt(3.0) / 2.0
    else:
        a = _neighbour_matrix(placement.pairs, n, in_plane=1.0, axial=2.0)
        area = np.sqrt(3.0) / 2.0 * ell * ell
    kind, ring = _classify(pore, placement.x, placement.y, placement.ring, placement.vertex, ell)
    scale = placement.area_scale
    return SiteLattice(placement.x, placement.y, a, ell / scale, area * scale, kind, ring,
                       "slit" if pore.lattice_kind == "rows" else pore.shape, placement.vertex)


def build_lattice(pore: Pore, spacing_angstrom: float, *, first_row_angstrom: float) -> SiteLattice:
    """Sites in rows that follow the wall, the first ``first_row_angstrom`` from it (`porefill.physics.sites.placement`)."""
    ell = float(spacing_angstrom)
    if not (np.isfinite(ell) and ell > 0):
        raise ValueError(f"lattice spacing must be a positive length in Å, got {spacing_angstrom!r}")
    return lattice_of(pore, place_sites(pore, ell, first_row_angstrom), ell)


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


def _lattice_operations(lattice_kind: str) -> list[np.ndarray]:
    """Point group of the site lattice: C6v for the triangular lattice, the y-mirror for rows."""
    from porefill.physics.pore.geometry import _dihedral
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
    """Representative site of each orbit, orbit sizes w, and B with B_oo' = Σ_{j∈o'} A_{rep(o), j}
    (the same for every member of o, since A is invariant under the operations that make the orbits)."""
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
    rows = np.argsort(np.argsort(lattice.y))              # rows in order across the slit
    ks = np.arange(-int(half / ell) - 1, int(half / ell) + 2)
    x = np.concatenate([ell * (ks + 0.5 * (r % 2)) for r in rows])
    site = np.repeat(np.arange(lattice.size), len(ks))
    keep = np.abs(x) <= half
    return x[keep], lattice.y[site[keep]], site[keep]


def boundary_shares(points: np.ndarray, site_x, site_y, site_orbit: np.ndarray, strip: float):
    """Per point (P,): the orbit of its nearest site, that of its second nearest, and the share the second
    takes. A grid point stands for a strip of width w (``strip``) across a cell boundary, so a point within w/2
    of the two sites' bisector, when their orbits differ, gives the far cell ½ − s/w at a distance s; summed
    over points, an orbit's share of a smooth density is then second order in the grid (a whole point to its
    nearest site is first order; common practice for a cell-boundary quadrature, no source)."""
    site_x, site_y = np.asarray(site_x, float), np.asarray(site_y, float)
    tree = cKDTree(np.column_stack([site_x, site_y]))
    if site_x.size < 2:
        first = site_orbit[tree.query(points)[1]]
        return first, first, np.zeros(points.shape[0])
    d, near = tree.query(points, k=2)
    a, b = near[:, 0], near[:, 1]
    s = (d[:, 1] ** 2 - d[:, 0] ** 2) / (2.0 * np.hypot(site_x[b] - site_x[a], site_y[b] - site_y[a]))
    o1, o2 = site_orbit[a], site_orbit[b]
    return o1, o2, np.where((o1 != o2) & (s < 0.5 * strip), 0.5 - s / strip, 0.0)
