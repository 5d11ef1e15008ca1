"""Converged Boltzmann integrals over the sites' cells: Z_i(T) = ∫_cell i exp(−V/kT) dA.

The cells of `porefill.physics.sites.placement` are bands between rows cut between neighbouring sites, so every cell is a
union of pieces with straight sides in coordinates that follow the wall:

- hexagon: in the face sector between the centre and one face, q = distance from the centre along the face
  normal and t = position along the face; a piece is q_a ≤ q ≤ q_b, t_lo(q) ≤ t ≤ t_hi(q), both linear in q.
  The potential and the cells share the hexagon's 12 symmetries, so only the pieces in one twelfth
  (0 ≤ t ≤ q tan 30°) are integrated, each counted as often as its site's cell holds it.
- cylinder: the potential depends on r alone, so a ring's site has Z = (2π/6j) ∫ r e^{−V(r)/kT} dr over its
  band (the centre: 2π ∫ r e^{−V/kT} dr).
- slit: the potential depends on y alone; a row's Z is ∫ e^{−V(y)/kT} dy over its band (per Å of x).

Each piece is integrated by adaptive Gauss–Legendre quadrature (6 nodes per direction; a box is halved
along one direction until its own nodes say it is converged) with one node set serving every temperature
the gas allows: a box is accepted only when, at each of several temperatures spanning that range, its
error estimate in each direction (null rules: the decay of its nodes' Legendre coefficients, `_box_errors`)
is below a relative ``tol_k/T`` of its piece, shared by area. Every potential point is evaluated once and
either kept or dropped with its box. The nodes, their weights and the potential there are computed once per
geometry; a temperature then costs one exp per node.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from porefill.physics.sites.placement import Placement
from porefill.physics.pore.wall_potential import wall_potential

__all__ = ["SiteCells", "site_cells"]

_GAUSS_ORDER = 6
_TOLERANCE_K = 2e-3           # target error of kT ln Z per cell, K (the requirement is 0.01 K)
_MAX_RELATIVE = 1e-4          # ... but never looser than this relative error
_BOX_ANGSTROM = 1.5           # largest first box, Å (six GL nodes then lie within 0.2 Å of any well bottom)
_MAX_LEVEL = 14
_TEMPERATURES = 6             # temperatures the node set is checked at, geometric over the gas's range


@dataclass(frozen=True, eq=False)
class SiteCells:
    """Quadrature nodes of every cell: Z_g(T) = Σ_{nodes of g} w exp(−V/kT), a site taking its group's Z.

    Attributes
    ----------
    group : (Q,) cell group of each node; weight : (Q,) Å² (slit: Å) with the cell's multiplicity;
    potential_k : (Q,) wall potential at the node, K; site_group : (N,) group of each site
    area_angstrom2 : (G,) area of each group's cell (slit: width), Å²
    """

    group: np.ndarray
    weight: np.ndarray
    potential_k: np.ndarray
    site_group: np.ndarray
    area_angstrom2: np.ndarray

    @property
    def n_nodes(self) -> int:
        return self.group.size

    def _boltzmann(self, kt: float):
        """Per node w·exp(−(V − V_min,group)/kT) (0 where V is not finite), and each group's V_min."""
        n_groups = self.area_angstrom2.size
        finite = np.isfinite(self.potential_k)
        ref = np.full(n_groups, np.inf)
        np.minimum.at(ref, self.group[finite], self.potential_k[finite])
        ref = np.where(np.isfinite(ref), ref, 0.0)
        with np.errstate(over="ignore", invalid="ignore"):
            terms = np.where(finite, self.weight * np.exp(-(self.potential_k - ref[self.group]) / kt), 0.0)
        return terms, ref

    def log_integrals(self, temperature_k: float) -> np.ndarray:
        """ln Z_i (Z in Å², slit Å) of every site at temperature T; −inf where a cell holds no allowed point."""
        kt = float(temperature_k)
        terms, ref = self._boltzmann(kt)
        z = np.bincount(self.group, weights=terms, minlength=self.area_angstrom2.size)
        with np.errstate(divide="ignore"):
            log_z = np.log(z) - ref / kt
        return log_z[self.site_group]

    def mean_potential_k(self, temperature_k: float) -> np.ndarray:
        """⟨V⟩_i = ∫_cell V e^{−V/kT} dA / ∫_cell e^{−V/kT} dA (K) of every site; +inf where a cell holds no
        allowed point."""
        terms, _ = self._boltzmann(float(temperature_k))
        n_groups = self.area_angstrom2.size
        v = np.where(np.isfinite(self.potential_k), self.potential_k, 0.0)
        z = np.bincount(self.group, weights=terms, minlength=n_groups)
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = np.where(z > 0, np.bincount(self.group, weights=terms * v, minlength=n_groups) / z, np.inf)
        return mean[self.site_group]

    def floored_integrals(self, temperature_k: float, floor_k: float) -> tuple[np.ndarray, np.ndarray]:
        """Per site ∫_cell exp(−(max(E, V) − E)/kT) dA (Å², slit Å; at most the cell's area), E = ``floor_k``,
        and whether the cell reaches below E. The semiclassical tail above a set of one-atom states is
        (1/λ²) e^{−E/kT} times the first (`porefill.physics.sites.quantum`); the cells tile the pore, so the
        sites' shares add up to the whole tail and none takes a piece of a neighbour's well."""
        kt, floor = float(temperature_k), float(floor_k)
        finite = np.isfinite(self.potential_k)
        v = np.where(finite, self.potential_k, np.inf)
        terms = np.where(finite, self.weight * np.exp(-(np.maximum(v, floor) - floor) / kt), 0.0)
        n_groups = self.area_angstrom2.size
        integral = np.bincount(self.group, weights=terms, minlength=n_groups)
        below = np.bincount(self.group, weights=(v < floor).astype(float), minlength=n_groups) > 0
        return integral[self.site_group], below[self.site_group]

    def free_energies(self, temperature_k: float, nominal_area_angstrom2: float) -> np.ndarray:
        """f_i = −kT ln(Z_i / A) (K) in the frame of `porefill.physics.sites.site_models`, A the lattice's nominal cell area."""
        kt = float(temperature_k)
        f = -kt * (self.log_integrals(kt) - np.log(nominal_area_angstrom2))
        return np.where(np.isfinite(f), f, np.inf)


