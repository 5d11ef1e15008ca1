"""Where the adsorption sites sit: rows that follow the pore's wall, the first of them in the potential well.

Every shape places its sites in rows parallel to its wall. The first row lies at the distance ``d1`` from the
wall where the wall potential has its minimum (along the cut from the centre to the middle of a face); the
remaining distance to the centre, D = (apothem, radius or half-width) − d1, is divided into m = round(D/Δ)
equal steps, Δ the fluid's row spacing, so inner rows keep the fluid's spacing to within 1/(2m) and the
centre takes what is left:

- **hexagon**: a triangular lattice with a site at the centre, scaled by s = D/(m·ℓ√3/2) so that its m-th
  hexagonal ring has apothem D (its corners on the pore's corner bisectors, at d1 from both faces). The
  neighbours are the triangular lattice's, whatever the scale.
- **cylinder**: the same graph drawn on circles: ring j (6j sites) at radius j·D/m at equal angles, with
  D/m ≈ ℓ·(3√3/2π)^½ so the mean area per site stays the fluid's (√3/2)ℓ².
- **slit**: m + 1 rows evenly spaced between the two first rows, y = ±(H/2 − d1).

Scaling the rows by s changes the mean cell area by s²; the axial spacing becomes ℓ/s², so every cell keeps
the fluid's volume and a full pore the liquid's density at every size (the slit keeps ℓ: its rows' bands
simply differ from ℓ√3/2 by the same 1/(2m)).

Rounding D/Δ changes the lattice where D/Δ passes k + ½ (`row_change_sizes`); a pore between two whole
numbers of rows is computed as the mixture of the lattices of ⌊D/Δ⌋ and ⌊D/Δ⌋ + 1 row steps (``rows``,
`row_fraction`; `porefill.physics.lattice_gas.row_blend`), so no result jumps there.
Each site's cell is its row's band (bounded half-way to the next row; the first row's band reaches the
wall, the centre's the centre) cut half-way between neighbouring sites of the row: these cells tile the
pore exactly (`porefill.physics.sites.cells` integrates over them).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from porefill.physics.substances.materials import PairParameters
from porefill.physics.pore.wall_potential import wall_potential

__all__ = ["Placement", "place_sites", "first_row_distance", "CYLINDER_RING_FACTOR", "row_change_sizes",
           "row_fraction"]

ROW = np.sqrt(3.0) / 2.0                                   # row spacing of a triangular lattice / ℓ
CYLINDER_RING_FACTOR = float(np.sqrt(3.0 * np.sqrt(3.0) / (2.0 * np.pi)))   # ring step / ℓ on circles


@dataclass(frozen=True, eq=False)
class Placement:
    """Sites of one cross-section.

    Attributes
    ----------
    x, y : (N,) positions, Å
    ring : (N,) row counted from the wall (0 = the first row, in the well)
    vertex : (N,) the site is a corner of its (hexagonal) ring
    pairs : (P, 2) in-plane neighbour pairs (the axial pair is added by the lattice)
    rings : m + 1, the number of rows from the wall to the centre (slit: rows across)
    step_angstrom : distance between rows, D/m (0 when one row holds every site)
    along_angstrom : distance between sites along a row (slit: ℓ, the spacing along x)
    first_row_angstrom : d1, the first row's distance from the wall
    area_scale : mean in-plane cell area over the fluid's (√3/2)ℓ² (s², 1 for the slit and a lone site);
        the lattice's axial spacing is ℓ/s² so that every cell keeps the fluid's volume 1/n_l
    """

    x: np.ndarray
    y: np.ndarray
    ring: np.ndarray
    vertex: np.ndarray
    pairs: np.ndarray
    rings: int
    step_angstrom: float
    along_angstrom: float
    first_row_angstrom: float
    area_scale: float = 1.0


def _face_cut(pore) -> tuple[float, float]:
    """(angle of the cut from the centre to the middle of the nearest wall, its length), rad and Å."""
    if pore.shape == "slit":
        return 0.5 * np.pi, 0.5 * pore.width_angstrom
    if pore.shape == "cylinder":
        return 0.0, pore.radius_angstrom
    return np.pi / pore.n_sides, pore.apothem_angstrom


def first_row_distance(pore, pair: PairParameters) -> float:
    """d1 (Å): distance from the wall of the potential minimum along the cut to the middle of a face.

    The deepest of 400 points of the cut, refined by a bounded Brent search (scipy.optimize) to 1e-6 Å.
    A pore too narrow for a well of its own has its minimum at the centre: d1 is then the whole cut.
    """
    angle, length = _face_cut(pore)
    c, s = np.cos(angle), np.sin(angle)
    r = np.linspace(0.0, length, 401)[:-1]
    v = wall_potential(r * c, r * s, pore=pore, pair=pair)
    k = int(np.argmin(v))
    if k == 0:
        return float(length)
    lo, hi = r[k - 1], min(r[k + 1], length * (1.0 - 1e-9))
    res = minimize_scalar(lambda q: float(wall_potential(q * c, q * s, pore=pore, pair=pair)), bounds=(lo, hi),
                          method="bounded", options={"xatol": 1e-6})
    return float(length - (res.x if res.fun < v[k] else r[k]))


def _rows(depth: float, step: float) -> int:
    """m = round(D/Δ) steps between the first row and the centre (0: one site or row at the centre)."""
    return int(np.floor(depth / step + 0.5)) if depth > 0 else 0


def _row_step(shape: str, spacing: float) -> float:
    """Δ, the fluid's own distance between rows (Å) in the placement of ``shape``."""
    return (CYLINDER_RING_FACTOR if shape == "cylinder" else ROW) * spacing


