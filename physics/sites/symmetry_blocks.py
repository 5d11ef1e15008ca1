"""The grid Hamiltonian split into the exact symmetry blocks of the pore, solved block by block.

Every pore porefill builds is symmetric under the mirrors x → −x and y → −y that its grid of points also
keeps (a regular polygon with an even number of sides, the cylinder, the slit; the triangular grid has rows
along x and a point at the origin). The mirrors commute, so the states fall into four sectors, one for each
pair of parities (±, ±) (Z₂ × Z₂). With the orthonormal basis B_s of sector s (symmetrised combinations of
the points of each mirror orbit, sparse), H = ⊕_s B_sᵀ H B_s exactly: each block is a quarter of the size,
its sparse LU several times cheaper, and each block is asked only for its share of the states.

Where grid and potential also keep the rotation by 60° (the hexagon, its array, the cylinder: the group
C6v of 12 elements), the blocks are those of C6v's six irreducible representations (`c6v_blocks`): four of
dimension one (A1, A2, B1, B2, a twelfth of the grid each) and two of dimension two (E1, E2). A state of a
two-dimensional one comes as a degenerate pair; only the first row's block (a sixth of the grid) is solved,
with the projector P¹¹ = (d/|G|) Σ_g D¹¹(g)* g, and each state's partner is made from it by the rotation
(Rψ = cos(mα)ψ + sin(mα)ψ′, α = 60°, m = 1 or 2; Tinkham, Group Theory and Quantum Mechanics (1964), ch. 3 —
value from memory). The work falls by about half again against the four mirror sectors.

A symmetry the potential does not keep (a polygon with an odd number of sides: no x → −x; a slit or a
square: no 60° rotation) is simply not used; with none, the whole grid is one block. The energies are those
of the full Hamiltonian to round-off.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy import sparse

__all__ = ["mirror_permutations", "rotation_permutation", "sector_bases", "c6v_blocks", "Block", "block_states",
           "symmetry_blocks"]

_ROUND = 1e-6          # Å: grid coordinates are multiples of h/2 and h√3/2; mirrored points match to this


def _image_permutation(points: np.ndarray, potential_k: np.ndarray, images: np.ndarray) -> np.ndarray | None:
    """The permutation taking point i to the grid point at ``images[i]``, if every image is a grid point with
    the same potential; else None."""
    ints = np.round(points / _ROUND).astype(np.int64)
    moved = np.round(images / _ROUND).astype(np.int64)
    span = int(max(np.abs(ints[:, 1]).max(), np.abs(moved[:, 1]).max())) * 2 + 1   # one integer key: x·span + y
    keys = ints[:, 0] * span + ints[:, 1]
    order = np.argsort(keys)
    sorted_keys = keys[order]
    wanted = moved[:, 0] * span + moved[:, 1]
    at = np.minimum(np.searchsorted(sorted_keys, wanted), keys.size - 1)
    found = sorted_keys[at] == wanted
    if not found.all():
        return None
    perm = order[at]
    scale = max(1.0, float(np.abs(potential_k).max()))
    return perm if np.allclose(potential_k[perm], potential_k, rtol=0.0, atol=1e-9 * scale) else None


def mirror_permutations(points: np.ndarray, potential_k: np.ndarray) -> list[np.ndarray]:
    """For each of the mirrors x → −x and y → −y that maps the grid onto itself with the same potential,
    the permutation taking point i to its mirror image."""
    out = []
    for flip in (np.array([-1.0, 1.0]), np.array([1.0, -1.0])):
        perm = _image_permutation(points, potential_k, points * flip)
        if perm is not None:
            out.append(perm)
    return out


def rotation_permutation(points: np.ndarray, potential_k: np.ndarray, turns: int = 6) -> np.ndarray | None:
    """The permutation taking point i to its image under the rotation by 2π/``turns`` about the origin, or
    None when grid or potential do not keep that rotation."""
    a = 2.0 * np.pi / turns
    c, s = np.cos(a), np.sin(a)
    rotated = np.column_stack([c * points[:, 0] - s * points[:, 1], s * points[:, 0] + c * points[:, 1]])
    return _image_permutation(points, potential_k, rotated)


def sector_bases(n: int, perms: list[np.ndarray]) -> list[sparse.csr_matrix]:
    """Orthonormal bases (n × n_s, sparse) of the parity sectors of the mirrors ``perms``; the sectors'
    sizes add up to n. Sector s has parity 1 − 2·bit_b(s) under mirror b."""
    if not perms:
        return [sparse.identity(n, format="csr")]
    elements, contains = [np.arange(n)], [()]      # each element as a permutation, and the mirrors in it
    for b, p in enumerate(perms):
        elements += [p[e] for e in elements]
        contains += [c + (b,) for c in contains]
    images = np.stack(elements)                     # (|G|, n): image of each point under each element
    leaders = np.unique(images.min(axis=0))         # one point per mirror orbit
    rows = images[:, leaders].ravel()
    cols = np.tile(np.arange(leaders.size), len(elements))
    bases = []
    for sector in range(2 ** len(perms)):
        parity = [1 - 2 * ((sector >> b) & 1) for b in range(len(perms))]
        chars = np.array([np.prod([parity[b] for b in c]) if c else 1 for c in contains], float)
        # the projector's image of each leader, Σ_g χ(g)|g·ℓ⟩ (a point reached twice adds up; a point on a
        # mirror of odd parity cancels)
        m = sparse.csc_matrix((np.repeat(chars, leaders.size), (rows, cols)), shape=(n, leaders.size))
        m.sum_duplicates()
        m.eliminate_zeros()
        norms = np.sqrt(np.asarray(m.multiply(m).sum(axis=0))).ravel()
        keep = norms > 0
        bases.append((m[:, keep] @ sparse.diags(1.0 / norms[keep])).tocsr())
    return bases


@dataclass(frozen=True, eq=False)
class Block:
    """One symmetry block: ``basis`` (n × n_b, orthonormal columns, sparse); ``degeneracy`` 1, or 2 for the
    first row of a two-dimensional representation, whose states each have a partner ``partner(ψ)``."""

    basis: sparse.csr_matrix
    degeneracy: int = 1
    partner: Callable | None = None


def c6v_blocks(n: int, rotation: np.ndarray, mirror_y: np.ndarray) -> list[Block]:
    """The blocks of C6v from the permutations of the 60° rotation and of the mirror y → −y (module notes):
    A1, A2, B1, B2, and the first rows of E1 and E2 with their partners."""
    # the twelve elements as permutations, g = M^μ R^k (first rotate k times, then mirror if μ = 1)
    rot = [np.arange(n)]
    for _ in range(5):
        rot.append(rotation[rot[-1]])
    elements = rot + [mirror_y[r] for r in rot]
    angle = np.array([k * np.pi / 3.0 for k in range(6)] * 2)
    mirrored = np.array([0] * 6 + [1] * 6)
    # the abstract group: each element as a 2×2 matrix, for the multiplication table
    def matrix(k, mu):
        c, s = np.cos(k * np.pi / 3.0), np.sin(k * np.pi / 3.0)
        r = np.array([[c, -s], [s, c]])
        return (np.diag([1.0, -1.0]) @ r) if mu else r
    mats = [matrix(k % 6, mu) for mu in (0, 1) for k in range(6)]

    def index_of(m):
        return int(np.argmin([np.abs(m - x).max() for x in mats]))
    table = np.array([[index_of(a @ b) for b in mats] for a in mats])     # table[g, h] = index of g·h
    inverse = np.array([index_of(m.T) for m in mats])
    images = np.stack(elements)                                          # (12, n)
    leaders = np.unique(images.min(axis=0))
    orbit = images[:, leaders]                                           # (12, L): point of h·ℓ
    # which elements send a leader to the same point: each orbit's pattern of cosets of its stabiliser
    first = np.argmax(orbit[:, None, :] == orbit[None, :, :], axis=1)    # (12, L): first h' with h'ℓ = hℓ
    patterns, which = np.unique(first.T, axis=0, return_inverse=True)
    which = np.asarray(which).ravel()
    reps = [("A1", 1, lambda k, mu: 1.0), ("A2", 1, lambda k, mu: -1.0 if mu else 1.0),
            ("B1", 1, lambda k, mu: (-1.0) ** k), ("B2", 1, lambda k, mu: -((-1.0) ** k) if mu else (-1.0) ** k),
            ("E1", 2, lambda k, mu: np.cos(k * np.pi / 3.0)), ("E2", 2, lambda k, mu: np.cos(2 * k * np.pi / 3.0))]
    ks = np.round(angle / (np.pi / 3.0)).astype(int)
    inv_rotation = np.empty(n, dtype=np.int64)
    inv_rotation[rotation] = np.arange(n)
    blocks = []
    for name, dim, d11 in reps:
        chi = np.array([d11(k, mu) for k, mu in zip(ks, mirrored)])
        rows, cols, vals = [], [], []
        column = 0
        for p, pattern in enumerate(patterns):
            # P¹¹ e_{g_j ℓ} = (d/12) Σ_g D¹¹(g) e_{(g g_j) ℓ}, in orbit coordinates h = g g_j: coefficient D¹¹(h g_j⁻¹)
            m = np.zeros((12, 12))
            for j in range(12):
                for h in range(12):
                    m[pattern[h], j] += chi[table[h, inverse[j]]] * dim / 12.0
            u, sv, _ = np.linalg.svd(m)
            rank = int((sv > 1e-9 * max(sv.max(), 1.0)).sum())
            if rank == 0:
                continue
            basis = u[:, :rank]                                  # over the coset positions (rows used by pattern)
            members = np.flatnonzero(which == p)
            positions = np.flatnonzero(np.abs(basis).max(axis=1) > 1e-12)
            for r in range(rank):
                pts = orbit[positions][:, members]               # (positions, orbits)
                rows.append(pts.ravel())
                cols.append(np.broadcast_to(column + np.arange(members.size), pts.shape).ravel())
                vals.append(np.broadcast_to(basis[positions, r][:, None], pts.shape).ravel())
                column += members.size
        if column == 0:
            continue
        b = sparse.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                              shape=(n, column))
        if dim == 1:
            blocks.append(Block(b))
        else:
            mm = 1 if name == "E1" else 2
            c, s = np.cos(mm * np.pi / 3.0), np.sin(mm * np.pi / 3.0)

            def partner(psi, c=c, s=s):
                other = psi[inv_rotation]                        # (Rψ)(R x) = ψ(x); columns: one state each
                other -= c * psi
                other *= 1.0 / s
                # made exactly orthogonal to ψ and normalised (in place: a large pore's states fill memory)
                overlap = np.einsum("ij,ij->j", psi, other) / np.einsum("ij,ij->j", psi, psi)
                other -= psi * overlap
                other *= 1.0 / np.sqrt(np.einsum("ij,ij->j", other, other))
                return other
            blocks.append(Block(b, 2, partner))
    return blocks


def symmetry_blocks(points: np.ndarray, potential_k: np.ndarray) -> list[Block]:
    """The finest blocks the grid and potential allow: C6v's (`c6v_blocks`) when they keep both mirrors and
    the 60° rotation, else the mirror sectors (`sector_bases`)."""
    perms = mirror_permutations(points, potential_k)
    if len(perms) == 2:
        rotation = rotation_permutation(points, potential_k)
        if rotation is not None:
            return c6v_blocks(points.shape[0], rotation, perms[1])
    return [Block(b) for b in sector_bases(points.shape[0], perms)]


def block_states(hamiltonian: sparse.spmatrix, blocks, *, k: int, shift: float,
                 solve, vectors: bool | int = True, hint: list | None = None,
                 owners: list | None = None, reduce=None):
    """The k lowest eigenpairs of ``hamiltonian`` (all above ``shift``), block by block.

    ``blocks``: `Block`s (or bare bases, each a block of degeneracy 1). ``solve(block, k_block, shift) ->
    (energies ascending, vectors)`` solves one block. Each block is first asked for its share of the k
    states (a share and a few more); a block whose highest state found still lies below the k-th lowest of
    all is asked again for twice as many, so no state is missed. A state of a block of degeneracy 2 counts
    twice and comes with its partner. ``vectors``: True, every state's vector on the whole grid; an int, the
    lowest that many only; False with no ``reduce``, the energies alone (None for the vectors).
    ``reduce``: a (R, P) sparse matrix applied to every state's |ψ|² on the whole grid, returned third
    (R, k), so that a summary of many states never needs all their vectors at once. ``hint``: how many of the k states (partners counted) each
    block holds on another grid of the same blocks (a coarser one), asked of each block first (and a few
    more) so that no block is solved twice. ``owners``: a list, filled with the block of each state returned.
    """
    blocks = [b if isinstance(b, Block) else Block(b) for b in blocks]
    mats = [(b.basis.T @ hamiltonian @ b.basis).tocsc() for b in blocks]
    sizes = [m.shape[0] for m in mats]
    if hint is not None and len(hint) <= len(blocks):
        hint = list(hint) + [0] * (len(blocks) - len(hint))
        per_solve = [-(-int(c) // b.degeneracy) for c, b in zip(hint, blocks)]    # a partner comes with its state
        want = [min(max(c + 4 + c // 10, 6), s - 2) for c, s in zip(per_solve, sizes)]
    else:
        # each block's share in proportion to its dimension (Weyl: a block's count of states below an energy
        # grows with its share of the grid; a degenerate block's solve brings its partners too), a few more
        full = sum(s * b.degeneracy for b, s in zip(blocks, sizes))
        share = [-(-k * s // full) for s in sizes]
        want = [min(max(c + 4 + c // 10, 6), s - 2) for c, s in zip(share, sizes)]
    found: list = [None] * len(blocks)
    while True:
        for i, m in enumerate(mats):
            if found[i] is None or found[i][0].size < want[i]:
                found[i] = solve(m, want[i], shift) if want[i] > 0 else (np.empty(0), np.empty((sizes[i], 0)))
        energies = np.concatenate([np.repeat(f[0], b.degeneracy) for f, b in zip(found, blocks)])
        kth = np.sort(energies)[min(k, energies.size) - 1]
        short = [i for i, f in enumerate(found)
                 if f[0].size and f[0][-1] <= kth and want[i] < sizes[i] - 2]
        if not short:
            break
        for i in short:
            want[i] = min(2 * want[i], sizes[i] - 2)
    order = np.argsort(energies, kind="stable")[:k]
    if owners is not None:
        owner = np.concatenate([np.full(f[0].size * b.degeneracy, i) for i, (f, b) in enumerate(zip(found, blocks))])
        owners[:] = list(owner[order])
    if vectors is False and reduce is None:
        return energies[order], None
    # only the kept states are put together on the grid, a block at a time (states are listed block by block,
    # a degenerate block's state followed by its partner); ``reduce`` sees every kept state, the whole
    # vectors are kept for the lowest ``vectors`` only
    n_vectors = order.size if vectors is True else int(vectors)
    position = np.full(energies.size, -1)
    position[order] = np.arange(order.size)
    out = np.empty((hamiltonian.shape[0], n_vectors))
    reduced = None if reduce is None else np.empty((reduce.shape[0], order.size))
    start = 0
    for f, b in zip(found, blocks):
        at = position[start:start + f[0].size * b.degeneracy].reshape(-1, b.degeneracy)
        start += f[0].size * b.degeneracy
        use = np.flatnonzero((at >= 0).any(axis=1))
        if not use.size:
            continue
        psi = np.asarray(b.basis @ np.ascontiguousarray(f[1][:, use]))
        members = [psi] if b.degeneracy == 1 else [psi, b.partner(psi)]
        for m, member in enumerate(members):
            keep = at[use, m] >= 0
            cols = at[use, m][keep]
            member = member[:, keep]
            if reduced is not None:
                reduced[:, cols] = reduce @ (member * member)
            whole = cols < n_vectors
            if whole.any():
                out[:, cols[whole]] = member[:, whole]
    if reduce is not None:
        return energies[order], out, reduced
    return energies[order], out