def _gauss(dim: int) -> tuple[np.ndarray, np.ndarray]:
    g, w = np.polynomial.legendre.leggauss(_GAUSS_ORDER)
    g, w = 0.5 * (g + 1.0), 0.5 * w
    if dim == 1:
        return g[:, None], w
    gx, gy = np.meshgrid(g, g, indexing="ij")
    return np.column_stack([gx.ravel(), gy.ravel()]), np.outer(w, w).ravel()


def _legendre_rows() -> np.ndarray:
    """(4, n) rows turning f at the 1-D Gauss nodes into its Legendre coefficients (on the unit interval, a_0
    the rule's own integral) of degrees n−4 … n−1: the two highest pairs (null rules)."""
    x, w = np.polynomial.legendre.leggauss(_GAUSS_ORDER)
    k = np.arange(_GAUSS_ORDER)
    rows = ((2 * k + 1) / 2.0)[:, None] * (np.polynomial.legendre.legvander(x, _GAUSS_ORDER - 1) * w[:, None]).T
    return rows[-4:]


def _box_errors(f: np.ndarray, dim: int) -> np.ndarray:
    """Error estimate of each box's Gauss–Legendre integral in each direction, from its own nodes.

    ``f`` (T, K, q): the integrand times the box's area at its q nodes. Along a direction, each line of nodes
    is expanded in Legendre polynomials (exact on the nodes); |a_{n−2}| + |a_{n−1}| is what the rule would
    miss if the series stopped decaying there, and the decay from degrees n−4, n−3 to n−2, n−1 (ratio r per
    degree) says how much smaller the missed part is: an n-point rule is exact to degree 2n − 1, so the error is
    about that sum × r^(n+1) where r ≤ ½ (a series decaying that fast), and the sum itself otherwise (the
    null-rule estimates of Berntsen & Espelid, ACM Trans. Math. Softw. 17, 233 (1991); the critical ratio ½
    is common practice, no source). The lines' estimates are summed with the other direction's weights.
    Measured against cells 1000× tighter: every site's kT ln Z within 2e-6 K where 1.5e-4 K (helium) to
    2e-3 K (nitrogen) is allowed (tests/test_cells.py). Returns (dim, T, K).
    """
    rows = _legendre_rows()
    n = _GAUSS_ORDER
    if dim == 1:
        coef = [np.abs(f @ rows.T)]                  # (T, K, 4)
        weights = None
    else:
        grid = f.reshape(*f.shape[:2], n, n)         # node (i, j): i along direction 0, j along 1
        coef = [np.abs(np.swapaxes(rows @ grid, 2, 3)),          # along direction 0, one line per j: (T, K, n, 4)
                np.abs(grid @ rows.T)]                           # along direction 1, one line per i
        weights = 0.5 * np.polynomial.legendre.leggauss(n)[1]
    out = []
    for c in coef:
        lo, hi = c[..., 0] + c[..., 1], c[..., 2] + c[..., 3]
        with np.errstate(divide="ignore", invalid="ignore"):
            rate = np.sqrt(np.where(lo > 0, hi / lo, 1.0))
        est = np.where(rate <= 0.5, hi * rate ** (n + 1), hi)
        out.append(est if weights is None else est @ weights)
    return np.stack(out)


