"""The grid Hamiltonian split into the exact symmetry blocks of the pore, solved block by block.

Every pore porefill builds is symmetric under the mirrors x → −x and y → −y that its grid of points also
keeps (a regular polygon with an even number of sides, the cylinder, the slit; the triangular grid has rows
along x and a point at the origin). The mirrors commute, so the states fall into four sectors, one for each
pair of parities (±, ±) (Z₂ × Z₂). With the orthonormal basis B_s of sector s (symmetrised combinations of
the points of each mirror orbit, sparse), H = ⊕_s B_sᵀ H B_s exactly: each block is a quarter of the size,
its sparse LU several times cheaper, and each block is asked only for its share of the states.

A mirror the potential does not keep (a polygon with an odd number of sides: no x → −x) is simply not used;
with none, the whole grid is one block. The energies are those of the full Hamiltonian to round-off.
"""
from __future__ import annotations

import numpy as np
from scipy import sparse

__all__ = ["mirror_permutations", "sector_bases", "block_states"]

_ROUND = 1e-6          # Å: grid coordinates are multiples of h/2 and h√3/2; mirrored points match to this


def mirror_permutations(points: np.ndarray, potential_k: np.ndarray) -> list[np.ndarray]:
    """For each of the mirrors x → −x and y → −y that maps the grid onto itself with the same potential,
    the permutation taking point i to its mirror image."""
    ints = np.round(points / _ROUND).astype(np.int64)
    span = int(np.abs(ints[:, 1]).max()) * 2 + 1          # one integer key per point: x·span + y
    keys = ints[:, 0] * span + ints[:, 1]
    order = np.argsort(keys)
    sorted_keys = keys[order]
    scale = max(1.0, float(np.abs(potential_k).max()))
    out = []
    for flip in (np.array([-1, 1]), np.array([1, -1])):
        mirrored = ints * flip
        wanted = mirrored[:, 0] * span + mirrored[:, 1]
        at = np.minimum(np.searchsorted(sorted_keys, wanted), keys.size - 1)
        found = sorted_keys[at] == wanted
        perm = np.where(found, order[at], -1)
        if found.all() and np.allclose(potential_k[perm], potential_k, rtol=0.0, atol=1e-9 * scale):
            out.append(perm)
    return out


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


def block_states(hamiltonian: sparse.spmatrix, bases: list[sparse.csr_matrix], *, k: int, shift: float,
                 solve) -> tuple[np.ndarray, np.ndarray]:
    """The k lowest eigenpairs of ``hamiltonian`` (all above ``shift``), block by block.

    ``solve(block, k_block, shift) -> (energies ascending, vectors)`` solves one block. Each block is first
    asked for its share of the k states (a quarter and a few more); a block whose highest state found still
    lies below the k-th lowest of all is asked again for twice as many, so no state is missed.
    """
    blocks = [(b.T @ hamiltonian @ b).tocsc() for b in bases]
    sizes = [blk.shape[0] for blk in blocks]
    want = [min(max(k // len(blocks) + 4, 6), s - 2) for s in sizes]
    found: list = [None] * len(blocks)
    while True:
        for i, blk in enumerate(blocks):
            if found[i] is None or found[i][0].size < want[i]:
                found[i] = solve(blk, want[i], shift) if want[i] > 0 else (np.empty(0), np.empty((sizes[i], 0)))
        energies = np.concatenate([f[0] for f in found])
        kth = np.sort(energies)[min(k, energies.size) - 1]
        short = [i for i, f in enumerate(found)
                 if f[0].size and f[0][-1] <= kth and want[i] < sizes[i] - 2]
        if not short:
            break
        for i in short:
            want[i] = min(2 * want[i], sizes[i] - 2)
    order = np.argsort(energies, kind="stable")[:k]
    vectors = np.column_stack([np.asarray(bases[i] @ found[i][1]) for i in range(len(blocks))])
    return energies[order], vectors[:, order]
