"""Wall potential of a continuum Lennard-Jones solid around a pore that is infinite along z.

An atom at (x, y) in the pore interacts with solid force centres of number density ρ through
u(r) = 4ε[(σ/r)^12 − (σ/r)^6]. Integrating u over z and then over the radial extent of the solid along
each in-plane ray from the atom gives the radial tail

    G(s) = 4ερ [ (7π/256) σ^12 s^-9 − (π/8) σ^6 s^-3 ],

and the potential of the solid beyond a boundary seen at distance s(θ) is V = ∫ G(s(θ)) dθ. For a straight
edge at perpendicular distance d the θ-integral is elementary (s = d / cos φ), so a polygonal pore needs no
quadrature. All energies in K (E/k_B), lengths in Å; points in the solid or on its boundary give +inf.

References
----------
W. A. Steele, Surf. Sci. 36, 317 (1973) — the 9-3 wall.
D. H. Everett & J. C. Powl, J. Chem. Soc. Faraday Trans. 1 72, 619 (1976) — the cylindrical pore.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.polynomial import chebyshev
from scipy.special import hyp2f1

from porefill.physics.caching import memoize
from porefill.physics.pore import compiled
from porefill.physics.pore.geometry import HexagonPore, Pore, RegularPolygonPore
from porefill.physics.substances.materials import PairParameters

__all__ = ["wall_potential", "potential_map", "PotentialMap", "radial_tail", "line_kernel",
           "steele_93", "prism_potential", "cylinder_potential",
           "slit_potential", "array_correction", "polygon_potential", "hexagon_array_potential",
           "deepest_minimum", "Minimum"]

# --- kernels ------------------------------------------------------------------------------------
def _tail_coefficients(pair: PairParameters) -> tuple[float, float]:
    """(C9, C3) with G(s) = C9 s^-9 − C3 s^-3, in K·Å^9 and K·Å^3."""
    pre = 4.0 * pair.epsilon_k * pair.density_per_a3
    sig = pair.sigma_angstrom
    return pre * (7.0 * np.pi / 256.0) * sig**12, pre * (np.pi / 8.0) * sig**6


def line_kernel(s, *, pair: PairParameters) -> np.ndarray:
    """Potential (K·Å^-2 per unit solid area) of a line of solid at in-plane distance s (Å).

    f(s) = 4ερ [σ^12 (63π/256) s^-11 − σ^6 (3π/8) s^-5]; the z-integral of u(r).
    """
    s = np.asarray(s, float)
    pre = 4.0 * pair.epsilon_k * pair.density_per_a3
    sig = pair.sigma_angstrom
    return pre * (sig**12 * (63.0 * np.pi / 256.0) * s**-11 - sig**6 * (3.0 * np.pi / 8.0) * s**-5)


def radial_tail(s, *, pair: PairParameters) -> np.ndarray:
    """G(s) = ∫_s^∞ f(s') s' ds', the solid beyond distance s along one in-plane ray (K per radian)."""
    c9, c3 = _tail_coefficients(pair)
    s = np.asarray(s, float)
    return c9 * s**-9 - c3 * s**-3


def steele_93(h, *, pair: PairParameters) -> np.ndarray:
    """9-3 potential of a semi-infinite continuum solid at height h (Å) above its surface (Steele 1973).

    V(h) = (2π/3) ε ρ σ³ [(2/15)(σ/h)^9 − (σ/h)^3]; +inf for h <= 0.
    """
    h = np.asarray(h, float)
    out = np.full(h.shape, np.inf)
    ok = h > 0
    q = pair.sigma_angstrom / h[ok]
    out[ok] = (2.0 * np.pi / 3.0) * pair.epsilon_k * pair.density_per_a3 * pair.sigma_angstrom**3 * (
        (2.0 / 15.0) * q**9 - q**3)
    return out


# --- straight edges -----------------------------------------------------------------------------
def _edge_integrals(d, u1, u2, c9: float, c3: float):
    """∫ G(s(θ)) dθ over the angle an edge subtends, for distance d >= 0 and along-edge u1 < u2.

    With φ measured from the foot of the perpendicular (sin φ = u/r, r² = d² + u²) the integral is
    C9 d^-9 [S9(φ2) − S9(φ1)] − C3 d^-3 [S3(φ2) − S3(φ1)], S_n(φ) = ∫_0^φ cos^n. Written so, it cancels
    catastrophically when P is nearly collinear with the edge (d → 0 with both ends on one side: both
    sines → ±1 while d^-9 → ∞). We write S_n(φ) = sgn(u)[S_n(π/2) − T_n(|φ|)] with the exact complement,
    for a = 1 − |sin φ| = cos²φ / (1 + |sin φ|),
        d^-9 T9 = d / (r^10 (1 + |sin φ|)^5) · (16/5 − 16a/3 + 24a²/7 − a³ + a⁴/9),
        d^-3 T3 = d / (r^4 (1 + |sin φ|)^2) · (1 − a/3),
    which has no negative power of d. When both ends lie on one side of the foot the S(π/2) terms cancel
    exactly and only the complements remain, finite and accurate as d → 0; when the foot lies on the
    edge, d is the true distance to it and the d^-n terms are the physics. The remaining rounding is
    ~1e-16 of |G(d)|, absolute.
    """
    d2 = d * d

    def endpoint(u):
        r2 = d2 + u * u
        r = np.sqrt(r2)
        one_plus = 1.0 + np.abs(u) / r
        a = d2 / (r2 * one_plus)
        r4 = r2 * r2
        op2 = one_plus * one_plus
        w3 = (1.0 - a / 3.0) / (r4 * op2)
        w9 = (16.0 / 5.0 + a * (-16.0 / 3.0 + a * (24.0 / 7.0 + a * (-1.0 + a / 9.0)))) / (
            r4 * r4 * r2 * op2 * op2 * one_plus)
        return np.copysign(d, u) * (c9 * w9 - c3 * w3)

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        straddle = (u1 < 0) & (u2 >= 0)
        out = endpoint(u1) - endpoint(u2)
        if np.any(straddle):
            dd = d[straddle] if np.ndim(d) else d
            inv_d3 = 1.0 / (dd * dd * dd)
            out[straddle] += 2.0 * (c9 * (128.0 / 315.0) * inv_d3 * inv_d3 * inv_d3 - c3 * (2.0 / 3.0) * inv_d3)
    return out


@dataclass(frozen=True)
class _Edges:
    """Straight edges of pore boundaries: start points, unit tangents, outward normals, lengths."""

    start: np.ndarray    # (E, 2)
    tangent: np.ndarray  # (E, 2)
    normal: np.ndarray   # (E, 2), pointing into the solid for a pore boundary
    length: np.ndarray   # (E,)

    @classmethod
    def of_polygons(cls, vertex_sets) -> "_Edges":
        starts, ends = [], []
        for v in vertex_sets:
            starts.append(v)
            ends.append(np.roll(v, -1, axis=0))
        start = np.concatenate(starts)
        vec = np.concatenate(ends) - start
        length = np.hypot(vec[:, 0], vec[:, 1])
        tangent = vec / length[:, None]
        normal = np.column_stack([tangent[:, 1], -tangent[:, 0]])
        return cls(start, tangent, normal, length)

    def select(self, mask: np.ndarray) -> "_Edges":
        return _Edges(self.start[mask], self.tangent[mask], self.normal[mask], self.length[mask])

    def join(self, other: "_Edges") -> "_Edges":
        return _Edges(*(np.concatenate([a, b]) for a, b in zip(
            (self.start, self.tangent, self.normal, self.length),
            (other.start, other.tangent, other.normal, other.length))))


def _sum_over_edges(x, y, edges: _Edges, pair: PairParameters, chunk: int = 2_000_000) -> np.ndarray:
    """Σ_e sgn(D_e) ∫_e G dθ for points (x, y) (1-D arrays) and counter-clockwise pore boundaries.

    For a point inside all the pores' complements this is the potential of the solid outside every
    listed pore: the pore's own boundary adds, and each other pore removes its prism of solid (near
    face minus far face along every ray), which is the same sum with the same sign rule.
    """
    c9, c3 = _tail_coefficients(pair)
    if compiled.available():
        return compiled.sum_over_edges(x, y, edges.start, edges.tangent, edges.normal, edges.length, c9, c3)
    return _sum_over_edges_numpy(x, y, edges, c9, c3, chunk)


def _sum_over_edges_numpy(x, y, edges: _Edges, c9: float, c3: float, chunk: int = 2_000_000) -> np.ndarray:
    """`_sum_over_edges` in numpy, chunked over points (the reference the compiled kernel is tested against)."""
    out = np.zeros(x.shape)
    n_edges = len(edges.length)
    step = max(1, chunk // max(n_edges, 1))
    for lo in range(0, x.size, step):
        px = x[lo:lo + step, None]
        py = y[lo:lo + step, None]
        ax = edges.start[:, 0] - px
        ay = edges.start[:, 1] - py
        signed_d = ax * edges.normal[:, 0] + ay * edges.normal[:, 1]
        u1 = ax * edges.tangent[:, 0] + ay * edges.tangent[:, 1]
        u2 = u1 + edges.length
        integral = _edge_integrals(np.abs(signed_d), u1, u2, c9, c3)
        out[lo:lo + step] = np.sum(np.where(signed_d >= 0, integral, -integral), axis=1)
    return out


def prism_potential(x, y, vertices, *, pair: PairParameters) -> np.ndarray:
    """Potential of a solid convex prism (counter-clockwise vertices) at points outside it."""
    x, y = np.broadcast_arrays(np.asarray(x, float), np.asarray(y, float))
    edges = _Edges.of_polygons([np.asarray(vertices, float)])
    return -_sum_over_edges(x.ravel(), y.ravel(), edges, pair).reshape(x.shape)


# --- cylinder and slit --------------------------------------------------------------------------
def cylinder_potential(x, y, radius: float, *, pair: PairParameters) -> np.ndarray:
    """Thick-walled cylinder of radius R (Everett & Powl 1976), +inf at r >= R.

    V = π² ρ ε σ³ [(7/32)(σ/R)^9 ₂F₁(9/2, 11/2; 1; x²) − (σ/R)^3 ₂F₁(3/2, 5/2; 1; x²)], x = r/R.
    """
    r = np.hypot(np.asarray(x, float), np.asarray(y, float))
    out = np.full(r.shape, np.inf)
    inside = r < radius
    q2 = (r[inside] / radius) ** 2
    sr = pair.sigma_angstrom / radius
    out[inside] = np.pi**2 * pair.density_per_a3 * pair.epsilon_k * pair.sigma_angstrom**3 * (
        (7.0 / 32.0) * sr**9 * hyp2f1(4.5, 5.5, 1.0, q2) - sr**3 * hyp2f1(1.5, 2.5, 1.0, q2))
    return out


def _steele_93_integral(h, pair: PairParameters):
    """∫_h^∞ V93(h') dh' (K·Å), closed form."""
    sig = pair.sigma_angstrom
    pre = (2.0 * np.pi / 3.0) * pair.epsilon_k * pair.density_per_a3 * sig**3
    return pre * ((2.0 / 15.0) * sig**9 / (8.0 * h**8) - sig**3 / (2.0 * h**2))


def slit_potential(y, width: float, *, pair: PairParameters, wall: float | None = None,
                   n_periods: int = 400) -> np.ndarray:
    """Slit of width H with walls at y = ±H/2: two 9-3 walls, or a periodic stack of slabs of thickness w.

    For the stack each side is Σ_k [V93(h_k) − V93(h_k + w)], h_k = H/2 ∓ y + k(H + w); the sum is taken
    exactly for ``n_periods`` slabs and its remainder by the midpoint-rule integral (error ~ n^-5).
    """
    y = np.asarray(y, float)
    out = np.full(y.shape, np.inf)
    inside = np.abs(y) < 0.5 * width
    h_up = 0.5 * width - y[inside]
    h_down = 0.5 * width + y[inside]
    if wall is None:
        out[inside] = steele_93(h_up, pair=pair) + steele_93(h_down, pair=pair)
        return out
    period = width + wall
    k = np.arange(n_periods)
    total = np.zeros(h_up.shape)
    for h0 in (h_up, h_down):
        h = h0[:, None] + k * period
        total += np.sum(steele_93(h, pair=pair) - steele_93(h + wall, pair=pair), axis=1)
        edge = h0 + (n_periods - 0.5) * period
        total += (_steele_93_integral(edge, pair) - _steele_93_integral(edge + wall, pair)) / period
    out[inside] = total
    return out


# --- hexagonal array ----------------------------------------------------------------------------
def _lattice_points(spacing: float, max_radius: float) -> np.ndarray:
    """Triangular lattice (neighbours at 30°, 90°, ...) within max_radius, origin excluded; (K, 2)."""
    a1 = spacing * np.array([np.cos(np.pi / 6), np.sin(np.pi / 6)])
    a2 = spacing * np.array([0.0, 1.0])
    n = int(np.ceil(max_radius / spacing * 2.0 / np.sqrt(3.0))) + 1
    i, j = np.meshgrid(np.arange(-n, n + 1), np.arange(-n, n + 1), indexing="ij")
    pts = i.ravel()[:, None] * a1 + j.ravel()[:, None] * a2
    r = np.hypot(pts[:, 0], pts[:, 1])
    keep = (r > 1e-9 * spacing) & (r <= max_radius * (1 + 1e-12))
    return pts[keep]


def _removed_pore_edges(pore: HexagonPore, centres: np.ndarray) -> _Edges:
    v = pore.vertices
    return _Edges.of_polygons([v + c for c in centres])


def array_correction(x, y, pore: HexagonPore, *, pair: PairParameters, cutoff_spacings: float = 8.0,
                     tail: bool = True) -> np.ndarray:
    """Potential change at points of the central pore from the solid the other pores remove (K, >= 0).

    Sum over removed hexagonal prisms within ``cutoff_spacings`` lattice spacings, each exact (closed
    form per edge), plus the uniform continuum beyond (area fraction of pore in a cell) as a cylindrical
    hole (Everett–Powl). This is the slow reference path; `wall_potential` uses a fast equivalent.
    """
    a = pore.lattice_spacing_angstrom
    centres = _lattice_points(a, cutoff_spacings * a)
    x = np.asarray(x, float).ravel()
    y = np.asarray(y, float).ravel()
    corr = _sum_over_edges(x, y, _removed_pore_edges(pore, centres), pair)
    if tail:
        corr += _tail_correction(x, y, pore, pair, len(centres))
    return corr


def _tail_correction(x, y, pore: HexagonPore, pair: PairParameters, n_removed: int):
    """The removed pores beyond the ``n_removed`` summed ones, as a uniform continuum."""
    a = pore.lattice_spacing_angstrom
    fraction = pore.area_angstrom2 / (0.5 * np.sqrt(3.0) * a * a)
    # the continuum starts at the radius whose disk has the area of the summed cells plus the central
    # one, so the uniform tail holds the right amount of solid
    n_cells = n_removed + 1
    r_start = np.sqrt(n_cells * 0.5 * np.sqrt(3.0) * a * a / np.pi)
    # the removed solid beyond r_start, spread uniformly with area fraction φ, is φ·V_cyl(r_start)
    return -fraction * cylinder_potential(x, y, r_start, pair=pair)


def _hexagon_moments(side: float) -> tuple[float, float, float]:
    """Area, ∫r² dA and ∫r⁴ dA of a regular hexagon of side t about its centre.

    In polar form ∫r^{2k} dA = 12/(2k+2) · h^{2k+2} ∫_0^{π/6} sec^{2k+2}φ dφ with h = √3 t/2;
    ∫sec⁴ = tan + tan³/3 and ∫sec⁶ = tan + 2tan³/3 + tan⁵/5.
    """
    h = 0.5 * np.sqrt(3.0) * side
    tn = np.tan(np.pi / 6.0)
    area = 1.5 * np.sqrt(3.0) * side**2
    m2 = 3.0 * h**4 * (tn + tn**3 / 3.0)
    m4 = 2.0 * h**6 * (tn + 2.0 * tn**3 / 3.0 + tn**5 / 5.0)
    return area, m2, m4


def _multipole_prisms(x, y, centres: np.ndarray, side: float, pair: PairParameters) -> np.ndarray:
    """Σ over far hexagonal prisms of their potential, by their isotropic moments.

    A centrosymmetric shape with six-fold symmetry has isotropic moments up to fifth order, so
    V ≈ A f + (M2/4) ∇²f + (M4/64) ∇⁴f with f the line kernel and ∇² s^-n = n² s^-(n+2) (2-D).
    The first neglected term is ~ (t/D)^6 of the prism's contribution.
    """
    area, m2, m4 = _hexagon_moments(side)
    pre = 4.0 * pair.epsilon_k * pair.density_per_a3
    sig = pair.sigma_angstrom
    total = np.zeros(x.shape)
    for n, coef in ((11, pre * sig**12 * 63.0 * np.pi / 256.0), (5, -pre * sig**6 * 3.0 * np.pi / 8.0)):
        k2 = n * n
        k4 = k2 * (n + 2) ** 2
        inv = 1.0 / ((x[:, None] - centres[:, 0]) ** 2 + (y[:, None] - centres[:, 1]) ** 2)
        p = inv ** (0.5 * n)
        total += coef * np.sum(p * (area + inv * (0.25 * m2 * k2 + inv * (m4 / 64.0) * k4)), axis=1)
    return total


_CHEB_HALF_NODES = 9          # nodes on x >= 0 (and y >= 0): even Chebyshev degree up to 16
_EXACT_FAR_RADIUS = 2.01      # prisms within this many lattice spacings are summed edge by edge


def _split_array_edges(pore: HexagonPore, cutoff_spacings: float):
    """Edges near the pore (summed exactly at every point), the rest (fitted), multipole centres."""
    a = pore.lattice_spacing_angstrom
    centres = _lattice_points(a, cutoff_spacings * a)
    dist = np.hypot(centres[:, 0], centres[:, 1])
    exact = _removed_pore_edges(pore, centres[dist <= _EXACT_FAR_RADIUS * a])
    # Only the three faces of each first-shell prism that turn towards the pore come closer than a
    # (an endpoint within a of the centre); all other edges are at least t + √3·w from the pore.
    ends = exact.start + exact.tangent * exact.length[:, None]
    near = (np.hypot(exact.start[:, 0], exact.start[:, 1]) < a) | (np.hypot(ends[:, 0], ends[:, 1]) < a)
    near_edges = _Edges.of_polygons([pore.vertices]).join(exact.select(near))
    far_edges = exact.select(~near)
    return near_edges, far_edges, centres[dist > _EXACT_FAR_RADIUS * a], len(centres)


@memoize(maxsize=64)
def _array_fields(pore: HexagonPore, pair: PairParameters, cutoff_spacings: float):
    """Near edges and the even Chebyshev coefficients of the far field over the bounding box.

    The far field (everything but the pore's own faces and the three near faces of each first-shell
    neighbour) comes from sources at least t + √3·w outside the pore, so it is analytic well beyond
    the bounding box and a degree-16 fit reproduces it far below 1e-3 K. It has the pore's mirror
    symmetries, so only even polynomials appear and the fit needs nodes in one quadrant only.
    """
    near_edges, far_edges, multipole_centres, n_removed = _split_array_edges(pore, cutoff_spacings)
    m = _CHEB_HALF_NODES
    nodes = np.cos(np.pi * (np.arange(2 * m - 1) + 0.5) / (2 * m - 1))[:m]   # >= 0, last is 0
    _, x1, _, y1 = pore.bounding_box()
    gx, gy = np.meshgrid(x1 * nodes, y1 * nodes, indexing="ij")
    px, py = gx.ravel(), gy.ravel()
    values = _sum_over_edges(px, py, far_edges, pair)
    values -= _multipole_prisms(px, py, multipole_centres, pore.side_angstrom, pair)
    values += _tail_correction(px, py, pore, pair, n_removed)
    # even Chebyshev basis T_2j(x) = T_j(2x² − 1) on the non-negative nodes
    vander = chebyshev.chebvander(2.0 * nodes**2 - 1.0, m - 1)
    inv = np.linalg.inv(vander)
    coef = inv @ values.reshape(gx.shape) @ inv.T
    return near_edges, coef


def hexagon_array_potential(x, y, pore: HexagonPore, pair: PairParameters,
                             cutoff_spacings: float = 8.0) -> np.ndarray:
    """One pore of a hexagonal array: its faces and the near faces of its neighbours edge by edge, plus
    the fitted far field (see `_array_fields`). Points must lie inside the pore."""
    near_edges, coef = _array_fields(pore, pair, cutoff_spacings)
    _, x1, _, y1 = pore.bounding_box()
    if compiled.available():
        far = compiled.even_chebyshev_2d(x, y, x1, y1, coef)
    else:
        far = chebyshev.chebval2d(2.0 * (x / x1) ** 2 - 1.0, 2.0 * (y / y1) ** 2 - 1.0, coef)
    return _sum_over_edges(x, y, near_edges, pair) + far


# --- public entry points ------------------------------------------------------------------------
def wall_potential(x, y, *, pore: Pore, pair: PairParameters) -> np.ndarray:
    """Wall potential (K) at in-plane points (x, y) (Å, any broadcastable shapes) of a pore.

    Parameters
    ----------
    x, y : array_like
        Coordinates in Å, origin at the pore centre (see `porefill.physics.pore.geometry` for the convention).
    pore : HexagonPore, RegularPolygonPore, CylinderPore or SlitPore
        A hexagon with ``wall_angstrom`` set is one pore of a hexagonal array; without, it is isolated.
    pair : PairParameters
        Adsorbate–solid ε (K), σ (Å) and the solid's force-centre density ρ (Å^-3).

    Returns
    -------
    ndarray
        Potential in K; +inf on the boundary and in the solid (no warnings).
    """
    x, y = np.broadcast_arrays(np.asarray(x, float), np.asarray(y, float))
    out = np.full(x.shape, np.inf)
    inside = np.asarray(pore.contains(x, y), bool)
    out[inside] = pore._potential_inside(x[inside], y[inside], pair)    # each shape knows its kernel
    if pair.plating is not None:          # layers of another gas on the wall (porefill.physics.pore.plating)
        from porefill.physics.pore.plating import plating_potential

        out[inside] += plating_potential(x[inside], y[inside], pore, pair.plating)
    return out


def polygon_potential(x, y, vertices, *, pair: PairParameters) -> np.ndarray:
    """Potential inside a convex polygonal pore (counter-clockwise vertices) in an unbounded solid."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    return _sum_over_edges(x.ravel(), y.ravel(), _Edges.of_polygons([np.asarray(vertices, float)]),
                           pair).reshape(x.shape)


@dataclass(frozen=True)
class PotentialMap:
    """Potential on an n_y x n_x grid over the pore's bounding box: ``values[j, i]`` at (x[i], y[j])."""

    x: np.ndarray
    y: np.ndarray
    values: np.ndarray

    def minimum(self) -> tuple[float, float, float]:
        """(depth K, x Å, y Å) of the deepest grid point."""
        j, i = np.unravel_index(np.argmin(self.values), self.values.shape)
        return float(self.values[j, i]), float(self.x[i]), float(self.y[j])


def _symmetric_axis(lo: float, hi: float, n: int) -> np.ndarray:
    """n points from lo to hi, exactly mirror-symmetric about 0 when lo == -hi."""
    axis = np.linspace(lo, hi, n)
    if np.isclose(lo, -hi):
        axis = 0.5 * (axis - axis[::-1])
    return axis


def potential_map(*, pore: Pore, pair: PairParameters, n: int = 200) -> PotentialMap:
    """Potential on an n x n grid over the pore's bounding box.

    The pores here are symmetric under x → −x and y → −y (odd polygons excepted), so only the
    quadrant x >= 0, y >= 0 is computed and mirrored.
    """
    if n < 2:
        raise ValueError(f"grid size n must be at least 2, got {n}")
    x0, x1, y0, y1 = pore.bounding_box()
    x = _symmetric_axis(x0, x1, n)
    y = _symmetric_axis(y0, y1, n)
    odd_polygon = isinstance(pore, RegularPolygonPore) and pore.n_sides % 2 == 1
    if odd_polygon:
        gx, gy = np.meshgrid(x, y)
        return PotentialMap(x, y, wall_potential(gx, gy, pore=pore, pair=pair))
    h, odd = n // 2, n % 2
    gx, gy = np.meshgrid(x[h:], y[h:])
    quad = wall_potential(gx, gy, pore=pore, pair=pair)
    values = np.empty((n, n))
    values[h:, h:] = quad
    values[h:, :h] = quad[:, odd:][:, ::-1]
    values[:h, :] = values[h + odd:, :][::-1]
    return PotentialMap(x, y, values)


@dataclass(frozen=True)
class Minimum:
    """The deepest point of a pore's wall potential: depth (K) at (x, y) (Å), its distance to the wall."""

    depth_k: float
    x_angstrom: float
    y_angstrom: float
    wall_distance_angstrom: float

    @property
    def radius_angstrom(self) -> float:
        return float(np.hypot(self.x_angstrom, self.y_angstrom))


def deepest_minimum(*, pore: Pore, pair: PairParameters, n: int = 200, tol_angstrom: float = 1e-6) -> Minimum:
    """The global minimum of the wall potential: the deepest node of an n x n map, then refined.

    The map's deepest node brackets the minimum to one grid step; a bounded Nelder–Mead search from it
    (scipy.optimize.minimize) refines the position to ``tol_angstrom``. Every caller (dashboard, command
    line) goes through here, so they agree digit for digit. The slit is uniform along x: x is reported 0.
    """
    from scipy.optimize import minimize

    m = potential_map(pore=pore, pair=pair, n=n)
    depth, x0, y0 = m.minimum()
    if not np.isfinite(depth):
        raise ValueError(f"the {n} x {n} map has no point inside the pore; use a finer grid")
    if pore.lattice_kind == "rows":
        x0 = 0.0

    def v(p):
        value = float(wall_potential(p[0], p[1], pore=pore, pair=pair))
        return value if np.isfinite(value) else 1e300

    step = max(m.x[1] - m.x[0], m.y[1] - m.y[0])
    simplex = np.array([[x0, y0], [x0 + 0.5 * step, y0], [x0, y0 + 0.5 * step]])
    res = minimize(v, [x0, y0], method="Nelder-Mead",
                   options={"initial_simplex": simplex, "xatol": tol_angstrom, "fatol": 1e-12, "maxiter": 2000})
    x, y = (float(res.x[0]), float(res.x[1])) if res.fun < depth else (x0, y0)
    if pore.lattice_kind == "rows":
        x = 0.0
    best = min(float(res.fun), depth)
    return Minimum(best, x, y, float(pore.depth_inside(x, y)))