def _adaptive(evaluate, extents: np.ndarray, dim: int, temperatures: np.ndarray, rtol: np.ndarray):
    """Adaptive Gauss–Legendre over pieces mapped from the unit box, splitting boxes in one direction at a
    time (the wall-normal spike of a cold well needs fine steps across the wall only). Every node is
    evaluated once: a box is judged by its own nodes (`_box_errors`) and either kept whole or halved.

    ``evaluate(piece (K,), unit points (K, q, dim)) -> (V (K, q), jacobian (K, q))``; ``extents`` (pieces,)
    the largest physical size of each piece, which sets its first subdivision. A box is accepted when its
    error estimate in each direction is within its share (by unit area) of ``rtol`` × the piece's integral,
    at every temperature, and otherwise halved along the direction whose estimate is furthest over.
    Returns the accepted nodes as (piece, weight with jacobian, V).
    """
    nodes, gw = _gauss(dim)
    levels = np.maximum(0, np.ceil(np.log2(np.maximum(extents, 1e-12) / _BOX_ANGSTROM))).astype(int)
    piece, lower = [], []
    for p, lev in enumerate(levels):
        k = 2 ** lev
        grid = np.array(np.meshgrid(*[np.arange(k)] * dim, indexing="ij")).reshape(dim, -1).T / k
        piece.append(np.full(len(grid), p))
        lower.append(grid)
    piece, lower = np.concatenate(piece), np.vstack(lower)
    size = np.repeat((1.0 / 2.0 ** levels)[:, None], dim, axis=1)[piece]

    n_pieces, n_t = extents.size, temperatures.size
    kt = temperatures[:, None, None]
    done_p, done_w, done_v = [], [], []
    # the accepted boxes' integrals, kept as ln Σ w e^{−V/kT} per (temperature, piece), and their lowest V
    done_log = np.full((n_t, n_pieces), -np.inf)
    done_min = np.full(n_pieces, np.inf)
    for level in range(dim * _MAX_LEVEL + 1):
        if not piece.size:
            break
        area = np.prod(size, axis=1)
        v, jac = evaluate(piece, lower[:, None, :] + size[:, None, :] * nodes[None, :, :])
        ref = done_min.copy()
        np.minimum.at(ref, piece, np.where(np.isfinite(v), v, np.inf).min(axis=1))
        ref = np.where(np.isfinite(ref), ref, 0.0)
        with np.errstate(over="ignore"):
            f = np.exp(-(v[None] - ref[piece][None, :, None]) / kt) * (jac * area[:, None])[None]   # (T, K, q)
        f = np.where(np.isfinite(f), f, 0.0)
        integral = f @ gw                                                        # (T, K)
        with np.errstate(over="ignore"):
            done = np.exp(done_log + ref[None, :] / kt[:, :, 0])                # accepted boxes, same frame
        total = np.stack([np.bincount(piece, integral[t], minlength=n_pieces) for t in range(n_t)]) + done
        budget = rtol[:, None] * total[:, piece] * area[None, :] + 1e-300
        ratio = (_box_errors(f, dim) / budget[None]).max(axis=1)               # (dim, K)
        ok = (ratio.max(axis=0) <= 1.0) | (level >= dim * _MAX_LEVEL)
        if np.any(ok):
            dp, dv, dw = piece[ok], v[ok], jac[ok] * gw[None, :] * area[ok, None]
            done_p.append(dp)
            done_v.append(dv)
            done_w.append(dw)
            _accumulate(done_log, done_min, dp, dv, dw, kt[:, :, 0])
        split = np.argmax(ratio, axis=0)
        nxt_lower, nxt_size, nxt_p = [], [], []
        for d in range(dim):
            sel = ~ok & (split == d)
            if not np.any(sel):
                continue
            half = size[sel].copy()
            half[:, d] *= 0.5
            upper = lower[sel].copy()
            upper[:, d] += half[:, d]
            nxt_lower += [lower[sel], upper]
            nxt_size += [half, half]
            nxt_p += [piece[sel], piece[sel]]
        if not nxt_p:
            break
        piece, lower, size = np.concatenate(nxt_p), np.vstack(nxt_lower), np.vstack(nxt_size)
    q = len(gw)
    return (np.concatenate([np.repeat(p, q) for p in done_p]), np.concatenate([x.ravel() for x in done_w]),
            np.concatenate([x.ravel() for x in done_v]))


