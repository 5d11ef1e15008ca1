"""The grid Hamiltonian solved in symmetry blocks (physics/sites/symmetry_blocks.py) gives the states of the
whole grid: an exact block decomposition, so energies agree to round-off (~1e-9 K asked by the speed issue)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import sparse

from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.stages import geometry_stage
from porefill.physics.sites import quantum
from porefill.physics.sites.symmetry_blocks import mirror_permutations, sector_bases


def _grid(**fields):
    geo = geometry_stage(Scenario(**fields))
    pts, v, pairs = quantum._grid(geo.pore, geo.pair, 0.25)                       # noqa: SLF001
    return geo, pts, v, pairs


@pytest.mark.parametrize("fields", [
    dict(size_angstrom=13.0, wall_angstrom=8.0, temperature_k=1.5),               # hexagon array
    dict(shape="cylinder", size_angstrom=9.0, temperature_k=1.5),
    dict(shape="slit", size_angstrom=9.0, wall_angstrom=6.0, temperature_k=1.5),
])
def test_blocks_give_the_full_grids_states(fields):
    geo, pts, v, pairs = _grid(**fields)
    hbar2 = geo.adsorbate.hbar2_over_mk
    shift = float(v.min()) - 1.0
    e_full, vec_full = quantum.grid_states(v, pairs, 0.25, hbar2, k=40, shift=shift)
    e_blk, vec_blk = quantum.grid_states(v, pairs, 0.25, hbar2, k=40, shift=shift, points=pts)
    # an exact decomposition (both mirrors are symmetries of grid and potential): round-off only
    np.testing.assert_allclose(e_blk, e_full, rtol=0.0, atol=1e-9)
    np.testing.assert_allclose((vec_blk**2).sum(axis=0), 1.0, rtol=1e-12)
    # the thermal density does not depend on how degenerate states are rotated among themselves
    for vec in (vec_full, vec_blk):
        assert vec.shape == (v.size, 40)
    w = np.exp(-(e_full - e_full[0]) / 1.5)
    np.testing.assert_allclose(vec_blk**2 @ w, vec_full**2 @ w, rtol=0.0, atol=1e-9)


def test_both_mirrors_found_and_the_sectors_span_the_grid():
    geo, pts, v, pairs = _grid(size_angstrom=11.0, wall_angstrom=8.0, temperature_k=1.5)
    perms = mirror_permutations(pts, v)
    assert len(perms) == 2 and all(np.array_equal(p[p], np.arange(v.size)) for p in perms)   # involutions
    bases = sector_bases(v.size, perms)
    assert sum(b.shape[1] for b in bases) == v.size
    full = sparse.hstack(bases).toarray()
    np.testing.assert_allclose(full.T @ full, np.eye(v.size), atol=1e-12)                     # orthonormal
    h = quantum._hamiltonian(v, pairs, 0.25, geo.adsorbate.hbar2_over_mk)                      # noqa: SLF001
    off = bases[0].T @ h @ bases[1]
    assert abs(off).max() < 1e-10                      # no coupling between sectors: H is block diagonal


def test_a_mirror_the_potential_breaks_is_not_used():
    rng = np.random.default_rng(7)
    pts = np.array([[x, y] for x in (-1.0, 0.0, 1.0) for y in (-1.0, 0.0, 1.0)])
    v = np.hypot(*pts.T) + 0.3 * pts[:, 0]             # even in y, not in x
    perms = mirror_permutations(pts, v)
    assert len(perms) == 1 and np.allclose(pts[perms[0]], pts * [1.0, -1.0])
    assert len(mirror_permutations(pts, rng.normal(size=9))) == 0
    assert sector_bases(9, [])[0].shape == (9, 9)


def test_c6v_blocks_span_the_grid_and_decouple_the_hamiltonian():
    # C6v: four one-dimensional representations and two two-dimensional ones, Σ d_Γ² = 12 (Tinkham 1964,
    # value from memory); the first rows' bases with their partners span the grid, and H couples no two blocks
    from porefill.physics.sites.symmetry_blocks import c6v_blocks, rotation_permutation

    geo, pts, v, pairs = _grid(size_angstrom=11.0, wall_angstrom=8.0, temperature_k=1.5)
    perms = mirror_permutations(pts, v)
    rotation = rotation_permutation(pts, v)
    assert rotation is not None
    assert np.array_equal(np.arange(v.size), _power(rotation, 6))               # R⁶ = 1
    blocks = c6v_blocks(v.size, rotation, perms[1])
    assert [b.degeneracy for b in blocks] == [1, 1, 1, 1, 2, 2]
    assert sum(b.degeneracy * b.basis.shape[1] for b in blocks) == v.size
    full = sparse.hstack([b.basis for b in blocks]).toarray()
    np.testing.assert_allclose(full.T @ full, np.eye(full.shape[1]), atol=1e-12)
    h = quantum._hamiltonian(v, pairs, 0.25, geo.adsorbate.hbar2_over_mk)                      # noqa: SLF001
    for i, a in enumerate(blocks):
        for b in blocks[i + 1:]:
            assert abs(a.basis.T @ h @ b.basis).max() < 1e-10
    # each E state's partner is orthonormal to it and has the same energy
    e_block = blocks[4]
    hb = (e_block.basis.T @ h @ e_block.basis).toarray()
    w, u = np.linalg.eigh(hb)
    psi = np.asarray(e_block.basis @ u[:, :3])
    other = e_block.partner(psi)
    np.testing.assert_allclose((psi * other).sum(axis=0), 0.0, atol=1e-10)
    np.testing.assert_allclose(np.einsum("ij,ij->j", other, h @ other), w[:3], rtol=0, atol=1e-8)


def test_a_slit_has_no_sixfold_rotation():
    from porefill.physics.sites.symmetry_blocks import rotation_permutation, symmetry_blocks

    geo, pts, v, pairs = _grid(shape="slit", size_angstrom=9.0, wall_angstrom=6.0, temperature_k=1.5)
    assert rotation_permutation(pts, v) is None
    assert len(symmetry_blocks(pts, v)) == 4


def _power(perm, k):
    out = np.arange(perm.size)
    for _ in range(k):
        out = perm[out]
    return out