def row_fraction(pore, spacing_angstrom: float, first_row_angstrom: float) -> float:
    """D/Δ (the slit: 2D/Δ), the number of row steps between the first row and the centre that the pore would
    hold at the fluid's own row spacing; a whole number where its rows fit unstrained. ``place_sites`` puts
    round(D/Δ) steps by default."""
    _, length = _face_cut(pore)
    depth = max(length - float(first_row_angstrom), 0.0)
    if pore.shape == "slit":
        depth *= 2.0
    return depth / _row_step(pore.shape, float(spacing_angstrom))


def _hexagonal_rings(m: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Unit triangular lattice (spacing 1, rows along x, a site at the origin) out to hexagonal ring m:
    points (K, 2), ring from the centre j, position along the ring (0 at the corner on +x, 6j per turn),
    and the nearest-neighbour pairs."""
    from scipy.spatial import cKDTree

    corners = np.column_stack([np.cos(np.arange(7) * np.pi / 3), np.sin(np.arange(7) * np.pi / 3)])
    pts, ring, along = [np.zeros((1, 2))], [np.zeros(1, int)], [np.zeros(1)]
    for j in range(1, m + 1):
        side = np.arange(j) / j                                 # fraction along each side, corner first
        seg = [corners[k] * j * (1 - side[:, None]) + corners[k + 1] * j * side[:, None] for k in range(6)]
        pts.append(np.vstack(seg))
        ring.append(np.full(6 * j, j))
        along.append(np.concatenate([k * j + np.arange(j) for k in range(6)]).astype(float))
    pts, ring, along = np.vstack(pts), np.concatenate(ring), np.concatenate(along)
    pairs = cKDTree(pts).query_pairs(1.01, output_type="ndarray") if len(pts) > 1 else np.zeros((0, 2), int)
    return pts, ring, along, pairs


def place_sites(pore, spacing_angstrom: float, first_row_angstrom: float, *, rows: int | None = None) -> Placement:
    """Sites of a hexagon, cylinder or slit in rows that follow the wall (see the module notes).

    ``rows``: the number of row steps m between the first row and the centre, when not round(D/Δ): the
    neighbouring lattices that `porefill.physics.lattice_gas.row_blend` mixes (strained by D/(mΔ)).
    """
    ell, d1 = float(spacing_angstrom), float(first_row_angstrom)
    _, length = _face_cut(pore)
    depth = length - d1
    if rows is not None and (isinstance(rows, bool) or int(rows) != rows or rows < 0):
        raise ValueError(f"rows must be a whole number >= 0; got {rows!r}")
    if rows is not None and rows > 0 and depth <= 0:
        raise ValueError(f"this pore has no room for {rows} row steps (the first row is at its centre)")

    def count(d, step):
        return _rows(d, step) if rows is None else int(rows)

    if pore.shape == "slit":
        m = count(2.0 * depth, ROW * ell)
        step = 2.0 * depth / m if m else 0.0
        y = -depth + step * np.arange(m + 1) if m else np.zeros(1)
        i = np.arange(y.size)
        pairs = np.column_stack([i[:-1], i[1:]])
        return Placement(np.zeros_like(y), y, np.minimum(i, m - i), np.zeros(y.size, bool), pairs, m + 1,
                         step, ell, d1)
    if pore.shape == "hexagon":
        m = count(depth, ROW * ell)
        step = depth / m if m else 0.0
        pts, j, along, pairs = _hexagonal_rings(m)
        xy = pts * (step / ROW)
        along_step = step / ROW
        scale = (step / (ROW * ell)) ** 2 if m else 1.0
    elif pore.shape == "cylinder":
        m = count(depth, CYLINDER_RING_FACTOR * ell)
        step = depth / m if m else 0.0
        _, j, along, pairs = _hexagonal_rings(m)
        theta = np.where(j > 0, 2.0 * np.pi * along / np.maximum(6 * j, 1), 0.0)
        xy = np.column_stack([j * step * np.cos(theta), j * step * np.sin(theta)])
        along_step = np.pi / 3.0 * step
        scale = (step / (CYLINDER_RING_FACTOR * ell)) ** 2 if m else 1.0
    else:
        raise ValueError(f"sites are placed in hexagons, cylinders and slits; got a {pore.shape}")
    vertex = (j > 0) & (np.mod(along, np.maximum(j, 1)) == 0)
    return Placement(xy[:, 0], xy[:, 1], m - j, vertex, pairs, m + 1, step, along_step, d1, float(scale))


def row_change_sizes(shape: str, spacing_angstrom: float, first_row_angstrom: float, *, up_to: float,
                     wall_angstrom: float | None = None) -> np.ndarray:
    """Pore sizes (side length, radius or width, Å) below ``up_to`` where a new row of sites enters.

    A row enters where D/Δ = k + ½ (D the distance from the first row to the centre). d1 is taken as fixed,
    which it is to a few hundredths of an Å once the pore is a few σ wide.
    """
    ell, d1 = float(spacing_angstrom), float(first_row_angstrom)
    k = np.arange(0, 400) + 0.5
    if shape == "slit":
        sizes = k * ROW * ell + 2.0 * d1
    elif shape == "cylinder":
        sizes = k * CYLINDER_RING_FACTOR * ell + d1
    else:
        sizes = (k * ROW * ell + d1) / ROW                     # apothem = side · √3/2
    return sizes[sizes <= up_to]