def _accumulate(done_log: np.ndarray, done_min: np.ndarray, piece: np.ndarray, v: np.ndarray, w: np.ndarray,
                kt: np.ndarray) -> None:
    """Add accepted boxes (piece (B,), V and weights (B, q)) to ``done_log`` (T, pieces) = ln Σ w e^{−V/kT},
    in place, each piece's sum taken relative to its own lowest V (no overflow), and lower ``done_min``."""
    finite = np.isfinite(v)
    low = np.full(done_min.size, np.inf)
    np.minimum.at(low, piece, np.where(finite, v, np.inf).min(axis=1))
    np.minimum(done_min, low, out=done_min)
    low = np.where(np.isfinite(low), low, 0.0)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        for t in range(kt.shape[0]):
            e = np.where(finite, w * np.exp(-(v - low[piece][:, None]) / kt[t, 0]), 0.0).sum(axis=1)
            s = np.bincount(piece, e, minlength=done_min.size)
            done_log[t] = np.logaddexp(done_log[t], np.log(s) - low / kt[t, 0])


def _hexagon_pieces(pore, placement: Placement) -> np.ndarray:
    """Pieces of the cells in one twelfth of the hexagon (0 ≤ t ≤ q tan 30°), one row each:
    q_a, q_b, t_lo = a0 + a1 q, t_hi = b0 + b1 q, multiplicity, and the owning site's (q, t)."""
    tan30 = np.tan(np.pi / 6.0)
    apothem, m, step = pore.apothem_angstrom, placement.rings - 1, placement.step_angstrom
    along = placement.along_angstrom
    rows = []
    for j in range(m + 1):
        q_a = 0.0 if j == 0 else (j - 0.5) * step
        q_b = apothem if j == m else (j + 0.5) * step
        if j == 0:                                       # the centre: all twelve twelfths of its cell
            rows.append((q_a, q_b, 0.0, 0.0, 0.0, tan30, 12.0, 0.0, 0.0))
            continue
        for i in range(j + 1):
            t_site = (i - 0.5 * j) * along
            if i == j:                                   # the corner: out to the bisector, both sides of it
                rows.append((q_a, q_b, t_site - 0.5 * along, 0.0, 0.0, tan30, 2.0, j * step, t_site))
            elif abs(t_site) < 1e-9 * along:             # on the face's mirror line
                rows.append((q_a, q_b, 0.0, 0.0, 0.5 * along, 0.0, 2.0, j * step, 0.0))
            elif t_site > 0:
                rows.append((q_a, q_b, t_site - 0.5 * along, 0.0, t_site + 0.5 * along, 0.0, 1.0, j * step,
                             t_site))
    return np.array(rows, float)


def site_cells(pore, pair, placement: Placement, orbit: np.ndarray, *, temperature_range_k: tuple[float, float],
               tol_k: float = _TOLERANCE_K) -> SiteCells:
    """Quadrature nodes of every site's cell, converged for every temperature in ``temperature_range_k``.

    ``orbit`` (N,) the sites' symmetry orbits (a hexagon's twelfth holds one member of each).
    """
    from scipy.spatial import cKDTree

    temps = np.geomspace(temperature_range_k[0], temperature_range_k[1], _TEMPERATURES)
    rtol = np.minimum(_MAX_RELATIVE, tol_k / temps)
    sites = np.column_stack([placement.x, placement.y])
    m, step = placement.rings - 1, placement.step_angstrom
    if pore.shape == "hexagon":
        pieces = _hexagon_pieces(pore, placement)
        normal = np.array([np.cos(np.pi / 6), np.sin(np.pi / 6)])
        tangent = np.array([-np.sin(np.pi / 6), np.cos(np.pi / 6)])
        q_a, q_b, a0, a1, b0, b1, mult = pieces[:, :7].T

        def evaluate(pc, unit):
            q = q_a[pc, None] + unit[..., 0] * (q_b - q_a)[pc, None]
            t_lo, t_hi = a0[pc, None] + a1[pc, None] * q, b0[pc, None] + b1[pc, None] * q
            t = t_lo + unit[..., 1] * (t_hi - t_lo)
            x, y = q * normal[0] + t * tangent[0], q * normal[1] + t * tangent[1]
            return (wall_potential(x, y, pore=pore, pair=pair),
                    (q_b - q_a)[pc, None] * (t_hi - t_lo) * mult[pc, None])

        where = pieces[:, 7, None] * normal + pieces[:, 8, None] * tangent
        owner = cKDTree(sites).query(where)[1]
        group_of_piece = orbit[owner]
        site_group = orbit
        extents = np.maximum(q_b - q_a, np.maximum(b0 + b1 * q_b - a0 - a1 * q_b, b0 + b1 * q_a - a0 - a1 * q_a))
        dim = 2
    else:
        length = pore.radius_angstrom if pore.shape == "cylinder" else 0.5 * pore.width_angstrom
        if pore.shape == "cylinder":
            j = np.arange(m + 1)
            lo = np.where(j == 0, 0.0, (j - 0.5) * step)
            hi = np.where(j == m, length, (j + 0.5) * step)
            angle = np.where(j == 0, 2.0 * np.pi, 2.0 * np.pi / np.maximum(6 * j, 1))
            site_group = m - placement.ring                     # ring from the centre
            group_of_piece = j

            def evaluate(pc, unit):
                r = lo[pc, None] + unit[..., 0] * (hi - lo)[pc, None]
                return (wall_potential(r, 0.0 * r, pore=pore, pair=pair),
                        (hi - lo)[pc, None] * r * angle[pc, None])
        else:
            y = placement.y
            mid = 0.5 * (y[1:] + y[:-1])
            lo, hi = np.concatenate([[-length], mid]), np.concatenate([mid, [length]])
            site_group = np.arange(y.size)
            group_of_piece = site_group

            def evaluate(pc, unit):
                yy = lo[pc, None] + unit[..., 0] * (hi - lo)[pc, None]
                return wall_potential(0.0 * yy, yy, pore=pore, pair=pair), np.broadcast_to((hi - lo)[pc, None],
                                                                                           yy.shape)
        extents = hi - lo
        dim = 1
    piece, weight, v = _adaptive(evaluate, np.asarray(extents, float), dim, temps, rtol)
    group = np.asarray(group_of_piece)[piece]
    n_groups = int(np.max(site_group)) + 1
    area = np.bincount(group, weights=weight, minlength=n_groups)
    return SiteCells(group, weight, v, np.asarray(site_group), area)
